//! The packwright engine: a project tree in, checked results out.
//!
//! The pipeline is a chain of functions, each of the stage before:
//! [`project::load`] walks and parses the tree (keeping file, line and
//! column of every value), [`resolve::plan`] validates every item against
//! its module's declaration and orders the items by their links,
//! [`run::run`] computes them (independent items in parallel), and
//! [`results`] writes the deterministic result files. No global state; the
//! only cache ([`cache`]) is keyed by a digest of everything that can change
//! a result.
//!
//! This crate names no module: modules arrive through a [`Registry`].

pub mod cache;
pub mod diagnostic;
pub mod diff;
pub mod display;
pub mod fsio;
pub mod issued;
pub mod project;
pub mod registry;
pub mod resolve;
pub mod results;
pub mod run;
pub mod schema;
pub mod yaml;

use std::collections::BTreeMap;
use std::path::Path;

pub use diagnostic::{Diagnostic, Diagnostics};
pub use project::Project;
pub use registry::{ModuleOrigin, Registered, Registry};
pub use resolve::Plan;
pub use run::{ItemFailure, ItemRun, RunOutcome};

/// Why a command could not finish.
#[derive(Debug)]
pub enum EngineError {
    /// The project has bad input (exit code 2).
    BadInput(Diagnostics),
    /// Some items could not be calculated (exit code 1).
    Calculation(Vec<ItemFailure>, Vec<String>),
    /// Reading or writing failed.
    Io(String),
}

impl std::fmt::Display for EngineError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EngineError::BadInput(d) => write!(f, "{d}"),
            EngineError::Calculation(failures, skipped) => {
                for fail in failures {
                    writeln!(
                        f,
                        "error: {}: item `{}`: {}",
                        fail.file, fail.item, fail.error
                    )?;
                }
                for s in skipped {
                    writeln!(
                        f,
                        "note: item `{s}` was not calculated because an item it links to failed"
                    )?;
                }
                Ok(())
            }
            EngineError::Io(m) => write!(f, "error: {m}"),
        }
    }
}

/// Loads and validates a project: every problem at once.
pub fn check(root: &Path, registry: &Registry) -> Result<(Project, Plan), EngineError> {
    let (project, mut problems) = project::load(root).map_err(EngineError::BadInput)?;
    let plan = resolve::plan(&project, registry);
    match plan {
        Ok(plan) if problems.is_empty() => Ok((project, plan)),
        Ok(_) => {
            problems.sort();
            Err(EngineError::BadInput(problems))
        }
        Err(more) => {
            problems.0.extend(more.0);
            problems.sort();
            Err(EngineError::BadInput(problems))
        }
    }
}

/// The key outputs of every module, for summaries.
pub fn key_outputs(registry: &Registry) -> BTreeMap<String, Vec<String>> {
    registry
        .iter()
        .map(|r| {
            (
                r.declaration.name.clone(),
                r.declaration
                    .outputs
                    .iter()
                    .filter(|o| o.key)
                    .map(|o| o.name.clone())
                    .collect(),
            )
        })
        .collect()
}

/// Called with each item's id as it finishes.
pub type Progress = std::sync::Arc<dyn Fn(&str) + Send + Sync>;

/// Options of a run.
#[derive(Clone, Default)]
pub struct RunOptions {
    /// Ignore the cache: compute every item.
    pub fresh: bool,
    /// Told of each finished item (a progress bar).
    pub progress: Option<Progress>,
    /// Called once with the number of items, before any is computed.
    pub on_plan: Option<std::sync::Arc<dyn Fn(usize) + Send + Sync>>,
}

/// A computed project whose results are not written yet.
pub struct Computed {
    /// The project.
    pub project: Project,
    /// What the run produced.
    pub outcome: RunOutcome,
    files: Vec<(String, Vec<u8>)>,
    store: cache::Cache,
}

impl Computed {
    /// Replaces `results/` with this run's files (atomically) and stores
    /// the computed outcomes in the cache.
    pub fn write_results(&self) -> Result<(), EngineError> {
        fsio::replace_dir(&self.project.root.join("results"), &self.files)
            .map_err(|e| EngineError::Io(format!("cannot write results/: {e}")))?;
        self.store.save(&self.outcome);
        Ok(())
    }
}

/// Loads, validates and computes a project, writing nothing. Every item
/// must compute: otherwise the input errors (exit 2) or the calculation
/// errors (exit 1) are returned.
pub fn compute_project(
    root: &Path,
    registry: &Registry,
    options: RunOptions,
) -> Result<Computed, EngineError> {
    let (project, plan) = check(root, registry)?;
    let store = cache::Cache::open(&project.root);
    if let Some(on_plan) = &options.on_plan {
        on_plan(plan.items.len());
    }
    let outcome = run::run_with_progress(
        &plan,
        registry,
        if options.fresh { None } else { Some(&store) },
        options
            .progress
            .as_deref()
            .map(|p| p as &(dyn Fn(&str) + Sync)),
    );
    let input_errors: Vec<Diagnostic> = outcome
        .failures
        .iter()
        .filter_map(|f| match &f.error {
            packwright_api::CalcError::Input {
                input,
                span,
                message,
                expected,
            } => Some(
                Diagnostic::new(
                    span.clone().or_else(|| {
                        plan.items
                            .get(&f.item)
                            .and_then(|i| i.inputs.span_of(input))
                    }),
                    format!("item `{}`, input `{input}`: {message}", f.item),
                )
                .expected(expected.clone()),
            ),
            _ => None,
        })
        .collect();
    if !input_errors.is_empty() {
        return Err(EngineError::BadInput(Diagnostics(input_errors)));
    }
    if !outcome.failures.is_empty() || !outcome.skipped.is_empty() {
        return Err(EngineError::Calculation(outcome.failures, outcome.skipped));
    }
    let files = results::result_files(&outcome, &key_outputs(registry));
    Ok(Computed {
        project,
        outcome,
        files,
        store,
    })
}

/// Loads, validates and computes a project, then writes `results/` whole.
/// Nothing is written unless every item was computed.
pub fn run_project(
    root: &Path,
    registry: &Registry,
    options: RunOptions,
) -> Result<(Project, RunOutcome), EngineError> {
    let computed = compute_project(root, registry, options)?;
    computed.write_results()?;
    Ok((computed.project, computed.outcome))
}
