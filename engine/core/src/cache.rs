//! The rerun cache: each item's outcome stored under the digest of its
//! resolved inputs, module name, version and fingerprint, and the tool's
//! version (see `run::digest`). Anything that could change a result changes
//! the digest, so a hit is the result a computation would give.
//!
//! The cache lives in the hidden folder `.packwright-cache/` of the project
//! (not meant to be committed). Losing it costs only time. State: the files
//! in that folder: `outcomes.bin` (every outcome, one file), `index.bin`
//! (see [`crate::index`]), `items.bin` (see [`crate::item_index`]),
//! `results-spare/` (see
//! [`crate::fsio::update_dir`]) and `lock`.
//!
//! Outcomes are stored in one file, in postcard's binary form, because a
//! rerun reads all of them: a thousand separate JSON files cost a thousand
//! opens and a JSON number parse per value, which was most of a rerun. A
//! binary `f64` reads back to the same bits, as the JSON numbers did.
//!
//! An outcome is decoded only when looked at ([`SharedOutcome`]), so the
//! file must never hold bytes that fail to decode: it is checksummed
//! (CRC-32) and headed by the identity of the build that wrote it (an
//! outcome's layout may differ in a rebuilt tool of the same version), and
//! a file that fails either is ignored whole, which costs only time. Each
//! entry holds the outputs alone beside the whole outcome, because the
//! outputs of a linked item enter the digests of the items that link to it.

use std::collections::HashMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use crate::framed;
use crate::run::{Encoded, OutcomeStore, RunOutcome, SharedOutcome};

/// The cache folder's name inside a project.
pub const CACHE_FOLDER: &str = ".packwright-cache";

/// The file holding every stored outcome.
const OUTCOMES_FILE: &str = "outcomes.bin";

/// First bytes of the outcomes file; a new layout gets a new tag, so an old
/// file is ignored rather than misread.
const OUTCOMES_MAGIC: &[u8; 16] = b"packwright-out-2";

/// Names in the cache folder that [`Cache::save`] keeps; anything else is
/// an older layout's leftover (the per-digest `.json` files) and goes.
const KEPT: [&str; 5] = [
    OUTCOMES_FILE,
    crate::index::INDEX_FILE,
    crate::item_index::ITEMS_FILE,
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

/// Where an entry's outputs and whole outcome lie in the file.
type Ranges = (std::ops::Range<usize>, std::ops::Range<usize>);

#[derive(Debug)]
struct Stored {
    bytes: Encoded,
    entries: HashMap<String, Ranges>,
}

impl Stored {
    fn read(path: &Path) -> Stored {
        let bytes = fs::read(path).unwrap_or_default();
        let entries = parse_entries(&bytes).unwrap_or_default();
        Stored {
            bytes: bytes.into(),
            entries,
        }
    }
}

/// The entries of an outcomes file: after the framing (see
/// [`crate::framed`]), repeated `[digest][outputs][outcome]` parts. A
/// truncated, damaged or foreign file, or one another build wrote, gives
/// `None` (and so no hits).
fn parse_entries(bytes: &[u8]) -> Option<HashMap<String, Ranges>> {
    let mut at = framed::open(bytes, OUTCOMES_MAGIC)?;
    let mut entries = HashMap::new();
    while at < bytes.len() {
        let digest = framed::read_part(bytes, &mut at)?;
        let digest = std::str::from_utf8(&bytes[digest]).ok()?;
        let outputs = framed::read_part(bytes, &mut at)?;
        let full = framed::read_part(bytes, &mut at)?;
        entries.insert(digest.to_string(), (outputs, full));
    }
    Some(entries)
}

/// A new outcomes file's bytes from its entries (digest, encoded outputs,
/// encoded outcome).
fn outcomes_file<'a>(
    entries: impl Iterator<Item = (&'a str, &'a [u8], &'a [u8])>,
) -> Option<Vec<u8>> {
    let mut out = framed::begin(OUTCOMES_MAGIC)?;
    for (digest, outputs, full) in entries {
        framed::push_part(&mut out, digest.as_bytes());
        framed::push_part(&mut out, outputs);
        framed::push_part(&mut out, full);
    }
    Some(framed::finish(out))
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
        let encoded: Vec<(&str, Vec<u8>, Vec<u8>)> = wanted
            .iter()
            .filter(|(digest, _)| !stored.entries.contains_key(*digest))
            .filter_map(|(digest, run)| {
                let outputs = postcard::to_allocvec(&run.outcome.outputs).ok()?;
                let full = postcard::to_allocvec(&*run.outcome).ok()?;
                Some((*digest, outputs, full))
            })
            .collect();
        let kept = wanted.iter().filter_map(|(digest, _)| {
            let (outputs, full) = stored.entries.get(*digest)?;
            let bytes = &stored.bytes;
            Some((*digest, &bytes[outputs.clone()], &bytes[full.clone()]))
        });
        let new = encoded
            .iter()
            .map(|(digest, outputs, full)| (*digest, &outputs[..], &full[..]));
        let mut entries: Vec<(&str, &[u8], &[u8])> = kept.chain(new).collect();
        entries.sort_by(|a, b| a.0.cmp(b.0));
        if let Some(out) = outcomes_file(entries.into_iter()) {
            let _ = crate::fsio::write_file_unsynced(&self.dir.join(OUTCOMES_FILE), &out);
        }
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
    fn get(&self, digest: &str) -> Option<SharedOutcome> {
        let stored = self.stored();
        let (outputs, full) = stored.entries.get(digest)?;
        Some(SharedOutcome::encoded(
            stored.bytes.clone(),
            outputs.clone(),
            full.clone(),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_damaged_outcomes_file_gives_no_hits() {
        let good = outcomes_file([("sha256:ab", &b"o"[..], &b"xyz"[..])].into_iter())
            .expect("the test binary has an identity");
        assert!(parse_entries(&good).is_some_and(|e| e.len() == 1));
        let mut bytes = good.clone();
        bytes.pop();
        assert!(parse_entries(&bytes).is_none(), "truncated");
        let mut bytes = good.clone();
        let last = bytes.len() - 2;
        bytes[last] ^= 1;
        assert!(parse_entries(&bytes).is_none(), "one bit changed");
        assert!(parse_entries(b"something else entirely").is_none());
    }
}
