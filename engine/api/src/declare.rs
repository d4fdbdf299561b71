//! What a module declares about itself: inputs, outputs, criteria, checks,
//! method, assumptions, cautions and references.
//!
//! The declaration is plain data (serde both ways) so that the engine can
//! validate items against it, `packwright explain` can print it, the JSON
//! Schema can be generated from it, the package can typeset it, and an
//! external module can ship it as a YAML manifest. Owns no state.

use crate::units::{find_unit, parse_expecting, Dimension};
use serde::{Deserialize, Serialize};

/// A module's full declaration.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ModuleDeclaration {
    /// The name items use in `module:` (lower case with hyphens).
    pub name: String,
    /// Semantic version; it enters every result file and the cache key.
    pub version: String,
    /// One line: what the module calculates.
    pub purpose: String,
    /// The inputs an item may give, in the order the package lists them.
    pub inputs: Vec<InputSpec>,
    /// The outputs the module computes, in the order results list them.
    pub outputs: Vec<OutputSpec>,
    /// Acceptance criteria whose limits an item may override under `criteria:`.
    #[serde(default)]
    pub criteria: Vec<CriterionSpec>,
    /// The checks the module may report.
    #[serde(default)]
    pub checks: Vec<CheckSpec>,
    /// The method, step by step, with equations in Typst math.
    #[serde(default)]
    pub method: Vec<MethodStep>,
    /// Assumptions the method rests on.
    #[serde(default)]
    pub assumptions: Vec<String>,
    /// Cautions for the people who build and run the equipment.
    #[serde(default)]
    pub cautions: Vec<String>,
    /// Published sources, each with edition and clause where known.
    #[serde(default)]
    pub references: Vec<String>,
}

/// One input of a module.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct InputSpec {
    /// The key in the item's `inputs:` mapping.
    pub name: String,
    /// What kind of value it takes.
    pub kind: InputKind,
    /// Whether it must be given, may be left out, or has a default.
    #[serde(default)]
    pub need: Need,
    /// Allowed range in SI coherent units (for quantities and numbers).
    #[serde(default, skip_serializing_if = "Range::is_open")]
    pub range: Range,
    /// What the input means, in plain words, with its symbol.
    pub meaning: String,
}

/// The kinds of input value.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum InputKind {
    /// A number with a unit of this dimension (`"4.5 m/s"`).
    Quantity {
        /// The dimension the unit must have.
        dimension: Dimension,
    },
    /// A plain number without unit (a friction coefficient, a factor).
    Number,
    /// A whole number (number of rope falls).
    Count,
    /// One of a fixed set of words.
    Choice {
        /// The allowed words.
        options: Vec<String>,
    },
    /// `true` or `false`.
    Flag,
    /// The id of a named material or chain in `materials/`; its properties
    /// fill the item's inputs of the same names that the item leaves out.
    Material {
        /// The material kind expected (`bulk`, `chain`).
        material_kind: String,
    },
    /// A structured value (a list of chute segments) that the module reads
    /// from the position-keeping tree.
    Structured {
        /// What shape is expected, in words, with a short example.
        shape: String,
    },
}

impl InputKind {
    /// The dimension, for a quantity input.
    pub fn dimension(&self) -> Option<Dimension> {
        match self {
            InputKind::Quantity { dimension } => Some(*dimension),
            InputKind::Number => Some(Dimension::Dimensionless),
            _ => None,
        }
    }
}

/// Whether an input must be given.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Default)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum Need {
    /// The item (or its material) must give it.
    #[default]
    Required,
    /// It may be left out; the module does without.
    Optional,
    /// Left out, it takes this value, written as an item would write it.
    Default(String),
}

/// An allowed range in SI coherent units. Either bound may be open.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq, Default)]
#[serde(deny_unknown_fields)]
pub struct Range {
    /// Lower bound, if any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min: Option<Bound>,
    /// Upper bound, if any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max: Option<Bound>,
}

/// One end of a range.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Bound {
    /// The bound in SI coherent units.
    pub value: f64,
    /// Whether the bound itself is allowed.
    pub inclusive: bool,
}

impl Range {
    /// No bounds.
    pub fn is_open(&self) -> bool {
        self.min.is_none() && self.max.is_none()
    }

    /// Whether `x` lies in the range.
    pub fn contains(&self, x: f64) -> bool {
        let above = match self.min {
            None => true,
            Some(b) if b.inclusive => x >= b.value,
            Some(b) => x > b.value,
        };
        let below = match self.max {
            None => true,
            Some(b) if b.inclusive => x <= b.value,
            Some(b) => x < b.value,
        };
        above && below
    }
}

/// One output of a module.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct OutputSpec {
    /// The key in result files and in links (`ITEM.OUTPUT`).
    pub name: String,
    /// What it measures.
    pub dimension: Dimension,
    /// What it means, in plain words, with its symbol.
    pub meaning: String,
    /// Unit shown in an SI package.
    pub si_unit: String,
    /// Unit shown in a US customary package.
    pub us_unit: String,
    /// Whether some cases of the module leave it out.
    #[serde(default)]
    pub optional: bool,
    /// Whether the summary table shows it as the item's key result.
    #[serde(default)]
    pub key: bool,
}

/// An acceptance criterion: a limit with a default that an item may override.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct CriterionSpec {
    /// The key under the item's `criteria:`.
    pub name: String,
    /// The dimension of the limit (dimensionless for a ratio).
    pub dimension: Dimension,
    /// The default limit, written as an item would write it; none means the
    /// check runs only when the item gives a limit.
    #[serde(default)]
    pub default: Option<String>,
    /// What it limits.
    pub meaning: String,
    /// Where the default comes from ("common practice, no source" if so).
    pub basis: String,
}

/// A check that a module may report.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct CheckSpec {
    /// The check's name in result files.
    pub name: String,
    /// What passing means.
    pub meaning: String,
}

/// One step of the method: words, and an optional equation in Typst math.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct MethodStep {
    /// Plain text (escaped when typeset).
    pub text: String,
    /// Typst math without the surrounding `$` (trusted: it comes from the
    /// module, never from a project file).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub equation: Option<String>,
}

/// Builders, so a module's declaration reads as a list.
impl InputSpec {
    /// A required quantity input of `dimension`.
    pub fn quantity(name: &str, dimension: Dimension, meaning: &str) -> InputSpec {
        InputSpec {
            name: name.into(),
            kind: InputKind::Quantity { dimension },
            need: Need::Required,
            range: Range::default(),
            meaning: meaning.into(),
        }
    }

    /// A required plain-number input.
    pub fn number(name: &str, meaning: &str) -> InputSpec {
        InputSpec {
            kind: InputKind::Number,
            ..InputSpec::quantity(name, Dimension::Dimensionless, meaning)
        }
    }

    /// A required whole-number input.
    pub fn count(name: &str, meaning: &str) -> InputSpec {
        InputSpec {
            kind: InputKind::Count,
            ..InputSpec::quantity(name, Dimension::Dimensionless, meaning)
        }
    }

    /// A required choice among `options`.
    pub fn choice(name: &str, options: &[&str], meaning: &str) -> InputSpec {
        InputSpec {
            kind: InputKind::Choice {
                options: options.iter().map(|s| s.to_string()).collect(),
            },
            ..InputSpec::quantity(name, Dimension::Dimensionless, meaning)
        }
    }

    /// A required true/false input.
    pub fn flag(name: &str, meaning: &str) -> InputSpec {
        InputSpec {
            kind: InputKind::Flag,
            ..InputSpec::quantity(name, Dimension::Dimensionless, meaning)
        }
    }

    /// A reference to a named material of `material_kind`.
    pub fn material(name: &str, material_kind: &str, meaning: &str) -> InputSpec {
        InputSpec {
            kind: InputKind::Material {
                material_kind: material_kind.into(),
            },
            ..InputSpec::quantity(name, Dimension::Dimensionless, meaning)
        }
    }

    /// A structured input of the described shape.
    pub fn structured(name: &str, shape: &str, meaning: &str) -> InputSpec {
        InputSpec {
            kind: InputKind::Structured {
                shape: shape.into(),
            },
            ..InputSpec::quantity(name, Dimension::Dimensionless, meaning)
        }
    }

    /// Makes the input optional.
    pub fn optional(mut self) -> InputSpec {
        self.need = Need::Optional;
        self
    }

    /// Gives the input a default, written as an item would write it.
    pub fn default(mut self, value: &str) -> InputSpec {
        self.need = Need::Default(value.into());
        self
    }

    /// Requires `value >= min` (SI).
    pub fn at_least(mut self, min: f64) -> InputSpec {
        self.range.min = Some(Bound {
            value: min,
            inclusive: true,
        });
        self
    }

    /// Requires `value > min` (SI).
    pub fn above(mut self, min: f64) -> InputSpec {
        self.range.min = Some(Bound {
            value: min,
            inclusive: false,
        });
        self
    }

    /// Requires `value <= max` (SI).
    pub fn at_most(mut self, max: f64) -> InputSpec {
        self.range.max = Some(Bound {
            value: max,
            inclusive: true,
        });
        self
    }

    /// Requires `value < max` (SI).
    pub fn below(mut self, max: f64) -> InputSpec {
        self.range.max = Some(Bound {
            value: max,
            inclusive: false,
        });
        self
    }
}

impl OutputSpec {
    /// An output with its SI and US display units.
    pub fn new(
        name: &str,
        dimension: Dimension,
        si_unit: &str,
        us_unit: &str,
        meaning: &str,
    ) -> OutputSpec {
        OutputSpec {
            name: name.into(),
            dimension,
            meaning: meaning.into(),
            si_unit: si_unit.into(),
            us_unit: us_unit.into(),
            optional: false,
            key: false,
        }
    }

    /// A plain-number output (a ratio, a factor).
    pub fn number(name: &str, meaning: &str) -> OutputSpec {
        OutputSpec::new(name, Dimension::Dimensionless, "1", "1", meaning)
    }

    /// Marks the output as left out by some cases.
    pub fn optional(mut self) -> OutputSpec {
        self.optional = true;
        self
    }

    /// Marks the output as the item's key result in the summary.
    pub fn key(mut self) -> OutputSpec {
        self.key = true;
        self
    }
}

impl CriterionSpec {
    /// A criterion with a default limit and the basis of that default.
    pub fn new(
        name: &str,
        dimension: Dimension,
        default: Option<&str>,
        meaning: &str,
        basis: &str,
    ) -> CriterionSpec {
        CriterionSpec {
            name: name.into(),
            dimension,
            default: default.map(Into::into),
            meaning: meaning.into(),
            basis: basis.into(),
        }
    }
}

impl CheckSpec {
    /// A check and what passing means.
    pub fn new(name: &str, meaning: &str) -> CheckSpec {
        CheckSpec {
            name: name.into(),
            meaning: meaning.into(),
        }
    }
}

impl MethodStep {
    /// A step of words only.
    pub fn text(text: &str) -> MethodStep {
        MethodStep {
            text: text.into(),
            equation: None,
        }
    }

    /// A step with an equation in Typst math.
    pub fn equation(text: &str, equation: &str) -> MethodStep {
        MethodStep {
            text: text.into(),
            equation: Some(equation.into()),
        }
    }
}

impl ModuleDeclaration {
    /// The input named `name`.
    pub fn input(&self, name: &str) -> Option<&InputSpec> {
        self.inputs.iter().find(|i| i.name == name)
    }

    /// The output named `name`.
    pub fn output(&self, name: &str) -> Option<&OutputSpec> {
        self.outputs.iter().find(|o| o.name == name)
    }

    /// The criterion named `name`.
    pub fn criterion(&self, name: &str) -> Option<&CriterionSpec> {
        self.criteria.iter().find(|c| c.name == name)
    }

    /// Checks the declaration for mistakes a module author can make: unknown
    /// display units, defaults that do not parse, duplicate names. Every
    /// module's tests call this; the engine calls it on registration.
    pub fn validate(&self) -> Result<(), Vec<String>> {
        let mut problems = Vec::new();
        let is_name = |s: &str| {
            !s.is_empty()
                && s.chars()
                    .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_' || c == '-')
        };
        if !is_name(&self.name) {
            problems.push(format!(
                "module name `{}` is not lower-case words",
                self.name
            ));
        }
        let mut seen = std::collections::BTreeSet::new();
        for input in &self.inputs {
            if !seen.insert(input.name.as_str()) || !is_name(&input.name) {
                problems.push(format!(
                    "input `{}` is duplicated or badly named",
                    input.name
                ));
            }
            if let (Need::Default(text), Some(dimension)) = (&input.need, input.kind.dimension()) {
                match parse_expecting(text, dimension) {
                    Ok(q) if !input.range.contains(q.value_si) => problems.push(format!(
                        "default `{text}` of input `{}` is outside its range",
                        input.name
                    )),
                    Ok(_) => {}
                    Err(e) => problems.push(format!(
                        "default `{text}` of input `{}` does not parse: {e}",
                        input.name
                    )),
                }
            }
            if let (Need::Default(text), InputKind::Choice { options }) = (&input.need, &input.kind)
            {
                if !options.contains(text) {
                    problems.push(format!(
                        "default `{text}` of `{}` is not an option",
                        input.name
                    ));
                }
            }
        }
        let mut seen = std::collections::BTreeSet::new();
        for output in &self.outputs {
            if !seen.insert(output.name.as_str()) || !is_name(&output.name) {
                problems.push(format!(
                    "output `{}` is duplicated or badly named",
                    output.name
                ));
            }
            for unit in [&output.si_unit, &output.us_unit] {
                if find_unit(unit).map(|u| u.dimension) != Some(output.dimension) {
                    problems.push(format!(
                        "display unit `{unit}` of output `{}` is not a unit of {}",
                        output.name,
                        output.dimension.describe()
                    ));
                }
            }
        }
        for criterion in &self.criteria {
            if let Some(text) = &criterion.default {
                if let Err(e) = parse_expecting(text, criterion.dimension) {
                    problems.push(format!(
                        "default `{text}` of criterion `{}` does not parse: {e}",
                        criterion.name
                    ));
                }
            }
        }
        if problems.is_empty() {
            Ok(())
        } else {
            Err(problems)
        }
    }
}
