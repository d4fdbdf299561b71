//! The item index: every item file's parsed form and, when the item was
//! valid, its resolved (validated) form, kept between runs under the file's
//! stamp, so that a rerun neither reads, parses nor validates an item file
//! that has not changed.
//!
//! An entry is used only when the file's stamp (device, inode, size,
//! modification and change times) is the one taken just before the file
//! was last read: any write changes the change time, which no program can
//! set back, so an edit that keeps size and modification time is still
//! seen. A file that changed shortly before it was read is not recorded at
//! all ("settled" below): the file system's clock moves in ticks, and a
//! second write in the same tick as the first would keep the stamp.
//!
//! The parsed form depends on the file alone (and on this build of the
//! tool, whose identity heads the file). The resolved form depends also on
//! the modules' declarations and on the materials; it is used only when the
//! digest of those ([`resolve_key`]) is the one it was made under. Links
//! between items are checked on every run (they depend on other items), and
//! so is everything downstream: the inputs digest of every item with links
//! is computed again, so a linked value that changed is still seen. An
//! item without links depends on nothing else, so its digests are kept
//! with its resolved form (`resolve::OwnDigests`). The inputs as written
//! and the resolved inputs are kept as bytes until looked at
//! ([`crate::deferred`]). An entry's spans in its own file are stored
//! without the file's name ([`packwright_api::with_span_file`]); the
//! names were nearly half the index.
//!
//! The file is checksummed; a damaged, foreign or truncated index is
//! ignored, so losing it costs only time. It is a journal
//! (`framed`): a run appends the entries of the files it read.
//! State: `.packwright-cache/items.bin`, written after a successful run.

use std::collections::BTreeMap;
use std::path::Path;
use std::sync::Arc;
use std::time::{Duration, SystemTime, UNIX_EPOCH};

use sha2::{Digest, Sha256};

use crate::framed;
use crate::index::{build_identity, Hash, Stamp};
use crate::project::{ItemFile, Material};
use crate::registry::Registry;
use crate::resolve::PlannedItem;

/// The index file inside the cache folder.
pub const ITEMS_FILE: &str = "items.bin";

/// First bytes of the file; a new layout gets a new tag.
const MAGIC: &[u8; 16] = b"packwright-itm-6";

/// How long before the stat a file's last change must lie for its stamp to
/// vouch for what is then read. Linux stamps files from a clock that moves
/// once a timer tick (at most 10 ms).
const SETTLED: Duration = Duration::from_millis(100);

/// The same for a file system that keeps whole seconds only (its stamps
/// have no nanoseconds), two seconds for the coarsest (FAT).
const SETTLED_COARSE: Duration = Duration::from_secs(2);

/// The digest of everything besides an item's own file that its resolved
/// form depends on: the build of the tool, every module's name, version,
/// fingerprint and declaration, and every material.
pub fn resolve_key(registry: &Registry, materials: &BTreeMap<String, Material>) -> Hash {
    let mut h = Sha256::new();
    let mut field = |bytes: &[u8]| {
        h.update((bytes.len() as u64).to_le_bytes());
        h.update(bytes);
    };
    field(build_identity().as_bytes());
    for r in registry.iter() {
        field(r.declaration.name.as_bytes());
        field(r.fingerprint.as_deref().unwrap_or("-").as_bytes());
        field(&postcard::to_allocvec(&r.declaration).unwrap_or_default());
    }
    field(&postcard::to_allocvec(materials).unwrap_or_default());
    h.finalize().into()
}

/// What an index entry holds, besides its stamp: the parsed item and the
/// parts of its resolved form that the parsed item does not hold (the
/// id, title, notes and file are the same; stored twice, they were a
/// fifth of the index).
#[derive(serde::Deserialize)]
struct Stored {
    item: ItemFile,
    planned: Option<PlannedParts>,
}

/// The parts of a [`PlannedItem`] that its [`ItemFile`] does not hold.
#[derive(serde::Deserialize)]
struct PlannedParts {
    module: String,
    inputs: crate::deferred::Deferred<packwright_api::Inputs>,
    links: Vec<crate::resolve::Link>,
    materials: Vec<(String, String)>,
    own_digests: Option<crate::resolve::OwnDigests>,
}

impl PlannedParts {
    /// The resolved item of `item`.
    fn planned(self, item: &ItemFile) -> PlannedItem {
        PlannedItem {
            id: item.id.clone(),
            module: self.module,
            title: item.title.clone(),
            notes: item.notes.clone(),
            file: item.file.clone(),
            inputs: self.inputs,
            links: self.links,
            materials: self.materials,
            own_digests: self.own_digests,
        }
    }
}

/// [`Stored`] as written, borrowing the run's item (the same fields, in
/// the same order).
#[derive(serde::Serialize)]
struct StoredRef<'a> {
    item: &'a ItemFile,
    planned: Option<PlannedPartsRef<'a>>,
}

/// [`PlannedParts`] as written.
#[derive(serde::Serialize)]
struct PlannedPartsRef<'a> {
    module: &'a str,
    inputs: &'a crate::deferred::Deferred<packwright_api::Inputs>,
    links: &'a [crate::resolve::Link],
    materials: &'a [(String, String)],
    own_digests: &'a Option<crate::resolve::OwnDigests>,
}

impl<'a> PlannedPartsRef<'a> {
    fn of(planned: &'a PlannedItem) -> PlannedPartsRef<'a> {
        PlannedPartsRef {
            module: &planned.module,
            inputs: &planned.inputs,
            links: &planned.links,
            materials: &planned.materials,
            own_digests: &planned.own_digests,
        }
    }
}

/// An item taken from the index.
pub struct Reused {
    /// The parsed item.
    pub item: ItemFile,
    /// Its resolved form, if it was valid when recorded; right only under
    /// the index's [`ItemIndex::resolve_key`].
    pub planned: Option<PlannedItem>,
}

/// The index as read from disk.
#[derive(Default)]
pub struct ItemIndex {
    /// Each file's (relative path's) stamp and payload, as a journal
    /// (see `framed`) whose key is the resolve key.
    journal: Option<framed::Journal>,
}

impl ItemIndex {
    /// The index in `cache_dir`, or an empty one when it is missing,
    /// damaged or written by another build of the tool.
    pub fn load(cache_dir: &Path) -> ItemIndex {
        ItemIndex {
            journal: framed::Journal::read(&cache_dir.join(ITEMS_FILE), MAGIC),
        }
    }

    /// The key the recorded resolved forms were made under.
    pub fn resolve_key(&self) -> Hash {
        self.journal
            .as_ref()
            .and_then(|j| j.key().try_into().ok())
            .unwrap_or_default()
    }

    /// The recorded item of file `rel`, when `stamp` (taken now) is the one
    /// it was recorded under.
    pub fn reuse(&self, rel: &Arc<str>, stamp: &Stamp) -> Option<Reused> {
        let (recorded, stored) = self.raw(rel)?;
        if recorded != *stamp {
            return None;
        }
        let journal = self.journal.as_ref()?;
        // An entry's spans in its own file were stored without its name.
        let stored: Stored = packwright_api::with_span_file(Some(rel.clone()), || {
            crate::deferred::decoding_within(&journal.bytes, || postcard::from_bytes(stored))
        })
        .ok()?;
        // The entry names its file only as its key (a renamed file is
        // another entry); a name stored all the same must be that one.
        (*stored.item.file == **rel).then(|| Reused {
            planned: stored.planned.map(|parts| parts.planned(&stored.item)),
            item: stored.item,
        })
    }

    /// The recorded stamp of file `rel` and the rest of its entry.
    fn raw(&self, rel: &str) -> Option<(Stamp, &[u8])> {
        postcard::take_from_bytes::<Stamp>(self.entry(rel)?).ok()
    }

    /// The whole recorded entry of file `rel` (stamp included).
    fn entry(&self, rel: &str) -> Option<&[u8]> {
        self.journal.as_ref()?.value(rel)
    }
}

/// Whether a file whose stamp was taken at `now` changed long enough
/// before to be recorded under that stamp.
pub fn settled(stamp: &Stamp, now: SystemTime) -> bool {
    let (secs, nanos) = stamp.ctime();
    let margin = if nanos == 0 { SETTLED_COARSE } else { SETTLED };
    let (Ok(secs), Ok(nanos)) = (u64::try_from(secs), u32::try_from(nanos)) else {
        return false;
    };
    let changed = UNIX_EPOCH + Duration::new(secs, 0) + Duration::from_nanos(u64::from(nanos));
    changed + margin < now
}

/// What this run knows of the item files, for writing the index after it.
#[derive(Default)]
pub struct Seen {
    /// The index read at the start (empty for `--fresh`).
    pub index: ItemIndex,
    /// The stamp of each item file read or reused, taken before reading;
    /// files that had not settled and linked files are left out.
    pub stamps: crate::fast::HashMap<Arc<str>, Stamp>,
    /// Files whose item was taken from the index.
    pub reused: crate::fast::HashSet<Arc<str>>,
    /// [`resolve_key`] of this run.
    pub resolve_key: Hash,
}

impl Seen {
    /// Records the items of a successful run: the entries of the files read
    /// anew are appended to the index (nothing is written when there are
    /// none), or the index is written whole (see `framed::save`). Errors
    /// are ignored: a lost index costs only time.
    pub fn save<'a>(
        &self,
        cache_dir: &Path,
        items: &[ItemFile],
        planned: impl Fn(&str) -> Option<&'a PlannedItem>,
    ) {
        let same_key = self.index.resolve_key() == self.resolve_key;
        let recorded: Vec<&ItemFile> = items
            .iter()
            .filter(|i| self.stamps.contains_key(&i.file))
            .collect();
        // An entry is kept as recorded when its item was taken from it (so
        // under the stamp recorded); entries of files gone or changed stay
        // until the file is written whole: their stamps no longer match
        // anything.
        let as_recorded = |item: &ItemFile| same_key && self.reused.contains(&item.file);
        let kept = |item: &ItemFile| {
            as_recorded(item)
                .then(|| self.index.entry(&item.file))
                .flatten()
        };
        let fresh = |item: &ItemFile| {
            let stored = StoredRef {
                item,
                planned: planned(&item.id).map(PlannedPartsRef::of),
            };
            let stamp = &self.stamps[&item.file];
            let mut entry = postcard::to_allocvec(stamp).ok()?;
            let file = Some(item.file.clone());
            let encoded = packwright_api::with_span_file(file, || postcard::to_allocvec(&stored));
            entry.extend_from_slice(&encoded.ok()?);
            Some(entry)
        };
        let mut changes = framed::Records::new();
        for item in &recorded {
            if !as_recorded(item) {
                let Some(entry) = fresh(item) else { return };
                changes.set(&item.file, &entry);
            }
        }
        let whole = || {
            let mut all = framed::Records::new();
            for item in &recorded {
                match kept(item) {
                    Some(entry) => all.set(&item.file, entry),
                    None => {
                        if let Some(entry) = fresh(item) {
                            all.set(&item.file, &entry);
                        }
                    }
                }
            }
            all
        };
        let old = self.index.journal.as_ref().map(|j| j.shape());
        let path = cache_dir.join(ITEMS_FILE);
        let _ = framed::save(
            &path,
            MAGIC,
            &self.resolve_key,
            old,
            recorded.len(),
            changes,
            whole,
        );
    }
}

/// The stored form of [`Inputs`], whose own `Serialize` (for templates and
/// external modules) writes spans as text and leaves structured values
/// out: the index needs every value back exactly.
mod stored_inputs {
    use packwright_api::{Dimension, Inputs, Node, Origin, ResolvedInput, Span, Value};
    use serde::{Deserialize, Serialize};

    use crate::deferred::StoredForm;

    #[derive(Serialize, Deserialize)]
    #[serde(remote = "Value")]
    enum ValueDef {
        Quantity { value: f64, dimension: Dimension },
        Number(f64),
        Count(u64),
        Choice(String),
        Flag(bool),
        Material(String),
        Structured(Node),
    }

    #[derive(Serialize, Deserialize)]
    #[serde(remote = "Origin")]
    enum OriginDef {
        Item {
            span: Span,
        },
        Material {
            material: String,
            span: Span,
        },
        Link {
            item: String,
            output: String,
            span: Span,
        },
        Default,
    }

    #[derive(Serialize, Deserialize)]
    struct StoredValue(#[serde(with = "ValueDef")] Value);

    #[derive(Serialize, Deserialize)]
    struct StoredInput(
        #[serde(with = "ValueDef")] Value,
        #[serde(with = "OriginDef")] Origin,
        String,
    );

    #[derive(Serialize, Deserialize)]
    struct StoredInputs {
        item: String,
        values: Vec<(String, StoredInput)>,
        criteria: Vec<(String, StoredValue)>,
    }

    impl StoredForm for Inputs {
        fn encode(&self) -> Vec<u8> {
            let stored = StoredInputs {
                item: self.item.clone(),
                values: self
                    .values
                    .iter()
                    .map(|(k, r)| {
                        let input =
                            StoredInput(r.value.clone(), r.origin.clone(), r.written.clone());
                        (k.clone(), input)
                    })
                    .collect(),
                criteria: self
                    .criteria
                    .iter()
                    .map(|(k, v)| (k.clone(), StoredValue(v.clone())))
                    .collect(),
            };
            postcard::to_allocvec(&stored).expect("inputs encode")
        }

        fn decode(bytes: &[u8]) -> Result<Inputs, postcard::Error> {
            let stored: StoredInputs = postcard::from_bytes(bytes)?;
            Ok(Inputs {
                item: stored.item,
                values: stored
                    .values
                    .into_iter()
                    .map(|(k, StoredInput(value, origin, written))| {
                        let input = ResolvedInput {
                            value,
                            origin,
                            written,
                        };
                        (k, input)
                    })
                    .collect(),
                criteria: stored
                    .criteria
                    .into_iter()
                    .map(|(k, StoredValue(v))| (k, v))
                    .collect(),
            })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_file_changed_just_now_has_not_settled() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("a.yaml");
        std::fs::write(&path, "x").expect("write");
        let stamp = crate::index::stamp_of(&path).expect("stamp");
        assert!(!settled(&stamp, SystemTime::now()));
        assert!(settled(
            &stamp,
            SystemTime::now() + SETTLED_COARSE + Duration::from_secs(1)
        ));
    }
}
