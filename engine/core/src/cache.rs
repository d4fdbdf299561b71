//! The rerun cache: each item's outcome stored under the digest of its
//! resolved inputs, module name, version and fingerprint, and the tool's
//! version (see `run::digest`). Anything that could change a result changes
//! the digest, so a hit is the result a computation would give.
//!
//! The cache lives in the hidden folder `.packwright-cache/` of the project
//! (not meant to be committed). Losing it costs only time. State: the files
//! in that folder: `outcomes.bin` (every outcome, one file), `index.bin`
//! (see [`crate::index`]), `results-spare/` (see
//! [`crate::fsio::update_dir`]) and `lock`.
//!
//! Outcomes are stored in one file, in postcard's binary form, because a
//! rerun reads all of them: a thousand separate JSON files cost a thousand
//! opens and a JSON number parse per value, which was most of a rerun. A
//! binary `f64` reads back to the same bits, as the JSON numbers did.

use std::collections::HashMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use packwright_api::Outcome;

use crate::run::{OutcomeStore, RunOutcome};

/// The cache folder's name inside a project.
pub const CACHE_FOLDER: &str = ".packwright-cache";

/// The file holding every stored outcome.
const OUTCOMES_FILE: &str = "outcomes.bin";

/// First bytes of the outcomes file; a new layout gets a new tag, so an old
/// file is ignored rather than misread.
const OUTCOMES_MAGIC: &[u8; 16] = b"packwright-out-1";

/// Names in the cache folder that [`Cache::save`] keeps; anything else is
/// an older layout's leftover (the per-digest `.json` files) and goes.
const KEPT: [&str; 4] = [
    OUTCOMES_FILE,
    crate::index::INDEX_FILE,
    crate::index::SPARE_FOLDER,
    crate::index::LOCK_FILE,
];

/// A project's cache.
#[derive(Debug)]
pub struct Cache {
    dir: PathBuf,
    /// The outcomes file's bytes and where each digest's entry lies in
    /// them; read on first use, so a `--fresh` run never reads it.
    stored: OnceLock<Stored>,
}

#[derive(Debug, Default)]
struct Stored {
    bytes: Vec<u8>,
    entries: HashMap<String, (usize, usize)>,
}

impl Stored {
    fn read(path: &Path) -> Stored {
        let Ok(bytes) = fs::read(path) else {
            return Stored::default();
        };
        let entries = parse_entries(&bytes).unwrap_or_default();
        Stored { bytes, entries }
    }

    fn entry(&self, digest: &str) -> Option<&[u8]> {
        let &(start, end) = self.entries.get(digest)?;
        self.bytes.get(start..end)
    }
}

fn read_u32(bytes: &[u8], at: &mut usize) -> Option<usize> {
    let b = bytes.get(*at..*at + 4)?;
    *at += 4;
    Some(u32::from_le_bytes(b.try_into().ok()?) as usize)
}

/// The entries of an outcomes file: after the tag, repeated
/// `[digest length][digest][outcome length][outcome]`, lengths as u32 LE.
/// A truncated or foreign file gives `None` (and so no hits).
fn parse_entries(bytes: &[u8]) -> Option<HashMap<String, (usize, usize)>> {
    let mut at = OUTCOMES_MAGIC.len();
    if bytes.get(..at)? != OUTCOMES_MAGIC {
        return None;
    }
    let mut entries = HashMap::new();
    while at < bytes.len() {
        let n = read_u32(bytes, &mut at)?;
        let digest = std::str::from_utf8(bytes.get(at..at + n)?).ok()?;
        at += n;
        let m = read_u32(bytes, &mut at)?;
        bytes.get(at..at + m)?;
        entries.insert(digest.to_string(), (at, at + m));
        at += m;
    }
    Some(entries)
}

fn push_entry(out: &mut Vec<u8>, digest: &str, outcome: &[u8]) {
    out.extend_from_slice(&(digest.len() as u32).to_le_bytes());
    out.extend_from_slice(digest.as_bytes());
    out.extend_from_slice(&(outcome.len() as u32).to_le_bytes());
    out.extend_from_slice(outcome);
}

impl Cache {
    /// The cache of the project at `root` (nothing is read yet).
    pub fn open(root: &Path) -> Cache {
        Cache {
            dir: root.join(CACHE_FOLDER),
            stored: OnceLock::new(),
        }
    }

    /// The cache folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    fn stored(&self) -> &Stored {
        self.stored
            .get_or_init(|| Stored::read(&self.dir.join(OUTCOMES_FILE)))
    }

    /// Stores every outcome of a run and forgets entries that no current
    /// item uses, so the file does not grow without bound. The file is
    /// rewritten only when its contents change. Errors are ignored on
    /// purpose: a cache that cannot be written only costs time.
    pub fn save(&self, outcome: &RunOutcome) {
        if fs::create_dir_all(&self.dir).is_err() {
            return;
        }
        self.remove_leftovers();
        let stored = self.stored();
        let mut wanted: Vec<(&str, &crate::run::ItemRun)> = outcome
            .items
            .values()
            .map(|r| (r.inputs_digest.as_str(), r))
            .collect();
        wanted.sort_by(|a, b| a.0.cmp(b.0));
        wanted.dedup_by(|a, b| a.0 == b.0);
        let unchanged = wanted.len() == stored.entries.len()
            && wanted.iter().all(|(d, _)| stored.entries.contains_key(*d));
        if unchanged {
            return;
        }
        let mut out = OUTCOMES_MAGIC.to_vec();
        for (digest, run) in wanted {
            match stored.entry(digest) {
                Some(bytes) => push_entry(&mut out, digest, bytes),
                None => {
                    let Ok(bytes) = postcard::to_allocvec(&run.outcome) else {
                        continue;
                    };
                    push_entry(&mut out, digest, &bytes);
                }
            }
        }
        let _ = crate::fsio::write_file_unsynced(&self.dir.join(OUTCOMES_FILE), &out);
    }

    /// Removes what an older layout of the cache left (one JSON file per
    /// digest) and stray temporary files.
    fn remove_leftovers(&self) {
        let Ok(entries) = fs::read_dir(&self.dir) else {
            return;
        };
        for entry in entries.flatten() {
            let name = entry.file_name().to_string_lossy().into_owned();
            if KEPT.contains(&name.as_str()) {
                continue;
            }
            let path = entry.path();
            let _ = if entry.file_type().is_ok_and(|t| t.is_dir()) {
                fs::remove_dir_all(path)
            } else {
                fs::remove_file(path)
            };
        }
    }
}

impl OutcomeStore for Cache {
    fn get(&self, digest: &str) -> Option<Outcome> {
        postcard::from_bytes(self.stored().entry(digest)?).ok()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_damaged_outcomes_file_gives_no_hits() {
        let mut bytes = OUTCOMES_MAGIC.to_vec();
        push_entry(&mut bytes, "sha256:ab", b"xyz");
        assert!(parse_entries(&bytes).is_some_and(|e| e.len() == 1));
        bytes.pop();
        assert!(parse_entries(&bytes).is_none(), "truncated");
        assert!(parse_entries(b"something else entirely").is_none());
    }
}
