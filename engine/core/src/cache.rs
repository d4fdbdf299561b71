//! The rerun cache: each item's outcome stored under the digest of its
//! resolved inputs, module name, version and fingerprint, and the tool's
//! version (see `run::digest`). Anything that could change a result changes
//! the digest, so a hit is the result a computation would give.
//!
//! The cache lives in the hidden folder `.packwright-cache/` of the project
//! (not meant to be committed). Losing it costs only time. State: the files
//! in that folder: `outcomes.bin` (every outcome, one file), `fills.bin`
//! (the filled inputs of items with links, under [`crate::run::fill_key`]),
//! `index.bin` (see [`crate::index`]), `items.bin` (see
//! [`crate::item_index`]), `results-spare/` (see
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
//! what fails either is ignored, which costs only time (see
//! `framed`, whose journal lets a run append only its new
//! outcomes). Each entry holds the outcome's glance (outputs and check
//! statuses, [`crate::run::Glance`]) beside the whole outcome, because the
//! outputs of a linked item enter the digests of the items that link to
//! it, and the results table shows every item's key output and checks.

use std::fs;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use crate::framed;
use crate::run::{OutcomeStore, RunOutcome, SharedOutcome};

/// The cache folder's name inside a project.
pub const CACHE_FOLDER: &str = ".packwright-cache";

/// The file holding every stored outcome.
const OUTCOMES_FILE: &str = "outcomes.bin";

/// First bytes of the outcomes file; a new layout gets a new tag, so an old
/// file is ignored rather than misread.
const OUTCOMES_MAGIC: &[u8; 16] = b"packwright-out-4";

/// The file holding the filled inputs of items with links.
const FILLS_FILE: &str = "fills.bin";

/// First bytes of the fills file.
const FILLS_MAGIC: &[u8; 16] = b"packwright-fil-1";

/// Names in the cache folder that [`Cache::save`] keeps; anything else is
/// an older layout's leftover (the per-digest `.json` files) and goes.
const KEPT: [&str; 6] = [
    OUTCOMES_FILE,
    FILLS_FILE,
    crate::index::INDEX_FILE,
    crate::item_index::ITEMS_FILE,
    crate::index::SPARE_FOLDER,
    crate::index::LOCK_FILE,
];

/// A project's cache.
#[derive(Debug)]
pub struct Cache {
    dir: PathBuf,
    /// The outcomes file, read on first use, so a `--fresh` run never
    /// reads it.
    stored: OnceLock<Stored>,
    /// The fills file, read on first use.
    fills: OnceLock<Option<framed::Journal>>,
}

/// Where an entry's glance and whole outcome lie in the file.
type Ranges = (std::ops::Range<usize>, std::ops::Range<usize>);

/// The outcomes file as read (empty when missing, damaged or another
/// build's).
#[derive(Debug, Default)]
struct Stored(Option<framed::Journal>);

impl Stored {
    fn read(path: &Path) -> Stored {
        Stored(framed::Journal::read(path, OUTCOMES_MAGIC))
    }

    /// Where the glance and the whole outcome of `digest` lie: its value
    /// is those two parts; a value that does not split so is no hit.
    fn entry(&self, digest: &str) -> Option<Ranges> {
        let [glance, full] = self.0.as_ref()?.parts(digest)?;
        Some((glance, full))
    }
}

/// An entry's value: the encoded glance and the encoded outcome.
fn entry_value(glance: &[u8], full: &[u8]) -> Vec<u8> {
    framed::join_parts(&[glance, full])
}

/// An outcome's entry value, encoded now.
fn encode_entry(run: &crate::run::ItemRun) -> Option<Vec<u8>> {
    let glance = crate::run::Glance::encode_of(&run.outcome).ok()?;
    let full = postcard::to_allocvec(&*run.outcome).ok()?;
    Some(entry_value(&glance, &full))
}

impl Cache {
    /// The cache of the project at `root` (nothing is read yet).
    pub fn open(root: &Path) -> Cache {
        Cache {
            dir: root.join(CACHE_FOLDER),
            stored: OnceLock::new(),
            fills: OnceLock::new(),
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

    /// Stores every outcome of a run: the new ones are appended to the
    /// file, which is written whole, forgetting the entries no current item
    /// uses, once those outnumber the rest (so it does not grow without
    /// bound). Errors are ignored on purpose: a cache that cannot be
    /// written only costs time.
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
        let mut changes = framed::Records::new();
        for (digest, run) in &wanted {
            if stored.entry(digest).is_none() {
                let Some(value) = encode_entry(run) else {
                    return;
                };
                changes.set(digest, &value);
            }
        }
        // Written whole, the file forgets the outcomes no current item uses.
        let whole = || {
            let mut all = framed::Records::new();
            for (digest, run) in &wanted {
                // An entry that splits as one should is kept as it is.
                let kept = stored.entry(digest).and(stored.0.as_ref());
                match kept.and_then(|journal| journal.value(digest)) {
                    Some(value) => all.set(digest, value),
                    None => {
                        if let Some(value) = encode_entry(run) {
                            all.set(digest, &value);
                        }
                    }
                }
            }
            all
        };
        self.save_fills(outcome);
        let path = self.dir.join(OUTCOMES_FILE);
        let old = stored.0.as_ref().map(framed::Journal::shape);
        let _ = framed::save(
            &path,
            OUTCOMES_MAGIC,
            &[],
            old,
            wanted.len(),
            changes,
            whole,
        );
    }

    fn fills(&self) -> Option<&framed::Journal> {
        self.fills
            .get_or_init(|| framed::Journal::read(&self.dir.join(FILLS_FILE), FILLS_MAGIC))
            .as_ref()
    }

    /// Keeps the filled inputs of this run's items with links under their
    /// fill keys (see [`crate::run::fill_key`]): those filled anew are
    /// appended, or the file is written whole (see [`Cache::save`]).
    fn save_fills(&self, outcome: &RunOutcome) {
        let old = self.fills();
        let linked: Vec<(String, &crate::run::ItemRun)> = outcome
            .items
            .values()
            .filter_map(|run| Some((hex(&run.fill_key?), run)))
            .collect();
        let mut changes = framed::Records::new();
        for (name, run) in &linked {
            if old.and_then(|j| j.get(name)).is_none() {
                changes.set(name, &fill_value(run));
            }
        }
        let whole = || {
            let mut all = framed::Records::new();
            for (name, run) in &linked {
                match old.and_then(|j| j.value(name)) {
                    Some(kept) => all.set(name, kept),
                    None => all.set(name, &fill_value(run)),
                }
            }
            all
        };
        let path = self.dir.join(FILLS_FILE);
        let shape = old.map(framed::Journal::shape);
        let _ = framed::save(&path, FILLS_MAGIC, &[], shape, linked.len(), changes, whole);
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

/// A fill key as a record name.
fn hex(key: &crate::index::Hash) -> String {
    let mut name = String::with_capacity(64);
    crate::fast::push_hex(&mut name, key);
    name
}

/// A fills record's value: the inputs digest, the origins digest and the
/// filled inputs in their stored form (spans in the item's own file
/// without its name, as in the item index).
fn fill_value(run: &crate::run::ItemRun) -> Vec<u8> {
    let origins = crate::index::origins_digest(&run.inputs);
    let file = Some(run.item.file.clone());
    let inputs =
        packwright_api::with_span_file(file, || crate::deferred::StoredForm::encode(&*run.inputs));
    framed::join_parts(&[run.inputs_digest.as_bytes(), &origins, &inputs])
}

impl OutcomeStore for Cache {
    fn get(&self, digest: &str) -> Option<SharedOutcome> {
        let stored = self.stored();
        let (glance, full) = stored.entry(digest)?;
        let bytes = stored.0.as_ref()?.bytes.clone();
        Some(SharedOutcome::encoded(bytes, glance, full))
    }

    fn filled(
        &self,
        item: &crate::resolve::PlannedItem,
        key: &crate::index::Hash,
    ) -> Option<crate::run::Filled> {
        let journal = self.fills()?;
        let [digest, origins, inputs] = journal.parts(&hex(key))?;
        let digest = std::str::from_utf8(&journal.bytes[digest])
            .ok()?
            .to_string();
        let origins = journal.bytes[origins].try_into().ok()?;
        let inputs = packwright_api::with_span_file(Some(item.file.clone()), || {
            crate::deferred::Deferred::in_bytes(journal.bytes.clone(), inputs)
        });
        Some(crate::run::Filled {
            inputs,
            digest,
            origins,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_value_that_does_not_split_gives_no_hit() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join(OUTCOMES_FILE);
        let whole = || {
            let mut r = framed::Records::new();
            r.set("sha256:ab", &entry_value(b"o", b"xyz"));
            r.set("sha256:cd", b"not two parts");
            r
        };
        let none = framed::Records::new();
        framed::save(&path, OUTCOMES_MAGIC, &[], None, 2, none, whole).expect("saves");
        let stored = Stored::read(&path);
        assert!(stored.entry("sha256:cd").is_none());
        let (glance, full) = stored.entry("sha256:ab").expect("a hit");
        let bytes = &stored.0.as_ref().expect("read").bytes;
        assert_eq!(&bytes[glance], b"o");
        assert_eq!(&bytes[full], b"xyz");
    }
}
