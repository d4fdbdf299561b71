//! The Typst world packwright typesets in: a sandbox that holds the
//! package's sources and plots in memory, may read image files from the
//! project's `package/` folder and nothing else, has no packages, uses only
//! the fonts embedded in the binary, and takes "today" from the revision
//! date, so the same inputs give the same PDF on every machine.
//!
//! State: the in-memory files, built once per package.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use typst::diag::{FileError, FileResult};
use typst::foundations::{Bytes, Datetime, Duration};
use typst::syntax::{FileId, RootedPath, Source, VirtualPath, VirtualRoot};
use typst::text::{Font, FontBook};
use typst::utils::LazyHash;
use typst::{Library, LibraryExt, World};
use typst_kit::fonts::FontStore;

/// The embedded fonts, loaded once per process.
fn fonts() -> &'static FontStore {
    static FONTS: OnceLock<FontStore> = OnceLock::new();
    FONTS.get_or_init(|| {
        let mut store = FontStore::new();
        store.extend(typst_kit::fonts::embedded());
        store
    })
}

/// The standard library, built once per process.
fn library() -> &'static LazyHash<Library> {
    static LIBRARY: OnceLock<LazyHash<Library>> = OnceLock::new();
    LIBRARY.get_or_init(|| LazyHash::new(Library::default()))
}

/// A file id for a path inside the sandbox.
pub fn file_id(path: &str) -> Result<FileId, String> {
    let vpath = VirtualPath::new(path).map_err(|e| format!("bad virtual path `{path}`: {e:?}"))?;
    Ok(RootedPath::new(VirtualRoot::Project, vpath).intern())
}

/// In-memory files (plots) shared by the worlds of one package's parts.
pub type SharedFiles = std::sync::Arc<HashMap<FileId, Bytes>>;

/// Turns `(path, bytes)` pairs into files the worlds of a package share.
pub fn shared_files(extra: Vec<(String, Vec<u8>)>) -> Result<SharedFiles, String> {
    let mut files = HashMap::new();
    for (path, bytes) in extra {
        files.insert(file_id(&path)?, Bytes::new(bytes));
    }
    Ok(std::sync::Arc::new(files))
}

/// The sandbox.
pub struct PackageWorld {
    main: FileId,
    sources: HashMap<FileId, Source>,
    files: SharedFiles,
    /// The project's `package/` folder, for images a template names.
    package_dir: Option<PathBuf>,
    today: Datetime,
}

impl PackageWorld {
    /// A world whose main source is `main.typ` with `text`, with extra
    /// in-memory files (plots), reading images only from `package_dir`.
    pub fn new(
        text: String,
        extra: Vec<(String, Vec<u8>)>,
        package_dir: Option<&Path>,
        today: Datetime,
    ) -> Result<PackageWorld, String> {
        PackageWorld::part("main.typ", text, shared_files(extra)?, package_dir, today)
    }

    /// A world for one part of a package: its own main source at
    /// `main_path` (each part gets a path of its own, so the positions
    /// Typst gives elements never coincide between parts), sharing the
    /// package's in-memory files.
    pub fn part(
        main_path: &str,
        text: String,
        files: SharedFiles,
        package_dir: Option<&Path>,
        today: Datetime,
    ) -> Result<PackageWorld, String> {
        let main = file_id(main_path)?;
        let mut sources = HashMap::new();
        sources.insert(main, Source::new(main, text));
        Ok(PackageWorld {
            main,
            sources,
            files,
            package_dir: package_dir.and_then(|p| p.canonicalize().ok()),
            today,
        })
    }

    /// The main source, for error messages.
    pub fn main_source(&self) -> &Source {
        &self.sources[&self.main]
    }

    /// Reads an image from the project's package folder; never a file
    /// outside it, never a Typst source, never through a link that leaves it.
    fn read_package_file(&self, id: FileId) -> FileResult<Bytes> {
        let rooted = id.get();
        let not_found = || FileError::NotFound(PathBuf::from(rooted.vpath().get_with_slash()));
        if !matches!(rooted.root(), VirtualRoot::Project) {
            return Err(FileError::Other(Some(
                "packages are not available in a packwright package".into(),
            )));
        }
        let dir = self.package_dir.as_ref().ok_or_else(not_found)?;
        let allowed = ["png", "jpg", "jpeg", "svg", "gif", "webp"];
        let ext = rooted
            .vpath()
            .extension()
            .unwrap_or("")
            .to_ascii_lowercase();
        if !allowed.contains(&ext.as_str()) {
            return Err(FileError::AccessDenied);
        }
        let path = rooted
            .vpath()
            .realize(dir)
            .map_err(|_| FileError::AccessDenied)?;
        let real = path.canonicalize().map_err(|_| not_found())?;
        if !real.starts_with(dir) {
            return Err(FileError::AccessDenied);
        }
        std::fs::read(&real)
            .map(Bytes::new)
            .map_err(|e| FileError::from_io(e, &real))
    }
}

impl World for PackageWorld {
    fn library(&self) -> &LazyHash<Library> {
        library()
    }

    fn book(&self) -> &LazyHash<FontBook> {
        fonts().book()
    }

    fn main(&self) -> FileId {
        self.main
    }

    fn source(&self, id: FileId) -> FileResult<Source> {
        if !matches!(id.get().root(), VirtualRoot::Project) {
            return Err(FileError::Other(Some(
                "packages are not available in a packwright package".into(),
            )));
        }
        self.sources
            .get(&id)
            .cloned()
            .ok_or_else(|| FileError::NotFound(PathBuf::from(id.get().vpath().get_with_slash())))
    }

    fn file(&self, id: FileId) -> FileResult<Bytes> {
        if let Some(source) = self.sources.get(&id) {
            return Ok(Bytes::from_string(source.clone()));
        }
        if let Some(bytes) = self.files.get(&id) {
            return Ok(bytes.clone());
        }
        self.read_package_file(id)
    }

    fn font(&self, index: usize) -> Option<Font> {
        fonts().font(index)
    }

    fn today(&self, _offset: Option<Duration>) -> Option<Datetime> {
        Some(self.today)
    }
}

/// An embedded font by family (lower case) and weight, for measuring text
/// outside Typst ([`crate::measure`]).
pub(crate) fn embedded_font(family: &str, weight: typst::text::FontWeight) -> Option<Font> {
    use typst::text::{FontStretch, FontStyle, FontVariant};
    let variant = FontVariant::new(FontStyle::Normal, weight, FontStretch::NORMAL);
    let index = fonts().book().select(family, variant)?;
    fonts().font(index)
}
