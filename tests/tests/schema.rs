//! The JSON Schema of item files (`packwright_core::schema`), checked with
//! an independent validator: every item of the demo project passes, and
//! items with the mistakes people make fail it, as they fail
//! `packwright check`.

use std::path::Path;

use packwright_api::units::UNITS;
use packwright_core::Registry;
use packwright_tests::repo_root;
use serde_json::{json, Value};

/// The built-in modules and the demo's external ones, registered as the
/// binary registers them for the demo project.
fn registry() -> Registry {
    let mut registry = builtins();
    let (project, _) = packwright_core::project::load(&demo()).expect("the demo loads");
    packwright_external::register(&mut registry, &demo(), &project.meta.modules)
        .expect("the demo's external modules register");
    registry
}

/// The built-in modules alone.
fn builtins() -> Registry {
    packwright::builtin::registry()
}

/// The schema for any project.
fn validator() -> jsonschema::Validator {
    let schema = packwright_core::schema::item_schema(&registry());
    jsonschema::draft202012::new(&schema).expect("the generated schema is a valid 2020-12 schema")
}

/// The schema that knows the demo's materials.
fn demo_validator() -> jsonschema::Validator {
    let (project, problems) = packwright_core::project::load(&demo()).expect("the demo loads");
    assert!(problems.is_empty(), "{problems}");
    let schema =
        packwright_core::schema::item_schema_with_materials(&registry(), &project.materials);
    jsonschema::draft202012::new(&schema).expect("the generated schema is a valid 2020-12 schema")
}

fn demo() -> std::path::PathBuf {
    repo_root().join("projects/harrow-creek")
}

/// Every item file of the demo, as (path relative to the project, JSON value).
fn demo_items() -> Vec<(String, Value)> {
    let root = demo();
    let mut items = Vec::new();
    let walker = walkdir::WalkDir::new(&root)
        .sort_by_file_name()
        .into_iter()
        .filter_entry(|e| {
            let name = e.file_name().to_string_lossy();
            e.depth() == 0
                || !(name.starts_with('.')
                    || (e.depth() == 1
                        && e.file_type().is_dir()
                        && [
                            "materials",
                            "results",
                            "package",
                            "issued",
                            "templates",
                            "modules",
                        ]
                        .contains(&name.as_ref())))
        });
    for entry in walker {
        let entry = entry.expect("demo tree readable");
        let path = entry.path();
        let is_yaml = matches!(
            path.extension().and_then(|e| e.to_str()),
            Some("yaml" | "yml")
        );
        if !is_yaml || entry.depth() == 1 && entry.file_name() == "project.yaml" {
            continue;
        }
        let rel = path
            .strip_prefix(&root)
            .unwrap()
            .to_string_lossy()
            .into_owned();
        let text = std::fs::read_to_string(path).expect("demo item readable");
        let value: Value = serde_yaml_ng::from_str(&text).expect("demo item is YAML");
        items.push((rel, value));
    }
    items
}

fn errors(validator: &jsonschema::Validator, item: &Value) -> Vec<String> {
    validator
        .iter_errors(item)
        .map(|e| format!("{} at {}", e, e.instance_path()))
        .collect()
}

#[test]
fn every_demo_item_satisfies_the_schema() {
    for validator in [validator(), demo_validator()] {
        every_demo_item_satisfies(&validator);
    }
}

fn every_demo_item_satisfies(validator: &jsonschema::Validator) {
    let items = demo_items();
    assert!(
        items.len() >= 10,
        "expected the demo's items, found {}",
        items.len()
    );
    let modules: std::collections::BTreeSet<&str> = items
        .iter()
        .filter_map(|(_, v)| v["module"].as_str())
        .collect();
    assert_eq!(
        modules.len(),
        registry().names().count(),
        "the demo uses every module"
    );
    for (file, item) in &items {
        let found = errors(validator, item);
        assert!(found.is_empty(), "{file}: {found:#?}");
    }
}

#[test]
fn the_schema_is_the_same_every_time_with_sorted_keys() {
    let a =
        serde_json::to_string_pretty(&packwright_core::schema::item_schema(&registry())).unwrap();
    let b =
        serde_json::to_string_pretty(&packwright_core::schema::item_schema(&registry())).unwrap();
    assert_eq!(a, b);
    fn keys_sorted(v: &Value) -> bool {
        match v {
            Value::Object(m) => {
                let keys: Vec<&String> = m.keys().collect();
                keys.windows(2).all(|w| w[0] < w[1]) && m.values().all(keys_sorted)
            }
            Value::Array(a) => a.iter().all(keys_sorted),
            _ => true,
        }
    }
    let parsed: Value = serde_json::from_str(&a).unwrap();
    assert!(keys_sorted(&parsed));
}

/// The CV-101 item of the demo, the base of the bad cases.
fn belt_item() -> (String, Value) {
    demo_items()
        .into_iter()
        .find(|(_, v)| v["id"] == "CV-101-LOAD")
        .expect("the demo has CV-101-LOAD")
}

/// Writes `item` over its file in a copy of the demo and runs the engine's
/// check on it, which must reject it as bad input too.
fn engine_rejects(file: &str, item: &Value) -> String {
    let dir = tempfile::tempdir().unwrap();
    copy_tree(&demo(), dir.path());
    std::fs::write(
        dir.path().join(file),
        serde_yaml_ng::to_string(item).unwrap(),
    )
    .unwrap();
    match packwright_core::check(dir.path(), &registry()) {
        Err(packwright_core::EngineError::BadInput(d)) => d.to_string(),
        Err(other) => panic!("expected bad input, got {other}"),
        Ok(_) => panic!("the engine accepted {item}"),
    }
}

fn copy_tree(from: &Path, to: &Path) {
    for entry in walkdir::WalkDir::new(from) {
        let entry = entry.unwrap();
        let rel = entry.path().strip_prefix(from).unwrap();
        let target = to.join(rel);
        if entry.file_type().is_dir() {
            std::fs::create_dir_all(&target).unwrap();
        } else {
            std::fs::copy(entry.path(), &target).unwrap();
        }
    }
}

/// A change that makes a good item bad.
type Spoil = Box<dyn Fn(&mut Value)>;

#[test]
fn bad_items_fail_the_schema_and_the_engine() {
    let validator = demo_validator();
    let any_project = self::validator();
    let (file, good) = belt_item();
    assert!(errors(&validator, &good).is_empty());
    let cases: Vec<(&str, Spoil)> = vec![
        (
            "unknown input",
            Box::new(|v| v["inputs"]["belt_sped"] = json!("4.5 m/s")),
        ),
        (
            "missing unit",
            Box::new(|v| v["inputs"]["belt_speed"] = json!("4.5")),
        ),
        (
            "bare number for a quantity",
            Box::new(|v| v["inputs"]["belt_speed"] = json!(4.5)),
        ),
        (
            "unknown unit",
            Box::new(|v| v["inputs"]["belt_speed"] = json!("4.5 furlongs")),
        ),
        (
            "wrong dimension",
            Box::new(|v| v["inputs"]["belt_speed"] = json!("4.5 kg")),
        ),
        (
            "missing required input",
            Box::new(|v| {
                let inputs = v["inputs"].as_object_mut().unwrap();
                inputs.remove("belt_speed");
            }),
        ),
        ("unknown key", Box::new(|v| v["input"] = json!({}))),
        (
            "unknown module",
            Box::new(|v| v["module"] = json!("belt-pikup")),
        ),
        (
            "no id",
            Box::new(|v| {
                v.as_object_mut().unwrap().remove("id");
            }),
        ),
        (
            "unknown criterion",
            Box::new(|v| v["criteria"]["max_skirt_length"] = json!("4 m")),
        ),
        (
            "link without ITEM.OUTPUT",
            Box::new(|v| v["inputs"]["feed_speed_along_belt"] = json!({ "from": "TC-01" })),
        ),
        (
            "plain number as text",
            Box::new(|v| v["inputs"]["belt_friction"] = json!("high")),
        ),
        (
            "plain number out of range",
            Box::new(|v| v["inputs"]["belt_friction"] = json!(2.5)),
        ),
        (
            "null input",
            Box::new(|v| v["inputs"]["belt_speed"] = Value::Null),
        ),
        (
            "unknown material",
            Box::new(|v| v["inputs"]["material"] = json!("iron-ore-fine")),
        ),
        (
            "material of the wrong kind",
            Box::new(|v| v["inputs"]["material"] = json!("g8-16-hoist-chain")),
        ),
    ];
    for (what, spoil) in &cases {
        let mut bad = good.clone();
        spoil(&mut bad);
        assert!(
            !validator.is_valid(&bad),
            "{what}: the schema accepted {bad}"
        );
        // Without the project's materials the schema cannot know which
        // inputs a material fills, nor which materials exist.
        let needs_materials = what.contains("material") || *what == "missing required input";
        assert_eq!(
            any_project.is_valid(&bad),
            needs_materials,
            "{what}: the schema for any project"
        );
        engine_rejects(&file, &bad);
    }
}

#[test]
fn bad_choices_and_kinds_fail_in_other_modules() {
    let validator = validator();
    let items = demo_items();
    let by_module = |module: &str| {
        items
            .iter()
            .find(|(_, v)| v["module"] == module)
            .cloned()
            .unwrap_or_else(|| panic!("the demo has a {module} item"))
    };
    let (hoist_file, hoist) = by_module("hoist-loads");
    let (hopper_file, hopper) = by_module("hopper-outlet");
    let (chain_file, chain) = by_module("chain-payout");
    let (chute_file, chute) = by_module("chute-discharge");
    let cases: Vec<(&str, &str, Value, Spoil)> = vec![
        (
            "wrong choice",
            &hoist_file,
            hoist.clone(),
            Box::new(|v| v["inputs"]["basis"] = json!("en-13001")),
        ),
        (
            "count that is not whole",
            &hoist_file,
            hoist.clone(),
            Box::new(|v| v["inputs"]["falls"] = json!(2.5)),
        ),
        (
            "missing required quantity",
            &hoist_file,
            hoist.clone(),
            Box::new(|v| {
                v["inputs"].as_object_mut().unwrap().remove("hoisted_mass");
            }),
        ),
        (
            "missing required choice",
            &hoist_file,
            hoist,
            Box::new(|v| {
                v["inputs"].as_object_mut().unwrap().remove("basis");
            }),
        ),
        (
            "wrong choice",
            &hopper_file,
            hopper,
            Box::new(|v| v["inputs"]["outlet_shape"] = json!("square")),
        ),
        (
            "material that is not an id",
            &chain_file,
            chain,
            Box::new(|v| v["inputs"]["chain"] = json!("g8 16 chain")),
        ),
        (
            "structured input given as one value",
            &chute_file,
            chute,
            Box::new(|v| v["inputs"]["chute"] = json!("a plate and a spoon")),
        ),
    ];
    for (what, file, good, spoil) in &cases {
        let found = errors(&validator, good);
        assert!(found.is_empty(), "{file}: {found:#?}");
        let mut bad = good.clone();
        spoil(&mut bad);
        assert!(
            !validator.is_valid(&bad),
            "{what} in {file}: the schema accepted {bad}"
        );
        engine_rejects(file, &bad);
    }
}

#[test]
fn every_spelling_of_a_unit_of_the_right_dimension_is_accepted() {
    let validator = validator();
    let (_, good) = belt_item();
    // belt-pickup's inputs cover these dimensions.
    let inputs = [
        ("mass_flow", packwright_api::Dimension::MassRate),
        ("belt_speed", packwright_api::Dimension::Velocity),
        ("belt_slope", packwright_api::Dimension::Angle),
        ("skirt_width", packwright_api::Dimension::Length),
        ("bulk_density", packwright_api::Dimension::Density),
    ];
    for (input, dimension) in inputs {
        for unit in UNITS {
            for symbol in unit.symbols {
                let mut item = good.clone();
                item["inputs"][input] = json!(format!("1.5 {symbol}"));
                assert_eq!(
                    validator.is_valid(&item),
                    unit.dimension == dimension,
                    "`1.5 {symbol}` for {input}"
                );
            }
        }
        let mut item = good.clone();
        item["inputs"][input] = json!({ "from": "TC-01.exit_speed_along_belt" });
        assert!(validator.is_valid(&item), "a link for {input}");
    }
    for text in ["-2.5e1 deg", " 3deg ", ".5 rad", "7. °"] {
        let mut item = good.clone();
        item["inputs"]["belt_slope"] = json!(text);
        assert!(validator.is_valid(&item), "`{text}`");
        assert!(
            packwright_api::units::parse_expecting(text, packwright_api::Dimension::Angle).is_ok()
        );
    }
}
