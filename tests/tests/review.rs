//! Rerun and review: issued revisions, diffs against them and against git,
//! the stale sign-off banner, and the rerun cache (cold and warm runs give
//! the same bytes; one change recomputes only what it must).

use std::path::Path;

use packwright_tests::{demo_copy, packwright, snapshot};

fn edit(path: &Path, from: &str, to: &str) {
    let text = std::fs::read_to_string(path).expect("read");
    assert!(text.contains(from), "{} has `{from}`", path.display());
    std::fs::write(path, text.replacen(from, to, 1)).expect("write");
}

fn computed(stdout: &str) -> usize {
    let line = stdout
        .lines()
        .find(|l| l.contains(" computed, "))
        .expect("a run summary line");
    line.split(": ")
        .nth(1)
        .and_then(|s| s.split(' ').next())
        .and_then(|n| n.parse().ok())
        .expect("a count")
}

fn pdf_text(path: &Path) -> String {
    let bytes = std::fs::read(path).expect("pdf");
    let text = pdf_extract::extract_text_from_mem(&bytes).expect("text");
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

#[test]
fn issue_change_diff_shows_the_item_and_its_dependants_only() {
    let demo = demo_copy();
    let root = demo.path();
    let issued = packwright(root, &["issue", "B", "."]);
    assert_eq!(issued.code, 0, "{}", issued.all());
    assert!(root.join("issued/B.yaml").exists());
    // Nothing changed: exit 0.
    let same = packwright(root, &["diff", ".", "--since", "B"]);
    assert_eq!(same.code, 0, "{}", same.all());
    assert!(same.stdout.contains("no changes"));
    // TC-02's throughput changes: TC-02 and the two loading points fed by it move.
    edit(&root.join("transfers/TC-02.yaml"), "6000 t/h", "5400 t/h");
    let diff = packwright(root, &["diff", ".", "--json"]);
    assert_eq!(diff.code, 1, "{}", diff.all());
    let doc: serde_json::Value = serde_json::from_str(&diff.stdout).expect("json");
    let items: std::collections::BTreeSet<&str> = doc["changes"]
        .as_array()
        .expect("changes")
        .iter()
        .map(|c| c["item"].as_str().expect("item"))
        .collect();
    let expected: std::collections::BTreeSet<&str> =
        ["TC-02", "CV-102-LOAD", "CV-102-LOAD-SURGE"].into();
    assert_eq!(items, expected);
    let input = doc["changes"]
        .as_array()
        .expect("changes")
        .iter()
        .find(|c| c["item"] == "TC-02" && c["kind"] == "input")
        .expect("the changed input is listed");
    assert_eq!(input["name"], "mass_flow");
    assert!(input["percent"].as_f64().expect("percent") + 10.0 < 1e-6);
    // The readable table names the change too.
    let table = packwright(root, &["diff", "."]);
    assert!(
        table.stdout.contains("mass_flow") && table.stdout.contains("-10.000 %"),
        "{}",
        table.stdout
    );
    // A loose tolerance hides nothing that moved by 10 %, a huge one hides everything.
    assert_eq!(
        packwright(root, &["diff", ".", "--tolerance", "1e9"]).code,
        0
    );
}

#[test]
fn issuing_refuses_an_existing_or_old_revision() {
    let demo = demo_copy();
    let root = demo.path();
    assert_eq!(packwright(root, &["issue", "B", "."]).code, 0);
    let before = snapshot(&root.join("issued"));
    let again = packwright(root, &["issue", "B", "."]);
    assert_eq!(again.code, 2);
    assert!(
        again.stderr.contains("issued already") && again.stderr.contains("--force"),
        "{}",
        again.stderr
    );
    let old = packwright(root, &["issue", "A", "."]);
    assert_eq!(old.code, 2);
    assert!(
        old.stderr.contains("not the newest revision"),
        "{}",
        old.stderr
    );
    assert_eq!(
        snapshot(&root.join("issued")),
        before,
        "a refused issue writes nothing"
    );
    assert_eq!(packwright(root, &["issue", "B", ".", "--force"]).code, 0);
}

#[test]
fn stale_sign_off_banner_appears_and_disappears() {
    let demo = demo_copy();
    let root = demo.path();
    let banner = "SIGN-OFF NO LONGER VALID";
    // Revision B is recorded as checked and issued.
    edit(
        &root.join("project.yaml"),
        "    prepared: { name: R. Okonjo, date: 2026-11-24 }\n",
        "    prepared: { name: R. Okonjo, date: 2026-11-24 }\n    checked: { name: M. Várady, date: 2026-11-30 }\n",
    );
    assert_eq!(packwright(root, &["issue", "B", "."]).code, 0);
    let pdf = root.join("package/HCT-MH-CALC-0042-B.pdf");
    assert_eq!(packwright(root, &["build", "."]).code, 0);
    assert!(!pdf_text(&pdf).contains(banner));
    // An input changes after the check: every page says so.
    let item = root.join("lifting/H-01-MAINT-CRANE.yaml");
    let original = std::fs::read_to_string(&item).expect("read");
    let changed = original.replacen("hoisted_mass: ", "hoisted_mass: 1", 1);
    assert_ne!(changed, original);
    std::fs::write(&item, &changed).expect("write");
    let built = packwright(root, &["build", "."]);
    assert_eq!(built.code, 0, "{}", built.all());
    assert!(
        built.stderr.contains("differ from those issued"),
        "{}",
        built.stderr
    );
    let text = pdf_text(&pdf);
    let pages = lopdf::Document::load(&pdf).expect("pdf").get_pages().len();
    assert_eq!(
        text.matches(banner).count(),
        pages,
        "the banner is on every page"
    );
    assert!(text.contains("H-01-MAINT-CRANE"));
    // Put the input back: the banner goes.
    std::fs::write(&item, &original).expect("write");
    assert_eq!(packwright(root, &["build", "."]).code, 0);
    assert!(!pdf_text(&pdf).contains(banner));
}

#[test]
fn changes_since_the_last_issued_revision_are_in_the_package() {
    let demo = demo_copy();
    let root = demo.path();
    // Revision A's record: the project as it stood with only revision A.
    let meta = root.join("project.yaml");
    let full = std::fs::read_to_string(&meta).expect("read");
    let only_a = full
        .split("  - rev: B")
        .next()
        .expect("rev A part")
        .to_string();
    std::fs::write(&meta, &only_a).expect("write");
    assert_eq!(packwright(root, &["issue", "A", "."]).code, 0);
    std::fs::write(&meta, &full).expect("write");
    edit(&root.join("transfers/TC-02.yaml"), "6000 t/h", "5400 t/h");
    let built = packwright(root, &["build", "."]);
    assert_eq!(built.code, 0, "{}", built.all());
    let text = pdf_text(&root.join("package/HCT-MH-CALC-0042-B.pdf"));
    assert!(text.contains("Changes since revision A"));
    assert!(text.contains("-10.00 %"), "the change in percent is shown");
}

#[test]
fn diff_against_a_git_commit() {
    let demo = demo_copy();
    let root = demo.path();
    let git = |args: &[&str]| {
        let out = std::process::Command::new("git")
            .args(args)
            .current_dir(root)
            .env("GIT_AUTHOR_NAME", "Test")
            .env("GIT_AUTHOR_EMAIL", "test@example.invalid")
            .env("GIT_COMMITTER_NAME", "Test")
            .env("GIT_COMMITTER_EMAIL", "test@example.invalid")
            .output()
            .expect("git runs");
        assert!(
            out.status.success(),
            "git {args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
    };
    assert_eq!(packwright(root, &["run", "."]).code, 0);
    git(&["init", "-q"]);
    git(&["add", "-A"]);
    git(&["commit", "-q", "-m", "first"]);
    assert_eq!(packwright(root, &["diff", ".", "--git", "HEAD"]).code, 0);
    edit(
        &root.join("conveyors/cv-105-load.yaml"),
        "belt_slope: 14 deg",
        "belt_slope: 12 deg",
    );
    let diff = packwright(root, &["diff", ".", "--git", "HEAD"]);
    assert_eq!(diff.code, 1, "{}", diff.all());
    assert!(
        diff.stdout.contains("CV-105-LOAD") && diff.stdout.contains("belt_slope"),
        "{}",
        diff.stdout
    );
    assert!(!diff.stdout.contains("CV-101-LOAD"), "{}", diff.stdout);
    let bad = packwright(root, &["diff", ".", "--git", "no-such-ref"]);
    assert_eq!(bad.code, 2, "{}", bad.all());
}

#[test]
fn cold_and_warm_runs_write_the_same_bytes_and_one_change_reruns_only_its_dependants() {
    let demo = demo_copy();
    let root = demo.path();
    let cold = packwright(root, &["run", ".", "--fresh"]);
    assert_eq!(cold.code, 0, "{}", cold.all());
    let cold_files = snapshot(&root.join("results"));
    let n = cold_files.len() - 1; // summary.csv
    assert_eq!(computed(&cold.stdout), n);
    let warm = packwright(root, &["run", "."]);
    assert_eq!(computed(&warm.stdout), 0, "{}", warm.stdout);
    assert_eq!(
        snapshot(&root.join("results")),
        cold_files,
        "the cache changed a result"
    );
    edit(&root.join("transfers/TC-02.yaml"), "6000 t/h", "5400 t/h");
    let one = packwright(root, &["run", ".", "--verbose"]);
    assert_eq!(
        computed(&one.stdout),
        3,
        "TC-02 and the two items linked from it: {}",
        one.all()
    );
    for id in ["TC-02", "CV-102-LOAD", "CV-102-LOAD-SURGE"] {
        assert!(
            one.stderr.contains(&format!("{id}: computed")),
            "{}",
            one.stderr
        );
    }
    // And the warm result of the changed project equals a cold one.
    let warm_files = snapshot(&root.join("results"));
    assert_eq!(packwright(root, &["run", ".", "--fresh"]).code, 0);
    assert_eq!(snapshot(&root.join("results")), warm_files);
}
