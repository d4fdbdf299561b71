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
pub mod deferred;
pub mod diagnostic;
pub mod diff;
pub mod display;
mod framed;
pub mod fsio;
pub mod index;
pub mod issued;
pub mod item_index;
pub mod project;
pub mod registry;
pub mod resolve;
pub mod results;
pub mod run;
pub mod schema;
pub mod yaml;

use std::collections::BTreeMap;
use std::path::Path;

use rayon::prelude::*;

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
    check_indexed(root, registry, || None).map(|(project, plan, _)| (project, plan))
}

/// [`check`], with an item index (see [`item_index`]): unchanged item files
/// are taken from it instead of being read, parsed and validated, and what
/// the item index needs to be written after the run is returned.
fn check_indexed(
    root: &Path,
    registry: &Registry,
    load_index: impl FnOnce() -> Option<item_index::ItemIndex> + Send,
) -> Result<(Project, Plan, item_index::Seen), EngineError> {
    let (project, mut problems, loaded, index) =
        project::load_indexed(root, load_index).map_err(EngineError::BadInput)?;
    let mut seen = item_index::Seen::default();
    let mut reused = std::collections::HashMap::new();
    if let Some(index) = index {
        seen.resolve_key = item_index::resolve_key(registry, &project.materials);
        let same_key = index.resolve_key() == seen.resolve_key;
        for (file, planned) in loaded.reused {
            if let Some(planned) = planned.filter(|_| same_key) {
                reused.insert(file.clone(), planned);
            }
            seen.reused.insert(file);
        }
        seen.stamps = loaded.stamps;
        seen.index = index;
    }
    let plan = resolve::plan_reusing(&project, registry, reused);
    match plan {
        Ok(plan) if problems.is_empty() => Ok((project, plan, seen)),
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

/// One file of `results/` as a run makes it.
struct ResultFile {
    name: String,
    /// [`index::result_key`] or [`index::summary_key`].
    key: Option<index::Hash>,
    /// Digest of the text.
    content: index::Hash,
    /// The text, unless the index vouched for the file on disk and so
    /// it was not formatted.
    bytes: Option<Vec<u8>>,
    /// Whether `results/` already holds this text.
    on_disk: bool,
    /// The stamp of the file in `results/` when it was found to hold the
    /// text, to see after taking the lock that no other writer came between.
    seen: Option<index::Stamp>,
    /// An item's line of `summary.csv`, kept in the index.
    row: Option<String>,
}

/// Makes one result file: from the index when `results/` holds the file
/// the index describes under the same key, otherwise formatted and compared
/// with what is on disk (by the index's digest when the stamp matches, by
/// reading the file when not).
fn result_file(
    results: &Path,
    index: &index::Index,
    name: String,
    key: Option<index::Hash>,
    text: impl FnOnce() -> String,
) -> ResultFile {
    let verified = index.verified(results, &name);
    if let (Some(k), Some(entry)) = (key, verified) {
        if entry.key == Some(k) {
            return ResultFile {
                content: entry.content,
                seen: Some(entry.stamp),
                name,
                key,
                bytes: None,
                on_disk: true,
                row: None,
            };
        }
    }
    let bytes = text().into_bytes();
    let content = index::hash(&bytes);
    let path = results.join(&name);
    let (on_disk, seen) = match verified {
        Some(entry) => (entry.content == content, Some(entry.stamp)),
        None => {
            let seen = index::stamp_of(&path);
            (std::fs::read(&path).is_ok_and(|old| old == bytes), seen)
        }
    };
    ResultFile {
        name,
        key,
        content,
        bytes: Some(bytes),
        on_disk,
        seen,
        row: None,
    }
}

/// A computed project whose results are not written yet.
pub struct Computed {
    /// The project.
    pub project: Project,
    /// What the run produced.
    pub outcome: RunOutcome,
    files: Vec<ResultFile>,
    index: index::Index,
    store: cache::Cache,
    items: item_index::Seen,
}

impl Computed {
    /// Replaces `results/` with this run's files (atomically) and stores
    /// the computed outcomes in the cache. When `results/` already holds
    /// exactly these files nothing in it is touched; otherwise only the
    /// changed files are written (see [`fsio::update_dir`]).
    pub fn write_results(&self) -> Result<(), EngineError> {
        let results = self.project.root.join("results");
        let cache_dir = self.store.dir();
        let io = |e: std::io::Error| EngineError::Io(format!("cannot write results/: {e}"));
        std::fs::create_dir_all(cache_dir).map_err(io)?;
        // Two runs at once would both rebuild the spare folder.
        let lock = std::fs::File::create(cache_dir.join(index::LOCK_FILE)).map_err(io)?;
        rustix::fs::flock(&lock, rustix::fs::FlockOperation::LockExclusive)
            .map_err(|e| io(e.into()))?;
        let moved = self
            .files
            .par_iter()
            .any(|f| f.on_disk && index::stamp_of(&results.join(&f.name)) != f.seen);
        if moved {
            return Err(EngineError::Io(
                "results/ changed while packwright ran (another run?); nothing was written, run again".into(),
            ));
        }
        let all_there = self.files.iter().all(|f| f.on_disk)
            && std::fs::read_dir(&results).is_ok_and(|d| d.count() == self.files.len());
        // Which files have a new stamp: none when nothing was written.
        let mut touched = vec![false; self.files.len()];
        if !all_there {
            let updates: Vec<(String, fsio::Update<'_>)> = self
                .files
                .iter()
                .map(|f| {
                    let update = match (&f.bytes, f.on_disk) {
                        (Some(b), false) => fsio::Update::Write(b),
                        _ => fsio::Update::Keep,
                    };
                    (f.name.clone(), update)
                })
                .collect();
            let spare = cache_dir.join(index::SPARE_FOLDER);
            touched = match fsio::update_dir(&results, &spare, &updates) {
                Ok(touched) => touched,
                Err(e) => {
                    // The spare folder may sit on another file system (a
                    // linked cache folder): write the folder whole instead.
                    let _ = std::fs::remove_dir_all(&spare);
                    let whole = self.whole_files(&results).map_err(io)?;
                    fsio::replace_dir(&results, &whole).map_err(|e2| {
                        EngineError::Io(format!("cannot write results/: {e2} (and {e})"))
                    })?;
                    vec![true; self.files.len()]
                }
            };
        }
        let mut index = index::Index::new();
        let entries: Vec<Option<(String, index::Entry)>> = self
            .files
            .par_iter()
            .zip(&touched)
            .map(|(f, &touched)| {
                // An untouched file's stamp was seen under the lock.
                let stamp = if touched {
                    index::stamp_of(&results.join(&f.name))
                } else {
                    f.seen
                };
                stamp.map(|stamp| {
                    (
                        f.name.clone(),
                        index::Entry {
                            key: f.key,
                            content: f.content,
                            stamp,
                            row: f.row.clone(),
                        },
                    )
                })
            })
            .collect();
        index.files = entries.into_iter().flatten().collect();
        if index != self.index {
            index.save(cache_dir);
        }
        self.store.save(&self.outcome);
        self.items.save(cache_dir, &self.project.items, |id| {
            self.outcome.items.get(id).map(|run| &*run.item)
        });
        Ok(())
    }

    /// Every file's bytes, those not formatted read from `results/`.
    fn whole_files(&self, results: &Path) -> std::io::Result<Vec<(String, Vec<u8>)>> {
        self.files
            .iter()
            .map(|f| {
                let bytes = match &f.bytes {
                    Some(b) => b.clone(),
                    None => std::fs::read(results.join(&f.name))?,
                };
                Ok((f.name.clone(), bytes))
            })
            .collect()
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
    // `--fresh` reuses no item, but the index is written anew after the run.
    let cache_dir = root.join(cache::CACHE_FOLDER);
    let load_index = || {
        Some(if options.fresh {
            item_index::ItemIndex::default()
        } else {
            item_index::ItemIndex::load(&cache_dir)
        })
    };
    let (project, plan, items) = check_indexed(root, registry, load_index)?;
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
    // `--fresh` trusts nothing stored: every file is formatted again.
    let index = if options.fresh {
        index::Index::new()
    } else {
        index::Index::load(store.dir())
    };
    let results_dir = project.root.join("results");
    let keys = key_outputs(registry);
    let mut files: Vec<ResultFile> = outcome
        .items
        .par_iter()
        .map(|(id, run)| {
            let name = format!("{id}.yaml");
            let key = index::result_key(run);
            // The index's summary line of an item under the same key; a
            // line made again would decode the item's outcome.
            let row = index
                .files
                .get(&name)
                .filter(|e| e.key == Some(key))
                .and_then(|e| e.row.clone())
                .unwrap_or_else(|| results::summary_row(run, &keys));
            let mut file = result_file(&results_dir, &index, name, Some(key), || {
                results::item_yaml(run)
            });
            file.row = Some(row);
            file
        })
        .collect();
    let summary_key = index::summary_key(&outcome, &keys);
    let summary = result_file(
        &results_dir,
        &index,
        "summary.csv".into(),
        Some(summary_key),
        || {
            let mut text = results::summary_header();
            files
                .iter()
                .for_each(|f| text.push_str(f.row.as_deref().unwrap_or("")));
            text
        },
    );
    files.push(summary);
    Ok(Computed {
        project,
        outcome,
        files,
        index,
        store,
        items,
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
