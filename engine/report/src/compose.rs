//! Typesetting a package part by part: the front matter, each item's
//! section and the references are compiled as Typst documents of their
//! own, two at a time on the machine's cores, then their pages are put
//! together into one document, the page furniture (header, footer, stale
//! banner) is laid over every page, and the cross-references between parts
//! are pointed at the pages they name.
//!
//! Why parts: one Typst document of a few hundred pages is laid out on one
//! core and, because the contents, the page total and the section numbers
//! are read back from the layout, laid out more than once, with every
//! attempt kept in memory. Each item's section starts on a new page
//! anyway, so a part per item changes nothing on the page, lets the parts
//! run in parallel and keeps only a few parts' working memory at once.
//!
//! What crosses parts is known here, not asked of Typst: each part starts
//! its section and figure counters where the previous part stopped (the
//! numbers come from the package data); the contents and the page total
//! are filled in after the parts are laid out; links between parts are
//! written as `go to ...` addresses and pointed at their page here.
//! The front matter is typeset again with the real page numbers, until its
//! own length no longer changes.
//!
//! Depends on the templates' pieces and the sandboxed world; names no
//! module.

use std::collections::HashMap;
use std::num::NonZeroUsize;
use std::path::Path;
use std::time::{Duration, Instant};

use rayon::prelude::*;
use typst::foundations::{Content, Datetime, Element, Label, Selector};
use typst::introspection::Introspector;
use typst::introspection::PagedPosition;
use typst::layout::{Frame, FrameItem, Point};
use typst::model::{Destination, Document, HeadingElem, Outlinable};
use typst::utils::PicoStr;
use typst_layout::{Page, PagedDocument};

use crate::data::ContentsRow;
use crate::templates::{assemble, Piece, Rendered, Segment, Templates};
use crate::world::{PackageWorld, SharedFiles};
use crate::ReportError;

/// The address of a link from one part to another starts with this. It is
/// never a real address (it has a space), and it reads sensibly where a PDF
/// reader shows a link's address as its alternative text.
pub const XREF_SCHEME: &str = "go to ";

/// Every part leaves header, footer and banner to the furniture layer.
const NO_FURNITURE: &str = "#set page(header: none, footer: none, foreground: none)\n";

/// The most times the front matter is typeset while its page count
/// settles (it settles on the second in practice).
const FRONT_PASSES: usize = 4;

/// How many evictions a memoised Typst result survives unused. Typst keeps
/// every intermediate layout for reuse; parts do not share layouts, so a
/// short life bounds memory without costing a part its own reuse.
const CACHE_LIFE: usize = 2;

/// The fixed inputs of one package's typesetting.
pub struct Setting<'a> {
    /// The in-memory files (plots) every part may use.
    pub files: SharedFiles,
    /// The project's `package/` folder (images named by templates).
    pub package_dir: Option<&'a Path>,
    /// The revision date, Typst's "today".
    pub today: Datetime,
}

/// The laid-out package.
pub struct Composed {
    /// The whole document.
    pub document: PagedDocument,
    /// A single Typst source of the whole package that typesets on its
    /// own, written beside the PDF for whoever wants to read or rerun it.
    pub standalone: String,
    /// How many Typst documents were compiled (parts, front passes,
    /// furniture).
    pub compiles: usize,
    /// Wall time of the compiles.
    pub compile_time: Duration,
}

/// The definition of `xref` in the parts: a link to an address that
/// [`point_links`] resolves once every part is laid out.
fn part_head(what: &str) -> String {
    format!(
        "// packwright: {what}\n#let xref(target, body) = link(\"{XREF_SCHEME}\" + target, body)\n"
    )
}

/// The definition of `xref` in the standalone source, where Typst can
/// resolve labels and pages itself.
const STANDALONE_HEAD: &str =
    "// The whole package as one Typst document; packwright typesets it in parts.
#let xref(target, body) = if target.starts-with(\"page:\") {
  link((page: int(target.slice(5)), x: 0pt, y: 0pt), body)
} else {
  link(label(target.slice(6)), body)
}
";

/// Settings a part adds after the preamble.
fn glue(text: String) -> Piece {
    Piece {
        template: "packwright".into(),
        file: "(built in)".into(),
        item: None,
        text,
    }
}

/// A source to compile: its path in the sandbox, text and segments.
struct PartSource {
    path: String,
    text: String,
    segments: Vec<Segment>,
}

fn part_source(path: String, what: &str, pieces: &[&Piece]) -> PartSource {
    let (text, segments) = assemble(&part_head(what), pieces);
    PartSource {
        path,
        text,
        segments,
    }
}

/// Compiles one part; a Typst error names the template it came from.
fn compile(part: &PartSource, setting: &Setting) -> Result<PagedDocument, ReportError> {
    let world = PackageWorld::part(
        &part.path,
        part.text.clone(),
        setting.files.clone(),
        setting.package_dir,
        setting.today,
    )
    .map_err(ReportError::Data)?;
    let compiled = typst::compile::<PagedDocument>(&world);
    let document = compiled
        .output
        .map_err(|errors| crate::typst_error(&world, &errors, &part.segments))?;
    comemo::evict(CACHE_LIFE);
    Ok(document)
}

/// The sections of the front matter that go into the contents: every
/// level-1 heading that is outlined, with the page it is on.
fn front_sections(document: &PagedDocument) -> Vec<ContentsRow> {
    let introspector = document.introspector();
    let selector = Selector::Elem(Element::of::<HeadingElem>(), None);
    introspector
        .query(&selector)
        .iter()
        .filter_map(|content: &Content| {
            let heading = content.to_packed::<HeadingElem>()?;
            if !heading.outlined() || heading.level().get() != 1 {
                return None;
            }
            let page = introspector.position(content.location()?)?.page.get();
            Some(ContentsRow {
                number: String::new(),
                title: heading.body.plain_text().to_string(),
                page,
                target: format!("page:{page}"),
            })
        })
        .collect()
}

/// Where a label's element is, in its part.
fn label_position(document: &PagedDocument, label: &str) -> Option<PagedPosition> {
    let label = Label::new(PicoStr::intern(label))?;
    let introspector = document.introspector();
    let content = introspector.query_label(label).ok()?;
    introspector.position(content.location()?)
}

/// The front sections the default templates make, as the first guess of
/// the contents (a wrong guess costs one more pass of the front matter).
fn guessed_front(json: &serde_json::Value) -> Vec<ContentsRow> {
    let mut titles = vec!["Revision history".to_string(), "Summary of results".into()];
    if let Some(rev) = json["review"]["changes_since"].as_str() {
        titles.push(format!("Changes since revision {rev}"));
    }
    titles.push("General cautions".into());
    titles
        .into_iter()
        .map(|title| ContentsRow {
            number: String::new(),
            title,
            page: 0,
            target: "page:1".into(),
        })
        .collect()
}

/// Typesets the rendered package.
pub fn compose(
    templates: &Templates,
    rendered: &Rendered,
    figures_per_item: &[usize],
    item_rows: &[ContentsRow],
    setting: &Setting,
) -> Result<Composed, ReportError> {
    let started = Instant::now();
    let mut compiles = 0;
    let page_setting = glue(NO_FURNITURE.into());

    // The item sections, each its own document, counting on from the
    // sections and figures before it.
    let mut figures_before = 0;
    let mut item_sources = Vec::with_capacity(rendered.items.len());
    for (index, piece) in rendered.items.iter().enumerate() {
        let counters = glue(format!(
            "{NO_FURNITURE}#counter(heading).update({index})\n#counter(figure.where(kind: image)).update({figures_before})\n"
        ));
        figures_before += figures_per_item.get(index).copied().unwrap_or(0);
        let what = format!("section {} of the package", index + 1);
        item_sources.push(part_source(
            format!("section-{:04}.typ", index + 1),
            &what,
            &[&rendered.preamble, &counters, piece],
        ));
    }
    let references_source = part_source(
        "references.typ".into(),
        "references",
        &[&rendered.preamble, &page_setting, &rendered.references],
    );

    let front_source = |json: &serde_json::Value, pass: usize| -> Result<PartSource, ReportError> {
        let front = templates
            .render_front(json)
            .map_err(ReportError::Template)?;
        let mut pieces = vec![&rendered.preamble, &page_setting];
        pieces.extend(front.iter());
        let (text, segments) = assemble(&part_head("front matter"), &pieces);
        Ok(PartSource {
            path: format!("front-{pass}.typ"),
            text,
            segments,
        })
    };
    let with_contents = |rows: Vec<ContentsRow>| {
        let mut json = rendered.json.clone();
        json["contents"] = serde_json::to_value(rows).unwrap_or_default();
        json
    };

    // First pass of the front matter (page numbers not yet known) beside
    // the sections and the references.
    let mut used = guessed_front(&rendered.json);
    used.extend(item_rows.iter().cloned());
    used.push(ContentsRow {
        number: String::new(),
        title: "References".into(),
        page: 0,
        target: "page:1".into(),
    });
    let first_front = front_source(&with_contents(used.clone()), 1)?;
    let mut all_sources: Vec<&PartSource> = vec![&first_front];
    all_sources.extend(item_sources.iter());
    all_sources.push(&references_source);
    let mut documents = all_sources
        .par_iter()
        .map(|part| compile(part, setting))
        .collect::<Result<Vec<_>, _>>()?;
    compiles += documents.len();
    let references = documents.pop().expect("the references part");
    let mut front = documents.remove(0);
    let sections = documents;
    let body_pages: Vec<usize> = sections.iter().map(|d| d.pages().len()).collect();

    // The front matter again with the contents its last layout implies,
    // until the contents it was typeset with are the ones it implies.
    for pass in 2..=FRONT_PASSES {
        let wanted = contents_of(&front, item_rows, &body_pages, &references);
        if wanted == used {
            break;
        }
        front = compile(
            &front_source(&with_contents(wanted.clone()), pass)?,
            setting,
        )?;
        compiles += 1;
        used = wanted;
    }

    // Every page, in order; where each part starts.
    let mut pages: Vec<Page> = Vec::new();
    let mut starts = Vec::new();
    for document in std::iter::once(&front)
        .chain(sections.iter())
        .chain(std::iter::once(&references))
    {
        starts.push(pages.len());
        pages.extend(document.pages().iter().cloned());
    }
    let total = pages.len();

    // Where each cross-reference target is in the whole document.
    let mut targets: HashMap<String, PagedPosition> = HashMap::new();
    for ((row, document), start) in item_rows.iter().zip(&sections).zip(&starts[1..]) {
        let label = row.target.trim_start_matches("label:");
        let position = label_position(document, label).unwrap_or(PagedPosition {
            page: NonZeroUsize::MIN,
            point: Point::zero(),
        });
        targets.insert(
            row.target.clone(),
            PagedPosition {
                page: position.page.saturating_add(*start),
                point: position.point,
            },
        );
    }

    // The furniture of every page, typeset as a document of its own.
    let furniture_text = format!(
        "#for n in range(1, {total} + 1) {{\n  page(header: page-header(n), footer: page-footer(n, {total}), foreground: page-foreground(n))[]\n}}\n"
    );
    let furniture_source = part_source(
        "furniture.typ".into(),
        "page furniture",
        &[
            &rendered.preamble,
            &rendered.furniture,
            &glue(furniture_text),
        ],
    );
    let furniture = compile(&furniture_source, setting)?;
    compiles += 1;
    if furniture.pages().len() != total {
        return Err(ReportError::Data(format!(
            "the page furniture has {} pages for a package of {total}; the `page-furniture` template must not add pages",
            furniture.pages().len()
        )));
    }

    let mut unknown = Vec::new();
    for (number, (page, layer)) in pages.iter_mut().zip(furniture.pages()).enumerate() {
        let mut over = layer.frame.clone();
        strip_tags(&mut over);
        page.frame.push_frame(Point::zero(), over);
        page.number = number as u64 + 1;
        point_links(&mut page.frame, &targets, total, &mut unknown);
    }
    if let Some(target) = unknown.first() {
        return Err(ReportError::Data(format!(
            "a link in the package points at `{target}`, which is not in it"
        )));
    }
    let info = front.info().clone();
    let document = PagedDocument::new(pages.into_iter().collect(), info);

    // The standalone source: the same pieces, one document.
    let final_front = templates
        .render_front(&with_contents(used))
        .map_err(ReportError::Template)?;
    let standalone_pages = glue(
        "#set page(\n  header: context page-header(here().page()),\n  footer: context page-footer(here().page(), counter(page).final().first()),\n  foreground: context page-foreground(here().page()),\n)\n"
            .into(),
    );
    let mut pieces = vec![&rendered.preamble, &rendered.furniture, &standalone_pages];
    pieces.extend(final_front.iter());
    pieces.extend(rendered.items.iter());
    pieces.push(&rendered.references);
    let (standalone, _) = assemble(STANDALONE_HEAD, &pieces);

    Ok(Composed {
        document,
        standalone,
        compiles,
        compile_time: started.elapsed(),
    })
}

/// The contents a front matter laid out as `front` implies: its own
/// sections, then the items and the references on the pages they follow it.
fn contents_of(
    front: &PagedDocument,
    item_rows: &[ContentsRow],
    body_pages: &[usize],
    references: &PagedDocument,
) -> Vec<ContentsRow> {
    let mut rows = front_sections(front);
    let mut page = front.pages().len() + 1;
    for (row, pages) in item_rows.iter().zip(body_pages) {
        rows.push(ContentsRow {
            page,
            ..row.clone()
        });
        page += pages;
    }
    for row in front_sections(references) {
        let at = page + row.page - 1;
        rows.push(ContentsRow {
            page: at,
            target: format!("page:{at}"),
            ..row
        });
    }
    rows
}

/// Removes introspection tags from the furniture layer: it is drawn over
/// the body, and its elements are not part of the document's structure.
fn strip_tags(frame: &mut Frame) {
    frame.retain(|item| match item {
        FrameItem::Tag(_) => false,
        FrameItem::Group(group) => {
            strip_tags(&mut group.frame);
            true
        }
        _ => true,
    });
}

/// Whether a frame holds a cross-part link anywhere.
fn has_xref(frame: &Frame) -> bool {
    frame.items().any(|(_, item)| match item {
        FrameItem::Link(Destination::Url(url), _) => url.starts_with(XREF_SCHEME),
        FrameItem::Group(group) => has_xref(&group.frame),
        _ => false,
    })
}

/// Points every cross-part (`go to ...`) link at its page: `page:N` at the top
/// of page N, `label:NAME` at the element with that label. Only frames
/// holding such links are touched (frames are shared with Typst's caches).
fn point_links(
    frame: &mut Frame,
    targets: &HashMap<String, PagedPosition>,
    total: usize,
    unknown: &mut Vec<String>,
) {
    if !has_xref(frame) {
        return;
    }
    frame.retain(|item| {
        match item {
            FrameItem::Group(group) => point_links(&mut group.frame, targets, total, unknown),
            FrameItem::Link(destination, _) => {
                if let Destination::Url(url) = destination {
                    if let Some(target) = url.strip_prefix(XREF_SCHEME) {
                        let page = target
                            .strip_prefix("page:")
                            .and_then(|n| n.parse::<usize>().ok())
                            .filter(|n| (1..=total).contains(n))
                            .and_then(NonZeroUsize::new);
                        let position = match page {
                            Some(page) => Some(PagedPosition {
                                page,
                                point: Point::zero(),
                            }),
                            None => targets.get(target).copied(),
                        };
                        match position {
                            Some(position) => *destination = Destination::Position(position),
                            None => unknown.push(target.to_string()),
                        }
                    }
                }
            }
            _ => {}
        }
        true
    });
}
