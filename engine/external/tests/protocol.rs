//! The protocol's JSON Schemas, its examples and the code agree: the
//! examples validate against the schemas, requests the engine builds
//! validate against the request schema, the example response is accepted
//! by the response reader with the demo module's declaration, and the
//! schemas refuse what the reader refuses.

use std::path::PathBuf;
use std::sync::Arc;

use packwright_api::{Inputs, Node, NodeValue, Span, Value};
use packwright_external::protocol::{read_response, Request};
use serde_json::json;

/// `path` from this crate's folder, as cargo names it when it runs the test
/// (a shared target folder may hold this test built from another checkout).
fn here(path: &str) -> PathBuf {
    std::env::var_os("CARGO_MANIFEST_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")))
        .join(path)
}

fn json_file(path: &str) -> serde_json::Value {
    let text = std::fs::read_to_string(here(path)).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn validator(path: &str) -> jsonschema::Validator {
    jsonschema::validator_for(&json_file(path))
        .unwrap_or_else(|e| panic!("{path} is a schema: {e}"))
}

fn errors(v: &jsonschema::Validator, instance: &serde_json::Value) -> Vec<String> {
    v.iter_errors(instance)
        .map(|e| format!("{} at {}", e, e.instance_path()))
        .collect()
}

fn demo_declaration() -> packwright_api::ModuleDeclaration {
    let path = "../../projects/harrow-creek/modules/skirt-seal/module.yaml";
    let bytes = std::fs::read(here(path)).expect("the demo manifest");
    packwright_external::manifest::parse(&Arc::from("module.yaml"), &bytes)
        .expect("the demo manifest reads")
        .declaration
}

#[test]
fn the_examples_follow_the_schemas() {
    let request = validator("protocol/request.schema.json");
    let response = validator("protocol/response.schema.json");
    let example = json_file("protocol/example-request.json");
    assert_eq!(errors(&request, &example), Vec::<String>::new());
    let example = json_file("protocol/example-response.json");
    assert_eq!(errors(&response, &example), Vec::<String>::new());
}

#[test]
fn the_example_response_is_accepted_for_the_demo_module() {
    let bytes = std::fs::read(here("protocol/example-response.json")).expect("example");
    let outcome = read_response(&bytes, &demo_declaration()).expect("the reader accepts it");
    assert_eq!(outcome.outputs.len(), 5);
    assert_eq!(outcome.plots[0].layers.len(), 2);
}

#[test]
fn requests_the_engine_builds_follow_the_request_schema() {
    let request = validator("protocol/request.schema.json");
    let decl = demo_declaration();
    let mut inputs = Inputs::from_text(
        &decl,
        &[
            ("skirt_length", "20 ft"),
            ("belt_speed", "500 fpm"),
            ("mass_flow", "1000 stph"),
            ("material", "lump-ore"),
            ("skirt_friction", "0.5"),
            ("max_skirt_power", "5 hp"),
        ],
    )
    .expect("inputs");
    inputs.item = "CV-9".into();
    // A structured value and a choice and a flag, which the demo module
    // does not take, must follow the schema too.
    let span = Span::new("x.yaml", 1, 1);
    let leaf = |v| Node {
        value: v,
        span: span.clone(),
    };
    let inputs = inputs.with_structured(
        "path",
        leaf(NodeValue::List(vec![
            leaf(NodeValue::Number(1.0)),
            leaf(NodeValue::Text("1 m".into())),
        ])),
    );
    let mut inputs = inputs;
    for (name, value) in [
        ("mode", Value::Choice("fast".into())),
        ("worn", Value::Flag(true)),
    ] {
        inputs.values.insert(
            name.into(),
            packwright_api::ResolvedInput {
                value,
                origin: packwright_api::Origin::Default,
                written: String::new(),
            },
        );
    }
    let wire: serde_json::Value =
        serde_json::from_slice(&Request::new(&decl, &inputs).to_bytes()).expect("json");
    assert_eq!(errors(&request, &wire), Vec::<String>::new(), "{wire}");
    assert_eq!(wire["inputs"]["sealed_sides"], json!({"count": 2}));
    assert_eq!(wire["inputs"]["material"], json!({"material": "lump-ore"}));
    assert_eq!(
        wire["criteria"]["max_skirt_power"]["dimension"],
        json!("power")
    );
    assert_eq!(wire["inputs"]["path"], json!({"structured": [1.0, "1 m"]}));
}

#[test]
fn the_response_schema_refuses_what_the_reader_refuses() {
    let response = validator("protocol/response.schema.json");
    let decl = demo_declaration();
    let good = json_file("protocol/example-response.json");
    let mut cases = Vec::new();
    let mut bad = good.clone();
    bad["protocol"] = json!(2);
    cases.push(("another protocol", bad));
    let mut bad = good.clone();
    bad["outputs"]["skirt_power"]["value"] = json!(null);
    cases.push(("a null value", bad));
    let mut bad = good.clone();
    bad["outputs"]["skirt_power"]["dimension"] = json!("horsepower");
    cases.push(("an unknown dimension", bad));
    let mut bad = good.clone();
    bad["extra"] = json!(1);
    cases.push(("an unknown field", bad));
    let mut bad = good.clone();
    bad["checks"][0]["status"] = json!("ok");
    cases.push(("an unknown status", bad));
    for (what, case) in cases {
        assert!(
            !errors(&response, &case).is_empty(),
            "the schema accepts {what}"
        );
        let bytes = serde_json::to_vec(&case).expect("json");
        assert!(
            read_response(&bytes, &decl).is_err(),
            "the reader accepts {what}"
        );
    }
}
