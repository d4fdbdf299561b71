//! Reads one YAML file into a position-keeping [`Node`] tree.
//!
//! Project files are written by people, so every value keeps its file, line
//! and column for messages. The reader is deliberately strict: anchors and
//! aliases are refused (they are never needed in a project file and are the
//! way to an "alias bomb"), as are tags, several documents in one file,
//! duplicate keys, non-text keys and nesting deeper than [`MAX_DEPTH`].
//! Owns no state.

use std::sync::Arc;

use packwright_api::{Node, NodeValue, Span};
use yaml_rust2::parser::{Event, Parser};
use yaml_rust2::scanner::{Marker, TScalarStyle};

use crate::diagnostic::Diagnostic;

/// Deepest nesting accepted; real project files stay under ten.
pub const MAX_DEPTH: usize = 64;

/// Largest file accepted, in bytes. A calculation item is a page of text.
pub const MAX_FILE_BYTES: usize = 1 << 20;

/// Parses the text of `file` (its project-relative path, for spans).
///
/// An empty file (or one with only comments) gives `Ok(None)`.
pub fn parse(file: &Arc<str>, text: &str) -> Result<Option<Node>, Diagnostic> {
    let mut reader = Reader {
        file: file.clone(),
        text,
        parser: Parser::new_from_str(text),
        depth: 0,
    };
    reader.document()
}

/// Reads raw bytes: checks size and UTF-8 before parsing.
pub fn parse_bytes(file: &Arc<str>, bytes: &[u8]) -> Result<Option<Node>, Diagnostic> {
    if bytes.len() > MAX_FILE_BYTES {
        return Err(Diagnostic::new(
            Some(Span::new(file.clone(), 1, 1)),
            format!(
                "the file is {} bytes; packwright reads project files of at most {} bytes",
                bytes.len(),
                MAX_FILE_BYTES
            ),
        )
        .expected("one calculation item per file, a page or two of YAML"));
    }
    // Editors on Windows may save UTF-8 with a byte-order mark; it is not
    // part of the text, and left in it would glue itself to the first key.
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let text = std::str::from_utf8(bytes).map_err(|e| {
        let before = &bytes[..e.valid_up_to()];
        let line = before.iter().filter(|&&b| b == b'\n').count() as u32 + 1;
        let column = before.iter().rev().take_while(|&&b| b != b'\n').count() as u32 + 1;
        Diagnostic::new(
            Some(Span::new(file.clone(), line, column)),
            "the file is not valid UTF-8 text".to_string(),
        )
        .expected("a text file saved as UTF-8")
    })?;
    parse(file, text)
}

/// Where the offending tab is: the scanner reports the start of the token
/// it was reading, which may be lines above the tab itself.
fn tab_position(text: &str, from_line: usize) -> Option<(u32, u32)> {
    text.lines()
        .enumerate()
        .skip(from_line.saturating_sub(1))
        .find_map(|(i, line)| {
            let indent = &line[..line.len() - line.trim_start().len()];
            indent
                .find('\t')
                .map(|byte| (i as u32 + 1, indent[..byte].chars().count() as u32 + 1))
        })
}

struct Reader<'a> {
    file: Arc<str>,
    text: &'a str,
    parser: Parser<std::str::Chars<'a>>,
    depth: usize,
}

impl Reader<'_> {
    fn span(&self, mark: &Marker) -> Span {
        Span::new(self.file.clone(), mark.line() as u32, mark.col() as u32 + 1)
    }

    fn next(&mut self) -> Result<(Event, Marker), Diagnostic> {
        self.parser.next_token().map_err(|e| {
            let mark = *e.marker();
            let info = e.info().to_string();
            let mut span = self.span(&mark);
            if info.contains("recursion limit") {
                return Diagnostic::new(
                    Some(span),
                    format!("the YAML nests deeper than {MAX_DEPTH} levels"),
                )
                .expected("a flat item file: `inputs:` with one value per key");
            }
            let hint = if info.contains("tab") {
                if let Some((line, column)) = tab_position(self.text, mark.line()) {
                    span = Span::new(self.file.clone(), line, column);
                }
                "indent with spaces; YAML does not allow tabs for indentation"
            } else {
                "check the indentation and that every `key: value` pair has a space after the colon"
            };
            Diagnostic::new(Some(span), format!("this is not valid YAML: {info}")).expected(hint)
        })
    }

    fn document(&mut self) -> Result<Option<Node>, Diagnostic> {
        let mut root = None;
        let mut documents = 0;
        loop {
            let (event, mark) = self.next()?;
            match event {
                Event::StreamStart | Event::DocumentEnd | Event::Nothing => {}
                Event::DocumentStart => {
                    documents += 1;
                    if documents > 1 {
                        return Err(Diagnostic::new(
                            Some(self.span(&mark)),
                            "a second YAML document (`---`) in one file".into(),
                        )
                        .expected("one item per file; put the next item in a file of its own"));
                    }
                }
                Event::StreamEnd => return Ok(root),
                other => {
                    let node = self.value(other, mark)?;
                    root = Some(node);
                }
            }
        }
    }

    fn refuse_anchor(&self, anchor: usize, mark: &Marker) -> Result<(), Diagnostic> {
        if anchor != 0 {
            return Err(Diagnostic::new(
                Some(self.span(mark)),
                "YAML anchors (`&name`) and aliases (`*name`) are not used in packwright files"
                    .into(),
            )
            .expected(
                "write the value out, or put shared properties in a material under materials/",
            ));
        }
        Ok(())
    }

    fn refuse_tag(&self, tagged: bool, mark: &Marker) -> Result<(), Diagnostic> {
        if tagged {
            return Err(Diagnostic::new(
                Some(self.span(mark)),
                "YAML tags (`!name`) are not used in packwright files".into(),
            )
            .expected("a plain value such as `4.5 m/s`"));
        }
        Ok(())
    }

    fn value(&mut self, event: Event, mark: Marker) -> Result<Node, Diagnostic> {
        let span = self.span(&mark);
        match event {
            Event::Alias(_) => {
                self.refuse_anchor(1, &mark)?;
                unreachable!("refuse_anchor errs on a non-zero anchor")
            }
            Event::Scalar(text, style, anchor, tag) => {
                self.refuse_anchor(anchor, &mark)?;
                self.refuse_tag(tag.is_some(), &mark)?;
                Ok(Node {
                    value: scalar(text, style),
                    span,
                })
            }
            Event::SequenceStart(anchor, tag) => {
                self.refuse_anchor(anchor, &mark)?;
                self.refuse_tag(tag.is_some(), &mark)?;
                self.enter(&mark)?;
                let mut items = Vec::new();
                loop {
                    let (event, mark) = self.next()?;
                    if matches!(event, Event::SequenceEnd) {
                        break;
                    }
                    items.push(self.value(event, mark)?);
                }
                self.depth -= 1;
                Ok(Node {
                    value: NodeValue::List(items),
                    span,
                })
            }
            Event::MappingStart(anchor, tag) => {
                self.refuse_anchor(anchor, &mark)?;
                self.refuse_tag(tag.is_some(), &mark)?;
                self.enter(&mark)?;
                let mut entries: Vec<(Node, Node)> = Vec::new();
                // Key -> line of its first use: a file of many keys must not
                // cost a search of all earlier keys per key.
                let mut seen: std::collections::HashMap<String, u32> =
                    std::collections::HashMap::new();
                loop {
                    let (event, mark) = self.next()?;
                    if matches!(event, Event::MappingEnd) {
                        break;
                    }
                    let key = self.value(event, mark)?;
                    let key_text = match &key.value {
                        NodeValue::Text(s) => s.clone(),
                        _ => {
                            return Err(Diagnostic::new(
                                Some(key.span.clone()),
                                format!("a mapping key must be a word, not {}", key.kind_name()),
                            )
                            .expected("`belt_speed: 4.5 m/s`"))
                        }
                    };
                    if let Some(first_line) = seen.get(&key_text) {
                        return Err(Diagnostic::new(
                            Some(key.span.clone()),
                            format!(
                                "`{key_text}` is given twice in this mapping (first at line {first_line})"
                            ),
                        )
                        .expected("each key once; delete one of the two"));
                    }
                    seen.insert(key_text, key.span.line);
                    let (event, mark) = self.next()?;
                    let value = self.value(event, mark)?;
                    entries.push((key, value));
                }
                self.depth -= 1;
                Ok(Node {
                    value: NodeValue::Map(entries),
                    span,
                })
            }
            other => Err(Diagnostic::new(
                Some(span),
                format!("unexpected YAML structure ({other:?})"),
            )),
        }
    }

    fn enter(&mut self, mark: &Marker) -> Result<(), Diagnostic> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            return Err(Diagnostic::new(
                Some(self.span(mark)),
                format!("the YAML nests deeper than {MAX_DEPTH} levels"),
            )
            .expected("a flat item file: `inputs:` with one value per key"));
        }
        Ok(())
    }
}

/// Resolves a plain scalar the way YAML 1.2's core schema does; quoted and
/// block scalars are always text.
fn scalar(text: String, style: TScalarStyle) -> NodeValue {
    if style != TScalarStyle::Plain {
        return NodeValue::Text(text);
    }
    match text.as_str() {
        "" | "~" | "null" | "Null" | "NULL" => return NodeValue::Null,
        "true" | "True" | "TRUE" => return NodeValue::Bool(true),
        "false" | "False" | "FALSE" => return NodeValue::Bool(false),
        ".inf" | ".Inf" | ".INF" | "+.inf" => return NodeValue::Number(f64::INFINITY),
        "-.inf" | "-.Inf" | "-.INF" => return NodeValue::Number(f64::NEG_INFINITY),
        ".nan" | ".NaN" | ".NAN" => return NodeValue::Number(f64::NAN),
        _ => {}
    }
    let looks_numeric = text
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'))
        && text.chars().any(|c| c.is_ascii_digit());
    match text.parse::<f64>() {
        Ok(x) if looks_numeric => NodeValue::Number(x),
        _ => NodeValue::Text(text),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(text: &str) -> Result<Option<Node>, Diagnostic> {
        parse(&Arc::from("t.yaml"), text)
    }

    #[test]
    fn keeps_lines_and_columns() {
        let node = p("id: A\ninputs:\n  belt_speed: 4.5 m/s\n")
            .unwrap()
            .unwrap();
        let inputs = node.get("inputs").unwrap();
        let speed = inputs.get("belt_speed").unwrap();
        assert_eq!(speed.as_text(), Some("4.5 m/s"));
        assert_eq!((speed.span.line, speed.span.column), (3, 15));
    }

    #[test]
    fn scalars_resolve_like_yaml_core() {
        let node = p("a: 1.5\nb: '1.5'\nc: true\nd: ~\ne: 4 m\nf: .nan\ng: 1e3\n")
            .unwrap()
            .unwrap();
        assert_eq!(node.get("a").unwrap().as_number(), Some(1.5));
        assert_eq!(node.get("b").unwrap().as_text(), Some("1.5"));
        assert_eq!(node.get("c").unwrap().value, NodeValue::Bool(true));
        assert_eq!(node.get("d").unwrap().value, NodeValue::Null);
        assert_eq!(node.get("e").unwrap().as_text(), Some("4 m"));
        assert!(node.get("f").unwrap().as_number().unwrap().is_nan());
        assert_eq!(node.get("g").unwrap().as_number(), Some(1000.0));
    }

    #[test]
    fn refuses_what_project_files_never_need() {
        let alias = p("a: &x [1, 2]\nb: *x\n").unwrap_err();
        assert!(alias.message.contains("anchors"), "{}", alias.message);
        let dup = p("a: 1\nb: 2\na: 3\n").unwrap_err();
        assert!(dup.message.contains("given twice"));
        assert_eq!(dup.span.unwrap().line, 3);
        let tab = p("a:\n\tb: 1\n").unwrap_err();
        assert!(tab.message.contains("not valid YAML"));
        let tab = p("id: A\ninputs:\n  a: 1 m\n\tb: 2 m\n").unwrap_err();
        let at = tab.span.unwrap();
        assert_eq!(
            (at.line, at.column),
            (4, 1),
            "the tab itself, not the token before"
        );
        let bom = parse_bytes(&Arc::from("t.yaml"), b"\xEF\xBB\xBFid: A\n")
            .unwrap()
            .unwrap();
        assert_eq!(bom.get("id").unwrap().as_text(), Some("A"));
        let deep = "[".repeat(100) + &"]".repeat(100);
        assert!(p(&deep).unwrap_err().message.contains("deeper"));
        assert!(p("a: 1\n---\nb: 2\n")
            .unwrap_err()
            .message
            .contains("second"));
        assert!(p("!!str a: 1\n").is_err());
        assert!(p("# only a comment\n").unwrap().is_none());
        let bad = parse_bytes(&Arc::from("t.yaml"), b"a: 1\nb: \xff\n").unwrap_err();
        assert_eq!(bad.span.unwrap().line, 2);
    }
}
