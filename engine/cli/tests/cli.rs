//! The binary answers `--help` and `--version` for every verb; this test
//! also makes cargo build the binary that the end-to-end tests in `tests/` run.

use std::process::Command;

fn packwright(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_packwright"))
        .args(args)
        .output()
        .expect("runs")
}

#[test]
fn every_verb_has_help() {
    for verb in ["new", "check", "run", "build", "modules", "explain"] {
        let out = packwright(&[verb, "--help"]);
        assert!(out.status.success(), "{verb} --help");
        assert!(
            String::from_utf8_lossy(&out.stdout).contains("Usage"),
            "{verb}"
        );
    }
}

#[test]
fn usage_errors_exit_with_code_2() {
    let out = packwright(&["no-such-verb"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(packwright(&["--version"]).status.success());
}
