//! Printing problems for a person at a terminal: each with the offending
//! line of the file, a caret under the value, what was expected, and the
//! other places involved. Uses codespan-reporting; owns no state.

use std::path::Path;

use codespan_reporting::diagnostic::{Diagnostic as Report, Label};
use codespan_reporting::files::SimpleFiles;
use codespan_reporting::term::{emit_into_string, Config};
use packwright_api::Span;
use packwright_core::Diagnostic;

/// Byte range of a one-line span (line and column count from 1; the
/// column counts characters).
fn byte_range(text: &str, span: &Span) -> Option<std::ops::Range<usize>> {
    let line_start: usize = text
        .split_inclusive('\n')
        .take(span.line.saturating_sub(1) as usize)
        .map(str::len)
        .sum();
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

/// Renders problems found in the project at `root` as text.
pub(crate) fn diagnostics(root: &Path, problems: &[Diagnostic]) -> String {
    let mut files = SimpleFiles::new();
    let mut ids = std::collections::BTreeMap::new();
    let spans = problems
        .iter()
        .flat_map(|d| d.span.iter().chain(d.related.iter().map(|(s, _)| s)));
    for span in spans {
        if ids.contains_key(&span.file) {
            continue;
        }
        if let Ok(bytes) = std::fs::read(root.join(&*span.file)) {
            let text = String::from_utf8_lossy(&bytes).into_owned();
            ids.insert(span.file.clone(), files.add(span.file.to_string(), text));
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
                    let range =
                        byte_range(files.get(id).expect("added").source(), span).unwrap_or(0..0);
                    let label = if i == 0 {
                        Label::primary(id, range)
                    } else {
                        Label::secondary(id, range)
                    };
                    labels.push(label.with_message(note));
                }
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
