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

/// Hash maps and sets keyed by ids, file names and digests: foldhash
/// rather than the standard SipHash, which resists keys chosen to collide
/// (no concern for a project's own names) and was a visible part of a
/// rerun, which looks up every item several times.
pub mod fast {
    /// A hash map with foldhash.
    pub type HashMap<K, V> = std::collections::HashMap<K, V, foldhash::fast::RandomState>;
    /// A hash set with foldhash.
    pub type HashSet<K> = std::collections::HashSet<K, foldhash::fast::RandomState>;

    /// Appends the lowercase hexadecimal text of `bytes` to `out`. A
    /// `write!` of each byte went through the formatting machinery, which
    /// was a visible part of keying a thousand items.
    pub fn push_hex(out: &mut String, bytes: &[u8]) {
        const DIGITS: &[u8; 16] = b"0123456789abcdef";
        out.reserve(2 * bytes.len());
        for b in bytes {
            out.push(char::from(DIGITS[usize::from(b >> 4)]));
            out.push(char::from(DIGITS[usize::from(b & 15)]));
        }
    }

    #[cfg(test)]
    mod tests {
        #[test]
        fn hex_text_is_that_of_the_formatter() {
            let bytes: Vec<u8> = (0..=255).collect();
            let mut fast = String::new();
            super::push_hex(&mut fast, &bytes);
            let formatted: String = bytes.iter().map(|b| format!("{b:02x}")).collect();
            assert_eq!(fast, formatted);
        }
    }
}

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
    let mut reused = fast::HashMap::default();
    if let Some(index) = index {
        seen.resolve_key = item_index::resolve_key(registry, &project.materials);
        let same_key = index.resolve_key() == seen.resolve_key;
        reused.reserve(loaded.reused.len());
        seen.reused.reserve(loaded.reused.len());
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
    /// Whether the index entry of the file is taken as it is (the file not
    /// formatted, its summary line the entry's).
    from_index: bool,
}

/// Makes one result file: from its index entry (`stored`) when `results/`
/// holds the file the entry describes under the same key, otherwise
/// formatted and compared with what is on disk (by the entry's digest when
/// the stamp matches, by reading the file when not).
fn result_file(
    results: &index::Folder,
    stored: Option<index::Entry>,
    name: String,
    key: Option<index::Hash>,
    text: impl FnOnce() -> String,
) -> ResultFile {
    let verified = stored.filter(|entry| results.stamp(&name) == Some(entry.stamp));
    if let (Some(k), Some(entry)) = (key, &verified) {
        if entry.key == Some(k) {
            return ResultFile {
                content: entry.content,
                seen: Some(entry.stamp),
                name,
                key,
                bytes: None,
                on_disk: true,
                row: None,
                from_index: true,
            };
        }
    }
    let bytes = text().into_bytes();
    let content = index::hash(&bytes);
    let (on_disk, seen) = match verified {
        Some(entry) => (entry.content == content, Some(entry.stamp)),
        None => {
            let seen = results.stamp(&name);
            let old = std::fs::read(results.path().join(&name));
            (old.is_ok_and(|old| old == bytes), seen)
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
        from_index: false,
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
    /// The cache's lock, when it could be taken before `results/` was
    /// looked at: no other run can then change it before this one writes.
    lock: Option<std::fs::File>,
}

/// The error of a failed write of `results/` or its lock.
fn cannot_write_results(e: std::io::Error) -> EngineError {
    EngineError::Io(format!("cannot write results/: {e}"))
}

/// Takes the lock that keeps a second writer out of `results/` and the
/// cache (released when the file is closed), waiting for another run to
/// finish.
fn lock_writers(cache_dir: &Path) -> std::io::Result<std::fs::File> {
    std::fs::create_dir_all(cache_dir)?;
    lock_existing(cache_dir)
}

/// [`lock_writers`] in a cache folder that exists (a run that fails does
/// not leave one behind where there was none).
fn lock_existing(cache_dir: &Path) -> std::io::Result<std::fs::File> {
    let lock = std::fs::File::create(cache_dir.join(index::LOCK_FILE))?;
    rustix::fs::flock(&lock, rustix::fs::FlockOperation::LockExclusive)?;
    Ok(lock)
}

impl Computed {
    /// Replaces `results/` with this run's files (atomically) and stores
    /// the computed outcomes in the cache. When `results/` already holds
    /// exactly these files nothing in it is touched; otherwise only the
    /// changed files are written (see [`fsio::update_dir`]).
    pub fn write_results(&self) -> Result<(), EngineError> {
        let results = self.project.root.join("results");
        let cache_dir = self.store.dir();
        // Two runs at once would both rebuild the spare folder. A lock taken
        // only now must see that no other run wrote `results/` since this
        // one looked.
        let _lock = match &self.lock {
            Some(_) => None,
            None => {
                let lock = lock_writers(cache_dir).map_err(cannot_write_results)?;
                let folder = index::Folder::open(&results);
                let moved = self
                    .files
                    .par_iter()
                    .any(|f| f.on_disk && folder.stamp(&f.name) != f.seen);
                if moved {
                    return Err(EngineError::Io(
                        "results/ changed while packwright ran (another run?); nothing was written, run again".into(),
                    ));
                }
                Some(lock)
            }
        };
        // The outcomes and the item index do not depend on `results/`: they
        // are saved while its files are written and flushed.
        let (written, ()) = rayon::join(
            || self.update_results(&results),
            || {
                self.store.save(&self.outcome);
                self.items.save(cache_dir, &self.project.items, |id| {
                    self.outcome.items.get(id).map(|run| &*run.item)
                });
            },
        );
        written
    }

    /// Makes `results/` hold this run's files, and records them in the
    /// results index.
    fn update_results(&self, results: &Path) -> Result<(), EngineError> {
        let cache_dir = self.store.dir();
        let all_there = self.files.iter().all(|f| f.on_disk)
            && std::fs::read_dir(results).is_ok_and(|d| d.count() == self.files.len());
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
            // Stamped under the lock, the files' inodes are still those
            // `results/` holds.
            let in_target = self
                .lock
                .as_ref()
                .map(|_| self.files.iter().map(|f| f.seen.map(|s| s.ino())).collect());
            touched = match fsio::update_dir(results, &spare, &updates, in_target) {
                Ok(touched) => touched,
                Err(e) => {
                    // The spare folder may sit on another file system (a
                    // linked cache folder): write the folder whole instead.
                    let _ = std::fs::remove_dir_all(&spare);
                    let whole = self.whole_files(results).map_err(cannot_write_results)?;
                    fsio::replace_dir(results, &whole).map_err(|e2| {
                        EngineError::Io(format!("cannot write results/: {e2} (and {e})"))
                    })?;
                    vec![true; self.files.len()]
                }
            };
        }
        let folder = index::Folder::open(results);
        let entries: Vec<Option<index::EntryRef<'_>>> = self
            .files
            .par_iter()
            .zip(&touched)
            .map(|(f, &touched)| {
                // An untouched file's stamp was seen under the lock.
                let stamp = if touched {
                    folder.stamp(&f.name)
                } else {
                    f.seen
                };
                stamp.map(|stamp| index::EntryRef {
                    name: &f.name,
                    key: f.key,
                    content: f.content,
                    stamp,
                    row: f.row.as_deref(),
                    as_stored: f.from_index && !touched,
                })
            })
            .collect();
        let entries: Vec<index::EntryRef<'_>> = entries.into_iter().flatten().collect();
        index::Index::save(cache_dir, &self.index, &entries);
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
    // Taken before `results/` and its index are looked at, so that no
    // other run writes them in between. Best effort: without a cache folder
    // yet, or in a project this user cannot write, `write_results` takes
    // the lock and checks that nothing moved (or reports why it cannot).
    let lock = lock_existing(store.dir()).ok();
    // The results index is read while the items run.
    let (outcome, index) = rayon::join(
        || {
            run::run_with_progress(
                &plan,
                registry,
                if options.fresh { None } else { Some(&store) },
                options
                    .progress
                    .as_deref()
                    .map(|p| p as &(dyn Fn(&str) + Sync)),
            )
        },
        || {
            // `--fresh` trusts nothing stored: every file is formatted again.
            if options.fresh {
                index::Index::new()
            } else {
                index::Index::load(store.dir())
            }
        },
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
    let results_dir = index::Folder::open(&project.root.join("results"));
    let keys = key_outputs(registry);
    let mut files: Vec<ResultFile> = outcome
        .items
        .par_iter()
        .map(|(id, run)| {
            let name = format!("{id}.yaml");
            let key = index::result_key(run);
            let mut stored = index.get(&name);
            // The index's summary line of an item under the same key; a
            // line made again would decode the item's outcome.
            let stored_row = stored
                .as_mut()
                .filter(|e| e.key == Some(key))
                .and_then(|e| e.row.take());
            let row_stored = stored_row.is_some();
            let row = stored_row.unwrap_or_else(|| results::summary_row(run, &keys));
            let mut file = result_file(&results_dir, stored, name, Some(key), || {
                results::item_yaml(run)
            });
            file.row = Some(row);
            file.from_index &= row_stored;
            file
        })
        .collect();
    let summary_key = index::summary_key(&outcome, &keys);
    let summary = result_file(
        &results_dir,
        index.get("summary.csv"),
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
        lock,
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
