//! Numerical guards, end to end: inputs at the edges of their ranges, where
//! a module's physics degenerates (a belt too steep to accelerate the feed,
//! pushes that nearly cancel, near-critical damping, absurd times and
//! lengths), never put a value that is not finite into `results/` or the
//! package. Either the build succeeds and every number written is finite,
//! or it stops with a calculation error (exit code 1) that names the item
//! and the inputs behind it, and nothing is written.

use std::path::Path;

use packwright_tests::{packwright, repo_root, snapshot, tree};

/// A demo item's text with `key:` set to `value` (added under `inputs:`
/// when the item does not have it).
fn demo_item(file: &str, edits: &[(&str, &str)]) -> String {
    let path = repo_root().join("projects/harrow-creek").join(file);
    let mut text = std::fs::read_to_string(&path).expect("demo item");
    for (key, value) in edits {
        let prefix = format!("  {key}:");
        let lines: Vec<String> = text
            .lines()
            .map(|l| {
                if l.starts_with(&prefix) {
                    format!("{prefix} {value}")
                } else {
                    l.to_string()
                }
            })
            .collect();
        let mut joined = lines.join("\n") + "\n";
        if !text.lines().any(|l| l.starts_with(&prefix)) {
            joined = joined.replacen("inputs:\n", &format!("inputs:\n{prefix} {value}\n"), 1);
        }
        text = joined;
    }
    text
}

/// A project of the demo's materials and one edited demo item, with
/// sentinel output folders.
fn project_with(item: &str) -> tempfile::TempDir {
    let dir = tree(&[("item.yaml", item)]);
    let materials = repo_root().join("projects/harrow-creek/materials");
    std::fs::create_dir_all(dir.path().join("materials")).expect("mkdir");
    for entry in std::fs::read_dir(materials)
        .expect("demo materials")
        .flatten()
    {
        std::fs::copy(
            entry.path(),
            dir.path().join("materials").join(entry.file_name()),
        )
        .expect("copy");
    }
    for (path, text) in [("results/OLD.yaml", "old\n"), ("package/OLD.pdf", "old\n")] {
        let p = dir.path().join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, text).expect("write");
    }
    dir
}

/// Words that would mean a value that is not finite was written.
fn non_finite_words(text: &str) -> Vec<String> {
    text.split(|c: char| !(c.is_ascii_alphanumeric() || c == '.'))
        .map(|w| w.trim_matches('.').to_ascii_lowercase())
        .filter(|w| matches!(w.as_str(), "nan" | "inf" | "infinity"))
        .collect()
}

/// Builds the project and asserts the guard: a complete, finite package,
/// or a calculation error naming the item and its inputs with nothing
/// written. Returns the exit code.
fn assert_guarded(name: &str, item_id: &str, item: &str) -> i32 {
    let dir = project_with(item);
    let before = [
        snapshot(&dir.path().join("results")),
        snapshot(&dir.path().join("package")),
    ];
    let ran = packwright(dir.path(), &["build", "."]);
    let all = ran.all();
    assert!(!ran.stderr.contains("panicked"), "{name}: panicked:\n{all}");
    match ran.code {
        0 => {
            for folder in ["results", "package"] {
                for (file, bytes) in snapshot(&dir.path().join(folder)) {
                    let is_text = file.extension().is_some_and(|e| e != "pdf");
                    if is_text {
                        let text = String::from_utf8_lossy(&bytes);
                        let bad = non_finite_words(&text);
                        assert!(
                            bad.is_empty(),
                            "{name}: {folder}/{} holds {bad:?}",
                            file.display()
                        );
                    }
                }
            }
            assert!(
                !dir.path().join("results/OLD.yaml").exists(),
                "{name}: results/ was written whole"
            );
        }
        1 => {
            assert!(
                all.contains(&format!("item `{item_id}`")),
                "{name}: names the item:\n{all}"
            );
            assert!(
                all.contains("driven by"),
                "{name}: names the inputs:\n{all}"
            );
            let after = [
                snapshot(&dir.path().join("results")),
                snapshot(&dir.path().join("package")),
            ];
            assert!(
                after == before,
                "{name}: nothing may be written after a calculation error"
            );
        }
        other => panic!("{name}: exit code {other}:\n{all}"),
    }
    ran.code
}

/// A case: its name, the item id, the demo item's file, and the edits.
type Degenerate = (
    &'static str,
    &'static str,
    &'static str,
    &'static [(&'static str, &'static str)],
);

#[test]
fn degenerate_inputs_never_give_non_finite_results() {
    let cases: &[Degenerate] = &[
        (
            "belt too steep to accelerate the feed",
            "CV-105-LOAD",
            "conveyors/cv-105-load.yaml",
            &[("belt_slope", "45 deg")],
        ),
        (
            "belt slope where friction just balances it",
            "CV-105-LOAD",
            "conveyors/cv-105-load.yaml",
            &[("belt_slope", "33.0239 deg")],
        ),
        (
            "belt nearly vertical",
            "CV-105-LOAD",
            "conveyors/cv-105-load.yaml",
            &[("belt_slope", "89.9999 deg")],
        ),
        (
            "belt nearly vertical, descending",
            "CV-105-LOAD",
            "conveyors/cv-105-load.yaml",
            &[("belt_slope", "-89.9999 deg")],
        ),
        (
            "feed already at belt speed",
            "CV-101-LOAD",
            "conveyors/cv-101-load.yaml",
            &[("feed_speed_along_belt", "4.5 m/s")],
        ),
        (
            "vanishing flow and speed",
            "CV-101-LOAD",
            "conveyors/cv-101-load.yaml",
            &[
                ("mass_flow", "1e-12 t/h"),
                ("belt_speed", "1e-12 m/s"),
                ("feed_speed_along_belt", "0 m/s"),
            ],
        ),
        (
            "hopper wall nearly vertical",
            "BIN-03-OUTLET",
            "transfers/BIN-03-OUTLET.yaml",
            &[("method", "johanson"), ("hopper_half_angle", "1e-9 deg")],
        ),
        (
            "pile and landing pushes nearly cancel gravity",
            "CH-01-FOUNTAIN",
            "chain/CH-01-FOUNTAIN.yaml",
            &[("pile_push", "0.4999999"), ("landing_push", "0.4999999")],
        ),
        (
            "greatest rim friction round a full turn",
            "CH-01-FOUNTAIN",
            "chain/CH-01-FOUNTAIN.yaml",
            &[("rim_friction", "2"), ("rim_wrap_angle", "360 deg")],
        ),
        (
            "absurd payout length",
            "CH-01-FOUNTAIN",
            "chain/CH-01-FOUNTAIN.yaml",
            &[("payout_length", "1e9 m")],
        ),
        (
            "brake far stronger than the chain",
            "CH-02-ANCHOR",
            "chain/CH-02-ANCHOR.yaml",
            &[("brake_force", "1e12 N")],
        ),
        (
            "near-critical damping",
            "H-01-MAINT-CRANE",
            "lifting/H-01-MAINT-CRANE.yaml",
            &[("damping_ratio", "0.9999999")],
        ),
        (
            "no slack at all",
            "H-01-MAINT-CRANE",
            "lifting/H-01-MAINT-CRANE.yaml",
            &[("slack_height", "0 m")],
        ),
        (
            "the whole load released",
            "H-01-MAINT-CRANE",
            "lifting/H-01-MAINT-CRANE.yaml",
            &[("released_mass", "8.6 t"), ("release_rate", "rapid")],
        ),
        (
            "absurd drive ramp time",
            "H-01-MAINT-CRANE",
            "lifting/H-01-MAINT-CRANE.yaml",
            &[("drive_ramp_time", "1e9 s")],
        ),
        (
            "greatest chute friction",
            "TC-02",
            "transfers/TC-02.yaml",
            &[("chute_friction", "2")],
        ),
        (
            "no speed kept at impact",
            "TC-02",
            "transfers/TC-02.yaml",
            &[("impact_retention", "0")],
        ),
        (
            "receiving belt running backwards",
            "TC-02",
            "transfers/TC-02.yaml",
            &[("plan_angle", "180 deg")],
        ),
    ];
    let mut stopped = Vec::new();
    for (name, id, file, edits) in cases {
        if assert_guarded(name, id, &demo_item(file, edits)) == 1 {
            stopped.push(*name);
        }
    }
    // The absurd ones stop with a calculation error rather than a result.
    for name in ["absurd payout length", "absurd drive ramp time"] {
        assert!(
            stopped.contains(&name),
            "`{name}` should stop the run: {stopped:?}"
        );
    }
}

#[test]
fn a_calculation_error_leaves_a_good_build_alone() {
    let dir = project_with(&demo_item("lifting/H-01-MAINT-CRANE.yaml", &[]));
    for d in ["results", "package"] {
        std::fs::remove_dir_all(dir.path().join(d)).expect("remove sentinels");
    }
    let good = packwright(dir.path(), &["build", "."]);
    assert_eq!(good.code, 0, "{}", good.all());
    let before = [
        snapshot(&dir.path().join("results")),
        snapshot(&dir.path().join("package")),
    ];
    let item = demo_item(
        "lifting/H-01-MAINT-CRANE.yaml",
        &[("drive_ramp_time", "1e9 s")],
    );
    std::fs::write(dir.path().join("item.yaml"), item).expect("write");
    let ran = packwright(dir.path(), &["build", "."]);
    assert_eq!(ran.code, 1, "{}", ran.all());
    assert!(ran.stderr.contains("drive_ramp_time"), "{}", ran.all());
    let after = [
        snapshot(&dir.path().join("results")),
        snapshot(&dir.path().join("package")),
    ];
    assert!(after == before);
    assert!(Path::new(&dir.path().join("package")).is_dir());
}
