//! The JSON Schema (draft 2020-12) of item files, generated from the
//! registered modules' declarations, so that an editor can check and
//! complete an item while it is typed (`packwright schema`).
//!
//! The schema mirrors what `load` and `resolve` accept as closely as JSON
//! Schema can say it: the item's own keys, one branch per module with every
//! input (its kind, the units of its dimension, its default, its range for
//! plain numbers), the `{ from: ITEM.OUTPUT }` link form, and the criteria.
//! What it cannot say (ranges of quantities written with a unit, whether a
//! named material or linked item exists, the shape inside a structured
//! input) is left to `packwright check`, which stays the authority.
//!
//! Depends on the registry and the plug-in contract only; names no module.
//! Owns no state.

use std::collections::BTreeMap;

use packwright_api::units::UNITS;
use packwright_api::{CriterionSpec, Dimension, InputKind, InputSpec, ModuleDeclaration, Need};
use serde_json::{json, Map, Value};

use crate::project::Material;
use crate::Registry;

/// Materials by id, as [`crate::Project::materials`] holds them.
pub type Materials = BTreeMap<String, Material>;

/// The draft the schema is written in.
pub const DRAFT: &str = "https://json-schema.org/draft/2020-12/schema";

/// The number grammar of Rust's `f64` parser (finite numbers only), which
/// the quantity parser applies to the text before the unit.
const NUMBER: &str = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?";

/// Item and material ids, as `project::valid_id` accepts them.
const ID: &str = "^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$";

/// The JSON Schema of an item file for the modules in `registry`, for any
/// project.
///
/// Without a project's materials the schema cannot know which inputs a
/// named material fills, so an item that names a material needs none of
/// its module's other required inputs here (`packwright check` still
/// finds what is missing); [`item_schema_with_materials`] knows.
///
/// Deterministic: the same registry gives the same value, with every
/// object's keys in sorted order whatever map type `serde_json` was built
/// with.
pub fn item_schema(registry: &Registry) -> Value {
    build(registry, None)
}

/// The JSON Schema of an item file of one project: as [`item_schema`],
/// but a material input takes only the ids of that project's materials of
/// its kind, and an item naming one of them must still give every required
/// input that the material's properties do not fill.
pub fn item_schema_with_materials(registry: &Registry, materials: &Materials) -> Value {
    build(registry, Some(materials))
}

fn build(registry: &Registry, materials: Option<&Materials>) -> Value {
    let names: Vec<&str> = registry.names().collect();
    let branches: Vec<Value> = registry
        .iter()
        .map(|r| module_branch(&r.declaration, materials))
        .collect();
    let schema = json!({
        "$schema": DRAFT,
        "title": "packwright item file",
        "description": "One calculation item: which module computes it and with what inputs. \
            Files under materials/ and project.yaml have formats of their own and are not items.",
        "type": "object",
        "properties": {
            "id": {
                "description": "Unique id of the item in the project; links name it as `ID.OUTPUT`.",
                "type": "string",
                "pattern": ID,
                "examples": ["CV-101-LOAD"]
            },
            "module": {
                "description": "The calculation module that computes the item (see `packwright modules`).",
                "enum": names
            },
            "title": {
                "description": "What the item is, in a line, for the package.",
                "type": ["string", "number", "null"]
            },
            "inputs": {
                "description": "The module's inputs, each `name: value`; a quantity is a number with a unit.",
                "type": "object"
            },
            "criteria": {
                "description": "Overrides of the module's acceptance limits.",
                "type": "object"
            },
            "notes": {
                "description": "Free text that goes into the package.",
                "type": ["string", "number", "null"]
            }
        },
        "required": ["id", "module"],
        "additionalProperties": false,
        "allOf": branches,
        "$defs": {
            "link": {
                "description": "Takes another item's output: `{ from: ITEM.OUTPUT }`.",
                "type": "object",
                "properties": {
                    "from": {
                        "type": "string",
                        "pattern": "^[A-Za-z0-9][A-Za-z0-9_-]{0,63}\\.[^.\\s]+$",
                        "examples": ["TC-01.exit_speed_along_belt"]
                    }
                },
                "required": ["from"],
                "additionalProperties": false
            }
        }
    });
    sorted(schema)
}

/// The `if module is X then its inputs and criteria are these` branch.
fn module_branch(decl: &ModuleDeclaration, known: Option<&Materials>) -> Value {
    let inputs: Map<String, Value> = decl
        .inputs
        .iter()
        .map(|spec| (spec.name.clone(), input_schema(spec, known)))
        .collect();
    let required: Vec<&str> = decl
        .inputs
        .iter()
        .filter(|spec| spec.need == Need::Required)
        .map(|spec| spec.name.as_str())
        .collect();
    let materials: Vec<(&str, &str)> = decl
        .inputs
        .iter()
        .filter_map(|spec| match &spec.kind {
            InputKind::Material { material_kind } => {
                Some((spec.name.as_str(), material_kind.as_str()))
            }
            _ => None,
        })
        .collect();
    let mut inputs_schema = json!({
        "description": format!("Inputs of module `{}` {}: {}", decl.name, decl.version, decl.purpose),
        "type": "object",
        "properties": inputs,
        "additionalProperties": false
    });
    if !required.is_empty() {
        if materials.is_empty() {
            inputs_schema["required"] = json!(required);
        } else {
            // A named material fills the inputs its properties name: either
            // the item gives every required input, or it names a material
            // and gives the required inputs that material does not fill.
            let mut either = vec![json!({ "required": required })];
            for (input, kind) in &materials {
                match known {
                    // Only the material file says what it fills.
                    None => either.push(json!({ "required": [input] })),
                    Some(known) => {
                        for material in known.values().filter(|m| m.kind == *kind) {
                            let mut still: Vec<&str> = vec![input];
                            still.extend(required.iter().copied().filter(|name| {
                                !material.properties.iter().any(|(p, _)| p == name)
                            }));
                            either.push(json!({
                                "properties": { *input: { "const": material.id } },
                                "required": still
                            }));
                        }
                    }
                }
            }
            inputs_schema["anyOf"] = Value::Array(either);
        }
    }
    let criteria: Map<String, Value> = decl
        .criteria
        .iter()
        .map(|c| (c.name.clone(), criterion_schema(c)))
        .collect();
    let mut then = json!({
        "properties": {
            "inputs": inputs_schema,
            "criteria": {
                "type": "object",
                "properties": criteria,
                "additionalProperties": false
            }
        }
    });
    if !required.is_empty() {
        then["required"] = json!(["inputs"]);
    }
    json!({
        "if": {
            "properties": { "module": { "const": decl.name } },
            "required": ["module"]
        },
        "then": then
    })
}

/// The schema of one input's value.
fn input_schema(spec: &InputSpec, known: Option<&Materials>) -> Value {
    let mut description = spec.meaning.clone();
    let mut schema = match &spec.kind {
        InputKind::Quantity { dimension } => {
            description.push_str(&format!(
                " Takes {} with a unit, such as `{}`.",
                dimension.describe(),
                dimension.example()
            ));
            json!({ "anyOf": [quantity_schema(*dimension), link_ref()] })
        }
        InputKind::Number => {
            let mut number = json!({ "type": "number" });
            add_range(&mut number, spec);
            json!({ "anyOf": [
                number,
                { "type": "string", "pattern": format!(r"^\s*{NUMBER}\s*$") },
                link_ref()
            ] })
        }
        InputKind::Count => {
            let mut count = json!({ "type": "integer", "minimum": 0 });
            add_range(&mut count, spec);
            json!({ "anyOf": [count, { "type": "string", "pattern": r"^\s*\+?[0-9]+\s*$" }] })
        }
        InputKind::Choice { options } => json!({ "enum": options }),
        InputKind::Flag => json!({ "enum": [true, false, "true", "false", "yes", "no"] }),
        InputKind::Material { material_kind } => {
            description.push_str(&format!(
                " The id of a {material_kind} material in materials/."
            ));
            let ids: Vec<&str> = known
                .map(|k| {
                    k.values()
                        .filter(|m| &m.kind == material_kind)
                        .map(|m| m.id.as_str())
                        .collect()
                })
                .unwrap_or_default();
            if ids.is_empty() {
                json!({ "type": "string", "pattern": ID })
            } else {
                json!({ "enum": ids })
            }
        }
        InputKind::Structured { shape } => {
            description.push_str(&format!(" Shape: {shape}"));
            json!({ "type": ["array", "object"] })
        }
    };
    if let Some(range) = range_words(spec) {
        description.push_str(&format!(" Allowed: {range}."));
    }
    schema["description"] = Value::String(description);
    if let Need::Default(text) = &spec.need {
        schema["default"] = default_value(&spec.kind, text);
    }
    schema
}

/// The schema of one criterion's limit.
fn criterion_schema(c: &CriterionSpec) -> Value {
    let mut schema = if c.dimension == Dimension::Dimensionless {
        json!({ "anyOf": [
            { "type": "number" },
            { "type": "string", "pattern": format!(r"^\s*{NUMBER}\s*$") }
        ] })
    } else {
        quantity_schema(c.dimension)
    };
    schema["description"] = Value::String(format!("{} ({})", c.meaning, c.basis));
    if let Some(text) = &c.default {
        let kind = if c.dimension == Dimension::Dimensionless {
            InputKind::Number
        } else {
            InputKind::Quantity {
                dimension: c.dimension,
            }
        };
        schema["default"] = default_value(&kind, text);
    }
    schema
}

/// A string of a number and one of the spellings of a unit of `dimension`.
fn quantity_schema(dimension: Dimension) -> Value {
    let spellings: Vec<&str> = UNITS
        .iter()
        .filter(|u| u.dimension == dimension)
        .flat_map(|u| u.symbols.iter().copied())
        .collect();
    let units = spellings
        .iter()
        .map(|s| escape_regex(s))
        .collect::<Vec<_>>()
        .join("|");
    // A dimensionless quantity may also be written without a unit.
    let unit_part = if dimension == Dimension::Dimensionless {
        format!(r"(?:\s*(?:{units}))?")
    } else {
        format!(r"\s*(?:{units})")
    };
    json!({
        "type": "string",
        "pattern": format!(r"^\s*{NUMBER}{unit_part}\s*$"),
        "examples": [dimension.example()]
    })
}

fn link_ref() -> Value {
    json!({ "$ref": "#/$defs/link" })
}

/// Adds `minimum`/`maximum` keywords for a plain-number input's range.
fn add_range(schema: &mut Value, spec: &InputSpec) {
    if let Some(b) = spec.range.min {
        let key = if b.inclusive {
            "minimum"
        } else {
            "exclusiveMinimum"
        };
        schema[key] = json!(b.value);
    }
    if let Some(b) = spec.range.max {
        let key = if b.inclusive {
            "maximum"
        } else {
            "exclusiveMaximum"
        };
        schema[key] = json!(b.value);
    }
}

/// The range in words, in SI units, for the description.
fn range_words(spec: &InputSpec) -> Option<String> {
    let unit = match spec.kind.dimension() {
        Some(Dimension::Dimensionless) | None => String::new(),
        Some(d) => format!(" {}", d.si_unit()),
    };
    let show = |b: &packwright_api::Bound, incl: &str, excl: &str| {
        format!(
            "{} {}{unit}",
            if b.inclusive { incl } else { excl },
            packwright_api::units::format_significant(b.value, 4)
        )
    };
    let mut words = Vec::new();
    if let Some(b) = &spec.range.min {
        words.push(show(b, "at least", "more than"));
    }
    if let Some(b) = &spec.range.max {
        words.push(show(b, "at most", "less than"));
    }
    (!words.is_empty()).then(|| words.join(" and "))
}

/// A default as the JSON value an editor would insert.
fn default_value(kind: &InputKind, text: &str) -> Value {
    match kind {
        InputKind::Number => text
            .trim()
            .parse::<f64>()
            .ok()
            .and_then(serde_json::Number::from_f64)
            .map(Value::Number)
            .unwrap_or_else(|| Value::String(text.into())),
        InputKind::Count => text
            .trim()
            .parse::<u64>()
            .map(Value::from)
            .unwrap_or_else(|_| Value::String(text.into())),
        InputKind::Flag => match text.trim() {
            "true" | "yes" => Value::Bool(true),
            "false" | "no" => Value::Bool(false),
            _ => Value::String(text.into()),
        },
        _ => Value::String(text.into()),
    }
}

/// Escapes the characters that are special in an ECMA-262 regular
/// expression (the dialect JSON Schema's `pattern` uses).
fn escape_regex(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if "\\^$.|?*+()[]{}".contains(c) {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

/// Rebuilds every object with its keys inserted in sorted order, so the
/// printed schema is the same whether or not `serde_json` keeps insertion
/// order (another crate in the build may turn that feature on).
fn sorted(value: Value) -> Value {
    match value {
        Value::Object(map) => {
            let mut entries: Vec<(String, Value)> = map.into_iter().collect();
            entries.sort_by(|a, b| a.0.cmp(&b.0));
            Value::Object(entries.into_iter().map(|(k, v)| (k, sorted(v))).collect())
        }
        Value::Array(items) => Value::Array(items.into_iter().map(sorted).collect()),
        other => other,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn regex_metacharacters_are_escaped() {
        assert_eq!(escape_regex("ft*lbf"), r"ft\*lbf");
        assert_eq!(escape_regex("m^2"), r"m\^2");
        assert_eq!(escape_regex("ft.lbf"), r"ft\.lbf");
        assert_eq!(escape_regex("m/s"), "m/s");
    }

    #[test]
    fn defaults_become_json_values_of_their_kind() {
        assert_eq!(default_value(&InputKind::Number, "0.58"), json!(0.58));
        assert_eq!(default_value(&InputKind::Count, "4"), json!(4));
        assert_eq!(default_value(&InputKind::Flag, "false"), json!(false));
        let speed = InputKind::Quantity {
            dimension: Dimension::Velocity,
        };
        assert_eq!(default_value(&speed, "0 m/s"), json!("0 m/s"));
    }

    #[test]
    fn an_empty_registry_gives_a_schema_without_branches() {
        let schema = item_schema(&Registry::new());
        assert_eq!(schema["$schema"], DRAFT);
        assert_eq!(schema["allOf"], json!([]));
        assert_eq!(schema["properties"]["module"]["enum"], json!([]));
    }
}
