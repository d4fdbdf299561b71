//! Result differences: what changed between two sets of results (inputs,
//! outputs with their change in percent, checks whose status flipped,
//! items added or removed), with a relative tolerance so that arithmetic
//! noise is not a change. The baseline is an issued revision or the results
//! committed at a git ref (read with the `git` command line, so no clone or
//! work tree is touched).
//!
//! Owns no state.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;
use std::process::Command;

use serde::Serialize;
use serde_yaml_ng::Value as Yaml;

use crate::results::{item_yaml, parse_stored, StoredResult};
use crate::run::RunOutcome;

/// The default relative tolerance: result files carry six significant
/// figures, so a smaller difference cannot be told from rounding.
pub const DEFAULT_TOLERANCE: f64 = 1e-6;

/// One difference.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Change {
    /// Item id.
    pub item: String,
    /// `input`, `output`, `check`, `item`.
    pub kind: String,
    /// The input, output or check name (empty for whole items).
    pub name: String,
    /// The old value, as text.
    pub old: String,
    /// The new value, as text.
    pub new: String,
    /// Relative change in percent, for numbers.
    pub percent: Option<f64>,
}

/// Results keyed by item id, from any source.
pub type ResultSet = BTreeMap<String, StoredResult>;

/// The current results of a run, in the same form as result files.
pub fn current(outcome: &RunOutcome) -> ResultSet {
    outcome
        .items
        .iter()
        .map(|(id, run)| {
            (
                id.clone(),
                parse_stored(&item_yaml(run)).expect("our own result text parses"),
            )
        })
        .collect()
}

/// Results as committed at `git_ref` under the project's `results/`.
pub fn at_git_ref(project_root: &Path, git_ref: &str) -> Result<ResultSet, String> {
    let git = |args: &[&str]| -> Result<String, String> {
        let out = Command::new("git")
            .args(args)
            .current_dir(project_root)
            .output()
            .map_err(|e| format!("cannot run git: {e}"))?;
        if !out.status.success() {
            return Err(format!(
                "git {} failed: {}",
                args.join(" "),
                String::from_utf8_lossy(&out.stderr).trim()
            ));
        }
        Ok(String::from_utf8_lossy(&out.stdout).into_owned())
    };
    let prefix = git(&["rev-parse", "--show-prefix"])?.trim().to_string();
    let listing = git(&[
        "ls-tree",
        "--name-only",
        git_ref,
        &format!("{prefix}results/"),
    ])
    .map_err(|e| format!("`{git_ref}` is not a commit of this repository that git knows ({e})"))?;
    let mut set = ResultSet::new();
    for path in listing.lines().filter(|p| p.ends_with(".yaml")) {
        let text = git(&["show", &format!("{git_ref}:{path}")])?;
        let stored = parse_stored(&text).map_err(|e| format!("{path} at {git_ref}: {e}"))?;
        set.insert(stored.item.clone(), stored);
    }
    Ok(set)
}

fn number(v: &Yaml) -> Option<f64> {
    v.get("value").and_then(Yaml::as_f64)
}

fn words(v: &Yaml) -> String {
    let Some(map) = v.as_mapping() else {
        return serde_yaml_ng::to_string(v)
            .unwrap_or_default()
            .trim()
            .to_string();
    };
    let mut parts = Vec::new();
    if let (Some(x), Some(u)) = (map.get("value"), map.get("unit").and_then(Yaml::as_str)) {
        let x = x
            .as_f64()
            .map(|x| packwright_api::units::format_significant(x, 6))
            .unwrap_or_default();
        parts.push(if u == "1" { x } else { format!("{x} {u}") });
    }
    for key in ["choice", "flag", "count", "material", "structured"] {
        if let Some(v) = map.get(key) {
            let text = match v {
                Yaml::String(s) => s.clone(),
                other => serde_yaml_ng::to_string(other)
                    .unwrap_or_default()
                    .trim()
                    .to_string(),
            };
            parts.push(text);
        }
    }
    if let Some(from) = map.get("from").and_then(Yaml::as_str) {
        parts.push(format!("({from})"));
    }
    parts.join(" ")
}

/// Whether two numbers differ by more than the relative tolerance.
pub fn differs(old: f64, new: f64, tolerance: f64) -> bool {
    let scale = old.abs().max(new.abs());
    (new - old).abs() > tolerance * scale && (new - old).abs() > 1e-300
}

fn percent(old: f64, new: f64) -> Option<f64> {
    (old != 0.0).then(|| (new - old) / old.abs() * 100.0)
}

/// Every difference from `old` to `new`, item by item.
pub fn compare(old: &ResultSet, new: &ResultSet, tolerance: f64) -> Vec<Change> {
    let mut changes = Vec::new();
    let ids: BTreeSet<&String> = old.keys().chain(new.keys()).collect();
    for id in ids {
        let change = |kind: &str, name: &str, o: String, n: String, p: Option<f64>| Change {
            item: id.clone(),
            kind: kind.into(),
            name: name.into(),
            old: o,
            new: n,
            percent: p,
        };
        let (o, n) = match (old.get(id), new.get(id)) {
            (None, Some(n)) => {
                changes.push(change(
                    "item",
                    "",
                    "(absent)".into(),
                    format!("added ({})", n.module),
                    None,
                ));
                continue;
            }
            (Some(o), None) => {
                changes.push(change(
                    "item",
                    "",
                    format!("{} item", o.module),
                    "(removed)".into(),
                    None,
                ));
                continue;
            }
            (Some(o), Some(n)) => (o, n),
            (None, None) => continue,
        };
        if o.module != n.module || o.module_version != n.module_version {
            changes.push(change(
                "module",
                "",
                format!("{} {}", o.module, o.module_version),
                format!("{} {}", n.module, n.module_version),
                None,
            ));
        }
        let names: BTreeSet<&String> = o.inputs.keys().chain(n.inputs.keys()).collect();
        for name in names {
            match (o.inputs.get(name), n.inputs.get(name)) {
                (Some(a), Some(b)) => {
                    let same = match (number(a), number(b)) {
                        (Some(x), Some(y)) => {
                            !differs(x, y, tolerance) && a.get("unit") == b.get("unit")
                        }
                        _ => a == b,
                    };
                    let origin_same = a.get("from") == b.get("from");
                    if !same || !origin_same {
                        let p = match (number(a), number(b)) {
                            (Some(x), Some(y)) => percent(x, y),
                            _ => None,
                        };
                        changes.push(change("input", name, words(a), words(b), p));
                    }
                }
                (a, b) => changes.push(change(
                    "input",
                    name,
                    a.map(words).unwrap_or_else(|| "(not given)".into()),
                    b.map(words).unwrap_or_else(|| "(not given)".into()),
                    None,
                )),
            }
        }
        let names: BTreeSet<&String> = o.outputs.keys().chain(n.outputs.keys()).collect();
        for name in names {
            let show = |m: &crate::results::StoredMeasure| {
                let x = packwright_api::units::format_significant(m.value, 6);
                if m.unit == "1" {
                    x
                } else {
                    format!("{x} {}", m.unit)
                }
            };
            match (o.outputs.get(name), n.outputs.get(name)) {
                (Some(a), Some(b)) if !differs(a.value, b.value, tolerance) && a.unit == b.unit => {
                }
                (Some(a), Some(b)) => changes.push(change(
                    "output",
                    name,
                    show(a),
                    show(b),
                    percent(a.value, b.value),
                )),
                (a, b) => changes.push(change(
                    "output",
                    name,
                    a.map(show).unwrap_or_else(|| "(none)".into()),
                    b.map(show).unwrap_or_else(|| "(none)".into()),
                    None,
                )),
            }
        }
        let status = |set: &StoredResult| -> BTreeMap<String, String> {
            set.checks
                .iter()
                .map(|c| (c.name.clone(), c.status.clone()))
                .collect()
        };
        let (so, sn) = (status(o), status(n));
        let names: BTreeSet<&String> = so.keys().chain(sn.keys()).collect();
        for name in names {
            let (a, b) = (so.get(name), sn.get(name));
            if a != b {
                changes.push(change(
                    "check",
                    name,
                    a.cloned().unwrap_or_else(|| "(none)".into()),
                    b.cloned().unwrap_or_else(|| "(none)".into()),
                    None,
                ));
            }
        }
    }
    changes
}
