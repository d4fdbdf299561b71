//! Protocol version 1, the wire format between packwright and an external
//! module: the JSON request written to the module's standard input and the
//! JSON response read from its standard output, and the checks that turn a
//! response into an [`Outcome`] or a precise complaint.
//!
//! The wire types are this file's own, not the contract crate's serde forms,
//! so that the contract crate can change its internals without breaking
//! modules written in other languages. `protocol/*.schema.json` and
//! `PROTOCOL.md` describe the same format; a test keeps them in step.
//!
//! Owns no state and starts no process (see `process`).

use std::collections::BTreeMap;

use packwright_api::{
    Axis, CalcError, Check, Dimension, Inputs, LayerStyle, Measure, ModuleDeclaration, Node,
    NodeValue, Outcome, Plot, PlotLayer, Relation, Series, Status, Value,
};
use serde::{Deserialize, Serialize};

/// The protocol version this packwright speaks.
pub const PROTOCOL_VERSION: u32 = 1;

/// The request written to a module's standard input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Request {
    /// Always [`PROTOCOL_VERSION`].
    pub protocol: u32,
    /// The module's declared name.
    pub module: String,
    /// The module's declared version.
    pub version: String,
    /// The item id, for the module's own messages.
    pub item: String,
    /// Resolved inputs by name; inputs left out without a default are absent.
    pub inputs: BTreeMap<String, WireInput>,
    /// Acceptance limits by criterion name; criteria without a limit are absent.
    pub criteria: BTreeMap<String, WireInput>,
}

/// One input value on the wire. Each kind has its own key, so a module can
/// tell them apart without knowing its declaration.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum WireInput {
    /// A quantity (or plain number, with dimension `dimensionless`) in SI
    /// coherent units.
    Quantity {
        /// The SI value.
        value: f64,
        /// The dimension's key (`mass_rate`).
        dimension: Dimension,
    },
    /// A whole number.
    Count {
        /// The count.
        count: u64,
    },
    /// One of the declared words.
    Choice {
        /// The word.
        choice: String,
    },
    /// True or false.
    Flag {
        /// The flag.
        flag: bool,
    },
    /// The id of a named material (its properties arrive as inputs of their
    /// own names).
    Material {
        /// The material id.
        material: String,
    },
    /// A structured value as plain JSON, without file positions.
    Structured {
        /// The tree.
        structured: serde_json::Value,
    },
}

impl WireInput {
    fn of(value: &Value) -> WireInput {
        match value {
            Value::Quantity { value, dimension } => WireInput::Quantity {
                value: *value,
                dimension: *dimension,
            },
            Value::Number(x) => WireInput::Quantity {
                value: *x,
                dimension: Dimension::Dimensionless,
            },
            Value::Count(n) => WireInput::Count { count: *n },
            Value::Choice(s) => WireInput::Choice { choice: s.clone() },
            Value::Flag(b) => WireInput::Flag { flag: *b },
            Value::Material(s) => WireInput::Material {
                material: s.clone(),
            },
            Value::Structured(node) => WireInput::Structured {
                structured: node_json(node),
            },
        }
    }
}

/// A structured input as JSON: mappings become objects (keys in file
/// order are not kept: JSON objects have none), lists arrays, scalars
/// themselves. A YAML number that is not finite becomes `null`, as JSON
/// cannot carry it.
pub fn node_json(node: &Node) -> serde_json::Value {
    use serde_json::Value as J;
    match &node.value {
        NodeValue::Null => J::Null,
        NodeValue::Bool(b) => J::Bool(*b),
        NodeValue::Number(x) => serde_json::Number::from_f64(*x).map_or(J::Null, J::Number),
        NodeValue::Text(s) => J::String(s.clone()),
        NodeValue::List(items) => J::Array(items.iter().map(node_json).collect()),
        NodeValue::Map(entries) => J::Object(
            entries
                .iter()
                .map(|(k, v)| {
                    let key = k
                        .as_text()
                        .map(str::to_string)
                        .unwrap_or_else(|| node_json(k).to_string());
                    (key, node_json(v))
                })
                .collect(),
        ),
    }
}

impl Request {
    /// The request for one item of a module.
    pub fn new(declaration: &ModuleDeclaration, inputs: &Inputs) -> Request {
        Request {
            protocol: PROTOCOL_VERSION,
            module: declaration.name.clone(),
            version: declaration.version.clone(),
            item: inputs.item.clone(),
            inputs: inputs
                .values
                .iter()
                .map(|(name, input)| (name.clone(), WireInput::of(&input.value)))
                .collect(),
            criteria: inputs
                .criteria
                .iter()
                .map(|(name, value)| (name.clone(), WireInput::of(value)))
                .collect(),
        }
    }

    /// The request as the bytes written to standard input: one line of
    /// compact JSON ending in a newline, keys sorted.
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut bytes = serde_json::to_vec(self).expect("a request always serialises");
        bytes.push(b'\n');
        bytes
    }
}

/// A number with its dimension, as a response carries it. `value` may be
/// `null` on the wire (some JSON writers turn NaN into null), which is
/// reported as a numerical failure rather than a format error.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WireMeasure {
    value: Option<f64>,
    dimension: String,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WireCheck {
    name: String,
    status: Status,
    #[serde(default)]
    value: Option<WireMeasure>,
    #[serde(default)]
    limit: Option<WireMeasure>,
    relation: Relation,
    explanation: String,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WireColumn {
    name: String,
    dimension: String,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WireSeries {
    name: String,
    columns: Vec<WireColumn>,
    rows: Vec<Vec<Option<f64>>>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WireAxis {
    label: String,
    dimension: String,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WireLayer {
    #[serde(default)]
    label: Option<String>,
    style: LayerStyle,
    points: Vec<[Option<f64>; 2]>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct WirePlot {
    id: String,
    title: String,
    x: WireAxis,
    y: WireAxis,
    #[serde(default)]
    equal_scale: bool,
    layers: Vec<WireLayer>,
}

/// A module's refusal: it cannot calculate this item, and says why.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields, tag = "kind", rename_all = "snake_case")]
enum WireError {
    /// An input (or a combination) is unusable.
    Input {
        input: String,
        message: String,
        expected: String,
    },
    /// The inputs are valid but give no physical answer.
    Numerical {
        quantity: String,
        message: String,
        #[serde(default)]
        inputs: Vec<String>,
    },
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct Response {
    #[allow(dead_code)] // checked before the strict parse, kept so the field is known
    protocol: u32,
    #[serde(default)]
    outputs: BTreeMap<String, WireMeasure>,
    #[serde(default)]
    checks: Vec<WireCheck>,
    #[serde(default)]
    series: Vec<WireSeries>,
    #[serde(default)]
    plots: Vec<WirePlot>,
    #[serde(default)]
    notes: Vec<String>,
    #[serde(default)]
    error: Option<WireError>,
}

/// What is wrong with a response, before the module and item are named.
#[derive(Debug, Clone, PartialEq)]
pub enum Problem {
    /// The response breaks the protocol or the module's declaration.
    Contract(String),
    /// A value is not a finite number.
    Numerical {
        /// The output, check, series or plot concerned.
        quantity: String,
        /// What happened.
        message: String,
    },
    /// The module itself refused the item (its `error` answer).
    Refused(CalcError),
}

fn contract<T>(message: String) -> Result<T, Problem> {
    Err(Problem::Contract(message))
}

fn numerical<T>(quantity: String, message: &str) -> Result<T, Problem> {
    Err(Problem::Numerical {
        quantity,
        message: message.into(),
    })
}

fn dimension(key: &str, whose: &str) -> Result<Dimension, Problem> {
    Dimension::from_key(key).ok_or_else(|| {
        let known: Vec<&str> = Dimension::ALL.iter().map(|d| d.key()).collect();
        Problem::Contract(format!(
            "{whose} has dimension `{key}`, which packwright does not know; known dimensions: {}",
            known.join(", ")
        ))
    })
}

fn measure(m: &WireMeasure, whose: &str) -> Result<Measure, Problem> {
    let dimension = dimension(&m.dimension, whose)?;
    match m.value {
        Some(value) if value.is_finite() => Ok(Measure { value, dimension }),
        _ => numerical(
            whose.to_string(),
            "the module returned null (or a value that is not a finite number)",
        ),
    }
}

/// The first characters of a text, on one line, for messages.
pub(crate) fn excerpt(text: &str, chars: usize) -> String {
    let one_line: String = text
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect();
    let trimmed = one_line.trim();
    if trimmed.chars().count() > chars {
        format!("{}...", trimmed.chars().take(chars).collect::<String>())
    } else {
        trimmed.to_string()
    }
}

/// Whether unparsable JSON holds one of the non-finite numbers that some
/// writers emit (Python's `json.dumps` writes `NaN` and `Infinity`).
fn has_non_finite_token(text: &str) -> bool {
    let bytes = text.as_bytes();
    ["NaN", "Infinity"].iter().any(|token| {
        text.match_indices(token).any(|(at, _)| {
            let before = at.checked_sub(1).map(|i| bytes[i]);
            // A token inside a string ("NaN" as a note) is preceded by a letter or quote.
            !matches!(before, Some(b) if b.is_ascii_alphanumeric() || b == b'"')
        })
    })
}

/// Reads a response against the module's declaration: the protocol
/// version; every declared non-optional output present, finite and of its
/// declared dimension; nothing undeclared; checks declared and consistent
/// with their own value and limit; series and plots finite.
pub fn read_response(stdout: &[u8], declaration: &ModuleDeclaration) -> Result<Outcome, Problem> {
    let Ok(text) = std::str::from_utf8(stdout) else {
        return contract(
            "standard output is not UTF-8 text; the module must write one JSON response".into(),
        );
    };
    if text.trim().is_empty() {
        return contract(
            "the module wrote nothing to standard output; it must write one JSON response".into(),
        );
    }
    let json: serde_json::Value = match serde_json::from_str(text) {
        Ok(json) => json,
        Err(e) if has_non_finite_token(text) => {
            return numerical(
                "the response".into(),
                &format!(
                    "it holds NaN or Infinity, which is not a finite number (nor valid JSON: {e})"
                ),
            )
        }
        Err(e) => {
            return contract(format!(
                "standard output is not one JSON response ({e}); it began: `{}`",
                excerpt(text, 80)
            ))
        }
    };
    let Some(object) = json.as_object() else {
        return contract(format!(
            "the response should be a JSON object with `protocol` and `outputs`; it is `{}`",
            excerpt(&json.to_string(), 80)
        ));
    };
    match object.get("protocol") {
        None => {
            return contract(format!(
                "the response has no `protocol` field; expected `\"protocol\": {PROTOCOL_VERSION}`"
            ))
        }
        Some(v) if v.as_u64() == Some(u64::from(PROTOCOL_VERSION)) => {}
        Some(v) => {
            return contract(format!(
            "the response speaks protocol {v}; this packwright speaks protocol {PROTOCOL_VERSION}"
        ))
        }
    }
    let response: Response = serde_json::from_value(json).map_err(|e| {
        Problem::Contract(format!(
            "the response does not follow protocol {PROTOCOL_VERSION}: {e}"
        ))
    })?;
    if let Some(error) = response.error {
        return Err(Problem::Refused(match error {
            WireError::Input {
                input,
                message,
                expected,
            } => CalcError::Input {
                input,
                span: None,
                message,
                expected,
            },
            WireError::Numerical {
                quantity,
                message,
                inputs,
            } => CalcError::Numerical {
                quantity,
                message,
                inputs,
            },
        }));
    }

    let mut outcome = Outcome::new();
    for (name, wire) in &response.outputs {
        let Some(spec) = declaration.output(name) else {
            let declared: Vec<&str> = declaration
                .outputs
                .iter()
                .map(|o| o.name.as_str())
                .collect();
            return contract(format!(
                "the response has output `{name}`, which the manifest does not declare; declared outputs: {}",
                declared.join(", ")
            ));
        };
        let m = measure(wire, &format!("output `{name}`"))?;
        if m.dimension != spec.dimension {
            return contract(format!(
                "output `{name}` should be {} (`{}`) but the response gives {} (`{}`)",
                spec.dimension.describe(),
                spec.dimension.key(),
                m.dimension.describe(),
                m.dimension.key()
            ));
        }
        outcome.outputs.insert(name.clone(), m);
    }
    for spec in &declaration.outputs {
        if !spec.optional && !outcome.outputs.contains_key(&spec.name) {
            return contract(format!(
                "the response lacks output `{}`, which the manifest declares as always given",
                spec.name
            ));
        }
    }

    for wire in &response.checks {
        if !declaration.checks.iter().any(|c| c.name == wire.name) {
            let declared: Vec<&str> = declaration.checks.iter().map(|c| c.name.as_str()).collect();
            return contract(format!(
                "the response reports check `{}`, which the manifest does not declare; declared checks: {}",
                wire.name,
                if declared.is_empty() { "none".to_string() } else { declared.join(", ") }
            ));
        }
        let whose = format!("check `{}`", wire.name);
        let value = wire
            .value
            .as_ref()
            .map(|m| measure(m, &whose))
            .transpose()?;
        let limit = wire
            .limit
            .as_ref()
            .map(|m| measure(m, &whose))
            .transpose()?;
        if let (Some(v), Some(l)) = (value, limit) {
            if v.dimension != l.dimension {
                return contract(format!(
                    "{whose} compares {} with a limit of {}",
                    v.dimension.describe(),
                    l.dimension.describe()
                ));
            }
            let passes = match wire.relation {
                Relation::AtMost => Some(v.value <= l.value),
                Relation::AtLeast => Some(v.value >= l.value),
                Relation::Condition => None,
            };
            if let Some(passes) = passes {
                if passes != (wire.status == Status::Pass) {
                    return contract(format!(
                        "{whose} says {:?} but its value {} and limit {} say otherwise",
                        wire.status, v.value, l.value
                    ));
                }
            }
        } else if wire.relation != Relation::Condition {
            return contract(format!(
                "{whose} has relation {:?} but not both a value and a limit",
                wire.relation
            ));
        }
        outcome.check(Check {
            name: wire.name.clone(),
            status: wire.status,
            value,
            limit,
            relation: wire.relation,
            explanation: wire.explanation.clone(),
        });
    }

    for wire in &response.series {
        let whose = format!("series `{}`", wire.name);
        let columns = wire
            .columns
            .iter()
            .map(|c| Ok((c.name.clone(), dimension(&c.dimension, &whose)?)))
            .collect::<Result<Vec<_>, Problem>>()?;
        let mut rows = Vec::with_capacity(wire.rows.len());
        for row in &wire.rows {
            if row.len() != columns.len() {
                return contract(format!(
                    "{whose} has a row of {} values for {} columns",
                    row.len(),
                    columns.len()
                ));
            }
            let values: Option<Vec<f64>> = row.iter().copied().collect();
            match values {
                Some(values) if values.iter().all(|x| x.is_finite()) => rows.push(values),
                _ => {
                    return numerical(
                        whose,
                        "a row holds null (a value that is not a finite number)",
                    )
                }
            }
        }
        outcome.series.push(Series {
            name: wire.name.clone(),
            columns,
            rows,
        });
    }

    for wire in &response.plots {
        let whose = format!("plot `{}`", wire.id);
        let axis = |a: &WireAxis| -> Result<Axis, Problem> {
            Ok(Axis::new(&a.label, dimension(&a.dimension, &whose)?))
        };
        let mut plot = Plot::new(&wire.id, &wire.title, axis(&wire.x)?, axis(&wire.y)?);
        plot.equal_scale = wire.equal_scale;
        for layer in &wire.layers {
            let mut points = Vec::with_capacity(layer.points.len());
            for [x, y] in &layer.points {
                match (x, y) {
                    (Some(x), Some(y)) if x.is_finite() && y.is_finite() => points.push((*x, *y)),
                    _ => return numerical(whose, "a point holds null (not a finite number)"),
                }
            }
            plot.layers.push(PlotLayer {
                label: layer.label.clone(),
                style: layer.style,
                points,
            });
        }
        outcome.plots.push(plot);
    }
    outcome.notes = response.notes;
    Ok(outcome)
}

#[cfg(test)]
mod tests {
    use super::*;
    use packwright_api::{CheckSpec, InputSpec, OutputSpec};

    fn declaration() -> ModuleDeclaration {
        ModuleDeclaration {
            name: "seal".into(),
            version: "1.2.0".into(),
            purpose: "Seal drag.".into(),
            inputs: vec![
                InputSpec::quantity("skirt_length", Dimension::Length, "skirt length"),
                InputSpec::number("friction", "friction coefficient"),
                InputSpec::count("sides", "sealed sides"),
                InputSpec::choice("rubber", &["natural", "urethane"], "seal rubber"),
                InputSpec::flag("worn", "whether the seals are worn"),
            ],
            outputs: vec![
                OutputSpec::new("drag", Dimension::Force, "kN", "lbf", "seal drag"),
                OutputSpec::new("power", Dimension::Power, "kW", "hp", "power").optional(),
            ],
            criteria: vec![],
            checks: vec![CheckSpec::new("drag_ok", "drag within the allowance")],
            method: vec![],
            assumptions: vec![],
            cautions: vec![],
            references: vec![],
        }
    }

    /// The request's wire format is the protocol: this pins it byte for byte.
    #[test]
    fn request_wire_format_is_pinned() {
        let decl = declaration();
        let mut inputs = Inputs::from_text(
            &decl,
            &[
                ("skirt_length", "20 ft"),
                ("friction", "0.5"),
                ("sides", "2"),
                ("rubber", "natural"),
                ("worn", "false"),
            ],
        )
        .expect("inputs parse");
        inputs.item = "CV-9-SEALS".into();
        let span = packwright_api::Span::new("x.yaml", 3, 5);
        let tree = Node {
            value: NodeValue::Map(vec![(
                Node {
                    value: NodeValue::Text("points".into()),
                    span: span.clone(),
                },
                Node {
                    value: NodeValue::List(vec![
                        Node {
                            value: NodeValue::Number(1.5),
                            span: span.clone(),
                        },
                        Node {
                            value: NodeValue::Text("2 m".into()),
                            span: span.clone(),
                        },
                    ]),
                    span: span.clone(),
                },
            )]),
            span,
        };
        let inputs = inputs.with_structured("path", tree);
        let mut inputs = inputs;
        inputs.criteria.insert(
            "max_drag".into(),
            Value::Quantity {
                value: 1000.0,
                dimension: Dimension::Force,
            },
        );
        let text = String::from_utf8(Request::new(&decl, &inputs).to_bytes()).expect("utf-8");
        let expected = concat!(
            r#"{"protocol":1,"module":"seal","version":"1.2.0","item":"CV-9-SEALS","#,
            r#""inputs":{"friction":{"value":0.5,"dimension":"dimensionless"},"#,
            r#""path":{"structured":{"points":[1.5,"2 m"]}},"#,
            r#""rubber":{"choice":"natural"},"sides":{"count":2},"#,
            r#""skirt_length":{"value":6.096,"dimension":"length"},"#,
            r#""worn":{"flag":false}},"#,
            r#""criteria":{"max_drag":{"value":1000.0,"dimension":"force"}}}"#,
            "\n"
        );
        assert_eq!(text, expected);
    }

    fn read(text: &str) -> Result<Outcome, Problem> {
        read_response(text.as_bytes(), &declaration())
    }

    #[test]
    fn a_good_response_becomes_an_outcome() {
        let outcome = read(
            r#"{"protocol":1,"outputs":{"drag":{"value":800,"dimension":"force"}},
               "checks":[{"name":"drag_ok","status":"pass","value":{"value":800,"dimension":"force"},
                          "limit":{"value":1000,"dimension":"force"},"relation":"at_most",
                          "explanation":"within"}],
               "series":[{"name":"s","columns":[{"name":"x","dimension":"length"},{"name":"f","dimension":"force"}],
                          "rows":[[0,0],[1,40]]}],
               "notes":["two sides"]}"#,
        )
        .expect("good response");
        assert_eq!(
            outcome.outputs["drag"],
            Measure {
                value: 800.0,
                dimension: Dimension::Force
            }
        );
        assert_eq!(outcome.checks[0].status, Status::Pass);
        assert_eq!(
            outcome.series[0].rows,
            vec![vec![0.0, 0.0], vec![1.0, 40.0]]
        );
        assert_eq!(outcome.notes, vec!["two sides".to_string()]);
    }

    fn contract_text(result: Result<Outcome, Problem>) -> String {
        match result {
            Err(Problem::Contract(m)) => m,
            other => panic!("expected a contract problem, got {other:?}"),
        }
    }

    #[test]
    fn bad_responses_are_named_precisely() {
        let wrong_dim =
            read(r#"{"protocol":1,"outputs":{"drag":{"value":8,"dimension":"length"}}}"#);
        assert!(contract_text(wrong_dim)
            .contains("output `drag` should be a force (`force`) but the response gives a length"));
        let missing = read(r#"{"protocol":1,"outputs":{}}"#);
        assert!(contract_text(missing).contains("lacks output `drag`"));
        let extra = read(
            r#"{"protocol":1,"outputs":{"drag":{"value":8,"dimension":"force"},"lift":{"value":1,"dimension":"force"}}}"#,
        );
        assert!(contract_text(extra).contains("output `lift`, which the manifest does not declare"));
        let version = read(r#"{"protocol":2,"outputs":{}}"#);
        assert!(contract_text(version).contains("speaks protocol 2"));
        let unknown_field =
            read(r#"{"protocol":1,"outputs":{"drag":{"value":8,"dimension":"force"}},"extra":1}"#);
        assert!(contract_text(unknown_field).contains("unknown field `extra`"));
        let garbage = read("hello\n");
        assert!(contract_text(garbage).contains("not one JSON response"));
        let check = read(
            r#"{"protocol":1,"outputs":{"drag":{"value":8,"dimension":"force"}},
               "checks":[{"name":"drag_ok","status":"pass","value":{"value":9,"dimension":"force"},
                          "limit":{"value":5,"dimension":"force"},"relation":"at_most","explanation":"x"}]}"#,
        );
        assert!(contract_text(check).contains("say otherwise"));
        let undeclared_check = read(
            r#"{"protocol":1,"outputs":{"drag":{"value":8,"dimension":"force"}},
               "checks":[{"name":"other","status":"pass","relation":"condition","explanation":"x"}]}"#,
        );
        assert!(contract_text(undeclared_check)
            .contains("check `other`, which the manifest does not declare"));
    }

    #[test]
    fn non_finite_values_are_numerical_failures() {
        for text in [
            r#"{"protocol":1,"outputs":{"drag":{"value":NaN,"dimension":"force"}}}"#,
            r#"{"protocol":1,"outputs":{"drag":{"value":-Infinity,"dimension":"force"}}}"#,
            r#"{"protocol":1,"outputs":{"drag":{"value":null,"dimension":"force"}}}"#,
        ] {
            assert!(
                matches!(read(text), Err(Problem::Numerical { .. })),
                "{text} should be a numerical failure"
            );
        }
        // The word inside a string is no number.
        let note = read(
            r#"{"protocol":1,"outputs":{"drag":{"value":1,"dimension":"force"}},"notes":["NaN"]}"#,
        );
        assert!(note.is_ok());
    }

    #[test]
    fn a_refusal_becomes_the_modules_own_error() {
        let refused = read(
            r#"{"protocol":1,"error":{"kind":"input","input":"sides","message":"three sides cannot be sealed","expected":"1 or 2"}}"#,
        );
        match refused {
            Err(Problem::Refused(CalcError::Input { input, .. })) => assert_eq!(input, "sides"),
            other => panic!("expected a refusal, got {other:?}"),
        }
    }
}
