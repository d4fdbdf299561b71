//! The rerun cache: each item's outcome stored under the digest of its
//! resolved inputs, module name, version and fingerprint, and the tool's
//! version (see `run::digest`). Anything that could change a result changes
//! the digest, so a hit is the result a computation would give; outcomes
//! are stored as JSON, whose numbers read back to the same bits.
//!
//! The cache lives in the hidden folder `.packwright-cache/` of the project
//! (not meant to be committed). Losing it costs only time. State: the files
//! in that folder.

use std::fs;
use std::path::{Path, PathBuf};

use packwright_api::Outcome;

use crate::run::{OutcomeStore, RunOutcome};

/// The cache folder's name inside a project.
pub const CACHE_FOLDER: &str = ".packwright-cache";

/// A project's cache.
#[derive(Debug, Clone)]
pub struct Cache {
    dir: PathBuf,
}

fn file_name(digest: &str) -> String {
    format!("{}.json", digest.trim_start_matches("sha256:"))
}

impl Cache {
    /// The cache of the project at `root` (nothing is read yet).
    pub fn open(root: &Path) -> Cache {
        Cache {
            dir: root.join(CACHE_FOLDER),
        }
    }

    /// Stores every computed outcome of a run and forgets entries that no
    /// current item uses, so the folder does not grow without bound. Errors
    /// are ignored on purpose: a cache that cannot be written only costs time.
    pub fn save(&self, outcome: &RunOutcome) {
        if fs::create_dir_all(&self.dir).is_err() {
            return;
        }
        let keep: std::collections::BTreeSet<String> = outcome
            .items
            .values()
            .map(|r| file_name(&r.inputs_digest))
            .collect();
        for run in outcome.items.values().filter(|r| !r.from_cache) {
            if let Ok(json) = serde_json::to_vec(&run.outcome) {
                let _ = crate::fsio::write_file_unsynced(
                    &self.dir.join(file_name(&run.inputs_digest)),
                    &json,
                );
            }
        }
        if let Ok(entries) = fs::read_dir(&self.dir) {
            for entry in entries.flatten() {
                let name = entry.file_name().to_string_lossy().into_owned();
                if !keep.contains(&name) {
                    let _ = fs::remove_file(entry.path());
                }
            }
        }
    }
}

impl OutcomeStore for Cache {
    fn get(&self, digest: &str) -> Option<Outcome> {
        let bytes = fs::read(self.dir.join(file_name(digest))).ok()?;
        serde_json::from_slice(&bytes).ok()
    }
}
