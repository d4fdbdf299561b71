//! Problems found in a project, each pointing at a file, line and column,
//! saying what was expected and giving an example. Collected, never thrown
//! one at a time, so `packwright check` reports every error at once.
//!
//! Owns no state; the command line prints them.

use std::fmt;

use packwright_api::Span;

/// One problem in a project.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    /// Where it is (absent for problems of the whole project).
    pub span: Option<Span>,
    /// What is wrong, in one sentence.
    pub message: String,
    /// What would be right, with an example.
    pub expected: Option<String>,
    /// Other places involved (the other file of a duplicate id, the rest of
    /// a cycle), each with a short note.
    pub related: Vec<(Span, String)>,
}

impl Diagnostic {
    /// A problem at `span`.
    pub fn new(span: Option<Span>, message: String) -> Diagnostic {
        Diagnostic {
            span,
            message,
            expected: None,
            related: Vec::new(),
        }
    }

    /// Adds what was expected.
    pub fn expected(mut self, text: impl Into<String>) -> Diagnostic {
        self.expected = Some(text.into());
        self
    }

    /// Adds another place involved.
    pub fn related(mut self, span: Span, note: impl Into<String>) -> Diagnostic {
        self.related.push((span, note.into()));
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.span {
            Some(span) => write!(f, "{span}: {}", self.message)?,
            None => write!(f, "{}", self.message)?,
        }
        if let Some(expected) = &self.expected {
            write!(f, "\n  expected: {expected}")?;
        }
        for (span, note) in &self.related {
            write!(f, "\n  {span}: {note}")?;
        }
        Ok(())
    }
}

/// Every problem found in one pass, in file order.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Diagnostics(pub Vec<Diagnostic>);

impl Diagnostics {
    /// Adds a problem.
    pub fn push(&mut self, d: Diagnostic) {
        self.0.push(d);
    }

    /// Whether nothing was found.
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// Sorts by file, line and column so the report reads top to bottom.
    pub fn sort(&mut self) {
        self.0
            .sort_by(|a, b| a.span.cmp(&b.span).then(a.message.cmp(&b.message)));
        self.0.dedup();
    }
}

impl fmt::Display for Diagnostics {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for d in &self.0 {
            writeln!(f, "error: {d}")?;
        }
        Ok(())
    }
}

impl std::error::Error for Diagnostics {}
