//! Escaping user text for Typst markup, so that every title, note, name and
//! value in a package appears literally: `#read("/etc/passwd")` prints as
//! those characters and runs nothing.
//!
//! In Typst markup a backslash before any ASCII punctuation character makes
//! that character literal, so every such character is escaped; that covers
//! code (`#`), math (`$`), strong and emphasis (`*`, `_`), references and
//! labels (`@`, `<`, `>`), raw text (`` ` ``), comments (`//`, `/*`), content
//! brackets (`[`, `]`), headings and lists at a line start (`=`, `-`, `+`),
//! smart quotes and shorthands (`'`, `"`, `~`, `--`, `...`). Line breaks
//! inside a value become spaces; a blank line stays a paragraph break.
//! Owns no state.

/// Escapes `text` for Typst markup.
pub fn typst_markup(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + text.len() / 4);
    let normalised = text.replace("\r\n", "\n");
    let paragraphs: Vec<&str> = normalised.split("\n\n").collect();
    for (i, paragraph) in paragraphs.iter().enumerate() {
        if i > 0 {
            out.push_str("\n\n");
        }
        for c in paragraph.chars() {
            match c {
                '\n' | '\t' | '\r' => out.push(' '),
                c if c.is_ascii_punctuation() => {
                    out.push('\\');
                    out.push(c);
                }
                // Other control characters have no place in a document.
                c if c.is_control() => {}
                c => out.push(c),
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_markup_character_is_escaped() {
        assert_eq!(
            typst_markup("#read(\"/etc/passwd\")"),
            "\\#read\\(\\\"\\/etc\\/passwd\\\"\\)"
        );
        assert_eq!(typst_markup("$x$ *a* _b_"), "\\$x\\$ \\*a\\* \\_b\\_");
        assert_eq!(typst_markup("@ref <label>"), "\\@ref \\<label\\>");
        assert_eq!(
            typst_markup("a\\b // c `d` ]"),
            "a\\\\b \\/\\/ c \\`d\\` \\]"
        );
        assert_eq!(typst_markup("one\ntwo\n\nthree"), "one two\n\nthree");
        assert_eq!(typst_markup("Hämatit 4½ m"), "Hämatit 4½ m");
    }
}
