//! External modules end to end: the demo's `skirt-seal` module (Python,
//! standard library only) through the engine into results and the PDF, its
//! own Python tests, and modules that misbehave (wrong dimension, missing
//! output, NaN, garbage on stdout, non-zero exit, a hang), each of which
//! must fail with a message naming the module and the item while nothing
//! is written.
//!
//! Until the binary discovers external modules itself, these tests build the
//! registry through the engine library: the built-ins plus
//! `packwright_external::register`.

use std::path::Path;
use std::process::Command;

use packwright_core::{EngineError, ModuleOrigin, Registry, RunOptions};
use packwright_tests::{demo_copy, repo_root, snapshot, tree};

/// The built-in modules, as the binary registers them.
fn builtins() -> Registry {
    packwright::builtin::registry()
}

/// The built-ins plus the project's external modules.
fn registry_for(root: &Path) -> Registry {
    let (project, _) = packwright_core::project::load(root).expect("project.yaml reads");
    let mut registry = builtins();
    if let Err(problems) = packwright_external::register(&mut registry, root, &project.meta.modules)
    {
        panic!("external modules: {problems:?}");
    }
    registry
}

fn run(root: &Path) -> Result<packwright_core::RunOutcome, EngineError> {
    let registry = registry_for(root);
    packwright_core::run_project(root, &registry, RunOptions::default()).map(|(_, o)| o)
}

fn python3() -> Command {
    let mut c = Command::new("python3");
    // The tests must leave no __pycache__ in the repository.
    c.env("PYTHONDONTWRITEBYTECODE", "1");
    c
}

#[test]
fn the_example_modules_own_python_tests_pass() {
    let dir = repo_root().join("projects/harrow-creek/modules/skirt-seal");
    let out = python3()
        .args(["-m", "unittest", "-v"])
        .current_dir(&dir)
        .output()
        .expect("python3 runs");
    let text = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "python3 -m unittest failed:\n{text}");
    assert!(
        text.contains("Ran 7 tests") && text.trim_end().ends_with("OK"),
        "{text}"
    );
}

const LBF: f64 = 4.4482216152605; // N, exact (NIST SP 811, appendix B)
const FOOT: f64 = 0.3048; // m, exact

#[test]
fn the_demo_runs_the_external_module_into_results() {
    let demo = demo_copy();
    let outcome = run(demo.path()).unwrap_or_else(|e| panic!("the demo runs:\n{e}"));
    let seals = &outcome.items["CV-101-SEALS"];
    assert_eq!(seals.item.module, "skirt-seal");

    // Hand calculation from the item file and iron-ore-fines: seals
    // 2 x 3 lbf/ft x 6.0 m; material (ISO 5048 beyond the acceleration
    // area) mu2 rho g h^2 (l_s - l_a), with l_a linked from CV-101-LOAD.
    let l_a = outcome.items["CV-101-LOAD"].outcome.outputs["acceleration_length"].value;
    assert!(l_a > 0.0 && l_a < 6.0, "l_a = {l_a}");
    let seal = 2.0 * 3.0 * LBF / FOOT * 6.0;
    let (m_dot, rho, v, b1, mu2) = (6000.0 / 3.6, 2400.0, 4.5, 1.150, 0.55);
    let h = m_dot / (rho * v * b1);
    let material = mu2 * rho * 9.80665 * h * h * (6.0 - l_a);
    let out = &seals.outcome.outputs;
    let close = |name: &str, want: f64| {
        let got = out[name].value;
        assert!(
            (got - want).abs() <= 1e-9 * want.abs(),
            "{name}: {got} against {want}"
        );
    };
    close("seal_drag_force", seal);
    close("burden_depth", h);
    close("material_skirt_force", material);
    close("skirt_resistance", seal + material);
    close("skirt_power", (seal + material) * v);
    assert_eq!(seals.outcome.checks[0].name, "skirt_power_within_allowance");
    assert_eq!(seals.outcome.plots.len(), 1);

    let result = std::fs::read_to_string(demo.path().join("results/CV-101-SEALS.yaml"))
        .expect("results/CV-101-SEALS.yaml was written");
    assert!(result.contains("module: \"skirt-seal\""), "{result}");
    assert!(result.contains("skirt_resistance"), "{result}");
    let summary =
        std::fs::read_to_string(demo.path().join("results/summary.csv")).expect("summary");
    assert!(summary.contains("CV-101-SEALS"), "{summary}");
    // The script ran in the project but left nothing there.
    assert!(!demo.path().join("modules/skirt-seal/__pycache__").exists());
}

#[test]
fn the_module_digest_feeds_the_cache() {
    let demo = demo_copy();
    run(demo.path()).unwrap_or_else(|e| panic!("first run:\n{e}"));
    let again = run(demo.path()).expect("second run");
    assert!(
        again.items["CV-101-SEALS"].from_cache,
        "an unchanged module is taken from the cache"
    );
    let digest = again.items["CV-101-SEALS"].inputs_digest.clone();

    // The same manifest, a changed script: the item must be computed again.
    let script = demo.path().join("modules/skirt-seal/seal_drag.py");
    let text = std::fs::read_to_string(&script).expect("script");
    std::fs::write(&script, format!("{text}\n# a reviewer's comment\n")).expect("write");
    let changed = run(demo.path()).expect("third run");
    let item = &changed.items["CV-101-SEALS"];
    assert!(
        !item.from_cache,
        "a changed script is not taken from the cache"
    );
    assert_ne!(item.inputs_digest, digest);
    assert_eq!(
        changed.computed, 1,
        "only the item of the changed module runs again"
    );
}

#[test]
fn the_package_names_the_external_module_and_its_digest() {
    let demo = demo_copy();
    let registry = registry_for(demo.path());
    let (project, outcome) =
        packwright_core::run_project(demo.path(), &registry, RunOptions::default())
            .unwrap_or_else(|e| panic!("the demo runs:\n{e}"));
    let package = packwright_report::make(&project, &outcome, &registry, &Default::default())
        .unwrap_or_else(|e| panic!("the package typesets: {e:?}"));
    let fingerprint = registry
        .get("skirt-seal")
        .and_then(|r| r.fingerprint.clone())
        .expect("a digest");
    let text = pdf_extract::extract_text_from_mem(&package.pdf).expect("the PDF's text extracts");
    let flat: String = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(flat.contains("CV-101-SEALS"), "the item is in the PDF");
    assert!(
        flat.contains("Skirt resistance built up along the skirt"),
        "its plot is in the PDF"
    );
    // Long names and digests may wrap across lines, so compare without spaces.
    let squeezed: String = text.chars().filter(|c| !c.is_whitespace()).collect();
    assert!(
        squeezed.contains("externalmodulemodules/skirt-seal/module.yaml"),
        "its origin is in the PDF"
    );
    assert!(
        squeezed.contains(&fingerprint),
        "its digest ({fingerprint}) is in the PDF"
    );
}

/// A project with one external module `bad` whose program is `script`.
fn bad_module(script: &str, timeout: &str) -> tempfile::TempDir {
    let manifest = format!(
        "protocol: 1
name: bad
version: 0.1.0
purpose: Misbehaves on purpose.
command: [python3, bad.py]
timeout: {timeout}
inputs:
  - name: length
    kind: {{ quantity: {{ dimension: length }} }}
    meaning: a length
outputs:
  - {{ name: twice, dimension: length, si_unit: m, us_unit: ft, meaning: twice the length }}
"
    );
    tree(&[
        ("modules/bad/module.yaml", &manifest),
        ("modules/bad/bad.py", script),
        (
            "items/x-1.yaml",
            "id: X-1\nmodule: bad\ntitle: A bad item\ninputs:\n  length: 2 m\n",
        ),
        ("results/keep.txt", "results from before\n"),
    ])
}

/// Runs the project, which must fail with a calculation error naming the
/// module and the item and containing `says`, and leave results/ alone.
fn fails_cleanly(dir: &tempfile::TempDir, says: &str) -> String {
    let before = snapshot(&dir.path().join("results"));
    let err = match run(dir.path()) {
        Err(e @ EngineError::Calculation(..)) => e.to_string(),
        Err(other) => panic!("expected a calculation error, got {other}"),
        Ok(_) => panic!("a misbehaving module must not give results"),
    };
    assert!(
        err.contains("external module `bad` (modules/bad/module.yaml)"),
        "{err}"
    );
    assert!(err.contains("item `X-1`"), "{err}");
    assert!(err.contains(says), "expected `{says}` in:\n{err}");
    assert_eq!(
        snapshot(&dir.path().join("results")),
        before,
        "results/ was touched"
    );
    err
}

const READ: &str =
    "import json, sys\nreq = json.load(sys.stdin)\nx = req['inputs']['length']['value']\n";

#[test]
fn a_wrong_dimension_is_refused() {
    let dir = bad_module(
        &format!("{READ}print(json.dumps({{'protocol': 1, 'outputs': {{'twice': {{'value': 2 * x, 'dimension': 'force'}}}}}}))\n"),
        "10",
    );
    fails_cleanly(
        &dir,
        "output `twice` should be a length (`length`) but the response gives a force",
    );
}

#[test]
fn a_missing_output_is_refused() {
    let dir = bad_module(
        &format!("{READ}print(json.dumps({{'protocol': 1, 'outputs': {{}}}}))\n"),
        "10",
    );
    fails_cleanly(&dir, "the response lacks output `twice`");
}

#[test]
fn a_nan_is_refused() {
    let dir = bad_module(
        &format!("{READ}print(json.dumps({{'protocol': 1, 'outputs': {{'twice': {{'value': float('nan'), 'dimension': 'length'}}}}}}))\n"),
        "10",
    );
    fails_cleanly(&dir, "NaN or Infinity, which is not a finite number");
}

#[test]
fn garbage_on_stdout_is_refused() {
    let dir = bad_module(
        &format!("{READ}print('calculating... done, twice = ', 2 * x)\n"),
        "10",
    );
    fails_cleanly(&dir, "standard output is not one JSON response");
}

#[test]
fn a_non_zero_exit_is_refused_with_its_stderr() {
    let dir = bad_module(
        &format!("{READ}sys.stderr.write('licence server not reachable\\n')\nsys.exit(3)\n"),
        "10",
    );
    let err = fails_cleanly(&dir, "the command `python3 bad.py` exited with status 3");
    assert!(
        err.contains("licence server not reachable"),
        "stderr is quoted:\n{err}"
    );
}

#[test]
fn a_crash_quotes_the_traceback() {
    let dir = bad_module(
        &format!("{READ}raise RuntimeError('table lookup failed')\n"),
        "10",
    );
    let err = fails_cleanly(&dir, "exited with status 1");
    assert!(
        err.contains("Traceback") && err.contains("table lookup failed"),
        "{err}"
    );
}

#[test]
fn a_hang_is_stopped_at_the_timeout() {
    let dir = bad_module(
        "import sys, time\nsys.stderr.write('waiting for a lock\\n'); sys.stderr.flush()\ntime.sleep(60)\n",
        "1",
    );
    let err = fails_cleanly(&dir, "gave no answer within 1 s and was stopped");
    assert!(
        err.contains("waiting for a lock"),
        "stderr so far is quoted:\n{err}"
    );
}

#[test]
fn a_module_named_in_project_yaml_is_found_outside_modules() {
    let project = format!(
        "{}modules: [tools/twice/module.yaml]\n",
        packwright_tests::PROJECT_YAML
    );
    let manifest = "protocol: 1
name: twice
version: 1.0.0
purpose: Twice a length.
command: [python3, twice.py]
inputs:
  - { name: length, kind: { quantity: { dimension: length } }, meaning: a length }
outputs:
  - { name: twice, dimension: length, si_unit: m, us_unit: ft, meaning: twice the length }
";
    let script = format!("{READ}print(json.dumps({{'protocol': 1, 'outputs': {{'twice': {{'value': 2 * x, 'dimension': 'length'}}}}}}))\n");
    let dir = tree(&[
        ("project.yaml", &project),
        ("tools/twice/module.yaml", manifest),
        ("tools/twice/twice.py", &script),
        (
            "items/t-1.yaml",
            "id: T-1\nmodule: twice\ntitle: Twice\ninputs:\n  length: 3 ft\n",
        ),
    ]);
    assert_eq!(
        packwright_external::named_modules(dir.path()),
        vec!["tools/twice/module.yaml".to_string()]
    );
    let registry = registry_for(dir.path());
    assert_eq!(
        registry.get("twice").map(|r| r.origin.clone()),
        Some(ModuleOrigin::External("tools/twice/module.yaml".into()))
    );
    let outcome = run(dir.path()).unwrap_or_else(|e| panic!("runs:\n{e}"));
    let twice = outcome.items["T-1"].outcome.outputs["twice"].value;
    assert!((twice - 2.0 * 3.0 * FOOT).abs() < 1e-12);
}

#[test]
fn bad_manifests_and_clashing_names_point_at_their_lines() {
    let dir = tree(&[
        (
            "modules/typo/module.yaml",
            "protocol: 1\nname: typo\nversion: 1.0.0\npurpose: x\ninputs: []\noutputs: []\ncomand: [python3, x.py]\n",
        ),
        (
            "modules/clash/module.yaml",
            "protocol: 1\nname: belt-pickup\nversion: 1.0.0\npurpose: x\ninputs: []\noutputs: []\ncommand: [python3, x.py]\n",
        ),
        ("modules/clash/x.py", ""),
    ]);
    let mut registry = builtins();
    let problems = packwright_external::register(&mut registry, dir.path(), &[])
        .expect_err("the typo is refused");
    let typo = problems
        .iter()
        .find(|d| {
            d.span
                .as_ref()
                .is_some_and(|s| &*s.file == "modules/typo/module.yaml")
        })
        .expect("the typo is reported");
    assert_eq!(typo.span.as_ref().map(|s| s.line), Some(7));
    assert!(
        typo.message.contains("unknown field `comand`"),
        "{}",
        typo.message
    );

    std::fs::remove_dir_all(dir.path().join("modules/typo")).expect("remove");
    let problems = packwright_external::register(&mut registry, dir.path(), &[])
        .expect_err("the clash is refused");
    let span = problems[0].span.as_ref().expect("span");
    assert_eq!((&*span.file, span.line), ("modules/clash/module.yaml", 2));
    assert!(
        problems[0]
            .message
            .contains("`belt-pickup` is registered twice"),
        "{}",
        problems[0]
    );
}
