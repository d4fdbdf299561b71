//! The results index: what each file in `results/` holds, so that a rerun
//! neither formats unchanged result files again nor reads them back to
//! compare.
//!
//! For every result file the index keeps a key (a digest of everything its
//! text is made from, see [`result_key`]), the digest of its text, and the
//! file's stamp on disk (device, inode, size, modification and change
//! times) taken right after packwright wrote it. A file whose stamp still
//! matches holds the recorded text: any write changes the change time,
//! which no program can set back. A file whose stamp differs (edited, or
//! checked out by git) is compared by content as before.
//!
//! The key includes the identity of the running executable (its size and
//! modification time), so a rebuilt tool, whose formatting may differ even
//! at the same version number, never trusts an index it did not write.
//!
//! State: `.packwright-cache/index.bin`. Losing it costs only time.

use std::collections::BTreeMap;
use std::path::Path;
use std::sync::OnceLock;

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::run::{ItemRun, RunOutcome, TOOL_VERSION};

/// The index file inside the cache folder.
pub const INDEX_FILE: &str = "index.bin";

/// The folder, inside the cache folder, that holds the version of
/// `results/` before the current one (see [`crate::fsio::update_dir`]).
pub const SPARE_FOLDER: &str = "results-spare";

/// The lock file inside the cache folder: one writer of `results/` and the
/// cache at a time.
pub const LOCK_FILE: &str = "lock";

/// Bump when the text of a result file changes for the same inputs, so
/// that no index written before the change is trusted.
const RESULTS_FORMAT: &str = "results-format 1";

/// A 32-byte SHA-256 digest.
pub type Hash = [u8; 32];

/// The SHA-256 digest of some bytes.
pub fn hash(bytes: &[u8]) -> Hash {
    Sha256::digest(bytes).into()
}

/// Where a file is and when it last changed, as far as the file system says.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Stamp {
    dev: u64,
    ino: u64,
    size: u64,
    mtime: (i64, i64),
    ctime: (i64, i64),
}

impl Stamp {
    /// The change time, seconds and nanoseconds since the epoch.
    pub fn ctime(&self) -> (i64, i64) {
        self.ctime
    }
}

/// The stamp of the file at `path` (not following a final link), or `None`
/// when it is no regular file or the platform gives no change time.
pub fn stamp_of(path: &Path) -> Option<Stamp> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        let m = std::fs::symlink_metadata(path).ok()?;
        m.is_file().then(|| Stamp {
            dev: m.dev(),
            ino: m.ino(),
            size: m.size(),
            mtime: (m.mtime(), m.mtime_nsec()),
            ctime: (m.ctime(), m.ctime_nsec()),
        })
    }
    #[cfg(not(unix))]
    {
        let _ = path;
        None
    }
}

/// What the index knows of one result file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Entry {
    /// [`result_key`] (or [`summary_key`]) of the text; `None` is never
    /// matched, so such a file is always formatted again.
    pub key: Option<Hash>,
    /// Digest of the file's text.
    pub content: Hash,
    /// The file's stamp right after it was written.
    pub stamp: Stamp,
    /// For an item's file, the item's line of `summary.csv`, which is
    /// made from the same things as the file (the key stands for it).
    pub row: Option<String>,
}

/// The index of `results/`.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct Index {
    build: String,
    /// Entries by file name.
    pub files: BTreeMap<String, Entry>,
}

/// Size and modification time of the running executable: what tells one
/// build of the tool from another at the same version.
pub(crate) fn build_identity() -> &'static str {
    static IDENTITY: OnceLock<String> = OnceLock::new();
    IDENTITY.get_or_init(|| {
        let exe = std::env::current_exe()
            .and_then(std::fs::metadata)
            .ok()
            .and_then(|m| {
                let since = m
                    .modified()
                    .ok()?
                    .duration_since(std::time::UNIX_EPOCH)
                    .ok()?;
                Some(format!("{} {}", m.len(), since.as_nanos()))
            });
        match exe {
            Some(e) => format!("packwright {TOOL_VERSION} {RESULTS_FORMAT} exe {e}"),
            // No identity: an index that can never be matched.
            None => String::new(),
        }
    })
}

impl Index {
    /// An empty index for this build of the tool.
    pub fn new() -> Index {
        Index {
            build: build_identity().to_string(),
            files: BTreeMap::new(),
        }
    }

    /// The index in `cache_dir`, or an empty one when it is missing,
    /// unreadable or written by another build.
    pub fn load(cache_dir: &Path) -> Index {
        let fresh = Index::new();
        if fresh.build.is_empty() {
            return fresh;
        }
        std::fs::read(cache_dir.join(INDEX_FILE))
            .ok()
            .and_then(|b| postcard::from_bytes::<Index>(&b).ok())
            .filter(|i| i.build == fresh.build)
            .unwrap_or(fresh)
    }

    /// Writes the index (without flushing: a lost index costs only time).
    pub fn save(&self, cache_dir: &Path) {
        if self.build.is_empty() {
            return;
        }
        if let Ok(bytes) = postcard::to_allocvec(self) {
            let _ = crate::fsio::write_file_unsynced(&cache_dir.join(INDEX_FILE), &bytes);
        }
    }

    /// The recorded text digest of `results/NAME`, when the file on disk
    /// is still the one the index describes.
    pub fn verified(&self, results: &Path, name: &str) -> Option<&Entry> {
        let entry = self.files.get(name)?;
        (stamp_of(&results.join(name)) == Some(entry.stamp)).then_some(entry)
    }
}

/// A digest of everything an item's result file is made from. The inputs
/// digest stands for the resolved values, the criteria, the module and its
/// version and the tool's version, and so for the outcome (the cache's
/// premise); the rest of the file is the item's id, module, title and the
/// words for where each input came from, which the digest leaves out.
pub fn result_key(run: &ItemRun) -> Hash {
    let origins = match &run.item.own_digests {
        Some(own) => own.origins,
        None => origins_digest(&run.inputs),
    };
    let mut h = Sha256::new();
    let mut field = |s: &[u8]| {
        h.update((s.len() as u64).to_le_bytes());
        h.update(s);
    };
    field(RESULTS_FORMAT.as_bytes());
    field(run.item.id.as_bytes());
    field(run.item.module.as_bytes());
    field(run.module_version.as_bytes());
    field(run.item.title.as_bytes());
    field(run.inputs_digest.as_bytes());
    field(&origins);
    h.finalize().into()
}

/// The digest of the names and origins of resolved inputs (their values are
/// in the inputs digest): with it, a result file's key.
pub fn origins_digest(inputs: &packwright_api::Inputs) -> Hash {
    let mut h = Sha256::new();
    let mut field = |s: &str| {
        h.update((s.len() as u64).to_le_bytes());
        h.update(s.as_bytes());
    };
    for (name, input) in &inputs.values {
        field(name);
        field(&crate::results::origin_words(&input.origin));
    }
    for name in inputs.criteria.keys() {
        field(name);
    }
    h.finalize().into()
}

/// A digest of everything `summary.csv` is made from: each item's id,
/// module, title and inputs digest (which stands for its outcome, as in
/// [`result_key`]) and every module's key outputs. With it the summary of
/// a rerun is neither formatted nor its items' outcomes decoded.
pub fn summary_key(outcome: &RunOutcome, key_outputs: &BTreeMap<String, Vec<String>>) -> Hash {
    let mut h = Sha256::new();
    let mut field = |s: &str| {
        h.update((s.len() as u64).to_le_bytes());
        h.update(s.as_bytes());
    };
    field(RESULTS_FORMAT);
    field("summary.csv");
    for (module, keys) in key_outputs {
        field(module);
        field(&keys.len().to_string());
        keys.iter().for_each(|k| field(k));
    }
    for (id, run) in &outcome.items {
        field(id);
        field(&run.item.module);
        field(&run.item.title);
        field(&run.inputs_digest);
    }
    h.finalize().into()
}
