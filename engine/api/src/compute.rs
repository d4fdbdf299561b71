//! What flows into a module's calculation and what comes out: resolved
//! inputs with typed getters, and the outcome (outputs, checks, series,
//! plots, notes) with typed setters.
//!
//! Owns no state beyond the values it carries.

use std::collections::BTreeMap;

use crate::node::{Node, Span};
use crate::quantity::SiQuantity;
use crate::units::Dimension;
use serde::{Deserialize, Serialize};

/// A resolved input value, already checked against the declaration.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Value {
    /// A quantity in SI coherent units.
    Quantity {
        /// The SI value.
        value: f64,
        /// Its dimension.
        dimension: Dimension,
    },
    /// A plain number.
    Number(f64),
    /// A whole number.
    Count(u64),
    /// A chosen word.
    Choice(String),
    /// True or false.
    Flag(bool),
    /// A material id.
    Material(String),
    /// A structured tree.
    #[serde(skip)]
    Structured(Node),
}

impl Value {
    /// A number in SI coherent units as an input value: a plain number when
    /// dimensionless, else a quantity of `dimension`.
    pub fn from_si(value: f64, dimension: Dimension) -> Value {
        if dimension == Dimension::Dimensionless {
            Value::Number(value)
        } else {
            Value::Quantity { value, dimension }
        }
    }
}

/// Where a resolved input came from, for the package's inputs table.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum Origin {
    /// Written in the item file.
    Item {
        /// Its position.
        #[serde(serialize_with = "span_text")]
        span: Span,
    },
    /// A property of a named material.
    Material {
        /// The material id.
        material: String,
        /// The property's position in the material file.
        #[serde(serialize_with = "span_text")]
        span: Span,
    },
    /// Another item's output.
    Link {
        /// The item id.
        item: String,
        /// The output name.
        output: String,
        /// The `from:` position in this item's file.
        #[serde(serialize_with = "span_text")]
        span: Span,
    },
    /// The module's declared default.
    Default,
}

fn span_text<S: serde::Serializer>(span: &Span, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_str(&span.to_string())
}

impl Origin {
    /// The position to point an error at, if there is one.
    pub fn span(&self) -> Option<&Span> {
        match self {
            Origin::Item { span } | Origin::Material { span, .. } | Origin::Link { span, .. } => {
                Some(span)
            }
            Origin::Default => None,
        }
    }
}

/// One resolved input: its value, where it came from, and how the item wrote it.
#[derive(Debug, Clone, PartialEq)]
pub struct ResolvedInput {
    /// The value.
    pub value: Value,
    /// Where it came from.
    pub origin: Origin,
    /// The text as written (`"1800 t/h"`), or the default's text.
    pub written: String,
}

/// Everything a module's calculation receives.
#[derive(Debug, Clone, Default)]
pub struct Inputs {
    /// The item id, for messages.
    pub item: String,
    /// Resolved inputs by name. Inputs left out without a default are absent.
    pub values: BTreeMap<String, ResolvedInput>,
    /// Acceptance limits by criterion name: item overrides, else defaults.
    /// A criterion with neither is absent.
    pub criteria: BTreeMap<String, Value>,
}

impl Inputs {
    fn lookup(&self, name: &str) -> Option<&ResolvedInput> {
        self.values.get(name)
    }

    fn missing(&self, name: &str) -> CalcError {
        CalcError::missing(name)
    }

    /// A required quantity input, typed.
    pub fn quantity<Q: SiQuantity>(&self, name: &str) -> Result<Q, CalcError> {
        self.opt_quantity(name)?.ok_or_else(|| self.missing(name))
    }

    /// An optional quantity input, typed.
    pub fn opt_quantity<Q: SiQuantity>(&self, name: &str) -> Result<Option<Q>, CalcError> {
        match self.lookup(name).map(|r| &r.value) {
            None => Ok(None),
            Some(Value::Quantity { value, dimension }) if *dimension == Q::DIMENSION => {
                Ok(Some(Q::from_si(*value)))
            }
            Some(Value::Number(x)) if Q::DIMENSION == Dimension::Dimensionless => {
                Ok(Some(Q::from_si(*x)))
            }
            Some(other) => Err(CalcError::contract(format!(
                "input `{name}` should be {} but the engine passed {other:?}",
                Q::DIMENSION.describe()
            ))),
        }
    }

    /// A required plain number.
    pub fn number(&self, name: &str) -> Result<f64, CalcError> {
        self.opt_number(name)?.ok_or_else(|| self.missing(name))
    }

    /// An optional plain number.
    pub fn opt_number(&self, name: &str) -> Result<Option<f64>, CalcError> {
        match self.lookup(name).map(|r| &r.value) {
            None => Ok(None),
            Some(Value::Number(x)) => Ok(Some(*x)),
            Some(Value::Quantity {
                value,
                dimension: Dimension::Dimensionless,
            }) => Ok(Some(*value)),
            Some(other) => Err(CalcError::contract(format!(
                "input `{name}` should be a number but the engine passed {other:?}"
            ))),
        }
    }

    /// A required whole number.
    pub fn count(&self, name: &str) -> Result<u64, CalcError> {
        self.opt_count(name)?.ok_or_else(|| self.missing(name))
    }

    /// An optional whole number.
    pub fn opt_count(&self, name: &str) -> Result<Option<u64>, CalcError> {
        match self.lookup(name).map(|r| &r.value) {
            None => Ok(None),
            Some(Value::Count(n)) => Ok(Some(*n)),
            Some(other) => Err(CalcError::contract(format!(
                "input `{name}` should be a whole number but the engine passed {other:?}"
            ))),
        }
    }

    /// A required choice, as its word.
    pub fn choice(&self, name: &str) -> Result<&str, CalcError> {
        self.opt_choice(name)?.ok_or_else(|| self.missing(name))
    }

    /// An optional choice.
    pub fn opt_choice(&self, name: &str) -> Result<Option<&str>, CalcError> {
        match self.lookup(name).map(|r| &r.value) {
            None => Ok(None),
            Some(Value::Choice(s)) => Ok(Some(s)),
            Some(other) => Err(CalcError::contract(format!(
                "input `{name}` should be a choice but the engine passed {other:?}"
            ))),
        }
    }

    /// A required flag.
    pub fn flag(&self, name: &str) -> Result<bool, CalcError> {
        self.opt_flag(name)?.ok_or_else(|| self.missing(name))
    }

    /// An optional flag.
    pub fn opt_flag(&self, name: &str) -> Result<Option<bool>, CalcError> {
        match self.lookup(name).map(|r| &r.value) {
            None => Ok(None),
            Some(Value::Flag(b)) => Ok(Some(*b)),
            Some(other) => Err(CalcError::contract(format!(
                "input `{name}` should be true or false but the engine passed {other:?}"
            ))),
        }
    }

    /// An optional structured input, as its position-keeping tree.
    pub fn structured(&self, name: &str) -> Result<Option<&Node>, CalcError> {
        match self.lookup(name).map(|r| &r.value) {
            None => Ok(None),
            Some(Value::Structured(node)) => Ok(Some(node)),
            Some(other) => Err(CalcError::contract(format!(
                "input `{name}` should be structured but the engine passed {other:?}"
            ))),
        }
    }

    /// Whether the item (or its material) gave the input, as opposed to a
    /// default or nothing.
    pub fn given(&self, name: &str) -> bool {
        self.lookup(name)
            .is_some_and(|r| !matches!(r.origin, Origin::Default))
    }

    /// Where an input came from, to point an error at.
    pub fn span_of(&self, name: &str) -> Option<Span> {
        self.lookup(name).and_then(|r| r.origin.span().cloned())
    }

    /// A quantity criterion (limit), typed; `None` when there is no limit.
    pub fn criterion<Q: SiQuantity>(&self, name: &str) -> Result<Option<Q>, CalcError> {
        match self.criteria.get(name) {
            None => Ok(None),
            Some(Value::Quantity { value, dimension }) if *dimension == Q::DIMENSION => {
                Ok(Some(Q::from_si(*value)))
            }
            Some(Value::Number(x)) if Q::DIMENSION == Dimension::Dimensionless => {
                Ok(Some(Q::from_si(*x)))
            }
            Some(other) => Err(CalcError::contract(format!(
                "criterion `{name}` should be {} but the engine passed {other:?}",
                Q::DIMENSION.describe()
            ))),
        }
    }

    /// A plain-number criterion; `None` when there is no limit.
    pub fn criterion_number(&self, name: &str) -> Result<Option<f64>, CalcError> {
        match self.criteria.get(name) {
            None => Ok(None),
            Some(Value::Number(x)) => Ok(Some(*x)),
            Some(Value::Quantity {
                value,
                dimension: Dimension::Dimensionless,
            }) => Ok(Some(*value)),
            Some(other) => Err(CalcError::contract(format!(
                "criterion `{name}` should be a number but the engine passed {other:?}"
            ))),
        }
    }
}

/// A number with its dimension, as results and checks carry it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Measure {
    /// The SI coherent value.
    pub value: f64,
    /// Its dimension.
    pub dimension: Dimension,
}

impl Measure {
    /// A measure from a typed quantity.
    pub fn of<Q: SiQuantity>(q: Q) -> Measure {
        Measure {
            value: q.to_si(),
            dimension: Q::DIMENSION,
        }
    }

    /// A dimensionless measure.
    pub fn number(x: f64) -> Measure {
        Measure {
            value: x,
            dimension: Dimension::Dimensionless,
        }
    }
}

/// Pass or fail.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// The criterion is met.
    Pass,
    /// The criterion is not met.
    Fail,
}

/// How a check's value relates to its limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Relation {
    /// Passes when value ≤ limit.
    AtMost,
    /// Passes when value ≥ limit.
    AtLeast,
    /// A condition without a numeric limit.
    Condition,
}

/// The result of one acceptance check.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Check {
    /// The declared check name.
    pub name: String,
    /// Pass or fail.
    pub status: Status,
    /// The demand (what the design does), if numeric.
    pub value: Option<Measure>,
    /// The limit, if numeric.
    pub limit: Option<Measure>,
    /// How value and limit relate.
    pub relation: Relation,
    /// A plain sentence a reviewer can read: what was checked and what it means.
    pub explanation: String,
}

impl Check {
    /// Passes when `value <= limit`.
    pub fn at_most<Q: SiQuantity>(name: &str, value: Q, limit: Q, explanation: &str) -> Check {
        let (v, l) = (Measure::of(value), Measure::of(limit));
        Check {
            name: name.into(),
            status: if v.value <= l.value {
                Status::Pass
            } else {
                Status::Fail
            },
            value: Some(v),
            limit: Some(l),
            relation: Relation::AtMost,
            explanation: explanation.into(),
        }
    }

    /// Passes when `value >= limit`.
    pub fn at_least<Q: SiQuantity>(name: &str, value: Q, limit: Q, explanation: &str) -> Check {
        let (v, l) = (Measure::of(value), Measure::of(limit));
        Check {
            name: name.into(),
            status: if v.value >= l.value {
                Status::Pass
            } else {
                Status::Fail
            },
            value: Some(v),
            limit: Some(l),
            relation: Relation::AtLeast,
            explanation: explanation.into(),
        }
    }

    /// Passes when `ok` holds; no numeric limit.
    pub fn condition(name: &str, ok: bool, explanation: &str) -> Check {
        Check {
            name: name.into(),
            status: if ok { Status::Pass } else { Status::Fail },
            value: None,
            limit: None,
            relation: Relation::Condition,
            explanation: explanation.into(),
        }
    }
}

/// A table of numbers over one independent variable (a time history, a
/// profile along a chute), columns in SI coherent units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Series {
    /// The series name in result files.
    pub name: String,
    /// Column names and dimensions; the first is the independent variable.
    pub columns: Vec<(String, Dimension)>,
    /// Rows of values, one per column.
    pub rows: Vec<Vec<f64>>,
}

impl Series {
    /// An empty series with the given columns.
    pub fn new(name: &str, columns: &[(&str, Dimension)]) -> Series {
        Series {
            name: name.into(),
            columns: columns.iter().map(|(n, d)| (n.to_string(), *d)).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends a row of SI values.
    pub fn push(&mut self, row: Vec<f64>) {
        debug_assert_eq!(row.len(), self.columns.len());
        self.rows.push(row);
    }

    /// Keeps at most `n` rows, evenly spaced, always keeping the first and
    /// last, so that result files stay a readable size.
    pub fn thin_to(&mut self, n: usize) {
        let len = self.rows.len();
        if len <= n || n < 2 {
            return;
        }
        let picked: Vec<Vec<f64>> = (0..n)
            .map(|i| {
                let idx = (i * (len - 1) + (n - 1) / 2) / (n - 1);
                self.rows[idx.min(len - 1)].clone()
            })
            .collect();
        self.rows = picked;
    }
}

/// How a plot layer is drawn. The report chooses colours and widths.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LayerStyle {
    /// A solid line.
    Line,
    /// A dashed line (a secondary result, a stream edge).
    Dashed,
    /// A heavy line for a physical surface (chute plate, belt, pulley).
    Surface,
    /// Separate marked points (an impact point, a release point).
    Points,
    /// A thin vertical or horizontal reference line (a limit).
    Reference,
}

/// One set of points on a plot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlotLayer {
    /// Legend text; layers without one stay out of the legend.
    pub label: Option<String>,
    /// How it is drawn.
    pub style: LayerStyle,
    /// The points, in SI coherent units of the axes' dimensions.
    pub points: Vec<(f64, f64)>,
}

/// One plot axis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Axis {
    /// The quantity name ("distance along the belt"); the unit is added by
    /// the report in the project's display units.
    pub label: String,
    /// The dimension of the values on this axis.
    pub dimension: Dimension,
}

/// A plot a module attaches to its results: data only, drawn by the report.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Plot {
    /// A short id, unique within the item.
    pub id: String,
    /// The caption.
    pub title: String,
    /// Horizontal axis.
    pub x: Axis,
    /// Vertical axis.
    pub y: Axis,
    /// Draw to scale (same length per unit on both axes): for elevations.
    pub equal_scale: bool,
    /// The layers, drawn in order.
    pub layers: Vec<PlotLayer>,
}

impl Plot {
    /// A plot with no layers yet.
    pub fn new(id: &str, title: &str, x: Axis, y: Axis) -> Plot {
        Plot {
            id: id.into(),
            title: title.into(),
            x,
            y,
            equal_scale: false,
            layers: Vec::new(),
        }
    }

    /// Adds a layer.
    pub fn layer(
        mut self,
        label: Option<&str>,
        style: LayerStyle,
        points: Vec<(f64, f64)>,
    ) -> Plot {
        self.layers.push(PlotLayer {
            label: label.map(Into::into),
            style,
            points,
        });
        self
    }
}

impl Axis {
    /// An axis with a label and a dimension.
    pub fn new(label: &str, dimension: Dimension) -> Axis {
        Axis {
            label: label.into(),
            dimension,
        }
    }
}

/// Everything a calculation produces.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Outcome {
    /// Output values by name.
    pub outputs: BTreeMap<String, Measure>,
    /// Checks in the order the module made them.
    pub checks: Vec<Check>,
    /// Series for plots and tables.
    pub series: Vec<Series>,
    /// Plots.
    pub plots: Vec<Plot>,
    /// Notes for the reviewer (which branch of a method applied, and why).
    pub notes: Vec<String>,
}

impl Outcome {
    /// An empty outcome.
    pub fn new() -> Outcome {
        Outcome::default()
    }

    /// Records a typed output.
    pub fn set<Q: SiQuantity>(&mut self, name: &str, value: Q) {
        self.outputs.insert(name.into(), Measure::of(value));
    }

    /// Records a dimensionless output.
    pub fn set_number(&mut self, name: &str, value: f64) {
        self.outputs.insert(name.into(), Measure::number(value));
    }

    /// Records a check.
    pub fn check(&mut self, check: Check) {
        self.checks.push(check);
    }

    /// Records a note for the reviewer.
    pub fn note(&mut self, text: impl Into<String>) {
        self.notes.push(text.into());
    }
}

/// Why a calculation could not produce results.
#[derive(Debug, Clone, PartialEq)]
pub enum CalcError {
    /// An input (or a part of a structured input) is unusable; points at it.
    Input {
        /// The input name.
        input: String,
        /// Where it is, if known.
        span: Option<Span>,
        /// What is wrong.
        message: String,
        /// What would be right, with an example.
        expected: String,
    },
    /// The inputs are individually valid but together give no physical
    /// answer (a value would be infinite, negative where it cannot be...).
    Numerical {
        /// Which output or intermediate value failed.
        quantity: String,
        /// What happened, in words.
        message: String,
        /// The inputs that drove it.
        inputs: Vec<String>,
    },
    /// The engine and module disagree about the contract (a bug).
    Contract(String),
}

impl CalcError {
    /// A required input is missing.
    pub fn missing(name: &str) -> CalcError {
        CalcError::Input {
            input: name.into(),
            span: None,
            message: format!("input `{name}` is required here but was not given"),
            expected: format!("`{name}:` under `inputs:`"),
        }
    }

    /// An input problem pointing at a span.
    pub fn input(name: &str, span: Option<Span>, message: &str, expected: &str) -> CalcError {
        CalcError::Input {
            input: name.into(),
            span,
            message: message.into(),
            expected: expected.into(),
        }
    }

    /// A numerical failure.
    pub fn numerical(quantity: &str, message: &str, inputs: &[&str]) -> CalcError {
        CalcError::Numerical {
            quantity: quantity.into(),
            message: message.into(),
            inputs: inputs.iter().map(|s| s.to_string()).collect(),
        }
    }

    /// A contract violation.
    pub fn contract(message: String) -> CalcError {
        CalcError::Contract(message)
    }
}

impl std::fmt::Display for CalcError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            CalcError::Input {
                input,
                span,
                message,
                expected,
            } => {
                if let Some(span) = span {
                    write!(f, "{span}: ")?;
                }
                write!(f, "input `{input}`: {message}; expected {expected}")
            }
            CalcError::Numerical {
                quantity,
                message,
                inputs,
            } => write!(f, "{quantity}: {message} (driven by {})", inputs.join(", ")),
            CalcError::Contract(m) => write!(f, "module contract: {m}"),
        }
    }
}

impl std::error::Error for CalcError {}

/// Turns the text of a scalar input into a [`Value`] of the declared kind.
///
/// The engine uses this for every scalar it reads, and tests use it through
/// [`Inputs::from_text`]. Ranges are checked here too, so that an
/// out-of-range value is reported with the input's own words. Structured
/// inputs are not scalars and are refused.
pub fn parse_scalar(spec: &crate::declare::InputSpec, text: &str) -> Result<Value, String> {
    use crate::declare::InputKind;
    use crate::units::parse_expecting;
    let range_check = |x: f64, dimension: Dimension| -> Result<(), String> {
        if spec.range.contains(x) {
            return Ok(());
        }
        let unit = match dimension.si_unit() {
            "1" => String::new(),
            u => format!(" {u}"),
        };
        let show = |b: &crate::declare::Bound, word_incl: &str, word_excl: &str| {
            format!(
                "{} {}{unit}",
                if b.inclusive { word_incl } else { word_excl },
                crate::units::format_significant(b.value, 4)
            )
        };
        let mut limits = Vec::new();
        if let Some(b) = &spec.range.min {
            limits.push(show(b, "at least", "more than"));
        }
        if let Some(b) = &spec.range.max {
            limits.push(show(b, "at most", "less than"));
        }
        Err(format!(
            "{} is out of range: `{}` must be {}",
            text.trim(),
            spec.name,
            limits.join(" and ")
        ))
    };
    match &spec.kind {
        InputKind::Quantity { dimension } => {
            let q = parse_expecting(text, *dimension).map_err(|e| {
                format!(
                    "{e}; `{}` takes {} with a unit, for example `{}`",
                    spec.name,
                    dimension.describe(),
                    dimension.example()
                )
            })?;
            range_check(q.value_si, *dimension)?;
            Ok(Value::Quantity {
                value: q.value_si,
                dimension: *dimension,
            })
        }
        InputKind::Number => {
            let x: f64 = text.trim().parse().map_err(|_| {
                format!(
                    "`{}` is not a plain number; `{}` takes a number without unit, for example `0.6`",
                    text.trim(),
                    spec.name
                )
            })?;
            if !x.is_finite() {
                return Err(format!("`{}` is not a finite number", text.trim()));
            }
            range_check(x, Dimension::Dimensionless)?;
            Ok(Value::Number(x))
        }
        InputKind::Count => {
            let n: u64 = text.trim().parse().map_err(|_| {
                format!(
                    "`{}` is not a whole number; `{}` takes a count, for example `4`",
                    text.trim(),
                    spec.name
                )
            })?;
            range_check(n as f64, Dimension::Dimensionless)?;
            Ok(Value::Count(n))
        }
        InputKind::Choice { options } => {
            let word = text.trim();
            if options.iter().any(|o| o == word) {
                Ok(Value::Choice(word.to_string()))
            } else {
                Err(format!(
                    "`{word}` is not one of the choices for `{}`: {}",
                    spec.name,
                    options.join(", ")
                ))
            }
        }
        InputKind::Flag => match text.trim() {
            "true" | "yes" => Ok(Value::Flag(true)),
            "false" | "no" => Ok(Value::Flag(false)),
            other => Err(format!(
                "`{other}` is not true or false; `{}` takes `true` or `false`",
                spec.name
            )),
        },
        InputKind::Material { .. } => Ok(Value::Material(text.trim().to_string())),
        InputKind::Structured { shape } => Err(format!(
            "`{}` takes a structured value, not a single value: {shape}",
            spec.name
        )),
    }
}

impl Inputs {
    /// Resolves inputs given as text pairs against a declaration, filling
    /// defaults and default criteria, as the engine would for an item file
    /// without materials or links. Meant for module tests and examples.
    pub fn from_text(
        declaration: &crate::declare::ModuleDeclaration,
        given: &[(&str, &str)],
    ) -> Result<Inputs, String> {
        use crate::declare::Need;
        let mut inputs = Inputs {
            item: "TEST".into(),
            ..Inputs::default()
        };
        for (name, _) in given {
            if declaration.input(name).is_none() && declaration.criterion(name).is_none() {
                return Err(format!("`{name}` is neither an input nor a criterion"));
            }
        }
        for spec in &declaration.inputs {
            let text = match given.iter().find(|(n, _)| *n == spec.name) {
                Some((_, text)) => Some((text.to_string(), false)),
                None => match &spec.need {
                    Need::Default(text) => Some((text.clone(), true)),
                    _ => None,
                },
            };
            if let Some((text, defaulted)) = text {
                let value = parse_scalar(spec, &text)?;
                let origin = if defaulted {
                    Origin::Default
                } else {
                    Origin::Item {
                        span: Span::new("test.yaml", 1, 1),
                    }
                };
                inputs.values.insert(
                    spec.name.clone(),
                    ResolvedInput {
                        value,
                        origin,
                        written: text,
                    },
                );
            }
        }
        for criterion in &declaration.criteria {
            let text = given
                .iter()
                .find(|(n, _)| *n == criterion.name)
                .map(|(_, t)| t.to_string())
                .or_else(|| criterion.default.clone());
            if let Some(text) = text {
                let q = crate::units::parse_expecting(&text, criterion.dimension)
                    .map_err(|e| format!("criterion `{}`: {e}", criterion.name))?;
                inputs.criteria.insert(
                    criterion.name.clone(),
                    Value::from_si(q.value_si, q.dimension),
                );
            }
        }
        Ok(inputs)
    }

    /// Adds a structured input (tests build the tree by hand).
    pub fn with_structured(mut self, name: &str, node: Node) -> Inputs {
        let span = node.span.clone();
        self.values.insert(
            name.into(),
            ResolvedInput {
                value: Value::Structured(node),
                origin: Origin::Item { span },
                written: String::new(),
            },
        );
        self
    }
}
