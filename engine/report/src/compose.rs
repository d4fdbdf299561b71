//! Typesetting a package part by part: the front matter (in three parts:
//! before the contents, the contents, after it), each method statement,
//! each item's section and the references are compiled as Typst documents
//! of their own, two at a time on the machine's cores, then their pages are put
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
//! The contents is typeset first with placeholder page numbers as wide as
//! the real ones, then again alone with the real numbers (and again while
//! its own length changes), beside the page furniture.
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

/// The most times the contents is typeset while its page count settles
/// (the placeholder numbers make the second the last in practice).
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
    /// The contents lines with their pages, for [`standalone`].
    pub contents: Vec<ContentsRow>,
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

/// The number of the front-matter templates that come before the
/// contents (cover, revision history, sign-off): they are one part, the
/// contents another, and the rest of the front matter a third, so that
/// only the contents is typeset again once the page numbers are known.
const BEFORE_CONTENTS: usize = 3;

/// Contents lines with every page number replaced by a number of as many
/// digits as `total` has, so that the first layout of the contents has
/// the length the real numbers will give it.
fn placeholder_rows(rows: &[ContentsRow], total: usize) -> Vec<ContentsRow> {
    let wide = 10usize.pow(total.max(1).to_string().len() as u32) - 1;
    rows.iter()
        .map(|row| ContentsRow {
            page: wide,
            ..row.clone()
        })
        .collect()
}

/// Typesets the rendered package.
pub fn compose(
    templates: &Templates,
    rendered: &Rendered,
    figures_per_item: &[usize],
    item_rows: &[ContentsRow],
    method_rows: &[ContentsRow],
    setting: &Setting,
) -> Result<Composed, ReportError> {
    let started = Instant::now();
    let page_setting = glue(NO_FURNITURE.into());
    let front = templates
        .render_front(&rendered.json)
        .map_err(ReportError::Template)?;
    let split = BEFORE_CONTENTS.min(front.len());
    let (opening, rest) = front.split_at(split);
    let (contents_piece, closing) = rest
        .split_first()
        .ok_or_else(|| ReportError::Data("the front matter has no contents template".into()))?;

    // The sources of the first round: the opening pages, the contents with
    // placeholder numbers, the rest of the front matter, the method
    // statements, each item section, and the references. One item to a
    // part: parts of 1, 4, 10 and 25 items took the same processor time on
    // the 100-item bench, and the peak memory grew with the size of a part
    // (2026-12-02: 337, 355, 402 and 510 MiB).
    fn with_page_setting<'p>(
        preamble: &'p Piece,
        page_setting: &'p Piece,
        extra: &[&'p Piece],
    ) -> Vec<&'p Piece> {
        let mut pieces = vec![preamble, page_setting];
        pieces.extend_from_slice(extra);
        pieces
    }
    let (preamble, paged) = (&rendered.preamble, &page_setting);
    let opening_source = part_source(
        "front-opening.typ".into(),
        "front matter before the contents",
        &with_page_setting(preamble, paged, &opening.iter().collect::<Vec<_>>()),
    );
    let closing_source = part_source(
        "front-closing.typ".into(),
        "front matter after the contents",
        &with_page_setting(preamble, paged, &closing.iter().collect::<Vec<_>>()),
    );
    let method_sources: Vec<PartSource> = rendered
        .methods
        .iter()
        .enumerate()
        .map(|(index, piece)| {
            part_source(
                format!("method-{:03}.typ", index + 1),
                "a method statement",
                &with_page_setting(preamble, paged, &[piece]),
            )
        })
        .collect();
    let mut item_sources = Vec::new();
    let mut figures_before = 0;
    for (index, piece) in rendered.items.iter().enumerate() {
        let counters = glue(format!(
            "{NO_FURNITURE}#counter(heading).update({index})\n#counter(figure.where(kind: image)).update({figures_before})\n"
        ));
        figures_before += figures_per_item.get(index).copied().unwrap_or(0);
        item_sources.push(part_source(
            format!("section-{:04}.typ", index + 1),
            &format!("section {} of the package", index + 1),
            &[&rendered.preamble, &counters, piece],
        ));
    }
    let references_source = part_source(
        "references.typ".into(),
        "references",
        &with_page_setting(preamble, paged, &[&rendered.references]),
    );

    // The contents lines in package order, pages not yet known.
    let contents_source = |rows: &[ContentsRow], pass: usize| -> Result<PartSource, ReportError> {
        let mut json = rendered.json.clone();
        json["contents"] = serde_json::to_value(rows).unwrap_or_default();
        let piece = templates
            .render_piece(&contents_piece.template, &json)
            .map_err(ReportError::Template)?;
        Ok(part_source(
            format!("contents-{pass}.typ"),
            "the contents",
            &with_page_setting(preamble, paged, &[&piece]),
        ))
    };
    let guessed = {
        let mut rows = guessed_front(&rendered.json);
        rows.extend(method_rows.iter().cloned());
        rows.extend(item_rows.iter().cloned());
        rows.push(ContentsRow {
            number: String::new(),
            title: "References".into(),
            page: 0,
            target: "page:1".into(),
        });
        // Pages run into the hundreds for a large package: three digits
        // unless the items alone make more.
        placeholder_rows(&rows, (item_rows.len() * 4).max(100))
    };
    let first_contents = contents_source(&guessed, 1)?;

    let mut round: Vec<&PartSource> = vec![&opening_source, &first_contents, &closing_source];
    round.extend(method_sources.iter());
    round.extend(item_sources.iter());
    round.push(&references_source);
    let mut laid: Vec<PagedDocument> = round
        .par_iter()
        .with_max_len(1)
        .map(|part| compile(part, setting))
        .collect::<Result<Vec<_>, _>>()?;
    let mut compiles = laid.len();
    let references = laid.pop().expect("the references part");
    let mut rest = laid.into_iter();
    let opening_doc = rest.next().expect("the opening part");
    let mut contents_doc = rest.next().expect("the contents part");
    let closing_doc = rest.next().expect("the closing part");
    let method_docs: Vec<PagedDocument> = rest.by_ref().take(method_sources.len()).collect();
    let item_docs: Vec<PagedDocument> = rest.collect();

    // Where every labelled section starts, counted from the first page
    // after the contents; the contents lines and the link targets follow.
    let mut sections_after: Vec<(ContentsRow, PagedPosition)> = Vec::new();
    let mut offset = closing_doc.pages().len();
    for (document, row) in method_docs
        .iter()
        .zip(method_rows)
        .chain(item_docs.iter().zip(item_rows))
    {
        let label = row.target.trim_start_matches("label:");
        if let Some(position) = label_position(document, label) {
            sections_after.push((
                row.clone(),
                PagedPosition {
                    page: position.page.saturating_add(offset),
                    point: position.point,
                },
            ));
        }
        offset += document.pages().len();
    }
    let references_start = offset;
    let after_pages = offset + references.pages().len();
    let opening_rows = front_sections(&opening_doc);
    let closing_rows = front_sections(&closing_doc);
    let references_rows = front_sections(&references);

    // The contents with the real page numbers, the furniture of every page
    // beside it (assuming the contents keeps its length, which the
    // placeholder numbers make likely; checked below).
    let rows_for = |contents_pages: usize| -> Vec<ContentsRow> {
        let before = opening_doc.pages().len() + contents_pages;
        let mut rows = opening_rows.clone();
        let shift = |row: &ContentsRow, page: usize| ContentsRow {
            page,
            target: if row.target.starts_with("page:") {
                format!("page:{page}")
            } else {
                row.target.clone()
            },
            ..row.clone()
        };
        for row in &closing_rows {
            rows.push(shift(row, before + row.page));
        }
        for (row, position) in &sections_after {
            rows.push(ContentsRow {
                page: before + position.page.get(),
                ..row.clone()
            });
        }
        for row in &references_rows {
            rows.push(shift(row, before + references_start + row.page));
        }
        rows
    };
    let mut contents_pages = contents_doc.pages().len();
    let mut pass = 2;
    let furniture = loop {
        let total = opening_doc.pages().len() + contents_pages + after_pages;
        let contents_now = contents_source(&rows_for(contents_pages), pass)?;
        let furniture_sources = furniture_sources(rendered, total);
        let mut round: Vec<&PartSource> = vec![&contents_now];
        round.extend(furniture_sources.iter());
        let mut laid = round
            .par_iter()
            .with_max_len(1)
            .map(|part| compile(part, setting))
            .collect::<Result<Vec<_>, _>>()?;
        compiles += laid.len();
        let furniture: Vec<PagedDocument> = laid.split_off(1);
        contents_doc = laid.pop().expect("the contents");
        if contents_doc.pages().len() == contents_pages || pass > FRONT_PASSES {
            break furniture;
        }
        contents_pages = contents_doc.pages().len();
        pass += 1;
    };
    let rows = rows_for(contents_pages);

    // Every page, in order.
    let before = opening_doc.pages().len() + contents_doc.pages().len();
    let mut pages: Vec<Page> = Vec::new();
    for document in [&opening_doc, &contents_doc, &closing_doc]
        .into_iter()
        .chain(method_docs.iter())
        .chain(item_docs.iter())
        .chain(std::iter::once(&references))
    {
        pages.extend(document.pages().iter().cloned());
    }
    let total = pages.len();
    let targets: HashMap<String, PagedPosition> = sections_after
        .iter()
        .map(|(row, position)| {
            (
                row.target.clone(),
                PagedPosition {
                    page: position.page.saturating_add(before),
                    point: position.point,
                },
            )
        })
        .collect();

    let layers: Vec<&Page> = furniture.iter().flat_map(|d| d.pages()).collect();
    if layers.len() != total {
        return Err(ReportError::Data(format!(
            "the page furniture has {} pages for a package of {total}; the `page-furniture` template must not add pages",
            layers.len()
        )));
    }
    let mut unknown = Vec::new();
    for (number, (page, layer)) in pages.iter_mut().zip(layers).enumerate() {
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
    let info = opening_doc.info().clone();
    let document = PagedDocument::new(pages.into_iter().collect(), info);

    Ok(Composed {
        document,
        contents: rows,
        compiles,
        compile_time: started.elapsed(),
    })
}

/// A single Typst source of the whole package that typesets on its own,
/// written beside the PDF for whoever wants to read or rerun it: the same
/// pieces as the parts, one document, with `contents` as laid out.
pub fn standalone(
    templates: &Templates,
    rendered: &Rendered,
    contents: &[ContentsRow],
) -> Result<String, ReportError> {
    let final_front = {
        let mut json = rendered.json.clone();
        json["contents"] = serde_json::to_value(contents).unwrap_or_default();
        templates
            .render_front(&json)
            .map_err(ReportError::Template)?
    };
    let standalone_pages = glue(
        "#set page(\n  header: context page-header(here().page()),\n  footer: context page-footer(here().page(), counter(page).final().first()),\n  foreground: context page-foreground(here().page()),\n)\n"
            .into(),
    );
    let mut pieces = vec![&rendered.preamble, &rendered.furniture, &standalone_pages];
    pieces.extend(final_front.iter());
    pieces.extend(rendered.methods.iter());
    pieces.extend(rendered.items.iter());
    pieces.push(&rendered.references);
    Ok(assemble(STANDALONE_HEAD, &pieces).0)
}

/// The page furniture of a package of `total` pages, as one source per
/// core: each typesets the header, footer and banner of its run of pages
/// on empty pages, to be laid over the body.
fn furniture_sources(rendered: &Rendered, total: usize) -> Vec<PartSource> {
    let chunks = rayon::current_num_threads().clamp(1, 8);
    let per = total.div_ceil(chunks).max(1);
    (0..total.div_ceil(per))
        .map(|k| {
            let (first, last) = (k * per + 1, ((k + 1) * per).min(total));
            let pages = glue(format!(
                "#for n in range({first}, {last} + 1) {{\n  page(header: page-header(n), footer: page-footer(n, {total}), foreground: page-foreground(n))[]\n}}\n"
            ));
            part_source(
                format!("furniture-{k}.typ"),
                "page furniture",
                &[&rendered.preamble, &rendered.furniture, &pages],
            )
        })
        .collect()
}

/// The front sections the default templates make before the items, as
/// they stand in the contents before the first layout (their pages are
/// read from the layout).
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
