//! Replays the fuzzers' findings in the normal test run: every file under
//! `fuzz/regressions/<target>/` (inputs that once crashed, hung or broke a
//! property) and every seed under `fuzz/seeds/<target>/` goes through the
//! same check function the fuzz target calls (`fuzz/checks.rs`), so a fix
//! that regresses fails here without `cargo fuzz`.

use std::path::{Path, PathBuf};

#[path = "../../fuzz/checks.rs"]
mod checks;

fn inputs(target: &str) -> Vec<PathBuf> {
    let fuzz = packwright_tests::repo_root().join("fuzz");
    let mut files = Vec::new();
    for folder in ["regressions", "seeds"] {
        let dir = fuzz.join(folder).join(target);
        assert!(dir.is_dir(), "{} is missing", dir.display());
        for entry in std::fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            let is_note = path.extension().is_some_and(|e| e == "md");
            if path.is_file() && !is_note {
                files.push(path);
            }
        }
    }
    files.sort();
    files
}

fn name(path: &Path) -> String {
    path.file_name().unwrap().to_string_lossy().into_owned()
}

#[test]
fn quantity_parser_findings_and_seeds() {
    let files = inputs("quantity_parser");
    assert!(!files.is_empty());
    for path in files {
        let bytes = std::fs::read(&path).unwrap();
        if let Ok(text) = std::str::from_utf8(&bytes) {
            let outcome = std::panic::catch_unwind(|| checks::quantity(text));
            assert!(outcome.is_ok(), "{} fails the quantity check", name(&path));
        }
    }
}

#[test]
fn item_loader_findings_and_seeds() {
    let files = inputs("item_loader");
    assert!(!files.is_empty());
    let scratch = checks::Scratch::new();
    for path in files {
        let bytes = std::fs::read(&path).unwrap();
        let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            checks::item(&bytes, &scratch)
        }));
        assert!(outcome.is_ok(), "{} fails the item check", name(&path));
    }
}
