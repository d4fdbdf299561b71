//! Shared helpers for the end-to-end tests: find the `packwright` binary,
//! run it in a fresh folder, make small project trees, copy the demo
//! project, and snapshot folders to prove that nothing was touched.
//!
//! The binary is the one cargo builds beside the test executables (the
//! `packwright` crate has an integration test, so `cargo test --workspace`
//! always builds it first).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The path of the `packwright` binary built with the tests.
pub fn bin() -> PathBuf {
    let exe = std::env::current_exe().expect("test executable path");
    // target/<profile>/deps/<test> -> target/<profile>/packwright
    let dir = exe
        .parent()
        .and_then(Path::parent)
        .expect("target profile folder");
    let path = dir.join(format!("packwright{}", std::env::consts::EXE_SUFFIX));
    assert!(
        path.exists(),
        "{} is missing: run `cargo test --workspace`",
        path.display()
    );
    path
}

/// What a run of the binary gave.
#[derive(Debug)]
pub struct Ran {
    /// Exit code (-1 when killed by a signal).
    pub code: i32,
    /// Standard output.
    pub stdout: String,
    /// Standard error.
    pub stderr: String,
}

impl Ran {
    /// Standard output and error together, for searching messages.
    pub fn all(&self) -> String {
        format!("{}\n{}", self.stdout, self.stderr)
    }
}

/// Runs `packwright ARGS` with `cwd` as the working folder.
pub fn packwright(cwd: &Path, args: &[&str]) -> Ran {
    let out = Command::new(bin())
        .args(args)
        .current_dir(cwd)
        .env_remove("RUST_BACKTRACE")
        .output()
        .expect("packwright runs");
    Ran {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// The repository's root folder. Taken from the variable cargo sets when
/// it runs a test, before the one fixed at compile time: a shared target
/// folder (as `.ci/run` keeps) may hold this crate built from a checkout at
/// another path, and cargo does not rebuild it for a moved checkout.
pub fn repo_root() -> PathBuf {
    let manifest_dir = std::env::var_os("CARGO_MANIFEST_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")));
    manifest_dir
        .parent()
        .expect("tests/ is in the repo")
        .to_path_buf()
}

/// A minimal `project.yaml` for test trees.
pub const PROJECT_YAML: &str = "project: Test plant\ndocument: TEST-001\ntitle: Test calculations\nclient: Nobody\nunits: si\nrevisions:\n  - rev: A\n    date: 2026-01-05\n    description: First issue\n    prepared: { name: T. Tester, date: 2026-01-05 }\n";

/// A fresh folder holding `files` (relative path, contents); a
/// `project.yaml` is added unless `files` has one.
pub fn tree(files: &[(&str, &str)]) -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temp dir");
    if !files.iter().any(|(p, _)| *p == "project.yaml") {
        std::fs::write(dir.path().join("project.yaml"), PROJECT_YAML).expect("write");
    }
    for (path, text) in files {
        let p = dir.path().join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, text).expect("write");
    }
    dir
}

/// A copy of the demo project in a fresh folder, without anything the
/// tool writes.
pub fn demo_copy() -> tempfile::TempDir {
    let src = repo_root().join("projects").join("harrow-creek");
    let dir = tempfile::tempdir().expect("temp dir");
    for entry in walkdir::WalkDir::new(&src).sort_by_file_name() {
        let entry = entry.expect("walk demo");
        let rel = entry.path().strip_prefix(&src).expect("inside");
        let first = rel
            .components()
            .next()
            .map(|c| c.as_os_str().to_string_lossy().into_owned());
        if matches!(
            first.as_deref(),
            Some("results" | "package" | "issued" | ".packwright-cache")
        ) {
            continue;
        }
        let target = dir.path().join(rel);
        if entry.file_type().is_dir() {
            std::fs::create_dir_all(&target).expect("mkdir");
        } else {
            std::fs::copy(entry.path(), &target).expect("copy");
        }
    }
    dir
}

/// Every file below `dir` with its bytes (empty when `dir` is missing).
pub fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut map = BTreeMap::new();
    if !dir.exists() {
        return map;
    }
    for entry in walkdir::WalkDir::new(dir)
        .sort_by_file_name()
        .into_iter()
        .flatten()
    {
        if entry.file_type().is_file() {
            let rel = entry
                .path()
                .strip_prefix(dir)
                .expect("inside")
                .to_path_buf();
            map.insert(rel, std::fs::read(entry.path()).expect("read"));
        }
    }
    map
}
