//! Printing problems for a person at a terminal: each with the offending
//! line of the file, a caret under the value, what was expected, and the
//! other places involved. Uses codespan-reporting; owns no state.

use std::path::Path;

use codespan_reporting::diagnostic::{Diagnostic as Report, Label};
use codespan_reporting::files::SimpleFiles;
use codespan_reporting::term::{emit_into_string, Config};
use packwright_api::Span;
use packwright_core::Diagnostic;

/// Largest file whose lines are shown; the loader refuses bigger ones.
const MAX_SHOWN_BYTES: u64 = packwright_core::yaml::MAX_FILE_BYTES as u64;

/// Byte range of a one-line span (line and column count from 1; the
/// column counts characters). `line_starts` holds the byte offset of every
/// line, so that many problems in one large file cost no rescanning.
fn byte_range(text: &str, line_starts: &[usize], span: &Span) -> Option<std::ops::Range<usize>> {
    let line_start = line_starts
        .get(span.line.saturating_sub(1) as usize)
        .copied()
        .unwrap_or(text.len());
    let line = text[line_start..].lines().next().unwrap_or("");
    let col = (span.column.max(1) - 1) as usize;
    let start = line_start
        + line
            .char_indices()
            .nth(col)
            .map(|(i, _)| i)
            .unwrap_or(line.len());
    let rest = &text[start..line_start + line.len()];
    // Underline the value up to a comment or the end of the line.
    let len = rest.find(" #").unwrap_or(rest.len()).max(1);
    Some(start..(start + len).min(text.len().max(start)))
}

/// The text of a project file for showing its lines: only a regular file
/// of readable size inside the project (a link out of the tree must not
/// have its target printed).
fn shown_text(root: &Path, rel: &str) -> Option<String> {
    let root = root.canonicalize().ok()?;
    let real = root.join(rel).canonicalize().ok()?;
    let meta = std::fs::metadata(&real).ok()?;
    if !real.starts_with(&root) || !meta.is_file() || meta.len() > MAX_SHOWN_BYTES {
        return None;
    }
    let bytes = std::fs::read(&real).ok()?;
    Some(String::from_utf8_lossy(&bytes).into_owned())
}

/// Renders problems found in the project at `root` as text.
pub(crate) fn diagnostics(root: &Path, problems: &[Diagnostic]) -> String {
    let mut files = SimpleFiles::new();
    let mut ids = std::collections::BTreeMap::new();
    let mut line_starts: std::collections::BTreeMap<usize, Vec<usize>> = Default::default();
    let spans = problems
        .iter()
        .flat_map(|d| d.span.iter().chain(d.related.iter().map(|(s, _)| s)));
    for span in spans {
        if ids.contains_key(&span.file) {
            continue;
        }
        if let Some(text) = shown_text(root, &span.file) {
            let starts = std::iter::once(0)
                .chain(text.match_indices('\n').map(|(i, _)| i + 1))
                .collect();
            let id = files.add(span.file.to_string(), text);
            line_starts.insert(id, starts);
            ids.insert(span.file.clone(), id);
        }
    }
    let file_id = |span: &Span| ids.get(&span.file).copied();
    let mut prepared = Vec::new();
    for d in problems {
        let mut labels = Vec::new();
        let mut notes = Vec::new();
        for (i, (span, note)) in d
            .span
            .iter()
            .map(|s| (s, String::new()))
            .chain(d.related.iter().map(|(s, n)| (s, n.clone())))
            .enumerate()
        {
            match file_id(span) {
                Some(id) => {
                    let range = byte_range(
                        files.get(id).expect("added").source(),
                        &line_starts[&id],
                        span,
                    )
                    .unwrap_or(0..0);
                    let label = if i == 0 {
                        Label::primary(id, range)
                    } else {
                        Label::secondary(id, range)
                    };
                    labels.push(label.with_message(note));
                }
                // The primary place is named in the message already.
                None if i == 0 => {}
                None => notes.push(format!("at {span} {note}")),
            }
        }
        if let Some(e) = &d.expected {
            notes.insert(0, format!("expected: {e}"));
        }
        // The snippet shows the place; without one, the message names it.
        let location = match (&d.span, labels.is_empty()) {
            (Some(s), true) => format!("{s}: "),
            _ => String::new(),
        };
        prepared.push(
            Report::error()
                .with_message(format!("{location}{}", d.message))
                .with_labels(labels)
                .with_notes(notes),
        );
    }
    let config = Config::default();
    let mut text = String::new();
    for report in prepared {
        match emit_into_string(&config, &files, &report) {
            Ok(s) => text.push_str(&s),
            Err(_) => text.push_str(&format!("error: {}\n", report.message)),
        }
    }
    text
}
