//! The calculation package: the run's data through Handlebars templates
//! into Typst source, typeset in process with the `typst` crate into a PDF
//! that is the same, byte for byte, every time the same inputs are built.
//!
//! Pipeline: [`data::build`] (numbers formatted, plots drawn) ->
//! [`templates::Templates::render`] (Typst source, user text escaped) ->
//! [`typeset`] (Typst compile in a sandboxed [`world::PackageWorld`], PDF
//! export with a pinned identifier, creator and timestamp) ->
//! [`build_and_write`] (`package/<document>-<rev>.pdf` and `.typ`, replaced
//! whole). Depends on the engine's data types, names no module.

pub mod compose;
pub mod data;
pub mod escape;
pub mod measure;
pub mod plot;
pub mod templates;
pub mod world;

use std::fmt;
use std::path::PathBuf;
use std::time::{Duration, Instant};

use packwright_core::{Project, Registry, RunOutcome};
use typst::foundations::{Datetime, Smart};
use typst::WorldExt;

pub use data::{ChangeRow, Review};

/// Why a package could not be made.
#[derive(Debug, Clone, PartialEq)]
pub enum ReportError {
    /// A template (usually a project's override) is wrong: bad input.
    Template(templates::TemplateError),
    /// Typst rejected the generated source.
    Typst(Box<TypstFailure>),
    /// The data cannot make a package (no revision, a plot without points).
    Data(String),
    /// Writing failed.
    Io(String),
}

/// Where and why Typst rejected the generated source.
#[derive(Debug, Clone, PartialEq)]
pub struct TypstFailure {
    /// The template the failing part came from.
    pub template: String,
    /// The template's file.
    pub file: String,
    /// The item whose section failed, if any.
    pub item: Option<String>,
    /// Line in the template, when the generated line carries its mark.
    pub template_line: Option<usize>,
    /// Line in the generated `.typ` source.
    pub line: usize,
    /// The generated line.
    pub text: String,
    /// Typst's message and hints.
    pub message: String,
    /// Whether the template was a project override (then it is bad input).
    pub overridden: bool,
}

impl ReportError {
    /// The exit code: 2 when a project's own template is at fault.
    pub fn exit_code(&self) -> u8 {
        match self {
            ReportError::Template(_) => 2,
            ReportError::Typst(failure) if failure.overridden => 2,
            _ => 1,
        }
    }
}

impl fmt::Display for ReportError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReportError::Template(e) => match e.line {
                Some(line) => write!(f, "error: {}:{line}: {}", e.file, e.message),
                None => write!(f, "error: {}: {}", e.file, e.message),
            },
            ReportError::Typst(failure) => {
                let TypstFailure {
                    template,
                    file,
                    item,
                    template_line,
                    line,
                    text,
                    message,
                    ..
                } = failure.as_ref();
                let at_line = template_line.map(|n| format!(":{n}")).unwrap_or_default();
                let at = item
                    .as_deref()
                    .map(|i| format!(" (section of item `{i}`)"))
                    .unwrap_or_default();
                write!(
                    f,
                    "error: {file}{at_line}: the Typst made from template `{template}`{at} does not typeset: {message}\n  at line {line} of the generated source: {}",
                    text.trim()
                )
            }
            ReportError::Data(m) | ReportError::Io(m) => write!(f, "error: {m}"),
        }
    }
}

/// Where the time went.
#[derive(Debug, Clone, Copy, Default)]
pub struct Timings {
    /// Package data and plots.
    pub data: Duration,
    /// Templates.
    pub templates: Duration,
    /// Typst compile (layout) of every part, wall time.
    pub compile: Duration,
    /// How many Typst documents were compiled (parts, front passes,
    /// furniture).
    pub compiles: usize,
    /// PDF export.
    pub pdf: Duration,
}

impl fmt::Display for Timings {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "data and plots {:.3} s, templates {:.3} s, Typst compile {:.3} s ({} documents), PDF write {:.3} s",
            self.data.as_secs_f64(),
            self.templates.as_secs_f64(),
            self.compile.as_secs_f64(),
            self.compiles,
            self.pdf.as_secs_f64()
        )
    }
}

/// A typeset package.
#[derive(Debug, Clone)]
pub struct Package {
    /// `<document>-<rev>`, the file stem.
    pub stem: String,
    /// The Typst source.
    pub source: String,
    /// The PDF bytes.
    pub pdf: Vec<u8>,
    /// Page count.
    pub pages: usize,
    /// Where the time went.
    pub timings: Timings,
    /// The plot files the source refers to (`plots/N.svg`).
    pub plots: Vec<data::PackageFile>,
}

/// What was written.
#[derive(Debug, Clone)]
pub struct Written {
    /// The PDF's path.
    pub pdf_path: PathBuf,
    /// Page count.
    pub pages: usize,
    /// Where the time went.
    pub timings: Timings,
}

fn date_of(text: &str) -> Option<Datetime> {
    let y = text.get(0..4)?.parse().ok()?;
    let m = text.get(5..7)?.parse().ok()?;
    let d = text.get(8..10)?.parse().ok()?;
    Datetime::from_ymd(y, m, d)
}

/// Typesets the rendered package into a PDF: the parts through
/// [`compose::compose`], then one PDF export with a pinned identifier,
/// creator and timestamp.
fn typeset(
    templates: &templates::Templates,
    rendered: &templates::Rendered,
    data: &data::PackageData,
    files: Vec<data::PackageFile>,
    project: &Project,
    after_layout: &dyn Fn(),
) -> Result<Typeset, ReportError> {
    let rev = project
        .meta
        .current_revision()
        .ok_or_else(|| ReportError::Data("no revision".into()))?;
    let today = date_of(&rev.date)
        .ok_or_else(|| ReportError::Data(format!("`{}` is not a date", rev.date)))?;
    let package_dir = project.root.join("package");
    let setting = compose::Setting {
        files: world::shared_files(files).map_err(ReportError::Data)?,
        package_dir: Some(&package_dir),
        today,
    };
    let composed = compose::compose(
        templates,
        rendered,
        &data.figures_per_item(),
        &data.item_contents(),
        &data.method_contents(),
        &setting,
    )?;
    // The layout is done: Typst's memoised intermediate results are not
    // needed for the PDF (the pages hold their frames), and dropping them
    // here lowers the build's peak memory, which is reached in the export.
    comemo::evict(0);
    after_layout();
    let started = Instant::now();
    let timestamp = Datetime::from_ymd_hms(
        today.year().unwrap_or(2000),
        today.month().unwrap_or(1),
        today.day().unwrap_or(1),
        0,
        0,
        0,
    )
    .map(typst_pdf::Timestamp::new_utc);
    let options = typst_pdf::PdfOptions {
        ident: Smart::Custom(format!("{}-{}", project.meta.document, rev.rev)),
        creator: Smart::Custom(Some(format!(
            "packwright {}",
            packwright_core::run::TOOL_VERSION
        ))),
        timestamp,
        ..Default::default()
    };
    // The PDF and the standalone source are independent: made side by side.
    let (pdf, source) = rayon::join(
        || typst_pdf::pdf(&composed.document, &options),
        || compose::standalone(templates, rendered, &composed.contents),
    );
    let pdf = pdf.map_err(|errors| {
        ReportError::Data(format!(
            "the PDF could not be written: {}",
            errors
                .first()
                .map(|e| e.message.to_string())
                .unwrap_or_default()
        ))
    })?;
    Ok(Typeset {
        pdf,
        pages: composed.document.pages().len(),
        source: source?,
        compiles: composed.compiles,
        compile: composed.compile_time,
        write: started.elapsed(),
    })
}

/// What [`typeset`] made.
struct Typeset {
    pdf: Vec<u8>,
    pages: usize,
    source: String,
    compiles: usize,
    compile: Duration,
    write: Duration,
}

/// The Typst error of a part as a [`ReportError`] naming the template and
/// its line.
pub(crate) fn typst_error(
    world: &world::PackageWorld,
    errors: &[typst::diag::SourceDiagnostic],
    segments: &[templates::Segment],
) -> ReportError {
    let first = errors.first();
    let message = first
        .map(|e| {
            let mut m = e.message.to_string();
            for hint in &e.hints {
                m.push_str(&format!("; hint: {}", hint.v));
            }
            m
        })
        .unwrap_or_else(|| "unknown Typst error".into());
    let source = world.main_source();
    let line = first
        .and_then(|e| world.range(e.span))
        .and_then(|r| source.lines().byte_to_line(r.start))
        .map(|l| l + 1)
        .unwrap_or(1);
    let text = source
        .text()
        .lines()
        .nth(line - 1)
        .unwrap_or("")
        .to_string();
    let segment = segments.iter().rev().find(|s| s.first_line <= line);
    let marked = templates::template_line(source.text(), line);
    ReportError::Typst(Box::new(TypstFailure {
        template: segment.map(|s| s.template.clone()).unwrap_or_default(),
        file: segment.map(|s| s.file.clone()).unwrap_or_default(),
        item: segment.and_then(|s| s.item.clone()),
        template_line: marked.as_ref().map(|(_, n)| *n),
        line,
        text: text
            .split(templates::LINE_MARK)
            .next()
            .unwrap_or("")
            .to_string(),
        message,
        overridden: segment.is_some_and(|s| s.file != "(built in)"),
    }))
}

/// Makes the package of a run (nothing written).
pub fn make(
    project: &Project,
    outcome: &RunOutcome,
    registry: &Registry,
    review: &Review,
) -> Result<Package, ReportError> {
    make_with(project, outcome, registry, review, &|| {})
}

/// [`make`], calling `after_layout` once the pages are laid out and Typst's
/// caches dropped, before the PDF export: the build's memory peaks in the
/// export, and the binary returns the memory freed so far to the system
/// there (see its `allocator`).
pub fn make_with(
    project: &Project,
    outcome: &RunOutcome,
    registry: &Registry,
    review: &Review,
    after_layout: &dyn Fn(),
) -> Result<Package, ReportError> {
    let mut timings = Timings::default();
    let started = Instant::now();
    let templates = templates::Templates::load(Some(&project.root.join("templates")))
        .map_err(ReportError::Template)?;
    let (data, plots) =
        data::build(project, outcome, registry, review).map_err(ReportError::Data)?;
    timings.data = started.elapsed();
    let started = Instant::now();
    let rendered = templates.render(&data).map_err(ReportError::Template)?;
    timings.templates = started.elapsed();
    let typeset = typeset(
        &templates,
        &rendered,
        &data,
        plots.clone(),
        project,
        after_layout,
    )?;
    timings.compile = typeset.compile;
    timings.pdf = typeset.write;
    timings.compiles = typeset.compiles;
    let rev = project
        .meta
        .current_revision()
        .map(|r| r.rev.clone())
        .unwrap_or_default();
    Ok(Package {
        stem: format!("{}-{}", project.meta.document, rev),
        source: typeset.source,
        pdf: typeset.pdf,
        pages: typeset.pages,
        timings,
        plots,
    })
}

/// Makes the package and replaces `package/` with its PDF and Typst source
/// (`after_layout` as in [`make_with`]).
pub fn build_and_write(
    project: &Project,
    outcome: &RunOutcome,
    registry: &Registry,
    review: &Review,
    after_layout: &dyn Fn(),
) -> Result<Written, ReportError> {
    let package = make_with(project, outcome, registry, review, after_layout)?;
    write(project, package)
}

/// Replaces `package/` with a made package: its PDF, Typst source and
/// plots. Images a project keeps in package/ for its templates stay.
pub fn write(project: &Project, package: Package) -> Result<Written, ReportError> {
    let dir = project.root.join("package");
    let mut files = Vec::new();
    if let Ok(entries) = std::fs::read_dir(&dir) {
        for entry in entries.flatten() {
            let name = entry.file_name().to_string_lossy().into_owned();
            let keep =
                !(name.ends_with(".pdf") || name.ends_with(".typ")) && entry.path().is_file();
            if keep {
                if let Ok(bytes) = std::fs::read(entry.path()) {
                    files.push((name, bytes));
                }
            }
        }
    }
    // The plots go beside the source, so the .typ also typesets on its own.
    files.extend(package.plots);
    files.push((format!("{}.typ", package.stem), package.source.into_bytes()));
    files.push((format!("{}.pdf", package.stem), package.pdf));
    packwright_core::fsio::replace_dir(&dir, &files)
        .map_err(|e| ReportError::Io(format!("cannot write package/: {e}")))?;
    Ok(Written {
        pdf_path: dir.join(format!("{}.pdf", package.stem)),
        pages: package.pages,
        timings: package.timings,
    })
}
