//! Widths of short texts (names, values) in the package's body font, for
//! the fixed-width leading columns of the templates' ruled rows.
//!
//! Why here and not in Typst: a ruled row is one paragraph whose leading
//! columns are boxes of a set width, laid out once; a Typst table measures
//! every cell of an auto-width column and every cell of an auto-height row
//! before laying it out again (a quarter of a 100-item build's time). So the
//! engine sizes the columns to their widest entry from the font's advance
//! widths. Kerning is left out and ligatures count as their letters, which
//! only ever makes a column a little wider than its text.
//!
//! Depends on the embedded fonts only.

use std::sync::OnceLock;

use typst::text::{Font, FontWeight};

/// The family the package's body text is set in (`preamble.typ.hbs`).
const BODY_FAMILY: &str = "libertinus serif";

/// Width, in em, given to a character the font has no glyph for (Typst
/// would take it from a fallback font): as wide as a wide letter.
const MISSING_GLYPH_EM: f64 = 0.8;

fn body_font(bold: bool) -> Option<&'static Font> {
    static REGULAR: OnceLock<Option<Font>> = OnceLock::new();
    static BOLD: OnceLock<Option<Font>> = OnceLock::new();
    let (cell, weight) = if bold {
        (&BOLD, FontWeight::BOLD)
    } else {
        (&REGULAR, FontWeight::REGULAR)
    };
    cell.get_or_init(|| crate::world::embedded_font(BODY_FAMILY, weight))
        .as_ref()
}

/// The body font's face, parsed once: the engine measures every name and
/// value of a package with it.
fn body_face(bold: bool) -> Option<&'static ttf_parser::Face<'static>> {
    static REGULAR: OnceLock<Option<ttf_parser::Face<'static>>> = OnceLock::new();
    static BOLD: OnceLock<Option<ttf_parser::Face<'static>>> = OnceLock::new();
    let cell = if bold { &BOLD } else { &REGULAR };
    cell.get_or_init(|| {
        let font = body_font(bold)?;
        ttf_parser::Face::parse(font.data().as_slice(), font.index()).ok()
    })
    .as_ref()
}

/// The width of `text` set on one line in the body font, in em of the text
/// size (so the same at any size).
pub fn em_width(text: &str, bold: bool) -> f64 {
    let Some(face) = body_face(bold) else {
        return text.chars().count() as f64 * MISSING_GLYPH_EM;
    };
    let per_em = f64::from(face.units_per_em());
    text.chars()
        .map(|c| {
            face.glyph_index(c)
                .and_then(|glyph| face.glyph_hor_advance(glyph))
                .map(|advance| f64::from(advance) / per_em)
                .unwrap_or(MISSING_GLYPH_EM)
        })
        .sum()
}

/// The width of a column that holds every one of `texts` on one line (and
/// its bold heading `head`), with `gap` em of space after the widest, as a
/// Typst length such as `11.35em`; never more than `most` em. Rounded up to
/// a hundredth, so the source stays short and the same run to run.
pub fn column<'a>(
    head: &str,
    texts: impl IntoIterator<Item = &'a str>,
    gap: f64,
    most: f64,
) -> String {
    let widest = texts
        .into_iter()
        .map(|t| em_width(t, false))
        .fold(em_width(head, true), f64::max);
    let em = ((widest + gap).min(most) * 100.0).ceil() / 100.0;
    format!("{em}em")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The body font is embedded and measures as a proportional font does:
    /// an `m` is wider than an `i`, bold wider than regular, widths add up.
    #[test]
    fn widths_come_from_the_embedded_body_font() {
        assert!(body_face(false).is_some() && body_face(true).is_some());
        let (m, i) = (em_width("m", false), em_width("i", false));
        assert!(m > 2.0 * i && m < 1.0, "m {m} em, i {i} em");
        assert!(em_width("mass_flow", true) > em_width("mass_flow", false));
        let (a, b) = (em_width("outlet", false), em_width("_size", false));
        assert!((em_width("outlet_size", false) - (a + b)).abs() < 1e-9);
    }

    /// A column is as wide as its widest entry or heading plus the gap,
    /// capped, and written as Typst reads it.
    #[test]
    fn a_column_fits_its_widest_entry() {
        let wide = em_width("hopper_half_angle", false);
        assert_eq!(
            column("Input", ["method", "hopper_half_angle"], 1.0, 40.0),
            format!("{}em", ((wide + 1.0) * 100.0).ceil() / 100.0)
        );
        assert_eq!(column("Input", ["hopper_half_angle"], 1.0, 3.0), "3em");
        let head = em_width("A much longer heading", true);
        assert!(head > wide);
        assert_eq!(
            column("A much longer heading", ["x"], 0.5, 40.0),
            format!("{}em", ((head + 0.5) * 100.0).ceil() / 100.0)
        );
    }
}
