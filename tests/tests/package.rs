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

/// Puts a template of the project's own, which replaces the built-in one.
fn override_template(project: &std::path::Path, name: &str, text: &str) {
    let templates = project.join("templates");
    std::fs::create_dir_all(&templates).expect("mkdir");
    std::fs::write(templates.join(name), text).expect("write");
}

#[test]
fn a_project_template_replaces_the_default() {
    let demo = demo_copy();
    override_template(
        demo.path(),
        "cautions.typ.hbs",
        "#heading(numbering: none)[Site cautions]\nKestrel site rule 7 applies to {{project.name}}.\n",
    );
    let ran = packwright(demo.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let text = pdf_text(&demo.path().join("package/HCT-MH-CALC-0042-B.pdf"));
    assert!(text.contains("Kestrel site rule 7 applies to Harrow Creek Ore Terminal"));
    assert!(
        !text.contains("Keep exclusion zones clear during payout"),
        "the default was replaced"
    );
}

/// The package is typeset in parts (front matter, one per item, references)
/// and put together: every page carries "page n of N" with the true total,
/// the contents names the page each item starts on, every link between
/// parts ends on a page of the document, and no internal address is left.
#[test]
fn parts_are_put_together_with_true_pages_and_links() {
    let demo = demo_copy();
    let ran = packwright(demo.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let pdf = demo.path().join("package/HCT-MH-CALC-0042-B.pdf");
    let total = page_count(&pdf);
    let doc = lopdf::Document::load(&pdf).expect("the PDF parses");
    let pages = doc.get_pages();
    let page_ids: Vec<lopdf::ObjectId> = pages.values().copied().collect();
    let texts = pdf_extract::extract_text_by_pages(&pdf).expect("the PDF's text extracts");
    assert_eq!(texts.len(), total);
    for (index, text) in texts.iter().enumerate() {
        let number = index + 1;
        let text = text.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(
            text.contains(&format!("page {number} of {total}")),
            "page {number} has its footer: {text}"
        );
    }
    let mut internal = 0;
    for id in &page_ids {
        let annots = doc.get_page_annotations(*id).unwrap_or_default();
        for annot in annots {
            // Typst writes a link between parts as a destination object.
            let Some(dest) = annot
                .get(b"Dest")
                .ok()
                .and_then(|d| doc.dereference(d).ok())
                .and_then(|(_, d)| d.as_array().ok().cloned())
            else {
                continue;
            };
            let target = dest[0].as_reference().expect("a page reference");
            assert!(
                page_ids.contains(&target),
                "a link ends on a page of the document"
            );
            internal += 1;
        }
    }
    let raw = String::from_utf8_lossy(&std::fs::read(&pdf).expect("the PDF")).into_owned();
    // The demo has no web links: a URI would be a cross-part address left
    // unresolved.
    assert!(
        !raw.contains("/URI"),
        "no internal address is left as a web link"
    );
    assert!(
        internal >= 30,
        "contents, summary and inputs link across parts ({internal})"
    );
    // The contents line of the first item names the page its section starts on.
    let contents = &texts[2];
    let line = contents
        .lines()
        .find(|l| l.contains("BIN-03-OUTLET:"))
        .expect("the first item is in the contents")
        .to_string();
    let start: usize = contents
        .lines()
        .skip_while(|l| !l.contains("BIN-03-OUTLET:"))
        .flat_map(|l| l.split_whitespace())
        .filter_map(|w| w.parse().ok())
        .find(|n| *n > 3)
        .expect("a page number");
    let first_page = &texts[start - 1];
    assert!(
        first_page.contains("BIN-03-OUTLET"),
        "{line}: the section starts on page {start}"
    );
}

/// The first words of a text, whitespace folded, for finding it in the
/// extracted text of a page whatever the line breaks.
fn opening_words(text: &str, count: usize) -> String {
    text.split_whitespace()
        .take(count)
        .collect::<Vec<_>>()
        .join(" ")
}

/// Each module's method, inputs in words, assumptions, cautions and
/// references are said once, in a method statement: the contents names the
/// page it starts on, its cautions are on its pages, and every item
/// section points to it. A project can repeat them in every item section
/// with `{{> item-notes}}` in its own `item.typ.hbs`.
#[test]
fn method_statements_are_said_once_and_every_item_points_to_its_own() {
    let demo = demo_copy();
    let ran = packwright(demo.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let pdf = demo.path().join("package/HCT-MH-CALC-0042-B.pdf");
    let texts: Vec<String> = pdf_extract::extract_text_by_pages(&pdf)
        .expect("the PDF's text extracts")
        .iter()
        .map(|t| t.split_whitespace().collect::<Vec<_>>().join(" "))
        .collect();
    let contents = &texts[2];
    let registry = packwright::builtin::registry();
    // Every built-in module has an item in the demo.
    for registered in registry.iter() {
        let declaration = &registered.declaration;
        let module = &declaration.name;
        let title = format!("Method statement: {module} {}", declaration.version);
        let after = contents
            .split(&title)
            .nth(1)
            .unwrap_or_else(|| panic!("{title} is in the contents: {contents}"));
        let page: usize = after
            .split_whitespace()
            .filter(|w| !w.chars().all(|c| c == '.'))
            .find_map(|w| w.trim_matches('.').parse().ok())
            .expect("a page number");
        let start = &texts[page - 1];
        assert!(
            start.contains(&title) && start.contains("Used by"),
            "{title} starts on page {page}: {start}"
        );
        // Its cautions are on its own pages (before the next statement).
        let statement: String = texts[page - 1..(page + 3).min(texts.len())].join(" ");
        for caution in &declaration.cautions {
            let words = opening_words(caution, 6);
            assert!(
                statement.contains(&words),
                "{title} carries the caution `{words}`"
            );
        }
        // Said once: no other page starts a statement for the module.
        let starts = texts
            .iter()
            .filter(|t| t.contains(&title) && t.contains("Used by"))
            .count();
        assert_eq!(starts, 1, "{title} is said once");
    }
    let whole = texts.join(" ");
    let pointers = whole.matches("by the method of Method statement:").count();
    assert!(
        pointers >= 15,
        "every item points to its method ({pointers})"
    );

    // Repeated in every item section on request.
    override_template(
        demo.path(),
        "item.typ.hbs",
        "{{> item-heading}}\n{{> item-inputs}}\n{{> item-method}}\n{{> item-results}}\n{{> item-checks}}\n{{> item-notes}}\n",
    );
    let ran = packwright(demo.path(), &["build", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    let text = pdf_text(&pdf);
    assert_eq!(
        text.matches("Method in full").count(),
        pointers,
        "every item section carries its method in full"
    );
}
