//! Issued revisions: `issued/<REV>.yaml` freezes, for one revision, every
//! item's resolved-inputs digest, module and version, and its full results,
//! so that later runs can be compared with what was signed.
//!
//! The record is written once (atomically) by `packwright issue` and read
//! back with serde for diffs and for the stale-sign-off check. Owns no state.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::diagnostic::{Diagnostic, Diagnostics};
use crate::project::Project;
use crate::results::{item_yaml, StoredResult};
use crate::run::{RunOutcome, TOOL_VERSION};
use crate::EngineError;

/// The folder issued records live in.
pub const ISSUED_FOLDER: &str = "issued";

/// An issued revision read back.
#[derive(Debug, Clone, Deserialize, PartialEq)]
pub struct IssuedRecord {
    /// The revision mark.
    pub revision: String,
    /// The revision date.
    pub date: String,
    /// The document number.
    pub document: String,
    /// The packwright version that issued it.
    pub tool_version: String,
    /// Every item's results as they were issued, by id.
    pub items: BTreeMap<String, StoredResult>,
}

impl IssuedRecord {
    /// Item ids whose inputs digest differs from `outcome`'s, plus items
    /// added or removed since.
    pub fn changed_items(&self, outcome: &RunOutcome) -> Vec<String> {
        let mut changed = Vec::new();
        for (id, run) in &outcome.items {
            match self.items.get(id) {
                Some(old) if old.inputs_digest == run.inputs_digest => {}
                _ => changed.push(id.clone()),
            }
        }
        for id in self.items.keys() {
            if !outcome.items.contains_key(id) {
                changed.push(id.clone());
            }
        }
        changed.sort();
        changed
    }
}

/// The path of revision `rev`'s record.
pub fn record_path(root: &Path, rev: &str) -> PathBuf {
    root.join(ISSUED_FOLDER).join(format!("{rev}.yaml"))
}

/// The text of an issued record.
pub fn record_yaml(project: &Project, rev: &str, outcome: &RunOutcome) -> String {
    let date = project
        .meta
        .revisions
        .iter()
        .find(|r| r.rev == rev)
        .map(|r| r.date.clone())
        .unwrap_or_default();
    let q = |s: &str| serde_json::to_string(s).expect("strings serialise");
    let mut text = format!(
        "# Issued record of revision {rev}, written by `packwright issue`. Do not edit.\nrevision: {}\ndate: {}\ndocument: {}\ntool_version: {}\nitems:\n",
        q(rev),
        q(&date),
        q(&project.meta.document),
        q(TOOL_VERSION)
    );
    for (id, run) in &outcome.items {
        text.push_str(&format!("  {}:\n", q(id)));
        for line in item_yaml(run).lines().filter(|l| !l.starts_with('#')) {
            text.push_str("    ");
            text.push_str(line);
            text.push('\n');
        }
    }
    text
}

/// Reads revision `rev`'s record, if it was issued.
pub fn read(root: &Path, rev: &str) -> Result<Option<IssuedRecord>, String> {
    let path = record_path(root, rev);
    if !path.exists() {
        return Ok(None);
    }
    let text = std::fs::read_to_string(&path)
        .map_err(|e| format!("cannot read {}: {e}", path.display()))?;
    let record: IssuedRecord = serde_yaml_ng::from_str(&text)
        .map_err(|e| format!("{}: not an issued record: {e}", path.display()))?;
    // Each item's block must be the results of that item.
    for (id, r) in &record.items {
        if &r.item != id {
            return Err(format!(
                "{}: item `{id}` holds the results of `{}`",
                path.display(),
                r.item
            ));
        }
    }
    Ok(Some(record))
}

/// Every issued revision on disk, in project.yaml order.
pub fn all(project: &Project) -> Result<Vec<IssuedRecord>, String> {
    let mut out = Vec::new();
    for rev in &project.meta.revisions {
        if let Some(r) = read(&project.root, &rev.rev)? {
            out.push(r);
        }
    }
    Ok(out)
}

/// Records revision `rev`: it must be the newest revision in project.yaml
/// and must not be issued yet (unless `force`). Runs the project first.
pub fn issue(
    root: &Path,
    registry: &crate::Registry,
    rev: &str,
    force: bool,
    options: crate::RunOptions,
) -> Result<(Project, RunOutcome, PathBuf), EngineError> {
    let (project, _) = crate::check(root, registry)?;
    let newest = project
        .meta
        .current_revision()
        .map(|r| r.rev.clone())
        .unwrap_or_default();
    let meta_span = Some(packwright_api::Span::new("project.yaml", 1, 1));
    if newest != rev {
        let listed = project.meta.revisions.iter().any(|r| r.rev == rev);
        return Err(EngineError::BadInput(Diagnostics(vec![Diagnostic::new(
            meta_span,
            if listed {
                format!("revision `{rev}` is not the newest revision in project.yaml (the newest is `{newest}`); only the newest can be issued")
            } else {
                format!("project.yaml lists no revision `{rev}`")
            },
        )
        .expected(format!("`packwright issue {newest}`, or add `- rev: {rev}` with its date at the end of `revisions:`"))])));
    }
    let path = record_path(&project.root, rev);
    if path.exists() && !force {
        return Err(EngineError::BadInput(Diagnostics(vec![Diagnostic::new(
            Some(packwright_api::Span::new(format!("{ISSUED_FOLDER}/{rev}.yaml"), 1, 1)),
            format!("revision `{rev}` was issued already; an issued record is not replaced silently"),
        )
        .expected(format!("a new revision in project.yaml for the changes, or `packwright issue {rev} --force` to replace the record"))])));
    }
    let (project, outcome) = crate::run_project(root, registry, options)?;
    crate::fsio::write_file(&path, record_yaml(&project, rev, &outcome).as_bytes())
        .map_err(|e| EngineError::Io(format!("cannot write {}: {e}", path.display())))?;
    Ok((project, outcome, path))
}

/// What a reviewer must be told about the current run against what was issued.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ReviewState {
    /// The revision the changes are measured from.
    pub baseline: Option<String>,
    /// The changes since that revision.
    pub changes: Vec<crate::diff::Change>,
    /// Set when the current revision is recorded as checked or approved but
    /// the inputs no longer match what was issued under it.
    pub stale: Option<String>,
}

/// Compares the run with the issued records: changes since the newest
/// issued revision other than the current one (or the current one, if it
/// is the only one issued), and whether the current sign-off is stale.
pub fn review(
    project: &Project,
    outcome: &RunOutcome,
    tolerance: f64,
) -> Result<ReviewState, String> {
    let records = all(project)?;
    let current_rev = project.meta.current_revision();
    let current_id = current_rev.map(|r| r.rev.as_str()).unwrap_or("");
    let baseline = records
        .iter()
        .rev()
        .find(|r| r.revision != current_id)
        .or_else(|| records.iter().rev().find(|r| r.revision == current_id));
    let mut state = ReviewState::default();
    if let Some(base) = baseline {
        state.baseline = Some(base.revision.clone());
        state.changes =
            crate::diff::compare(&base.items, &crate::diff::current(outcome), tolerance);
    }
    if let Some(rev) = current_rev {
        let signed = rev
            .approved
            .as_ref()
            .map(|s| ("approved", s))
            .or(rev.checked.as_ref().map(|s| ("checked", s)));
        if let (Some((what, who)), Some(record)) =
            (signed, records.iter().find(|r| r.revision == rev.rev))
        {
            let changed = record.changed_items(outcome);
            if !changed.is_empty() {
                let shown: Vec<&str> = changed.iter().take(4).map(String::as_str).collect();
                let more = if changed.len() > 4 {
                    format!(" and {} more", changed.len() - 4)
                } else {
                    String::new()
                };
                state.stale = Some(format!(
                    "revision {} was {what} by {} on {}, but the inputs of {} item(s) differ from those issued under it ({}{more})",
                    rev.rev,
                    who.name,
                    who.date,
                    changed.len(),
                    shown.join(", ")
                ));
            }
        }
    }
    Ok(state)
}
