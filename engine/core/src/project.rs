//! Loading a project tree: `project.yaml`, the materials under `materials/`
//! and the calculation items in every other YAML file.
//!
//! Raw YAML becomes a validated model here (the item's own keys are
//! checked; its inputs are checked against the module in `resolve`).
//! Owns no state: a [`Project`] is a value built from the files.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use packwright_api::{Node, NodeValue, Span, UnitSystem};
use rayon::prelude::*;
use walkdir::WalkDir;

use crate::deferred::Deferred;
use crate::diagnostic::{Diagnostic, Diagnostics};
use crate::fast::HashMap;
use crate::index::Stamp;
use crate::item_index::{ItemIndex, Reused};
use crate::resolve::PlannedItem;
use crate::yaml;

/// Folders the tool writes, never read as items.
pub const WRITTEN_FOLDERS: [&str; 3] = ["results", "package", "issued"];

/// Folders with other content than items (templates and external modules).
pub const OTHER_FOLDERS: [&str; 2] = ["templates", "modules"];

/// A signature on a revision: who, and when.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Signature {
    /// The person's name as they sign.
    pub name: String,
    /// The date, `YYYY-MM-DD`.
    pub date: String,
}

/// One revision of the calculation package.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Revision {
    /// The revision mark (`A`, `B`, `0`, `1`...).
    pub rev: String,
    /// The revision date, `YYYY-MM-DD`.
    pub date: String,
    /// What changed.
    pub description: String,
    /// Prepared by.
    pub prepared: Option<Signature>,
    /// Checked by.
    pub checked: Option<Signature>,
    /// Approved by.
    pub approved: Option<Signature>,
}

/// The contents of `project.yaml`.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ProjectMeta {
    /// The project's name.
    pub project: String,
    /// The document number of the calculation package.
    pub document: String,
    /// The package title.
    pub title: String,
    /// The client.
    pub client: String,
    /// Display units.
    pub units: UnitSystem,
    /// Revisions, oldest first.
    pub revisions: Vec<Revision>,
    /// External module manifests named in project.yaml, relative to the root.
    pub modules: Vec<String>,
}

impl ProjectMeta {
    /// The newest revision.
    pub fn current_revision(&self) -> Option<&Revision> {
        self.revisions.last()
    }
}

/// A named bulk material or chain.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Material {
    /// The id items refer to.
    pub id: String,
    /// `bulk` or `chain`.
    pub kind: String,
    /// The descriptive name.
    pub name: String,
    /// Properties, keyed like module inputs, each with its node.
    pub properties: Vec<(String, Node)>,
    /// Free text.
    pub notes: Option<String>,
    /// Where the `id:` stands.
    pub span: Span,
}

/// A calculation item as written in its file.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ItemFile {
    /// Unique id.
    pub id: String,
    /// Where the id stands.
    pub id_span: Span,
    /// The module name.
    pub module: String,
    /// Where the module name stands.
    pub module_span: Span,
    /// The title.
    pub title: String,
    /// Inputs and criteria as written; for an item taken from the item
    /// index, decoded only when an item must be resolved again.
    pub written: Deferred<WrittenInputs>,
    /// Free text for the package.
    pub notes: Option<String>,
    /// The file, relative to the root (in the item index, the entry's
    /// own, so not stored again).
    #[serde(with = "packwright_api::file_name")]
    pub file: Arc<str>,
}

/// An item's inputs and criteria as written in its file.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct WrittenInputs {
    /// Inputs: key node and value node.
    pub inputs: Vec<(Node, Node)>,
    /// Where `inputs:` stands (or the file start).
    pub inputs_span: Span,
    /// Criteria overrides.
    pub criteria: Vec<(Node, Node)>,
}

crate::deferred::stored_as_postcard!(WrittenInputs);

/// A loaded project.
#[derive(Debug, Clone)]
pub struct Project {
    /// The project root on disk.
    pub root: PathBuf,
    /// `project.yaml`.
    pub meta: ProjectMeta,
    /// Materials by id.
    pub materials: BTreeMap<String, Material>,
    /// Items, sorted by id.
    pub items: Vec<ItemFile>,
    /// The text of every file read, by relative path, for messages (an
    /// item taken from the item index was not read).
    pub sources: BTreeMap<Arc<str>, String>,
}

fn text_of(node: &Node) -> Option<String> {
    match &node.value {
        NodeValue::Text(s) => Some(s.clone()),
        NodeValue::Number(x) => Some(format!("{x}")),
        _ => None,
    }
}

/// A mapping's entries by key, refusing keys outside `allowed`.
struct Fields<'a> {
    node: &'a Node,
    what: &'a str,
}

impl<'a> Fields<'a> {
    fn new(node: &'a Node, what: &'a str, allowed: &[&str], out: &mut Diagnostics) -> Option<Self> {
        let Some(entries) = node.as_map() else {
            out.push(
                Diagnostic::new(
                    Some(node.span.clone()),
                    format!(
                        "{what} should be a mapping of `key: value`, not {}",
                        node.kind_name()
                    ),
                )
                .expected(format!("keys such as {}", allowed.join(", "))),
            );
            return None;
        };
        for (key, _) in entries {
            let k = key.as_text().unwrap_or_default();
            if !allowed.contains(&k) {
                let mut d = Diagnostic::new(
                    Some(key.span.clone()),
                    format!("unknown key `{k}` in {what}"),
                )
                .expected(format!("one of: {}", allowed.join(", ")));
                if let Some(best) = did_you_mean(k, allowed.iter().copied()) {
                    d.message.push_str(&format!(" (did you mean `{best}`?)"));
                }
                out.push(d);
            }
        }
        Some(Fields { node, what })
    }

    fn get(&self, key: &str) -> Option<&'a Node> {
        self.node.get(key).filter(|n| n.value != NodeValue::Null)
    }

    fn text(
        &self,
        key: &str,
        required: bool,
        example: &str,
        out: &mut Diagnostics,
    ) -> Option<String> {
        match self.get(key) {
            Some(n) => match text_of(n) {
                Some(s) => Some(s),
                None => {
                    out.push(
                        Diagnostic::new(
                            Some(n.span.clone()),
                            format!(
                                "`{key}` in {} should be text, not {}",
                                self.what,
                                n.kind_name()
                            ),
                        )
                        .expected(format!("`{key}: {example}`")),
                    );
                    None
                }
            },
            None if required => {
                out.push(
                    Diagnostic::new(
                        Some(self.node.span.clone()),
                        format!("{} has no `{key}`", self.what),
                    )
                    .expected(format!("`{key}: {example}`")),
                );
                None
            }
            None => None,
        }
    }

    fn entries(&self, key: &str, out: &mut Diagnostics) -> Vec<(Node, Node)> {
        match self.get(key) {
            None => Vec::new(),
            Some(n) => match n.as_map() {
                Some(entries) => entries.to_vec(),
                None => {
                    out.push(
                        Diagnostic::new(
                            Some(n.span.clone()),
                            format!("`{key}` should be a mapping, not {}", n.kind_name()),
                        )
                        .expected(format!("`{key}:` followed by indented `name: value` lines")),
                    );
                    Vec::new()
                }
            },
        }
    }
}

/// The closest of `candidates` to `word`, when it is close enough to be a typo.
pub fn did_you_mean<'a>(word: &str, candidates: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    candidates
        .map(|c| (strsim::jaro_winkler(word, c), c))
        .filter(|(score, _)| *score > 0.8)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, c)| c)
}

/// Whether `id` is a valid item or material id: letters, digits, `-`, `_`,
/// starting with a letter or digit. A dot would clash with `ITEM.OUTPUT`.
pub fn valid_id(id: &str) -> bool {
    let mut chars = id.chars();
    chars.next().is_some_and(|c| c.is_ascii_alphanumeric())
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
        && id.len() <= 64
}

fn valid_date(s: &str) -> bool {
    let b = s.as_bytes();
    b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && s[..4].parse::<u32>().is_ok()
        && s[5..7].parse::<u32>().is_ok_and(|m| (1..=12).contains(&m))
        && s[8..].parse::<u32>().is_ok_and(|d| (1..=31).contains(&d))
}

/// Reads a file inside the project, refusing files that leave the tree.
fn read_inside(root: &Path, path: &Path, rel: &Arc<str>) -> Result<Vec<u8>, Diagnostic> {
    let here = Some(Span::new(rel.clone(), 1, 1));
    let real = path.canonicalize().map_err(|e| {
        Diagnostic::new(here.clone(), format!("cannot open the file: {e}")).expected(
            "a readable file inside the project folder (a link that leads nowhere is not)",
        )
    })?;
    if !real.starts_with(root) {
        return Err(Diagnostic::new(
            here,
            format!(
                "this file is a link to {}, outside the project folder",
                real.display()
            ),
        )
        .expected(
            "project files inside the project folder; copy the file in instead of linking it",
        ));
    }
    check_regular(&real, rel)?;
    std::fs::read(&real).map_err(|e| Diagnostic::new(here, format!("cannot read the file: {e}")))
}

/// Looks before reading: a device, a pipe or a huge file named `*.yaml`
/// must not hang the tool or fill its memory.
fn check_regular(real: &Path, rel: &Arc<str>) -> Result<(), Diagnostic> {
    let here = Some(Span::new(rel.clone(), 1, 1));
    let meta = std::fs::metadata(real)
        .map_err(|e| Diagnostic::new(here.clone(), format!("cannot read the file: {e}")))?;
    if !meta.is_file() {
        return Err(Diagnostic::new(
            here,
            "this is not a regular file (a device, pipe or socket)".into(),
        )
        .expected("a YAML text file, or no `.yaml` ending on anything else"));
    }
    if meta.len() > yaml::MAX_FILE_BYTES as u64 {
        return Err(Diagnostic::new(
            here,
            format!(
                "the file is {} bytes; packwright reads project files of at most {} bytes",
                meta.len(),
                yaml::MAX_FILE_BYTES
            ),
        )
        .expected("one calculation item per file, a page or two of YAML"));
    }
    Ok(())
}

/// Reads a file the walk found. The walk follows no links, so a file that
/// is no link itself is inside the tree and needs no `canonicalize` (a
/// `readlink` per path component, a thousand files over).
fn read_file(
    root: &Path,
    path: &Path,
    rel: &Arc<str>,
    linked: bool,
) -> Result<Vec<u8>, Diagnostic> {
    if linked {
        return read_inside(root, path, rel);
    }
    check_regular(path, rel)?;
    std::fs::read(path).map_err(|e| {
        Diagnostic::new(
            Some(Span::new(rel.clone(), 1, 1)),
            format!("cannot read the file: {e}"),
        )
    })
}

/// A path's folder and name, when it has both. The walk's paths are a
/// folder, a slash and a name: split at the last slash rather than parsed
/// into parts, which was a visible part of stamping a thousand files.
fn split_name(path: &Path) -> Option<(&Path, &std::ffi::OsStr)> {
    #[cfg(unix)]
    {
        use std::os::unix::ffi::OsStrExt;
        let bytes = path.as_os_str().as_bytes();
        let cut = bytes.iter().rposition(|&b| b == b'/')?;
        let (folder, name) = (&bytes[..cut], &bytes[cut + 1..]);
        if !folder.is_empty() && !name.is_empty() && name != b"." && name != b".." {
            let os = std::ffi::OsStr::from_bytes;
            return Some((Path::new(os(folder)), os(name)));
        }
    }
    Some((path.parent()?, path.file_name()?))
}

/// The key that orders relative paths as a walk that lists each folder by
/// name meets them: part by part (`a/b.yaml` before `a-b.yaml`), each part
/// by its bytes. A separator becomes a byte below every byte a name can
/// hold.
fn walk_key(rel: &str) -> Vec<u8> {
    rel.bytes().map(|c| if c == b'/' { 0 } else { c }).collect()
}

fn relative(root: &Path, path: &Path) -> Arc<str> {
    // A path the walk made is the root, a slash and the rest: taken as it
    // is, without splitting it into parts (a thousand files, every run).
    #[cfg(unix)]
    {
        use std::os::unix::ffi::OsStrExt;
        let (root, whole) = (root.as_os_str().as_bytes(), path.as_os_str().as_bytes());
        let rest = whole.strip_prefix(root).and_then(|r| r.strip_prefix(b"/"));
        if let Some(rest) = rest.filter(|r| !r.is_empty() && !r.ends_with(b"/")) {
            if let Ok(text) = std::str::from_utf8(rest) {
                return Arc::from(text);
            }
        }
    }
    let rel = path.strip_prefix(root).unwrap_or(path);
    let parts: Vec<String> = rel
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect();
    Arc::from(parts.join("/"))
}

/// Loads the project at `root`. Returns the project with every well-formed
/// part, and every problem found; the caller decides whether to go on.
pub fn load(root: &Path) -> Result<(Project, Diagnostics), Diagnostics> {
    load_indexed(root, || None).map(|(project, out, _, _)| (project, out))
}

/// What [`load_indexed`] learnt of the item files besides their items.
#[derive(Default)]
pub struct ItemStamps {
    /// The stamp of each item file, taken before it was read (or when its
    /// item was reused); files that changed too shortly before, and linked
    /// files, are left out.
    pub stamps: HashMap<Arc<str>, Stamp>,
    /// Files whose item came from the index, with its recorded resolved
    /// form.
    pub reused: HashMap<Arc<str>, Option<PlannedItem>>,
}

/// The external modules `project.yaml` names (its `modules:`), read from
/// that file alone: the binary registers them before the project is
/// loaded, and reading every item file for this was a sixth of a rerun.
/// A `project.yaml` that is missing or does not load gives none; the load
/// itself reports it.
pub fn named_modules(root: &Path) -> Vec<String> {
    let Ok(root) = root.canonicalize() else {
        return Vec::new();
    };
    let meta_rel: Arc<str> = Arc::from("project.yaml");
    let Ok(bytes) = read_inside(&root, &root.join("project.yaml"), &meta_rel) else {
        return Vec::new();
    };
    let Ok(Some(node)) = yaml::parse_bytes(&meta_rel, &bytes) else {
        return Vec::new();
    };
    parse_meta(&node, &mut Diagnostics::default())
        .map(|meta| meta.modules)
        .unwrap_or_default()
}

/// [`load`], taking the item of each item file whose stamp is unchanged
/// from the item index instead of reading and parsing the file (see
/// [`crate::item_index`]). `load_index` reads the index, while the tree is
/// walked; the index is returned for writing it again after the run.
/// Materials and `project.yaml` are always read.
pub fn load_indexed(
    root: &Path,
    load_index: impl FnOnce() -> Option<ItemIndex> + Send,
) -> Result<(Project, Diagnostics, ItemStamps, Option<ItemIndex>), Diagnostics> {
    let mut out = Diagnostics::default();
    let started = std::time::SystemTime::now();
    let root = root.canonicalize().map_err(|e| {
        Diagnostics(vec![Diagnostic::new(
            None,
            format!("cannot open the project folder {}: {e}", root.display()),
        )
        .expected("the path of a folder that holds a project.yaml")])
    })?;
    let mut sources = BTreeMap::new();
    let meta_path = root.join("project.yaml");
    let meta_rel: Arc<str> = Arc::from("project.yaml");
    if !meta_path.is_file() {
        return Err(Diagnostics(vec![Diagnostic::new(
            None,
            format!("{} has no project.yaml", root.display()),
        )
        .expected(
            "a project folder made with `packwright new DIR`, or one holding a project.yaml",
        )]));
    }
    let meta = read_inside(&root, &meta_path, &meta_rel)
        .and_then(|bytes| {
            sources.insert(
                meta_rel.clone(),
                String::from_utf8_lossy(&bytes).into_owned(),
            );
            yaml::parse_bytes(&meta_rel, &bytes)
        })
        .map_err(|d| Diagnostics(vec![d]))?;
    let meta = match meta {
        Some(node) => parse_meta(&node, &mut out),
        None => {
            out.push(
                Diagnostic::new(
                    Some(Span::new(meta_rel, 1, 1)),
                    "project.yaml is empty".into(),
                )
                .expected(
                    "`project:`, `document:`, `title:`, `client:`, `units: si` and `revisions:`",
                ),
            );
            None
        }
    };
    let Some(meta) = meta else {
        return Err(out);
    };

    let mut materials: BTreeMap<String, Material> = BTreeMap::new();
    let mut items: Vec<ItemFile> = Vec::new();
    // The walk is cheap and ordered; reading and parsing the files is the
    // cost, so it runs in parallel and the results are taken in walk order.
    enum Step {
        Problem(Diagnostic),
        File {
            path: PathBuf,
            rel: Arc<str>,
            linked: bool,
        },
    }
    // The item index is read while the tree is walked: both take a few
    // milliseconds of a rerun's few tens.
    let list_files = || {
        // Unsorted: walkdir's sorting of each folder cost twice its walk.
        // The steps are put in order below instead.
        let walker = WalkDir::new(&root)
            .follow_links(false)
            .into_iter()
            .filter_entry(|e| {
                let name = e.file_name().to_string_lossy();
                if e.depth() == 0 {
                    return true;
                }
                if name.starts_with('.') {
                    return false;
                }
                !(e.depth() == 1
                    && e.file_type().is_dir()
                    && (WRITTEN_FOLDERS.contains(&name.as_ref())
                        || OTHER_FOLDERS.contains(&name.as_ref())))
            });
        let mut steps = Vec::new();
        for entry in walker {
            let entry = match entry {
                Ok(e) => e,
                Err(e) => {
                    let rel = e
                        .path()
                        .map(|p| relative(&root, p))
                        .unwrap_or_else(|| Arc::from("?"));
                    steps.push(Step::Problem(Diagnostic::new(
                        Some(Span::new(rel, 1, 1)),
                        format!("cannot read this part of the project tree: {e}"),
                    )));
                    continue;
                }
            };
            let path = entry.path();
            let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
            // A linked folder is not followed (it could loop or duplicate
            // items), but one that leads out of the project is an error rather
            // than silently missing files.
            if entry.path_is_symlink() && entry.depth() > 0 {
                if let Ok(real) = path.canonicalize() {
                    if real.is_dir() && !real.starts_with(&root) {
                        steps.push(Step::Problem(
                            Diagnostic::new(
                                Some(Span::new(relative(&root, path), 1, 1)),
                                format!(
                                    "this folder is a link to {}, outside the project folder",
                                    real.display()
                                ),
                            )
                            .expected("project files inside the project folder; copy the folder in instead of linking it"),
                        ));
                        continue;
                    }
                }
            }
            if !(ext == "yaml" || ext == "yml") || entry.file_type().is_dir() || entry.depth() == 0
            {
                continue;
            }
            let rel = relative(&root, path);
            if &*rel == "project.yaml" {
                continue;
            }
            // An external module's manifest named in project.yaml is not an item.
            if meta.modules.iter().any(|m| {
                let m = m.trim().trim_start_matches("./").trim_end_matches('/');
                &*rel == m || *rel == *format!("{m}/module.yaml")
            }) {
                continue;
            }
            if entry.path_is_symlink() && path.is_dir() {
                continue;
            }
            let linked = entry.path_is_symlink();
            steps.push(Step::File {
                path: entry.into_path(),
                rel,
                linked,
            });
        }
        // The order of a walk that takes each folder's entries by name:
        // which of two files with the same id is reported as the second.
        steps.sort_by_cached_key(|step| walk_key(step.rel()));
        steps
    };
    impl Step {
        /// The path the step is about, relative to the root.
        fn rel(&self) -> &str {
            match self {
                Step::Problem(d) => d.span.as_ref().map_or("", |s| &s.file),
                Step::File { rel, .. } => rel,
            }
        }
    }
    let (steps, index) = rayon::join(list_files, load_index);
    enum Read {
        Reused(Box<Reused>),
        Parsed(String, Result<Option<Node>, Diagnostic>),
    }
    /// A file's stamp (when it may be recorded) and what was read.
    type Stamped = (Option<Stamp>, Result<Read, Diagnostic>);
    let indexed = |rel: &Arc<str>, linked: bool| {
        index
            .as_ref()
            .filter(|_| !linked && !rel.starts_with("materials/"))
    };
    // Each folder is opened once and its files stamped by name (see
    // `index::Folder`).
    let mut folders: Vec<crate::index::Folder> = Vec::new();
    let mut folder_of_path: HashMap<&Path, usize> = HashMap::default();
    let folder_of: Vec<Option<usize>> = steps
        .iter()
        .map(|step| match step {
            Step::File { path, rel, linked } if indexed(rel, *linked).is_some() => {
                let (parent, _) = split_name(path)?;
                Some(*folder_of_path.entry(parent).or_insert_with(|| {
                    folders.push(crate::index::Folder::open(parent));
                    folders.len() - 1
                }))
            }
            _ => None,
        })
        .collect();
    let read: Vec<Option<Stamped>> = steps
        .par_iter()
        .zip(folder_of)
        .map(|(step, folder)| match step {
            Step::Problem(_) => None,
            Step::File { path, rel, linked } => {
                let index = indexed(rel, *linked);
                // Taken before reading: a write after it changes the stamp.
                let stamp = folder
                    .zip(split_name(path))
                    .and_then(|(folder, (_, name))| folders[folder].stamp(name));
                if let (Some(index), Some(stamp)) = (index, &stamp) {
                    if let Some(reused) = index.reuse(rel, stamp) {
                        return Some((Some(*stamp), Ok(Read::Reused(Box::new(reused)))));
                    }
                }
                let stamp = stamp.filter(|s| crate::item_index::settled(s, started));
                let read = read_file(&root, path, rel, *linked).map(|bytes| {
                    let text = String::from_utf8_lossy(&bytes).into_owned();
                    Read::Parsed(text, yaml::parse_bytes(rel, &bytes))
                });
                Some((stamp, read))
            }
        })
        .collect();
    let files = steps.len();
    let mut item_ids: HashMap<String, usize> =
        HashMap::with_capacity_and_hasher(files, Default::default());
    let mut seen = ItemStamps {
        stamps: HashMap::with_capacity_and_hasher(files, Default::default()),
        reused: HashMap::with_capacity_and_hasher(files, Default::default()),
    };
    items.reserve(files);
    for (step, read) in steps.into_iter().zip(read) {
        let (rel, stamp, read) = match (step, read) {
            (Step::Problem(d), _) => {
                out.push(d);
                continue;
            }
            (Step::File { rel, .. }, Some((stamp, read))) => (rel, stamp, read),
            (Step::File { .. }, None) => continue,
        };
        let parsed = match read {
            Ok(Read::Reused(reused)) => {
                // A reused item was valid when recorded; only its place
                // among the other items is checked again.
                if let Some(stamp) = stamp {
                    seen.stamps.insert(rel.clone(), stamp);
                }
                let Reused { item, planned } = *reused;
                seen.reused.insert(rel.clone(), planned);
                add_item(item, &mut items, &mut item_ids, &mut out);
                continue;
            }
            Ok(Read::Parsed(text, parsed)) => {
                sources.insert(rel.clone(), text);
                if let Some(stamp) = stamp {
                    seen.stamps.insert(rel.clone(), stamp);
                }
                parsed
            }
            Err(d) => Err(d),
        };
        let node = match parsed {
            Ok(Some(node)) => node,
            Ok(None) => {
                out.push(
                    Diagnostic::new(Some(Span::new(rel, 1, 1)), "the file is empty".into()).expected(
                        "an item (`id:`, `module:`, `title:`, `inputs:`) or a material; delete the file if it is not needed",
                    ),
                );
                continue;
            }
            Err(d) => {
                out.push(d);
                continue;
            }
        };
        if rel.starts_with("materials/") {
            if let Some(m) = parse_material(&node, &mut out) {
                if let Some(prev) = materials.get(&m.id) {
                    out.push(used_twice("material", &m.id, &m.span, &prev.span, ""));
                } else {
                    materials.insert(m.id.clone(), m);
                }
            }
        } else if let Some(item) = parse_item(&node, rel.clone(), &mut out) {
            add_item(item, &mut items, &mut item_ids, &mut out);
        }
    }
    items.sort_by(|a, b| a.id.cmp(&b.id));
    Ok((
        Project {
            root,
            meta,
            materials,
            items,
            sources,
        },
        out,
        seen,
        index,
    ))
}

/// The problem of an id that a `kind` ("item", "material") already has.
fn used_twice(kind: &str, id: &str, span: &Span, prev: &Span, example: &str) -> Diagnostic {
    Diagnostic::new(
        Some(span.clone()),
        format!("{kind} id `{id}` is used twice"),
    )
    .related(prev.clone(), format!("the other {kind} with this id"))
    .expected(format!("a unique id for each {kind}{example}"))
}

/// Adds an item unless its id is taken, which is reported.
fn add_item(
    item: ItemFile,
    items: &mut Vec<ItemFile>,
    item_ids: &mut HashMap<String, usize>,
    out: &mut Diagnostics,
) {
    if let Some(&prev) = item_ids.get(&item.id) {
        let example = ", such as `CV-101-LOAD`";
        out.push(used_twice(
            "item",
            &item.id,
            &item.id_span,
            &items[prev].id_span,
            example,
        ));
    } else {
        item_ids.insert(item.id.clone(), items.len());
        items.push(item);
    }
}

fn parse_signature(node: Option<&Node>, role: &str, out: &mut Diagnostics) -> Option<Signature> {
    let node = node.filter(|n| n.value != NodeValue::Null)?;
    let what = format!("the `{role}` signature");
    let f = Fields::new(node, &what, &["name", "date"], out)?;
    let name = f.text("name", true, "A. Person", out)?;
    let date = f.text("date", true, "2026-10-14", out)?;
    if !valid_date(&date) {
        out.push(
            Diagnostic::new(
                f.get("date").map(|n| n.span.clone()),
                format!("`{date}` is not a date"),
            )
            .expected("a date written YYYY-MM-DD, such as 2026-10-14"),
        );
        return None;
    }
    Some(Signature { name, date })
}

fn parse_meta(node: &Node, out: &mut Diagnostics) -> Option<ProjectMeta> {
    let f = Fields::new(
        node,
        "project.yaml",
        &[
            "project",
            "document",
            "title",
            "client",
            "units",
            "revisions",
            "modules",
        ],
        out,
    )?;
    let before = out.0.len();
    let project = f.text("project", true, "Harrow Creek Ore Terminal", out);
    let document = f.text("document", true, "HCT-MH-CALC-0042", out);
    let title = f.text("title", true, "Conveyor loading calculations", out);
    let client = f
        .text("client", false, "Tallis Ridge Minerals", out)
        .unwrap_or_default();
    let units = match f.text("units", false, "si", out).as_deref() {
        None | Some("si") | Some("SI") => UnitSystem::Si,
        Some("us") | Some("US") => UnitSystem::Us,
        Some(other) => {
            out.push(
                Diagnostic::new(
                    f.get("units").map(|n| n.span.clone()),
                    format!("`{other}` is not a unit system"),
                )
                .expected("`units: si` or `units: us` (US customary)"),
            );
            UnitSystem::Si
        }
    };
    if let Some(doc) = &document {
        if !doc
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
        {
            out.push(
                Diagnostic::new(
                    f.get("document").map(|n| n.span.clone()),
                    format!(
                        "document number `{doc}` has characters that cannot stand in a file name"
                    ),
                )
                .expected("letters, digits, `-`, `_` and `.`, such as HCT-MH-CALC-0042"),
            );
        }
    }
    let mut revisions = Vec::new();
    match f.get("revisions") {
        None => out.push(
            Diagnostic::new(
                Some(node.span.clone()),
                "project.yaml has no `revisions:`".into(),
            )
            .expected("`revisions:` with at least `- rev: A` and `date: 2026-10-14`"),
        ),
        Some(list) => match list.as_list() {
            Some(entries) if !entries.is_empty() => {
                for entry in entries {
                    let Some(rf) = Fields::new(
                        entry,
                        "a revision",
                        &[
                            "rev",
                            "date",
                            "description",
                            "prepared",
                            "checked",
                            "approved",
                        ],
                        out,
                    ) else {
                        continue;
                    };
                    let rev = rf.text("rev", true, "A", out);
                    // The revision mark is part of the package's file name.
                    if let Some(r) = &rev {
                        let fits = !r.is_empty()
                            && r.len() <= 16
                            && r.chars()
                                .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
                            && !r.starts_with('.');
                        if !fits {
                            out.push(
                                Diagnostic::new(
                                    rf.get("rev").map(|n| n.span.clone()),
                                    format!("revision mark `{r}` cannot stand in the package's file name"),
                                )
                                .expected("letters, digits, `-`, `_` and `.` (not first), at most 16 characters, such as `A`, `B` or `0`"),
                            );
                        }
                    }
                    let date = rf.text("date", true, "2026-10-14", out);
                    if let Some(d) = &date {
                        if !valid_date(d) {
                            out.push(
                                Diagnostic::new(
                                    rf.get("date").map(|n| n.span.clone()),
                                    format!("`{d}` is not a date"),
                                )
                                .expected("a date written YYYY-MM-DD, such as 2026-10-14"),
                            );
                        }
                    }
                    let description = rf.text("description", false, "Issued for check", out);
                    let prepared = parse_signature(rf.get("prepared"), "prepared", out);
                    let checked = parse_signature(rf.get("checked"), "checked", out);
                    let approved = parse_signature(rf.get("approved"), "approved", out);
                    if let (Some(rev), Some(date)) = (rev, date) {
                        if revisions.iter().any(|r: &Revision| r.rev == rev) {
                            out.push(
                                Diagnostic::new(
                                    rf.get("rev").map(|n| n.span.clone()),
                                    format!("revision `{rev}` is listed twice"),
                                )
                                .expected("each revision once, oldest first"),
                            );
                        }
                        revisions.push(Revision {
                            rev,
                            date,
                            description: description.unwrap_or_default(),
                            prepared,
                            checked,
                            approved,
                        });
                    }
                }
            }
            _ => out.push(
                Diagnostic::new(
                    Some(list.span.clone()),
                    "`revisions` should be a list with at least one revision".into(),
                )
                .expected("`- rev: A` then `date: 2026-10-14`, indented under `revisions:`"),
            ),
        },
    }
    let modules = match f.get("modules") {
        None => Vec::new(),
        Some(list) => match list.as_list() {
            Some(entries) => entries.iter().filter_map(text_of).collect(),
            None => {
                out.push(
                    Diagnostic::new(Some(list.span.clone()), "`modules` should be a list".into())
                        .expected("`modules: [tools/seal-drag/module.yaml]`"),
                );
                Vec::new()
            }
        },
    };
    if out.0.len() > before {
        return None;
    }
    Some(ProjectMeta {
        project: project?,
        document: document?,
        title: title?,
        client,
        units,
        revisions,
        modules,
    })
}

fn check_id(id: &str, node: Option<&Node>, what: &str, out: &mut Diagnostics) -> bool {
    if valid_id(id) {
        return true;
    }
    out.push(
        Diagnostic::new(
            node.map(|n| n.span.clone()),
            format!("`{id}` is not a valid {what} id"),
        )
        .expected("letters, digits, `-` and `_`, at most 64 characters, such as `CV-101-LOAD`"),
    );
    false
}

fn parse_material(node: &Node, out: &mut Diagnostics) -> Option<Material> {
    let f = Fields::new(
        node,
        "a material",
        &["id", "kind", "name", "properties", "notes"],
        out,
    )?;
    let id = f.text("id", true, "iron-ore-fines", out)?;
    if !check_id(&id, f.get("id"), "material", out) {
        return None;
    }
    let kind = f.text("kind", true, "bulk", out)?;
    if !["bulk", "chain"].contains(&kind.as_str()) {
        out.push(
            Diagnostic::new(
                f.get("kind").map(|n| n.span.clone()),
                format!("`{kind}` is not a material kind"),
            )
            .expected("`kind: bulk` or `kind: chain`"),
        );
        return None;
    }
    let name = f
        .text("name", false, "Hematite fines", out)
        .unwrap_or_else(|| id.clone());
    let properties = f
        .entries("properties", out)
        .into_iter()
        .filter_map(|(k, v)| k.as_text().map(|k| (k.to_string(), v)))
        .collect();
    let notes = f.text("notes", false, "text", out);
    Some(Material {
        span: f
            .get("id")
            .map(|n| n.span.clone())
            .unwrap_or_else(|| node.span.clone()),
        id,
        kind,
        name,
        properties,
        notes,
    })
}

fn parse_item(node: &Node, file: Arc<str>, out: &mut Diagnostics) -> Option<ItemFile> {
    let f = Fields::new(
        node,
        "an item",
        &["id", "module", "title", "inputs", "criteria", "notes"],
        out,
    )?;
    let id = f.text("id", true, "CV-101-LOAD", out);
    let module = f.text("module", true, "belt-pickup", out);
    let title = f.text("title", false, "CV-101 loading point", out);
    let inputs = f.entries("inputs", out);
    let criteria = f.entries("criteria", out);
    let notes = f.text("notes", false, "free text", out);
    let id = id?;
    if !check_id(&id, f.get("id"), "item", out) {
        return None;
    }
    Some(ItemFile {
        id_span: f.get("id")?.span.clone(),
        module_span: f.get("module")?.span.clone(),
        module: module?,
        title: title.unwrap_or_else(|| id.clone()),
        id,
        written: Deferred::new(WrittenInputs {
            // The `inputs` key itself: a missing input is reported there.
            inputs_span: node
                .as_map()
                .and_then(|entries| entries.iter().find(|(k, _)| k.as_text() == Some("inputs")))
                .map(|(k, _)| k.span.clone())
                .unwrap_or_else(|| node.span.clone()),
            inputs,
            criteria,
        }),
        notes,
        file,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn files_are_ordered_as_a_walk_of_folders_by_name_meets_them() {
        let mut paths = vec![
            "a.yaml",
            "a-b.yaml",
            "a/z.yaml",
            "a/b/c.yaml",
            "b.yaml",
            "a/b.yaml",
            "A.yaml",
        ];
        paths.sort_by_key(|p| walk_key(p));
        assert_eq!(
            paths,
            [
                "A.yaml",
                "a/b/c.yaml",
                "a/b.yaml",
                "a/z.yaml",
                "a-b.yaml",
                "a.yaml",
                "b.yaml"
            ]
        );
    }
}
