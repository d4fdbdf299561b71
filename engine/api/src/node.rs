//! Positions in project files, and a small value tree that keeps them.
//!
//! The engine builds [`Node`]s from YAML; a module that takes a structured
//! input (a chute path, say) walks the tree and can point an error at the
//! exact line and column. Owns no state.

use std::cell::RefCell;
use std::fmt;
use std::sync::Arc;

/// Where a value stands in a project file: the path relative to the project
/// root, and a 1-based line and column.
#[derive(
    Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize, serde::Deserialize,
)]
pub struct Span {
    /// Path of the file relative to the project root, with `/` separators.
    #[serde(with = "file_name")]
    pub file: Arc<str>,
    /// Line, counting from 1.
    pub line: u32,
    /// Column, counting from 1.
    pub column: u32,
}

impl Span {
    /// A span at the given file, line and column.
    pub fn new(file: impl Into<Arc<str>>, line: u32, column: u32) -> Span {
        Span {
            file: file.into(),
            line,
            column,
        }
    }
}

thread_local! {
    /// The file set by [`with_span_file`] on this thread.
    static SPAN_FILE: RefCell<Option<Arc<str>>> = const { RefCell::new(None) };
}

/// Runs `f` with `file` as the file that the spans it stores leave
/// unnamed, and that the spans it reads without a name are in. A store of
/// one file's values (the engine's item index) then names the file once
/// rather than in every span: in an item's entry the names were nearly
/// half the bytes. Outside `f`, and for spans in other files, the name is
/// stored. (Serde passes no context to a field's serializer, hence the
/// thread's own slot; an empty name read here stands for `file`.)
pub fn with_span_file<R>(file: Option<Arc<str>>, f: impl FnOnce() -> R) -> R {
    /// Puts the slot back as it was, also when `f` panics.
    struct Restore(Option<Arc<str>>);
    impl Drop for Restore {
        fn drop(&mut self) {
            let previous = self.0.take();
            SPAN_FILE.with(|s| *s.borrow_mut() = previous);
        }
    }
    let _restore = Restore(SPAN_FILE.with(|s| s.replace(file)));
    f()
}

/// The file [`with_span_file`] set on this thread, if any.
pub fn span_file() -> Option<Arc<str>> {
    SPAN_FILE.with(|s| s.borrow().clone())
}

/// How a file name is stored (as in a [`Span`], and for a struct's own
/// file with `#[serde(with = "packwright_api::file_name")]`): nothing for
/// the file [`with_span_file`] set, and read back sharing one allocation
/// among the names of one file read in a row on a thread.
pub mod file_name {
    use super::*;

    /// Writes a file name, or nothing for the file [`with_span_file`] set.
    pub fn serialize<S: serde::Serializer>(file: &Arc<str>, s: S) -> Result<S::Ok, S::Error> {
        let implied = SPAN_FILE.with(|c| c.borrow().as_deref() == Some(&**file));
        s.serialize_str(if implied { "" } else { file })
    }

    /// Reads a file name, sharing one allocation among the names of one
    /// file read in a row on a thread: every node of an item names its
    /// file, and an allocation each was a visible part of reading a stored
    /// item. No name is the file [`with_span_file`] set.
    pub fn deserialize<'de, D: serde::Deserializer<'de>>(d: D) -> Result<Arc<str>, D::Error> {
        thread_local! {
            static LAST: RefCell<Option<Arc<str>>> = const { RefCell::new(None) };
        }
        struct Name;
        impl serde::de::Visitor<'_> for Name {
            type Value = Arc<str>;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a file name")
            }
            fn visit_str<E: serde::de::Error>(self, name: &str) -> Result<Arc<str>, E> {
                if name.is_empty() {
                    if let Some(file) = span_file() {
                        return Ok(file);
                    }
                }
                Ok(LAST.with(|last| {
                    let mut last = last.borrow_mut();
                    match &*last {
                        Some(file) if **file == *name => file.clone(),
                        _ => last.insert(Arc::from(name)).clone(),
                    }
                }))
            }
        }
        d.deserialize_str(Name)
    }
}

impl fmt::Display for Span {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}:{}", self.file, self.line, self.column)
    }
}

/// A YAML value with the position it was read from. Serde-able so that
/// the engine can keep parsed items between runs (its item index).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Node {
    /// The value.
    pub value: NodeValue,
    /// Where it starts.
    pub span: Span,
}

/// The kinds of value a [`Node`] holds.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum NodeValue {
    /// `~`, `null` or nothing.
    Null,
    /// `true` or `false`.
    Bool(bool),
    /// A number written without quotes.
    Number(f64),
    /// Any other scalar, quoted or not.
    Text(String),
    /// A `- a` list or `[a, b]`.
    List(Vec<Node>),
    /// A `key: value` mapping, in file order. Keys are text scalars.
    Map(Vec<(Node, Node)>),
}

impl Node {
    /// The kind of value, in words for messages ("a list", "a number").
    pub fn kind_name(&self) -> &'static str {
        match self.value {
            NodeValue::Null => "nothing (null)",
            NodeValue::Bool(_) => "true/false",
            NodeValue::Number(_) => "a number",
            NodeValue::Text(_) => "text",
            NodeValue::List(_) => "a list",
            NodeValue::Map(_) => "a mapping",
        }
    }

    /// The text of a scalar (text, number or bool), as written.
    pub fn as_text(&self) -> Option<&str> {
        match &self.value {
            NodeValue::Text(s) => Some(s),
            _ => None,
        }
    }

    /// The number, when the node is an unquoted number.
    pub fn as_number(&self) -> Option<f64> {
        match self.value {
            NodeValue::Number(x) => Some(x),
            _ => None,
        }
    }

    /// The entries, when the node is a list.
    pub fn as_list(&self) -> Option<&[Node]> {
        match &self.value {
            NodeValue::List(items) => Some(items),
            _ => None,
        }
    }

    /// The entries, when the node is a mapping.
    pub fn as_map(&self) -> Option<&[(Node, Node)]> {
        match &self.value {
            NodeValue::Map(entries) => Some(entries),
            _ => None,
        }
    }

    /// The value under `key`, when the node is a mapping that has it.
    pub fn get(&self, key: &str) -> Option<&Node> {
        self.as_map()?
            .iter()
            .find(|(k, _)| k.as_text() == Some(key))
            .map(|(_, v)| v)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spans_in_the_set_file_are_stored_without_its_name_and_read_back_with_it() {
        let file: Arc<str> = Arc::from("chutes/TC-1.yaml");
        let spans = vec![
            Span::new(file.clone(), 3, 5),
            Span::new("materials/ore.yaml", 2, 1),
        ];
        let text =
            with_span_file(Some(file.clone()), || serde_json::to_string(&spans)).expect("encodes");
        assert!(!text.contains("TC-1"), "{text}");
        assert!(text.contains("materials/ore.yaml"), "{text}");
        let back: Vec<Span> =
            with_span_file(Some(file.clone()), || serde_json::from_str(&text)).expect("decodes");
        assert_eq!(back, spans);
        // Outside, every span names its file, and the slot is empty again.
        assert_eq!(span_file(), None);
        let plain = serde_json::to_string(&spans).expect("encodes");
        assert!(plain.contains("chutes/TC-1.yaml"), "{plain}");
    }
}
