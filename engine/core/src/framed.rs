//! The layout shared by the cache's binary files (`outcomes.bin`,
//! `items.bin`, `index.bin`, `fills.bin`): keyed records, kept as a
//! journal.
//!
//! A file is a head (a 16-byte tag, a CRC-32 of the rest of the head, the
//! identity of the build that wrote the file and the file's own key) and
//! then batches, each its length (u32 LE), a CRC-32 of its body, and the
//! body: records, each a name and a value, both preceded by their length
//! (u32 LE). An empty value removes the name. A save appends one batch of
//! what changed, so a one-item change writes in proportion to it rather
//! than the whole file (a megabyte per thousand items, and a new file whose
//! old blocks the file system must free); the file is written whole when
//! its stale records pass an eighth of its live ones (see [`save`]), so it
//! neither grows without bound nor makes every reader read much that is no
//! longer used.
//!
//! A file whose tag, head checksum, build or key differs is not used at
//! all: the readers decode what they find without further checks (an
//! outcome only when it is looked at), so a damaged file, or one whose
//! layout another build chose, must cost only time. Reading stops at the
//! first batch that is incomplete or fails its checksum (an append a crash
//! cut short); what follows is left out, and the next save writes the file
//! whole. Owns no state.

use std::fs;
use std::io::{self, Read, Write};
use std::ops::Range;
use std::path::Path;

use crate::index::build_identity;

/// Bytes before the head's checksummed part: tag and checksum.
const TAG_AND_CRC: usize = 20;

/// A file's head for this build: `None` when this build has no identity
/// (it then writes no cache).
fn head(tag: &[u8; 16], key: &[u8]) -> Option<Vec<u8>> {
    let build = build_identity();
    if build.is_empty() {
        return None;
    }
    let mut out = tag.to_vec();
    out.extend_from_slice(&[0; 4]);
    push_part(&mut out, build.as_bytes());
    push_part(&mut out, key);
    let crc = crc32fast::hash(&out[TAG_AND_CRC..]);
    out[16..TAG_AND_CRC].copy_from_slice(&crc.to_le_bytes());
    Some(out)
}

/// A value made of parts, each preceded by its length (read back with
/// [`Journal::parts`]).
pub(crate) fn join_parts(parts: &[&[u8]]) -> Vec<u8> {
    let mut value = Vec::with_capacity(parts.iter().map(|p| p.len() + 4).sum());
    parts.iter().for_each(|part| push_part(&mut value, part));
    value
}

/// Appends one part.
fn push_part(out: &mut Vec<u8>, part: &[u8]) {
    out.extend_from_slice(&(part.len() as u32).to_le_bytes());
    out.extend_from_slice(part);
}

/// Reads the part at `at`, moving past it; `None` when it runs past the end.
fn read_part(bytes: &[u8], at: &mut usize) -> Option<Range<usize>> {
    let len = bytes.get(*at..*at + 4)?;
    let n = u32::from_le_bytes(len.try_into().ok()?) as usize;
    let start = *at + 4;
    bytes.get(start..start + n)?;
    *at = start + n;
    Some(start..start + n)
}

/// Where the head of `bytes` ends and its key lies, when the head has
/// this tag, an intact checksum and this build's identity.
fn open_head(bytes: &[u8], tag: &[u8; 16]) -> Option<(usize, Range<usize>)> {
    if bytes.get(..16)? != tag {
        return None;
    }
    let crc = u32::from_le_bytes(bytes.get(16..TAG_AND_CRC)?.try_into().ok()?);
    let mut at = TAG_AND_CRC;
    let build = read_part(bytes, &mut at)?;
    let key = read_part(bytes, &mut at)?;
    if crc32fast::hash(&bytes[TAG_AND_CRC..at]) != crc {
        return None;
    }
    let build = &bytes[build];
    (!build.is_empty() && build == build_identity().as_bytes()).then_some((at, key))
}

/// What a later save needs to know of a file as it was read.
#[derive(Debug, Clone, Default)]
pub(crate) struct Shape {
    /// The file's key.
    key: Vec<u8>,
    /// The file's length up to its last whole batch.
    bytes: usize,
    /// The length of its live records (those not overridden or removed
    /// by a later one), as stored.
    live: usize,
    /// How many names it holds.
    names: usize,
    /// Whether every batch was whole (no append was cut short).
    clean: bool,
}

/// How many bytes of stale records a file may hold beyond an eighth of
/// its live ones: a small file is not written whole for every change.
const STALE_SLACK: usize = 4096;

/// The stored length of a record.
fn record_len(name: &str, value: &Range<usize>) -> usize {
    8 + name.len() + value.len()
}

/// A file as read: the latest value of every name.
#[derive(Debug, Default)]
pub(crate) struct Journal {
    /// The file's bytes; values are ranges of them.
    pub(crate) bytes: crate::deferred::Encoded,
    latest: crate::fast::HashMap<String, Range<usize>>,
    shape: Shape,
}

impl Shape {
    /// How many names the file holds.
    pub(crate) fn names(&self) -> usize {
        self.names
    }
}

impl Journal {
    /// The file at `path`, when it is one this build wrote with this tag.
    pub(crate) fn read(path: &Path, tag: &[u8; 16]) -> Option<Journal> {
        Journal::parse(read_shared(path).ok()?, tag)
    }

    /// A file's bytes read as a journal (see the module comment).
    pub(crate) fn parse(bytes: crate::deferred::Encoded, tag: &[u8; 16]) -> Option<Journal> {
        let (mut at, key) = open_head(&bytes, tag)?;
        // Sized for the records of a file of a thousand items' kind, so the
        // map seldom grows while it is filled.
        let mut latest: crate::fast::HashMap<String, Range<usize>> =
            crate::fast::HashMap::with_capacity_and_hasher(bytes.len() / 256, Default::default());
        let mut live = 0;
        let clean = loop {
            if at == bytes.len() {
                break true;
            }
            let Some(body) = read_batch(&bytes, &mut at) else {
                break false;
            };
            let mut r = body.start;
            while r < body.end {
                let (Some(name), Some(value)) =
                    (read_part(&bytes, &mut r), read_part(&bytes, &mut r))
                else {
                    break;
                };
                let Ok(name) = std::str::from_utf8(&bytes[name]) else {
                    break;
                };
                let before = if value.is_empty() {
                    latest.remove(name)
                } else {
                    live += record_len(name, &value);
                    latest.insert(name.to_string(), value)
                };
                if let Some(before) = before {
                    live -= record_len(name, &before);
                }
            }
        };
        let key = bytes[key].to_vec();
        Some(Journal {
            shape: Shape {
                key,
                bytes: at,
                live,
                names: latest.len(),
                clean,
            },
            bytes,
            latest,
        })
    }

    /// The file's key.
    pub(crate) fn key(&self) -> &[u8] {
        &self.shape.key
    }

    /// Where the latest value of `name` lies in [`Journal::bytes`].
    pub(crate) fn get(&self, name: &str) -> Option<Range<usize>> {
        self.latest.get(name).cloned()
    }

    /// The latest value of `name`.
    pub(crate) fn value(&self, name: &str) -> Option<&[u8]> {
        Some(&self.bytes[self.get(name)?])
    }

    /// Where in [`Journal::bytes`] the `N` parts of the latest value of
    /// `name` lie, when the value is exactly `N` parts (see
    /// [`join_parts`]); a value that does not split so counts as none.
    pub(crate) fn parts<const N: usize>(&self, name: &str) -> Option<[Range<usize>; N]> {
        let value = self.get(name)?;
        let mut at = value.start;
        let mut parts: [Range<usize>; N] = std::array::from_fn(|_| 0..0);
        for part in &mut parts {
            *part = read_part(&self.bytes, &mut at)?;
        }
        (at == value.end).then_some(parts)
    }

    /// Every name with the range of its latest value.
    pub(crate) fn entries(&self) -> impl Iterator<Item = (&str, Range<usize>)> {
        self.latest.iter().map(|(n, r)| (n.as_str(), r.clone()))
    }

    /// What a save needs to know of the file as read.
    pub(crate) fn shape(&self) -> &Shape {
        &self.shape
    }
}

/// A file's bytes, read straight into memory that values decoded from
/// them can share (see [`crate::deferred`]) without a copy (nor a pass
/// zeroing it first).
fn read_shared(path: &Path) -> io::Result<crate::deferred::Encoded> {
    // A file that grows while it is read (another run appending) is read
    // to where it ends then; the reader stops at the last whole batch.
    Ok(std::sync::Arc::new(fs::read(path)?))
}

/// The body of the batch at `at`, moving past it; `None` when it is
/// incomplete or fails its checksum.
fn read_batch(bytes: &[u8], at: &mut usize) -> Option<Range<usize>> {
    let len = u32::from_le_bytes(bytes.get(*at..*at + 4)?.try_into().ok()?) as usize;
    let crc = u32::from_le_bytes(bytes.get(*at + 4..*at + 8)?.try_into().ok()?);
    let body = *at + 8..*at + 8 + len;
    if crc32fast::hash(bytes.get(body.clone())?) != crc {
        return None;
    }
    *at = body.end;
    Some(body)
}

/// Records to write, in order.
#[derive(Default)]
pub(crate) struct Records {
    body: Vec<u8>,
    count: usize,
}

impl Records {
    /// No records yet.
    pub(crate) fn new() -> Records {
        Records::default()
    }

    /// Sets `name` to `value` (which must not be empty).
    pub(crate) fn set(&mut self, name: &str, value: &[u8]) {
        debug_assert!(!value.is_empty(), "an empty value removes the name");
        push_part(&mut self.body, name.as_bytes());
        push_part(&mut self.body, value);
        self.count += 1;
    }

    /// Removes `name`.
    pub(crate) fn remove(&mut self, name: &str) {
        push_part(&mut self.body, name.as_bytes());
        push_part(&mut self.body, &[]);
        self.count += 1;
    }

    /// Whether there is nothing to write.
    pub(crate) fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// The records as one batch.
    fn batch(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(self.body.len() + 8);
        out.extend_from_slice(&(self.body.len() as u32).to_le_bytes());
        out.extend_from_slice(&crc32fast::hash(&self.body).to_le_bytes());
        out.extend_from_slice(&self.body);
        out
    }
}

/// Saves a file of `wanted` names under `key`: `changes` appended to the
/// file as it was read (`old`), or the file written whole from the records
/// `whole` gives when that cannot be done, or when the file would then
/// hold more stale bytes than an eighth of its live ones (and a few
/// kilobytes), or it holds an eighth more names than are wanted (names no
/// longer used, which the whole file forgets). A reader reads the stale
/// records too, so they are kept few: a one-item change appends a record
/// of its item every run, and a file allowed to grow to twice its live
/// size was read at one and a half times it on average. Errors are
/// returned for the caller to ignore: a cache file lost costs only time.
pub(crate) fn save(
    path: &Path,
    tag: &[u8; 16],
    key: &[u8],
    old: Option<&Shape>,
    wanted: usize,
    changes: Records,
    whole: impl FnOnce() -> Records,
) -> io::Result<()> {
    let Some(head) = head(tag, key) else {
        return Ok(());
    };
    if changes.is_empty() && old.is_some_and(|old| old.clean && old.key == key) {
        return Ok(());
    }
    let batch = changes.batch();
    let appendable = old.is_some_and(|old| {
        old.clean
            && old.key == key
            && old.bytes + batch.len() <= old.live + old.live / 8 + STALE_SLACK
            && old.names <= wanted + wanted / 8 + 16
    });
    if appendable && append(path, &head, &batch)? {
        return Ok(());
    }
    let mut out = head;
    let all = whole();
    if !all.is_empty() {
        out.extend_from_slice(&all.batch());
    }
    crate::fsio::write_file_unsynced(path, &out)
}

/// Appends `batch` to the file at `path` when it still begins with `head`
/// (another build may have written it whole since it was read); says
/// whether it did.
fn append(path: &Path, head: &[u8], batch: &[u8]) -> io::Result<bool> {
    let mut file = match fs::OpenOptions::new().read(true).append(true).open(path) {
        Ok(f) => f,
        Err(e) if e.kind() == io::ErrorKind::NotFound => return Ok(false),
        Err(e) => return Err(e),
    };
    let mut found = vec![0; head.len()];
    if file.read_exact(&mut found).is_err() || found != head {
        return Ok(false);
    }
    // One write: a reader sees the batch whole or stops before it.
    file.write_all(batch)?;
    Ok(true)
}

#[cfg(test)]
mod tests {
    use super::*;

    const TAG: &[u8; 16] = b"packwright-test1";

    fn names(j: &Journal) -> Vec<(String, Vec<u8>)> {
        let mut all: Vec<(String, Vec<u8>)> = j
            .entries()
            .map(|(n, r)| (n.to_string(), j.bytes[r].to_vec()))
            .collect();
        all.sort();
        all
    }

    /// Records setting each name to its value.
    fn records(pairs: &[(&str, &[u8])]) -> Records {
        let mut r = Records::new();
        pairs.iter().for_each(|(name, value)| r.set(name, value));
        r
    }

    #[test]
    fn appended_records_override_and_remove_earlier_ones() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("f.bin");
        let first = || records(&[("a", b"1"), ("b", b"2")]);
        save(&path, TAG, b"k", None, 2, Records::new(), first).expect("saves");
        let read = Journal::read(&path, TAG).expect("reads");
        let mut changes = records(&[("a", b"3")]);
        changes.remove("b");
        changes.set("c", b"4");
        let whole = || unreachable!("appended, not written whole");
        save(&path, TAG, b"k", Some(read.shape()), 2, changes, whole).expect("saves");
        let read = Journal::read(&path, TAG).expect("reads");
        assert_eq!(
            names(&read),
            [("a".into(), b"3".to_vec()), ("c".into(), b"4".to_vec())]
        );
        assert_eq!(read.key(), b"k");
    }

    #[test]
    fn a_cut_append_is_left_out_and_the_next_save_writes_whole() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("f.bin");
        let mut bytes = head(TAG, b"k").expect("the test binary has an identity");
        bytes.extend_from_slice(&records(&[("a", b"1")]).batch());
        let batch = records(&[("b", b"2")]).batch();
        bytes.extend_from_slice(&batch[..batch.len() - 1]);
        let read =
            Journal::parse(std::sync::Arc::new(bytes.clone()), TAG).expect("the head is whole");
        assert_eq!(names(&read), [("a".into(), b"1".to_vec())]);
        std::fs::write(&path, &bytes).expect("write");
        let changes = records(&[("c", b"3")]);
        let whole = || records(&[("a", b"1"), ("c", b"3")]);
        save(&path, TAG, b"k", Some(read.shape()), 2, changes, whole).expect("saves");
        let read = Journal::read(&path, TAG).expect("reads");
        assert_eq!(
            names(&read),
            [("a".into(), b"1".to_vec()), ("c".into(), b"3".to_vec())]
        );
        assert!(read.shape().clean);
    }

    #[test]
    fn a_damaged_or_foreign_head_is_not_opened() {
        let good = head(TAG, b"k").expect("the test binary has an identity");
        let parse = |bytes: &[u8], tag| Journal::parse(std::sync::Arc::new(bytes.to_vec()), tag);
        assert!(parse(&good, TAG).is_some());
        let mut bad = good.clone();
        let last = bad.len() - 1;
        bad[last] ^= 1;
        assert!(parse(&bad, TAG).is_none(), "one bit changed");
        assert!(parse(&good[..good.len() - 1], TAG).is_none(), "truncated");
        assert!(parse(&good, b"packwright-test2").is_none(), "another tag");
        assert!(parse(b"short", TAG).is_none());
    }

    #[test]
    fn a_file_holding_many_names_no_longer_wanted_is_written_whole() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("f.bin");
        save(&path, TAG, b"k", None, 1, Records::new(), || {
            records(&[("n0", b"v")])
        })
        .expect("saves");
        // Each save wants one name, a new one: the old ones are forgotten
        // once they outnumber the slack.
        for n in 1..100u32 {
            let read = Journal::read(&path, TAG).expect("reads");
            let name = format!("n{n}");
            let changes = records(&[(name.as_str(), b"v")]);
            let whole = || records(&[(name.as_str(), b"v")]);
            save(&path, TAG, b"k", Some(read.shape()), 1, changes, whole).expect("saves");
            let read = Journal::read(&path, TAG).expect("reads");
            assert!(read.shape().names <= 1 + 16 + 1, "{}", read.shape().names);
            assert!(read.get(&name).is_some());
        }
    }

    #[test]
    fn a_file_of_mostly_stale_records_is_written_whole() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("f.bin");
        // Forty live records of 1 kB, and one of them changed 200 times.
        let value = |n: u32| format!("{n:01000}");
        let names: Vec<String> = (0..40).map(|i| format!("item-{i}")).collect();
        let all = |changed: u32| {
            let mut r = Records::new();
            for (i, name) in names.iter().enumerate() {
                let n = if i == 0 { changed } else { 0 };
                r.set(name, value(n).as_bytes());
            }
            r
        };
        save(&path, TAG, b"k", None, 40, Records::new(), || all(0)).expect("saves");
        let mut largest = 0;
        for n in 1..200u32 {
            let read = Journal::read(&path, TAG).expect("reads");
            let changes = records(&[("item-0", value(n).as_bytes())]);
            save(&path, TAG, b"k", Some(read.shape()), 40, changes, || all(n)).expect("saves");
            largest = largest.max(std::fs::metadata(&path).expect("stat").len() as usize);
        }
        let read = Journal::read(&path, TAG).expect("reads");
        assert_eq!(
            read.get("item-0").map(|r| read.bytes[r].to_vec()),
            Some(value(199).into_bytes())
        );
        let live = read.shape().live;
        assert!(live > 40_000, "{live}");
        assert!(
            largest <= live + live / 8 + STALE_SLACK + 2048,
            "{largest} for {live}"
        );
    }
}
