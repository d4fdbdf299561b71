//! The package's Handlebars templates: the defaults embedded in the binary,
//! a project's overrides from its own `templates/` folder (a file of the
//! same name replaces a default), and rendering section by section so that
//! a Typst error can be traced to the template it came from.
//!
//! User text is escaped for Typst markup by the registered escape function;
//! `{{{triple}}}` is used only for trusted text (module equations, labels).
//! Owns no state beyond the registered templates.

use std::path::Path;

use handlebars::Handlebars;
use rayon::prelude::*;
use serde_json::Value as Json;

use crate::data::PackageData;
use crate::escape::typst_markup;

/// The default templates, by name (file name without `.typ.hbs`).
pub const DEFAULTS: &[(&str, &str)] = &[
    (
        "preamble",
        include_str!("../../../templates/preamble.typ.hbs"),
    ),
    (
        "page-furniture",
        include_str!("../../../templates/page-furniture.typ.hbs"),
    ),
    ("cover", include_str!("../../../templates/cover.typ.hbs")),
    (
        "revisions",
        include_str!("../../../templates/revisions.typ.hbs"),
    ),
    (
        "signoff",
        include_str!("../../../templates/signoff.typ.hbs"),
    ),
    (
        "contents",
        include_str!("../../../templates/contents.typ.hbs"),
    ),
    (
        "summary",
        include_str!("../../../templates/summary.typ.hbs"),
    ),
    (
        "changes",
        include_str!("../../../templates/changes.typ.hbs"),
    ),
    (
        "cautions",
        include_str!("../../../templates/cautions.typ.hbs"),
    ),
    (
        "references",
        include_str!("../../../templates/references.typ.hbs"),
    ),
    (
        "method-statement",
        include_str!("../../../templates/method-statement.typ.hbs"),
    ),
    ("item", include_str!("../../../templates/item.typ.hbs")),
    (
        "item-heading",
        include_str!("../../../templates/item-heading.typ.hbs"),
    ),
    (
        "item-inputs",
        include_str!("../../../templates/item-inputs.typ.hbs"),
    ),
    (
        "item-method",
        include_str!("../../../templates/item-method.typ.hbs"),
    ),
    (
        "item-results",
        include_str!("../../../templates/item-results.typ.hbs"),
    ),
    (
        "item-checks",
        include_str!("../../../templates/item-checks.typ.hbs"),
    ),
    (
        "item-plots",
        include_str!("../../../templates/item-plots.typ.hbs"),
    ),
    (
        "item-notes",
        include_str!("../../../templates/item-notes.typ.hbs"),
    ),
    (
        "modules/belt-pickup",
        include_str!("../../../templates/modules/belt-pickup.typ.hbs"),
    ),
    (
        "modules/chute-discharge",
        include_str!("../../../templates/modules/chute-discharge.typ.hbs"),
    ),
    (
        "modules/hopper-outlet",
        include_str!("../../../templates/modules/hopper-outlet.typ.hbs"),
    ),
    (
        "modules/chain-payout",
        include_str!("../../../templates/modules/chain-payout.typ.hbs"),
    ),
    (
        "modules/hoist-loads",
        include_str!("../../../templates/modules/hoist-loads.typ.hbs"),
    ),
];

/// The front matter, in package order, before the item sections.
const FRONT: &[&str] = &[
    "cover",
    "revisions",
    "signoff",
    "contents",
    "summary",
    "changes",
    "cautions",
];

/// A problem with a template.
#[derive(Debug, Clone, PartialEq)]
pub struct TemplateError {
    /// The template's file (an override's path, or the default's name).
    pub file: String,
    /// Line in the template, when known.
    pub line: Option<usize>,
    /// What is wrong.
    pub message: String,
}

/// Where each part of the generated Typst source came from.
#[derive(Debug, Clone)]
pub struct Segment {
    /// The template name.
    pub template: String,
    /// The template file (override path or `(built in)`).
    pub file: String,
    /// The item the section is for, if any.
    pub item: Option<String>,
    /// First line of the segment in its source (1-based).
    pub first_line: usize,
}

/// The registered templates.
pub struct Templates {
    hb: Handlebars<'static>,
    files: std::collections::BTreeMap<String, String>,
}

fn template_error(name: &str, file: &str, e: &handlebars::TemplateError) -> TemplateError {
    TemplateError {
        file: file.to_string(),
        line: e.pos().map(|(line, _)| line),
        message: format!("template `{name}`: {}", e.reason()),
    }
}

impl Templates {
    /// Registers the defaults, then the overrides in `project_templates`
    /// (if that folder exists). An override must have a default's name.
    pub fn load(project_templates: Option<&Path>) -> Result<Templates, TemplateError> {
        let mut hb = Handlebars::new();
        hb.set_strict_mode(true);
        hb.register_escape_fn(typst_markup);
        let mut files = std::collections::BTreeMap::new();
        for (name, text) in DEFAULTS {
            hb.register_template_string(name, with_line_marks(name, text))
                .map_err(|e| {
                    template_error(name, &format!("templates/{name}.typ.hbs (built in)"), &e)
                })?;
            files.insert(name.to_string(), "(built in)".to_string());
        }
        let Some(dir) = project_templates.filter(|d| d.is_dir()) else {
            return Ok(Templates { hb, files });
        };
        let root = dir.canonicalize().map_err(|e| TemplateError {
            file: dir.display().to_string(),
            line: None,
            message: format!("cannot open the templates folder: {e}"),
        })?;
        for (name, _) in DEFAULTS {
            let path = dir.join(format!("{name}.typ.hbs"));
            if !path.exists() {
                continue;
            }
            let shown = format!("templates/{name}.typ.hbs");
            let real = path.canonicalize().map_err(|e| TemplateError {
                file: shown.clone(),
                line: None,
                message: format!("cannot open the template: {e}"),
            })?;
            if !real.starts_with(&root) {
                return Err(TemplateError {
                    file: shown,
                    line: None,
                    message:
                        "this template is a link to a file outside the project's templates folder"
                            .into(),
                });
            }
            let text = std::fs::read_to_string(&real).map_err(|e| TemplateError {
                file: shown.clone(),
                line: None,
                message: format!("cannot read the template (it must be UTF-8 text): {e}"),
            })?;
            // A template that does not parse is reported with its own lines.
            hb.register_template_string(name, &text)
                .map_err(|e| template_error(name, &shown, &e))?;
            hb.register_template_string(name, with_line_marks(name, &text))
                .map_err(|e| template_error(name, &shown, &e))?;
            files.insert(name.to_string(), shown);
        }
        for entry in walk_templates(&root) {
            let rel = entry
                .strip_prefix(&root)
                .unwrap_or(&entry)
                .to_string_lossy()
                .replace('\\', "/");
            let name = rel.trim_end_matches(".typ.hbs");
            if !DEFAULTS.iter().any(|(n, _)| *n == name) {
                let known: Vec<&str> = DEFAULTS.iter().map(|(n, _)| *n).collect();
                return Err(TemplateError {
                    file: format!("templates/{rel}"),
                    line: None,
                    message: format!(
                        "no built-in template is called `{name}`, so this file would replace nothing; known templates: {}",
                        known.join(", ")
                    ),
                });
            }
        }
        Ok(Templates { hb, files })
    }

    fn render_one(&self, name: &str, data: &Json) -> Result<String, TemplateError> {
        self.hb.render(name, data).map_err(|e| TemplateError {
            file: self.files.get(name).cloned().unwrap_or_else(|| name.into()),
            line: e.line_no,
            message: format!("template `{name}`: {}", e.reason()),
        })
    }

    /// Renders every part of the package: the preamble and the page
    /// furniture, the front matter, one method statement per module used,
    /// one section per item (the module's
    /// template, or the generic one), and the references. The typesetter
    /// puts the pieces together into the sources it compiles.
    pub fn render(&self, data: &PackageData) -> Result<Rendered, TemplateError> {
        let json = serde_json::to_value(data).map_err(|e| TemplateError {
            file: "(package data)".into(),
            line: None,
            message: e.to_string(),
        })?;
        let preamble = self.piece("preamble", None, &json)?;
        let furniture = self.piece("page-furniture", None, &json)?;
        let front = self.render_front(&json)?;
        let mut methods = Vec::new();
        for method in json["methods"].as_array().into_iter().flatten() {
            let ctx = serde_json::json!({
                "project": json["project"],
                "revision": json["revision"],
                "digest": json["digest"],
                "method": method,
            });
            methods.push(self.piece("method-statement", None, &ctx)?);
        }
        // Items are rendered in parallel: a large package spent a tenth of
        // its build here on one core.
        let rows: &[Json] = json["items"].as_array().map_or(&[], Vec::as_slice);
        let items = rows
            .par_iter()
            .zip(data.item_modules())
            .map(|(item, (id, module))| {
                let specific = format!("modules/{module}");
                let name = if self.files.contains_key(&specific) {
                    specific.as_str()
                } else {
                    "item"
                };
                // A small context per item: the whole package would be
                // cloned once per item otherwise.
                let ctx = serde_json::json!({
                    "project": json["project"],
                    "revision": json["revision"],
                    "digest": json["digest"],
                    "item": item,
                });
                self.piece(name, Some(id), &ctx)
            })
            .collect::<Result<Vec<_>, _>>()?;
        let references = self.piece("references", None, &json)?;
        Ok(Rendered {
            json,
            preamble,
            furniture,
            front,
            methods,
            items,
            references,
        })
    }

    /// Renders the front matter (cover to general cautions) from the
    /// package data, as it stands: the typesetter renders it again once the
    /// contents' page numbers are known.
    pub fn render_front(&self, json: &Json) -> Result<Vec<Piece>, TemplateError> {
        FRONT
            .iter()
            .map(|name| self.piece(name, None, json))
            .collect()
    }

    /// Renders one template by name from `json`, as a piece of source.
    pub fn render_piece(&self, name: &str, json: &Json) -> Result<Piece, TemplateError> {
        self.piece(name, None, json)
    }

    fn piece(&self, name: &str, item: Option<&str>, json: &Json) -> Result<Piece, TemplateError> {
        let mut text = self.render_one(name, json)?;
        if !text.ends_with('\n') {
            text.push('\n');
        }
        Ok(Piece {
            template: name.to_string(),
            file: self.files.get(name).cloned().unwrap_or_default(),
            item: item.map(String::from),
            text,
        })
    }
}

/// A rendered template: Typst source and where it came from.
#[derive(Debug, Clone)]
pub struct Piece {
    /// The template name.
    pub template: String,
    /// The template file (override path or `(built in)`).
    pub file: String,
    /// The item the section is for, if any.
    pub item: Option<String>,
    /// The Typst source, ending in a newline.
    pub text: String,
}

/// Every rendered piece of a package, and the data they were rendered
/// from (the front matter is rendered again from it).
#[derive(Debug, Clone)]
pub struct Rendered {
    /// The package data as JSON.
    pub json: Json,
    /// Settings and definitions every source starts with.
    pub preamble: Piece,
    /// The header, footer and banner definitions.
    pub furniture: Piece,
    /// Cover to general cautions.
    pub front: Vec<Piece>,
    /// One method statement per module, by module name.
    pub methods: Vec<Piece>,
    /// One section per item, in package order.
    pub items: Vec<Piece>,
    /// The list of references.
    pub references: Piece,
}

/// Puts pieces one after another into a source, after `head` (lines of
/// the typesetter's own), noting where each piece starts.
pub fn assemble(head: &str, pieces: &[&Piece]) -> (String, Vec<Segment>) {
    let mut text = String::from(head);
    if !text.is_empty() && !text.ends_with('\n') {
        text.push('\n');
    }
    let mut line = text.lines().count() + 1;
    let mut segments = Vec::with_capacity(pieces.len());
    for piece in pieces {
        segments.push(Segment {
            template: piece.template.clone(),
            file: piece.file.clone(),
            item: piece.item.clone(),
            first_line: line,
        });
        line += piece.text.lines().count();
        text.push_str(&piece.text);
    }
    (text, segments)
}

/// The marker that ends each generated line: the template and its line.
pub const LINE_MARK: &str = "// tpl ";

/// Appends a Typst comment naming the template and line to every line of a
/// template whose Handlebars tags are complete on that line, so that a Typst
/// error in the generated source can be traced to the template line.
fn with_line_marks(name: &str, text: &str) -> String {
    let mut out = String::with_capacity(text.len() * 2);
    let mut in_comment = false;
    for (i, line) in text.lines().enumerate() {
        out.push_str(line);
        let opens = line.matches("{{").count();
        let closes = line.matches("}}").count();
        if line.contains("{{!--") {
            in_comment = !line.contains("--}}");
        } else if in_comment && line.contains("--}}") {
            in_comment = false;
            out.push('\n');
            continue;
        }
        if !in_comment
            && opens == closes
            && !line.trim().is_empty()
            && !line.trim_end().ends_with("}}")
        {
            out.push_str(&format!(" {LINE_MARK}{name}:{}", i + 1));
        }
        out.push('\n');
    }
    out
}

/// The template line a generated line came from: the first mark on it or
/// on the lines after it.
pub fn template_line(source: &str, line: usize) -> Option<(String, usize)> {
    source
        .lines()
        .skip(line.saturating_sub(1))
        .take(200)
        .find_map(|l| {
            let mark = l.rsplit_once(LINE_MARK)?.1;
            let (name, n) = mark.rsplit_once(':')?;
            Some((name.to_string(), n.trim().parse().ok()?))
        })
}

fn walk_templates(root: &Path) -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![(root.to_path_buf(), 0)];
    while let Some((dir, depth)) = stack.pop() {
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        for entry in entries.flatten() {
            let path = entry.path();
            let Ok(kind) = entry.file_type() else {
                continue;
            };
            if kind.is_dir() && depth < 2 {
                stack.push((path, depth + 1));
            } else if kind.is_file() && path.to_string_lossy().ends_with(".typ.hbs") {
                out.push(path);
            }
        }
    }
    out.sort();
    out
}
