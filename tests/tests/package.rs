//! The calculation package end to end: the demo's PDF holds what a checker
//! needs, rebuilds are byte-identical, user text is literal, and a
//! project's template override is used.

use packwright_tests::{demo_copy, packwright, tree};

/// The text of a PDF, extracted with a PDF library (not the typesetter).
fn pdf_text(path: &std::path::Path) -> String {
    let bytes = std::fs::read(path).expect("the PDF exists");
    let text = pdf_extract::extract_text_from_mem(&bytes).expect("the PDF's text extracts");
    // Typst may set a long word with a soft break; join lines for searching.
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

fn page_count(path: &std::path::Path) -> usize {
    let doc = lopdf::Document::load(path).expect("the PDF parses");
    doc.get_pages().len()
}

#[test]
fn demo_package_holds_every_item_value_and_failed_check() {
    let demo = demo_copy();
    let ran = packwright(demo.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let pdf = demo.path().join("package/HCT-MH-CALC-0042-B.pdf");
    assert!(demo.path().join("package/HCT-MH-CALC-0042-B.typ").exists());
    let text = pdf_text(&pdf);
    assert!(text.contains("HCT-MH-CALC-0042"), "document number");
    let summary =
        std::fs::read_to_string(demo.path().join("results/summary.csv")).expect("summary");
    let mut rows = 0;
    for line in summary.lines().skip(1) {
        let id = line.split(',').next().expect("an id");
        assert!(text.contains(id), "item {id} is in the package");
        rows += 1;
    }
    assert!(rows >= 14, "the demo has every module's items");
    // Key values as the terminal table formats them (display units, 4 figures).
    for line in ran.stdout.lines().filter(|l| l.contains(" = ")) {
        let value = line
            .split(" = ")
            .nth(1)
            .expect("a value")
            .split("  ")
            .next()
            .expect("value text")
            .trim();
        let number = value.split(' ').next().expect("number");
        assert!(text.contains(number), "key value {value} is in the package");
    }
    // The failed check is named in the package.
    assert!(ran
        .stdout
        .contains("CV-104-LOAD acceleration_length_within_skirt"));
    assert!(text.contains("acceleration_length_within_skirt"));
    assert!(text.contains("FAIL"));
    // The page count the binary reports is the PDF's own, and every item has a section.
    let pages = page_count(&pdf);
    assert!(
        ran.stdout.contains(&format!("({pages} pages)")),
        "{}",
        ran.stdout
    );
    assert!(pages >= 2 * rows + 5, "{pages} pages for {rows} items");
    // Every page's footer says page x of y with the inputs digest.
    assert!(text.contains(&format!("page {pages} of {pages}")));
    assert!(text.contains("inputs "));
    // The package never approves itself and says it does not replace judgement.
    assert!(text.contains("does not replace"));
    assert!(!text.contains("Approved by packwright"));
}

#[test]
fn rebuilding_gives_a_byte_identical_pdf() {
    let demo = demo_copy();
    assert_eq!(packwright(demo.path(), &["build", "."]).code, 0);
    let pdf = demo.path().join("package/HCT-MH-CALC-0042-B.pdf");
    let first = std::fs::read(&pdf).expect("pdf");
    assert_eq!(packwright(demo.path(), &["build", "--fresh", "."]).code, 0);
    let second = std::fs::read(&pdf).expect("pdf");
    assert!(first == second, "two builds of the same inputs differ");
}

const NASTY: &[&str] = &[
    "#read(\"/etc/passwd\")",
    "$x$",
    "*a*",
    "_b_",
    "@ref",
    "<label>",
    "#import \"x.typ\"",
    "back\\slash",
    "// not a comment",
    "`tick`",
    "close]",
];

#[test]
fn user_text_is_typeset_literally() {
    let title = NASTY.join(" ");
    let item = format!(
        "id: NASTY-1\nmodule: belt-pickup\ntitle: {}\ninputs:\n  mass_flow: 500 t/h\n  belt_speed: 3 m/s\n  bulk_density: 1600 kg/m3\n  belt_friction: 0.6\n  skirt_friction: 0.6\n  skirt_width: 800 mm\nnotes: {}\n",
        serde_json::to_string(&title).expect("quote"),
        serde_json::to_string(&format!("note {title}")).expect("quote"),
    );
    let dir = tree(&[("items/nasty.yaml", &item)]);
    let ran = packwright(dir.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let text = pdf_text(&dir.path().join("package/TEST-001-A.pdf"));
    for nasty in NASTY {
        let squashed = nasty.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(
            text.contains(&squashed),
            "`{nasty}` is not literal in: {}",
            &text[..text.len().min(3000)]
        );
    }
    assert!(!text.contains("root:x:0"), "a user string read a file");
}

#[test]
fn a_project_template_replaces_the_default() {
    let demo = demo_copy();
    let templates = demo.path().join("templates");
    std::fs::create_dir_all(&templates).expect("mkdir");
    std::fs::write(
        templates.join("cautions.typ.hbs"),
        "#heading(numbering: none)[Site cautions]\nKestrel site rule 7 applies to {{project.name}}.\n",
    )
    .expect("write");
    let ran = packwright(demo.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let text = pdf_text(&demo.path().join("package/HCT-MH-CALC-0042-B.pdf"));
    assert!(text.contains("Kestrel site rule 7 applies to Harrow Creek Ore Terminal"));
    assert!(
        !text.contains("Keep exclusion zones clear during payout"),
        "the default was replaced"
    );
}
