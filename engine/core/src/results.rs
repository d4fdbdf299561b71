//! Result files: `results/<item-id>.yaml` for each item and
//! `results/summary.csv`, written so that `git diff` shows only what changed
//! (fixed key order, SI values with a fixed number of significant figures,
//! no timestamps, no absolute paths, no line numbers).
//!
//! The format is a contract (design.md, "Results files"); `diff` reads it
//! back with serde. Owns no state.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use packwright_api::units::format_significant;
use packwright_api::{Measure, Origin, Relation, Status, Value};
use serde::Deserialize;

use crate::run::{ItemRun, RunOutcome, TOOL_VERSION};

/// Significant figures of every number in a result file: enough to see a
/// real change, few enough that arithmetic noise does not show.
pub const SIGNIFICANT_FIGURES: usize = 6;

fn number(x: f64) -> String {
    format_significant(x, SIGNIFICANT_FIGURES)
}

fn quoted(s: &str) -> String {
    // A JSON string is a valid YAML double-quoted scalar.
    serde_json::to_string(s).expect("strings serialise")
}

fn measure(m: &Measure) -> String {
    format!(
        "{{ value: {}, unit: {} }}",
        number(m.value),
        quoted(m.dimension.si_unit())
    )
}

/// Where an input came from, in words that do not change when lines move.
pub fn origin_words(origin: &Origin) -> String {
    match origin {
        Origin::Item { .. } => "item".into(),
        Origin::Material { material, .. } => format!("material {material}"),
        Origin::Link { item, output, .. } => format!("link {item}.{output}"),
        Origin::Default => "default".into(),
    }
}

/// The value of a resolved input as result files write it.
pub fn value_text(value: &Value) -> String {
    match value {
        Value::Quantity { value, dimension } => format!(
            "value: {}, unit: {}",
            number(*value),
            quoted(dimension.si_unit())
        ),
        Value::Number(x) => format!("value: {}, unit: \"1\"", number(*x)),
        Value::Count(n) => format!("count: {n}"),
        Value::Choice(s) => format!("choice: {}", quoted(s)),
        Value::Flag(b) => format!("flag: {b}"),
        Value::Material(s) => format!("material: {}", quoted(s)),
        Value::Structured(node) => {
            format!("structured: {}", quoted(&crate::run::structured_text(node)))
        }
    }
}

/// The text of one item's result file.
pub fn item_yaml(run: &ItemRun) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Written by packwright {TOOL_VERSION}; run `packwright run` to refresh."
    );
    let _ = writeln!(s, "item: {}", quoted(&run.item.id));
    let _ = writeln!(s, "module: {}", quoted(&run.item.module));
    let _ = writeln!(s, "module_version: {}", quoted(&run.module_version));
    let _ = writeln!(s, "title: {}", quoted(&run.item.title));
    let _ = writeln!(s, "inputs_digest: {}", quoted(&run.inputs_digest));
    let _ = writeln!(s, "inputs:");
    for (name, input) in &run.inputs.values {
        let _ = writeln!(
            s,
            "  {name}: {{ {}, from: {} }}",
            value_text(&input.value),
            quoted(&origin_words(&input.origin))
        );
    }
    if !run.inputs.criteria.is_empty() {
        let _ = writeln!(s, "criteria:");
        for (name, v) in &run.inputs.criteria {
            let _ = writeln!(s, "  {name}: {{ {} }}", value_text(v));
        }
    }
    let _ = writeln!(s, "outputs:");
    for (name, m) in &run.outcome.outputs {
        let _ = writeln!(s, "  {name}: {}", measure(m));
    }
    if run.outcome.checks.is_empty() {
        let _ = writeln!(s, "checks: []");
    } else {
        let _ = writeln!(s, "checks:");
    }
    for check in &run.outcome.checks {
        let _ = writeln!(s, "  - name: {}", quoted(&check.name));
        let _ = writeln!(
            s,
            "    status: {}",
            match check.status {
                Status::Pass => "pass",
                Status::Fail => "fail",
            }
        );
        if let Some(v) = &check.value {
            let _ = writeln!(s, "    value: {}", measure(v));
        }
        if let Some(l) = &check.limit {
            let _ = writeln!(s, "    limit: {}", measure(l));
        }
        let _ = writeln!(
            s,
            "    relation: {}",
            match check.relation {
                Relation::AtMost => "at_most",
                Relation::AtLeast => "at_least",
                Relation::Condition => "condition",
            }
        );
        let _ = writeln!(s, "    explanation: {}", quoted(&check.explanation));
    }
    if !run.outcome.notes.is_empty() {
        let _ = writeln!(s, "notes:");
        for note in &run.outcome.notes {
            let _ = writeln!(s, "  - {}", quoted(note));
        }
    }
    if !run.outcome.series.is_empty() {
        let _ = writeln!(s, "series:");
        for series in &run.outcome.series {
            let _ = writeln!(s, "  {}:", series.name);
            let cols: Vec<String> = series
                .columns
                .iter()
                .map(|(n, d)| quoted(&format!("{n} ({})", d.si_unit())))
                .collect();
            let _ = writeln!(s, "    columns: [{}]", cols.join(", "));
            let _ = writeln!(s, "    rows:");
            for row in &series.rows {
                let vals: Vec<String> = row.iter().map(|x| number(*x)).collect();
                let _ = writeln!(s, "      - [{}]", vals.join(", "));
            }
        }
    }
    s
}

/// The text of `results/summary.csv`: one row per item.
pub fn summary_csv(outcome: &RunOutcome, key_outputs: &BTreeMap<String, Vec<String>>) -> String {
    let mut s = summary_header();
    for run in outcome.items.values() {
        s.push_str(&summary_row(run, key_outputs));
    }
    s
}

/// A CSV writer as the summary is written: each record on its own, so
/// that a rerun can keep the rows of unchanged items (see
/// [`crate::index::Entry::row`]).
fn csv_line(record: [&str; 9]) -> String {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    let _ = w.write_record(record);
    String::from_utf8(w.into_inner().expect("in-memory writer")).expect("csv is UTF-8")
}

/// The first line of `results/summary.csv`.
pub fn summary_header() -> String {
    csv_line([
        "item",
        "module",
        "title",
        "key_output",
        "key_value",
        "key_unit",
        "checks_passed",
        "checks_failed",
        "inputs_digest",
    ])
}

/// One item's line of `results/summary.csv`.
pub fn summary_row(run: &ItemRun, key_outputs: &BTreeMap<String, Vec<String>>) -> String {
    let key = key_outputs
        .get(&run.item.module)
        .and_then(|keys| keys.iter().find(|k| run.outcome.outputs.contains_key(*k)))
        .or_else(|| run.outcome.outputs.keys().next());
    let (key_name, key_value, key_unit) = match key {
        Some(k) => {
            let m = &run.outcome.outputs[k];
            (
                k.clone(),
                number(m.value),
                m.dimension.si_unit().to_string(),
            )
        }
        None => (String::new(), String::new(), String::new()),
    };
    let passed = run
        .outcome
        .checks
        .iter()
        .filter(|c| c.status == Status::Pass)
        .count();
    let failed = run.outcome.checks.len() - passed;
    csv_line([
        run.item.id.as_str(),
        run.item.module.as_str(),
        run.item.title.as_str(),
        &key_name,
        &key_value,
        &key_unit,
        &passed.to_string(),
        &failed.to_string(),
        run.inputs_digest.as_str(),
    ])
}

/// Every file of `results/`, by name.
pub fn result_files(
    outcome: &RunOutcome,
    key_outputs: &BTreeMap<String, Vec<String>>,
) -> Vec<(String, Vec<u8>)> {
    let mut files: Vec<(String, Vec<u8>)> = outcome
        .items
        .values()
        .map(|run| (format!("{}.yaml", run.item.id), item_yaml(run).into_bytes()))
        .collect();
    files.push((
        "summary.csv".into(),
        summary_csv(outcome, key_outputs).into_bytes(),
    ));
    files
}

/// A result file read back (for diffs).
#[derive(Debug, Clone, Deserialize, PartialEq)]
pub struct StoredResult {
    /// Item id.
    pub item: String,
    /// Module name.
    pub module: String,
    /// Module version.
    pub module_version: String,
    /// Title.
    #[serde(default)]
    pub title: String,
    /// Digest of the resolved inputs.
    pub inputs_digest: String,
    /// Inputs as written to the file.
    #[serde(default)]
    pub inputs: BTreeMap<String, serde_yaml_ng::Value>,
    /// Outputs.
    #[serde(default)]
    pub outputs: BTreeMap<String, StoredMeasure>,
    /// Checks.
    #[serde(default)]
    pub checks: Vec<StoredCheck>,
}

/// A number and its SI unit, as stored.
#[derive(Debug, Clone, Deserialize, PartialEq)]
pub struct StoredMeasure {
    /// The SI value.
    pub value: f64,
    /// The SI unit symbol.
    pub unit: String,
}

/// A check as stored.
#[derive(Debug, Clone, Deserialize, PartialEq)]
pub struct StoredCheck {
    /// Check name.
    pub name: String,
    /// `pass` or `fail`.
    pub status: String,
}

/// Reads a result file's text.
pub fn parse_stored(text: &str) -> Result<StoredResult, String> {
    serde_yaml_ng::from_str(text).map_err(|e| e.to_string())
}
