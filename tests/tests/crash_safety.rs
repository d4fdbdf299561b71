//! Crash safety: `packwright build` killed with SIGKILL at many moments
//! spread over a build leaves `results/`, `package/` and `issued/` each
//! holding the complete old or the complete new version, never a mix or a
//! fragment, and the next run succeeds. The same for `packwright issue`,
//! which writes `issued/`.
//!
//! The moments come from a seeded pseudo-random sequence, so a failure can
//! be repeated; they are spread over the duration of one full build as
//! measured at the start of the test.

#![cfg(unix)]

use std::collections::BTreeMap;
use std::os::unix::process::ExitStatusExt;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use packwright_tests::{bin, demo_copy, packwright, snapshot};

/// Builds killed mid-run.
const KILLED_BUILDS: usize = 50;
/// Issues killed mid-run.
const KILLED_ISSUES: usize = 10;
/// Every this many trials the build runs to the end, proving that the
/// leftovers of the kills before it are no obstacle.
const COMPLETE_EVERY: usize = 20;

/// The demo input that differs between the two versions.
const INPUT: &str = "conveyors/cv-101-load.yaml";
const OLD_FLOW: &str = "mass_flow: 6000 t/h";
const NEW_FLOW: &str = "mass_flow: 6001 t/h";

type Snapshot = BTreeMap<PathBuf, Vec<u8>>;

/// A deterministic sequence of numbers in [0, 1) (SplitMix64).
struct Sequence(u64);

impl Sequence {
    fn next_unit(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Sets the version of the input: the old text or the new. Writing it also
/// touches the file.
fn set_version(root: &Path, new: bool) {
    let path = root.join(INPUT);
    let text = std::fs::read_to_string(&path).expect("read input");
    let (from, to) = if new {
        (OLD_FLOW, NEW_FLOW)
    } else {
        (NEW_FLOW, OLD_FLOW)
    };
    std::fs::write(&path, text.replace(from, to)).expect("write input");
}

fn folder(root: &Path, name: &str) -> Snapshot {
    snapshot(&root.join(name))
}

/// Visible entries of the project root: a kill must not leave anything
/// but hidden staging folders behind.
fn visible_entries(root: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(root)
        .expect("read root")
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| !n.starts_with('.'))
        .collect();
    names.sort();
    names
}

/// Starts `packwright ARGS`, kills it after `delay` (unless it finished
/// first) and says whether the kill stopped it.
fn run_and_kill(root: &Path, args: &[&str], delay: Duration) -> bool {
    let mut child = Command::new(bin())
        .args(args)
        .current_dir(root)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start packwright");
    std::thread::sleep(delay);
    // SIGKILL on Unix; harmless when the process has already exited.
    let _ = child.kill();
    let status = child.wait().expect("wait");
    match status.signal() {
        Some(signal) => {
            assert_eq!(signal, 9, "stopped by SIGKILL");
            true
        }
        None => {
            assert_eq!(status.code(), Some(0), "a build that finished succeeded");
            false
        }
    }
}

fn describe(s: &Snapshot) -> String {
    let names: Vec<String> = s.keys().map(|p| p.display().to_string()).collect();
    format!("{} files: {}", s.len(), names.join(", "))
}

/// The files in which two snapshots differ.
fn differing(a: &Snapshot, b: &Snapshot) -> Vec<String> {
    let keys: std::collections::BTreeSet<&PathBuf> = a.keys().chain(b.keys()).collect();
    keys.into_iter()
        .filter(|k| a.get(*k) != b.get(*k))
        .map(|k| k.display().to_string())
        .collect()
}

/// Whether a file name is a staging leftover of an interrupted write
/// (`.NAME.new-PID`, see fsio): hidden, and removed by the next write.
fn is_staging_leftover(path: &Path) -> bool {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy())
        .unwrap_or_default();
    name.starts_with('.') && name.contains(".new-")
}

/// Asserts that the folder holds one complete version: its files are
/// exactly those of one version, apart from hidden staging leftovers.
fn assert_one_of(what: &str, trial: usize, now: &Snapshot, versions: &[&Snapshot]) {
    let (leftovers, visible): (Snapshot, Snapshot) = now
        .clone()
        .into_iter()
        .partition(|(p, _)| is_staging_leftover(p));
    assert!(
        versions.contains(&&visible),
        "trial {trial}: {what} is neither complete version ({}; it differs from each in: {})",
        describe(&visible),
        versions
            .iter()
            .map(|v| differing(&visible, v).join(", "))
            .collect::<Vec<_>>()
            .join(" | ")
    );
    assert!(
        leftovers.keys().all(|p| p.parent() == Some(Path::new(""))),
        "trial {trial}: {what}: leftovers below the top: {}",
        describe(&leftovers)
    );
}

#[test]
fn killed_builds_and_issues_leave_whole_versions() {
    let demo = demo_copy();
    let root = demo.path();
    let files_before = visible_entries(root);

    // The two complete versions, each from a full run. The revision is
    // issued once from the old inputs, so the package shows its changes.
    let issued = packwright(root, &["issue", "B", "."]);
    assert_eq!(issued.code, 0, "{}", issued.all());
    let issued_old = folder(root, "issued");
    let first = packwright(root, &["build", "--fresh", "."]);
    assert_eq!(first.code, 0, "{}", first.all());
    let old = (folder(root, "results"), folder(root, "package"));
    set_version(root, true);
    let started = Instant::now();
    let second = packwright(root, &["build", "--fresh", "."]);
    let build_time = started.elapsed();
    assert_eq!(second.code, 0, "{}", second.all());
    let new = (folder(root, "results"), folder(root, "package"));
    assert!(old.0 != new.0 && old.1 != new.1, "the versions must differ");
    assert!(!old.1.is_empty() && !old.0.is_empty());

    // Builds killed at moments spread over a build's duration.
    let mut moments = Sequence(0x5EED_0008);
    let (mut killed, mut trials, mut completed) = (0, 0, 0);
    while killed < KILLED_BUILDS {
        trials += 1;
        assert!(
            trials <= 3 * KILLED_BUILDS,
            "too few builds could be killed in time"
        );
        set_version(root, trials % 2 == 1);
        if trials % COMPLETE_EVERY == 0 {
            let ran = packwright(root, &["build", "--fresh", "."]);
            assert_eq!(
                ran.code,
                0,
                "trial {trials}: the run after kills: {}",
                ran.all()
            );
            let want = if trials % 2 == 1 { &new } else { &old };
            assert!(
                folder(root, "results") == want.0,
                "trial {trials}: results/ after a full run"
            );
            assert!(
                folder(root, "package") == want.1,
                "trial {trials}: package/ after a full run"
            );
            completed += 1;
            continue;
        }
        let delay = build_time.mul_f64(moments.next_unit());
        if run_and_kill(root, &["build", "--fresh", "."], delay) {
            killed += 1;
        }
        assert_one_of(
            "results/",
            trials,
            &folder(root, "results"),
            &[&old.0, &new.0],
        );
        assert_one_of(
            "package/",
            trials,
            &folder(root, "package"),
            &[&old.1, &new.1],
        );
        assert_one_of("issued/", trials, &folder(root, "issued"), &[&issued_old]);
    }

    // Issues killed likewise: issued/ holds the old record or the new.
    set_version(root, true);
    let started = Instant::now();
    let reissued = packwright(root, &["issue", "B", "--force", "."]);
    let issue_time = started.elapsed();
    assert_eq!(reissued.code, 0, "{}", reissued.all());
    let issued_new = folder(root, "issued");
    assert!(issued_new != issued_old);
    let mut issue_kills = 0;
    let mut issue_trials = 0;
    while issue_kills < KILLED_ISSUES {
        issue_trials += 1;
        assert!(
            issue_trials <= 3 * KILLED_ISSUES,
            "too few issues could be killed in time"
        );
        set_version(root, issue_trials % 2 == 0);
        let delay = issue_time.mul_f64(moments.next_unit());
        if run_and_kill(root, &["issue", "B", "--force", "."], delay) {
            issue_kills += 1;
        }
        assert_one_of(
            "issued/",
            issue_trials,
            &folder(root, "issued"),
            &[&issued_old, &issued_new],
        );
        assert_one_of(
            "results/",
            issue_trials,
            &folder(root, "results"),
            &[&old.0, &new.0],
        );
    }

    // The next run succeeds and gives the version its inputs ask for.
    set_version(root, true);
    let last = packwright(root, &["build", "--fresh", "."]);
    assert_eq!(last.code, 0, "the run after the kills: {}", last.all());
    // (The package now differs from `new`: it reports against the record
    // issued from the new inputs.)
    assert!(
        folder(root, "results") == new.0,
        "results/ of the new inputs"
    );
    let package = folder(root, "package");
    assert!(package
        .keys()
        .any(|p| p.to_string_lossy().ends_with(".pdf")));
    let last_issue = packwright(root, &["issue", "B", "--force", "."]);
    assert_eq!(last_issue.code, 0, "{}", last_issue.all());
    assert!(
        folder(root, "issued") == issued_new,
        "the next write removes the leftovers of killed ones"
    );
    let mut expected_entries = files_before;
    expected_entries.extend(["issued", "package", "results"].map(String::from));
    expected_entries.sort();
    expected_entries.dedup();
    assert_eq!(
        visible_entries(root),
        expected_entries,
        "nothing else left in the project"
    );
    eprintln!(
        "crash safety: build {:.2} s; {killed} builds killed in {trials} trials ({completed} run to the end); {issue_kills} issues killed in {issue_trials} trials",
        build_time.as_secs_f64()
    );
}
