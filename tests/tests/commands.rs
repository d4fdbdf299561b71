//! The verbs a newcomer types first: `new`, `check`, `run`, `modules`,
//! `explain` and `schema`, on the demo and on a fresh project.

use packwright_tests::{demo_copy, packwright, tree};

#[test]
fn a_new_project_builds_with_one_item_per_module() {
    let dir = tempfile::tempdir().expect("temp dir");
    let made = packwright(dir.path(), &["new", "east-wharf"]);
    assert_eq!(made.code, 0, "{}", made.all());
    let root = dir.path().join("east-wharf");
    let project = std::fs::read_to_string(root.join("project.yaml")).expect("project.yaml");
    assert!(project.contains("document: EAST-WHARF-CALC-001"));
    let built = packwright(&root, &["build", "."]);
    assert_eq!(built.code, 0, "{}", built.all());
    for module in [
        "belt-pickup",
        "chute-discharge",
        "hopper-outlet",
        "chain-payout",
        "hoist-loads",
    ] {
        assert!(
            built.stdout.contains(module),
            "an example of {module}: {}",
            built.stdout
        );
    }
    assert!(root.join("package/EAST-WHARF-CALC-001-A.pdf").exists());
    // A folder that holds something is never overwritten.
    let again = packwright(dir.path(), &["new", "east-wharf"]);
    assert_eq!(again.code, 2);
    assert!(again.stderr.contains("not empty"));
}

#[test]
fn check_reports_the_demo_clean_and_run_resolves_links_in_order() {
    let demo = demo_copy();
    let checked = packwright(demo.path(), &["check", "."]);
    assert_eq!(checked.code, 0, "{}", checked.all());
    assert!(checked.stdout.contains("no problems found"));
    let ran = packwright(demo.path(), &["run", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    // CV-102-LOAD takes TC-02's exit speed: the value in its result is TC-02's output.
    let tc = std::fs::read_to_string(demo.path().join("results/TC-02.yaml")).expect("TC-02 result");
    let cv = std::fs::read_to_string(demo.path().join("results/CV-102-LOAD.yaml"))
        .expect("CV-102 result");
    let exit_speed = tc
        .lines()
        .find(|l| l.trim_start().starts_with("exit_speed_along_belt:"))
        .and_then(|l| l.split("value: ").nth(1))
        .and_then(|v| v.split(',').next())
        .expect("TC-02 has exit_speed_along_belt");
    let fed = cv
        .lines()
        .find(|l| l.trim_start().starts_with("feed_speed_along_belt:"))
        .expect("CV-102 has its feed speed");
    assert!(
        fed.contains(exit_speed) && fed.contains("link TC-02.exit_speed_along_belt"),
        "{fed}"
    );
    // --strict turns the demo's deliberately failing check into exit code 1.
    assert_eq!(packwright(demo.path(), &["run", ".", "--strict"]).code, 1);
}

#[test]
fn modules_explain_and_schema() {
    let demo = demo_copy();
    let listed = packwright(demo.path(), &["modules"]);
    assert_eq!(listed.code, 0);
    for module in [
        "belt-pickup",
        "chute-discharge",
        "hopper-outlet",
        "chain-payout",
        "hoist-loads",
    ] {
        assert!(listed.stdout.contains(module));
    }
    assert!(
        listed.stdout.contains("skirt-seal") && listed.stdout.contains("external"),
        "{}",
        listed.stdout
    );
    let explained = packwright(demo.path(), &["explain", "belt-pickup"]);
    assert_eq!(explained.code, 0);
    for word in [
        "INPUTS",
        "mass_flow",
        "t/h",
        "default 0 m/s",
        "OUTPUTS",
        "acceleration_force",
        "METHOD",
        "REFERENCES",
        "ISO 5048",
    ] {
        assert!(explained.stdout.contains(word), "explain shows {word}");
    }
    let unknown = packwright(demo.path(), &["explain", "belt-pick"]);
    assert_eq!(unknown.code, 2);
    let schema = packwright(demo.path(), &["schema"]);
    assert_eq!(schema.code, 0);
    let doc: serde_json::Value = serde_json::from_str(&schema.stdout).expect("the schema is JSON");
    assert!(doc.get("$schema").is_some());
}

#[test]
fn us_customary_projects_show_us_units() {
    let dir = tree(&[
        ("project.yaml", &packwright_tests::PROJECT_YAML.replace("units: si", "units: us")),
        (
            "cv.yaml",
            "id: CV-9\nmodule: belt-pickup\ninputs:\n  mass_flow: 1102.311 stph\n  belt_speed: 787.402 fpm\n  bulk_density: 62.4 lb/ft3\n  belt_friction: 0.6\n  skirt_friction: 0.6\n  skirt_width: 30 in\n",
        ),
    ]);
    let ran = packwright(dir.path(), &["run", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    // 1000 t/h onto a 4 m/s belt: F = m_dot v = 1111.1 N = 249.8 lbf, the
    // momentum flux of reference sheet 1.1 (CONFIRMED for v0 = 0). CEMA's
    // T_am = 2.8755e-4 Q (V - Vo) gives 249.6 lbf (from memory; CEMA, Belt
    // Conveyors for Bulk Materials, ch. 6), lower by its g = 32.2 ft/s².
    assert!(
        ran.stdout.contains("acceleration_force = 249.8 lbf"),
        "{}",
        ran.stdout
    );
}
