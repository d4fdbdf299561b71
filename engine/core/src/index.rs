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
//! The file is headed by the identity of the running executable (its size
//! and modification time), so a rebuilt tool, whose formatting may differ
//! even at the same version number, never trusts an index it did not
//! write. It is a journal (`framed`): a run appends the entries
//! that changed.
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

    /// The inode number.
    pub fn ino(&self) -> u64 {
        self.ino
    }
}

/// The stamp of the file at `path` (not following a final link), or `None`
/// when it is no regular file or the platform gives no change time.
pub fn stamp_of(path: &Path) -> Option<Stamp> {
    #[cfg(target_os = "linux")]
    {
        stamp_at(rustix::fs::CWD, path)
    }
    #[cfg(all(unix, not(target_os = "linux")))]
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

/// The stamp of `name` inside the folder `dir` (or of a path from the
/// working folder, with `CWD`).
#[cfg(target_os = "linux")]
fn stamp_at(dir: impl rustix::fd::AsFd, name: impl rustix::path::Arg) -> Option<Stamp> {
    use rustix::fs::{AtFlags, FileType, StatxFlags};
    let wanted = StatxFlags::TYPE | StatxFlags::INO | StatxFlags::SIZE;
    let wanted = wanted | StatxFlags::MTIME | StatxFlags::CTIME;
    let s = rustix::fs::statx(dir, name, AtFlags::SYMLINK_NOFOLLOW, wanted).ok()?;
    let file = FileType::from_raw_mode(u32::from(s.stx_mode)) == FileType::RegularFile;
    let complete = StatxFlags::from_bits_truncate(s.stx_mask).contains(wanted);
    (file && complete).then(|| Stamp {
        dev: (u64::from(s.stx_dev_major) << 32) | u64::from(s.stx_dev_minor),
        ino: s.stx_ino,
        size: s.stx_size,
        mtime: (s.stx_mtime.tv_sec, i64::from(s.stx_mtime.tv_nsec)),
        ctime: (s.stx_ctime.tv_sec, i64::from(s.stx_ctime.tv_nsec)),
    })
}

/// A folder held open, so that its files are stamped by name: a `stat` of
/// a name inside an open folder does not resolve the folder's path again,
/// which was a third of the cost of stamping a thousand result files.
pub struct Folder {
    path: std::path::PathBuf,
    #[cfg(target_os = "linux")]
    fd: Option<rustix::fd::OwnedFd>,
}

impl Folder {
    /// The folder at `path` (a missing folder holds no files).
    pub fn open(path: &Path) -> Folder {
        Folder {
            path: path.to_path_buf(),
            #[cfg(target_os = "linux")]
            fd: {
                use rustix::fs::{Mode, OFlags};
                let flags = OFlags::PATH | OFlags::DIRECTORY | OFlags::CLOEXEC;
                rustix::fs::open(path, flags, Mode::empty()).ok()
            },
        }
    }

    /// The folder's path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The stamp of the file `name` in this folder, as [`stamp_of`] gives it.
    pub fn stamp(&self, name: impl AsRef<Path>) -> Option<Stamp> {
        #[cfg(target_os = "linux")]
        {
            stamp_at(self.fd.as_ref()?, name.as_ref())
        }
        #[cfg(not(target_os = "linux"))]
        {
            stamp_of(&self.path.join(name))
        }
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

/// An [`Entry`] of a result file, borrowing what the run holds. Stored
/// without its name (the record's name), so it reads back as an [`Entry`]:
/// the fields are [`Entry`]'s, in its order.
#[derive(Serialize)]
pub struct EntryRef<'a> {
    /// The file's name.
    #[serde(skip)]
    pub name: &'a str,
    /// As [`Entry::key`].
    pub key: Option<Hash>,
    /// As [`Entry::content`].
    pub content: Hash,
    /// As [`Entry::stamp`].
    pub stamp: Stamp,
    /// As [`Entry::row`].
    pub row: Option<&'a str>,
    /// Whether this is the entry the index holds for the name (taken from
    /// it, and its file untouched): saving then neither encodes nor
    /// compares it.
    #[serde(skip)]
    pub as_stored: bool,
}

/// The index of `results/`: its file as read, each entry decoded when
/// looked up (a rerun looks each up once; a map of them all was a tenth of
/// the rerun's own work).
#[derive(Debug, Default)]
pub struct Index {
    journal: Option<crate::framed::Journal>,
}

/// First bytes of the index file; a new layout gets a new tag.
const INDEX_MAGIC: &[u8; 16] = b"packwright-res-1";

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
    /// An empty index.
    pub fn new() -> Index {
        Index::default()
    }

    /// The index in `cache_dir`, or an empty one when it is missing,
    /// unreadable or written by another build (its file is a journal
    /// headed by the build's identity, see `framed`).
    pub fn load(cache_dir: &Path) -> Index {
        Index {
            journal: crate::framed::Journal::read(&cache_dir.join(INDEX_FILE), INDEX_MAGIC),
        }
    }

    /// The stored entry of `results/NAME`, if any.
    pub fn get(&self, name: &str) -> Option<Entry> {
        postcard::from_bytes(self.stored(name)?).ok()
    }

    /// The stored form of the entry of `name`, if any.
    fn stored(&self, name: &str) -> Option<&[u8]> {
        self.journal.as_ref()?.value(name)
    }

    /// Writes the index of `entries` (without flushing: a lost index costs
    /// only time), as the entries that differ from `before` (the index as
    /// loaded) appended to its file, or whole.
    pub fn save(cache_dir: &Path, before: &Index, entries: &[EntryRef<'_>]) {
        let encoded = |entry: &EntryRef<'_>| postcard::to_allocvec(entry).ok();
        let mut changes = crate::framed::Records::new();
        let mut added = 0;
        // An entry is compared with the stored one in its stored form.
        let mut buffer = Vec::new();
        for entry in entries {
            if entry.as_stored {
                continue;
            }
            buffer.clear();
            let Ok(value) = postcard::to_extend(entry, std::mem::take(&mut buffer)) else {
                return;
            };
            buffer = value;
            match before.stored(entry.name) {
                Some(old) if old == buffer.as_slice() => {}
                old => {
                    added += usize::from(old.is_none());
                    changes.set(entry.name, &buffer);
                }
            }
        }
        // Names the index held that the run no longer has.
        let held = before.journal.as_ref().map_or(0, |j| j.shape().names());
        if held + added != entries.len() {
            let now: crate::fast::HashSet<&str> = entries.iter().map(|e| e.name).collect();
            for (name, _) in before.journal.iter().flat_map(|j| j.entries()) {
                if !now.contains(name) {
                    changes.remove(name);
                }
            }
        }
        let whole = || {
            let mut all = crate::framed::Records::new();
            for entry in entries {
                if let Some(value) = encoded(entry) {
                    all.set(entry.name, &value);
                }
            }
            all
        };
        let _ = crate::framed::save(
            &cache_dir.join(INDEX_FILE),
            INDEX_MAGIC,
            &[],
            before.journal.as_ref().map(crate::framed::Journal::shape),
            entries.len(),
            changes,
            whole,
        );
    }
}

/// A digest of everything an item's result file is made from. The inputs
/// digest stands for the resolved values, the criteria, the module and its
/// version and the tool's version, and so for the outcome (the cache's
/// premise); the rest of the file is the item's id, module, title and the
/// words for where each input came from, which the digest leaves out.
pub fn result_key(run: &ItemRun) -> Hash {
    let origins = match (&run.item.own_digests, run.origins_digest) {
        (Some(own), _) => own.origins,
        (None, Some(known)) => known,
        (None, None) => origins_digest(&run.inputs),
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

#[cfg(test)]
mod tests {
    use super::*;

    /// An entry written from borrowed parts reads back as the [`Entry`] it
    /// stands for, and saved again under the same name, it is the entry
    /// stored (nothing is appended).
    #[test]
    fn a_borrowed_entry_reads_back_as_an_entry() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("a.yaml");
        std::fs::write(&path, "x").expect("write");
        let stamp = stamp_of(&path).expect("a stamp");
        let borrowed = EntryRef {
            name: "a.yaml",
            key: Some([1; 32]),
            content: [2; 32],
            stamp,
            row: Some("a,b\n"),
            as_stored: false,
        };
        let bytes = postcard::to_allocvec(&borrowed).expect("encodes");
        let entry: Entry = postcard::from_bytes(&bytes).expect("decodes");
        assert_eq!(
            (entry.key, entry.content, entry.stamp),
            (borrowed.key, borrowed.content, borrowed.stamp)
        );
        assert_eq!(entry.row.as_deref(), Some("a,b\n"));
        let cache = dir.path().join("cache");
        std::fs::create_dir_all(&cache).expect("mkdir");
        Index::save(&cache, &Index::new(), std::slice::from_ref(&borrowed));
        let saved = std::fs::read(cache.join(INDEX_FILE)).expect("saved");
        let before = Index::load(&cache);
        assert_eq!(before.get("a.yaml"), Some(entry));
        Index::save(&cache, &before, std::slice::from_ref(&borrowed));
        assert_eq!(std::fs::read(cache.join(INDEX_FILE)).expect("saved"), saved);
    }
}
