//! The rerun cache and the results index never change a result: a rerun
//! writes the bytes a fresh run writes, recomputes exactly the changed items
//! and those that link to them, notices edits that keep a file's size and
//! modification time, and puts back a result file edited by hand. Run with a
//! small module of the test's own, so nothing here depends on the built-in
//! modules. No timings are asserted.

use std::collections::BTreeMap;
use std::fs;
use std::os::unix::fs::MetadataExt;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use packwright_api::prelude::*;
use packwright_api::Need;
use packwright_core::{ModuleOrigin, Registry, RunOptions, RunOutcome};

/// `speed` passes on as `echo`; `force` is speed times the density, which
/// comes from a material or a default.
struct Scale;

impl Module for Scale {
    fn declaration(&self) -> ModuleDeclaration {
        ModuleDeclaration {
            name: "scale".into(),
            version: "1.0.0".into(),
            purpose: "Passes a speed on and scales it by a density.".into(),
            inputs: vec![
                InputSpec::quantity("speed", Dimension::Velocity, "a speed").above(0.0),
                InputSpec::material("material", "bulk", "the bulk material").optional(),
                InputSpec::quantity("bulk_density", Dimension::Density, "a density")
                    .default("1000 kg/m3"),
            ],
            outputs: vec![
                OutputSpec::new("echo", Dimension::Velocity, "m/s", "ft/s", "the speed"),
                OutputSpec::number("force", "speed times density"),
            ],
            criteria: vec![],
            checks: vec![],
            method: vec![],
            assumptions: vec![],
            cautions: vec![],
            references: vec![],
        }
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        let v: Velocity = inputs.quantity("speed")?;
        let rho: MassDensity = inputs.quantity("bulk_density")?;
        let mut out = Outcome::new();
        out.set("echo", v);
        out.set_number("force", v.to_si() * rho.to_si() / 3.0);
        let mut series = Series::new(
            "ramp",
            &[("t", Dimension::Time), ("v", Dimension::Velocity)],
        );
        for i in 0..50 {
            series.push(vec![f64::from(i) * 0.1, v.to_si() * f64::from(i) / 7.0]);
        }
        out.series.push(series);
        Ok(out)
    }
}

fn registry() -> Registry {
    let mut r = Registry::new();
    r.register(Arc::new(Scale), ModuleOrigin::BuiltIn)
        .expect("registers");
    r
}

const PROJECT: &str = "project: Test\ndocument: T-1\ntitle: Rerun\nunits: si\nrevisions:\n  - rev: A\n    date: 2026-10-14\n";

/// A project of a chain A -> B -> C, an independent D and E, and E using a
/// material.
fn project() -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temp dir");
    let files = [
        ("project.yaml", PROJECT.to_string()),
        (
            "materials/ore.yaml",
            "id: ore\nkind: bulk\nname: Ore\nproperties:\n  bulk_density: 2200 kg/m3\n".into(),
        ),
        ("items/a.yaml", item("A", "speed: 2.0 m/s")),
        ("items/b.yaml", item("B", "speed: { from: A.echo }")),
        ("items/c.yaml", item("C", "speed: { from: B.echo }")),
        ("items/d.yaml", item("D", "speed: 3.0 m/s")),
        ("items/e.yaml", item("E", "speed: 4.0 m/s\n  material: ore")),
    ];
    for (name, text) in files {
        let path = dir.path().join(name);
        fs::create_dir_all(path.parent().expect("parent")).expect("mkdir");
        fs::write(path, text).expect("write");
    }
    dir
}

fn item(id: &str, inputs: &str) -> String {
    format!("id: {id}\nmodule: scale\ntitle: Item {id}\ninputs:\n  {inputs}\n")
}

fn run(root: &Path, fresh: bool) -> RunOutcome {
    let options = RunOptions {
        fresh,
        ..RunOptions::default()
    };
    packwright_core::run_project(root, &registry(), options)
        .expect("runs")
        .1
}

fn computed(outcome: &RunOutcome) -> Vec<&str> {
    outcome
        .items
        .values()
        .filter(|r| !r.from_cache)
        .map(|r| r.item.id.as_str())
        .collect()
}

fn results(root: &Path) -> BTreeMap<String, Vec<u8>> {
    fs::read_dir(root.join("results"))
        .expect("results/")
        .flatten()
        .map(|e| {
            (
                e.file_name().to_string_lossy().into_owned(),
                fs::read(e.path()).expect("read"),
            )
        })
        .collect()
}

fn inodes(root: &Path) -> BTreeMap<String, u64> {
    fs::read_dir(root.join("results"))
        .expect("results/")
        .flatten()
        .map(|e| {
            (
                e.file_name().to_string_lossy().into_owned(),
                e.metadata().expect("stat").ino(),
            )
        })
        .collect()
}

/// What a run from nothing writes for the project as it now stands.
fn fresh_results(root: &Path) -> BTreeMap<String, Vec<u8>> {
    let copy = tempfile::tempdir().expect("temp dir");
    copy_tree(root, copy.path());
    let _ = fs::remove_dir_all(copy.path().join(".packwright-cache"));
    let _ = fs::remove_dir_all(copy.path().join("results"));
    run(copy.path(), true);
    results(copy.path())
}

fn copy_tree(from: &Path, to: &Path) {
    for entry in fs::read_dir(from).expect("read dir").flatten() {
        let target: PathBuf = to.join(entry.file_name());
        if entry.file_type().expect("type").is_dir() {
            fs::create_dir_all(&target).expect("mkdir");
            copy_tree(&entry.path(), &target);
        } else {
            fs::copy(entry.path(), target).expect("copy");
        }
    }
}

/// Rewrites a file with text of the same length and puts its modification
/// time back, so only its content (and change time) tell of the edit.
fn edit_keeping_size_and_mtime(path: &Path, from: &str, to: &str) {
    assert_eq!(from.len(), to.len());
    let before = fs::metadata(path).expect("stat");
    let text = fs::read_to_string(path).expect("read");
    assert!(text.contains(from), "{} has `{from}`", path.display());
    fs::write(path, text.replacen(from, to, 1)).expect("write");
    let file = fs::File::options().write(true).open(path).expect("open");
    file.set_modified(before.modified().expect("mtime"))
        .expect("set mtime");
    let after = fs::metadata(path).expect("stat");
    assert_eq!(
        (before.len(), before.mtime(), before.mtime_nsec()),
        (after.len(), after.mtime(), after.mtime_nsec())
    );
}

#[test]
fn warm_runs_write_the_bytes_of_a_fresh_run_and_touch_nothing() {
    let dir = project();
    let root = dir.path();
    let cold = run(root, false);
    assert_eq!(cold.computed, 5);
    let cold_files = results(root);
    assert_eq!(cold_files.len(), 6, "five items and the summary");
    let cold_inodes = inodes(root);
    let folder = fs::metadata(root.join("results")).expect("stat").ino();
    for _ in 0..2 {
        let warm = run(root, false);
        assert_eq!(warm.computed, 0, "{:?}", computed(&warm));
        assert_eq!(results(root), cold_files, "the cache changed a result");
        assert_eq!(inodes(root), cold_inodes, "no file was written again");
        assert_eq!(
            fs::metadata(root.join("results")).expect("stat").ino(),
            folder,
            "the folder was not swapped"
        );
    }
    assert_eq!(fresh_results(root), cold_files);
}

#[test]
fn one_change_recomputes_the_item_and_its_dependants_and_rewrites_only_them() {
    let dir = project();
    let root = dir.path();
    run(root, false);
    run(root, false);
    let before = inodes(root);
    let old = results(root);
    let a = root.join("items/a.yaml");
    fs::write(&a, item("A", "speed: 2.5 m/s")).expect("write");
    let one = run(root, false);
    assert_eq!(computed(&one), ["A", "B", "C"], "A and what links to it");
    assert_eq!(one.computed, 3);
    let now = results(root);
    assert_eq!(now, fresh_results(root), "the rerun equals a fresh run");
    let after = inodes(root);
    for name in ["D.yaml", "E.yaml"] {
        assert_eq!(before[name], after[name], "{name} was left alone");
        assert_eq!(old[name], now[name]);
    }
    for name in ["A.yaml", "B.yaml", "C.yaml", "summary.csv"] {
        assert_ne!(old[name], now[name], "{name} changed");
    }
    // A change of a leaf recomputes the leaf only, several times over
    // (the spare folder is reused, whatever it held).
    let d = root.join("items/d.yaml");
    for speed in ["3.5", "3.25", "3.75"] {
        fs::write(&d, item("D", &format!("speed: {speed} m/s"))).expect("write");
        let leaf = run(root, false);
        assert_eq!(computed(&leaf), ["D"]);
        assert_eq!(results(root), fresh_results(root));
    }
    // Back to a value it had: the outcome is still in the cache (new
    // outcomes are appended; stale ones go only when they outnumber the
    // rest), and the result is a fresh run's.
    fs::write(&d, item("D", "speed: 3.5 m/s")).expect("write");
    let back = run(root, false);
    assert!(computed(&back).is_empty(), "{:?}", computed(&back));
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn an_edit_that_keeps_size_and_modification_time_is_still_seen() {
    let dir = project();
    let root = dir.path();
    run(root, false);
    run(root, false);
    edit_keeping_size_and_mtime(&root.join("items/a.yaml"), "2.0 m/s", "2.5 m/s");
    let one = run(root, false);
    assert_eq!(computed(&one), ["A", "B", "C"]);
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn a_material_change_recomputes_the_items_that_use_it() {
    let dir = project();
    let root = dir.path();
    run(root, false);
    edit_keeping_size_and_mtime(&root.join("materials/ore.yaml"), "2200 kg/m3", "2300 kg/m3");
    let one = run(root, false);
    assert_eq!(computed(&one), ["E"]);
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn a_result_file_edited_by_hand_is_put_back() {
    let dir = project();
    let root = dir.path();
    run(root, false);
    let good = results(root);
    let path = root.join("results/B.yaml");
    let text = fs::read_to_string(&path).expect("read");
    let line = text
        .lines()
        .find(|l| l.starts_with("title:"))
        .expect("a title line")
        .to_string();
    let forged = line.replace("Item B", "Item X");
    edit_keeping_size_and_mtime(&path, &line, &forged);
    let warm = run(root, false);
    assert_eq!(warm.computed, 0);
    assert_eq!(results(root), good, "the hand edit was undone");
    // A deleted result file and a stray one are noticed too.
    fs::remove_file(root.join("results/C.yaml")).expect("rm");
    fs::write(root.join("results/stray.yaml"), "x").expect("write");
    run(root, false);
    assert_eq!(results(root), good);
}

#[test]
fn a_lost_or_damaged_cache_costs_only_time() {
    let dir = project();
    let root = dir.path();
    run(root, false);
    let good = results(root);
    let cache = root.join(".packwright-cache");
    for entry in fs::read_dir(&cache).expect("cache").flatten() {
        if entry.file_type().expect("type").is_file() {
            fs::write(entry.path(), b"garbage").expect("write");
        }
    }
    let again = run(root, false);
    assert_eq!(again.computed, 5, "nothing trusted from a damaged cache");
    assert_eq!(results(root), good);
    fs::remove_dir_all(&cache).expect("rm");
    let again = run(root, false);
    assert_eq!(again.computed, 5);
    assert_eq!(results(root), good);
    let fresh = run(root, true);
    assert_eq!(fresh.computed, 5);
    assert_eq!(results(root), good);
}

/// Runs and says which item files were read (and not taken from the item
/// index): `Project::sources` holds the text of every file read.
fn run_reading(root: &Path, registry: &Registry) -> (RunOutcome, Vec<String>) {
    let (project, outcome) =
        packwright_core::run_project(root, registry, RunOptions::default()).expect("runs");
    let read = project
        .sources
        .keys()
        .filter(|f| f.starts_with("items/"))
        .map(|f| f.to_string())
        .collect();
    (outcome, read)
}

/// A project whose files changed long enough ago for the item index to
/// record them (a file changed within a clock tick of being read is not).
fn settled_project() -> tempfile::TempDir {
    let dir = project();
    let stat = fs::metadata(dir.path().join("items/a.yaml")).expect("stat");
    // A file system that keeps whole seconds waits longer (two seconds).
    let wait = if stat.ctime_nsec() == 0 { 2300 } else { 300 };
    std::thread::sleep(std::time::Duration::from_millis(wait));
    dir
}

/// A settled project run twice: every item is then in the item index,
/// and a third run reads no item file.
fn indexed_project(registry: &Registry) -> tempfile::TempDir {
    let dir = settled_project();
    run_reading(dir.path(), registry);
    let (_, read) = run_reading(dir.path(), registry);
    assert!(read.is_empty(), "nothing read again: {read:?}");
    dir
}

#[test]
fn unchanged_items_are_taken_from_the_item_index_and_give_the_same_bytes() {
    let dir = settled_project();
    let root = dir.path();
    let registry = registry();
    let (_, read) = run_reading(root, &registry);
    assert_eq!(read.len(), 5, "the first run reads every item");
    let cold = results(root);
    let (warm, read) = run_reading(root, &registry);
    assert!(read.is_empty(), "nothing read again: {read:?}");
    assert_eq!(warm.computed, 0);
    assert_eq!(results(root), cold);
    assert_eq!(cold, fresh_results(root));
    // One edit: that file alone is read; it and what links to it computed.
    fs::write(root.join("items/a.yaml"), item("A", "speed: 2.5 m/s")).expect("write");
    let (one, read) = run_reading(root, &registry);
    assert_eq!(read, ["items/a.yaml"]);
    assert_eq!(computed(&one), ["A", "B", "C"]);
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn a_rerun_decodes_nothing_of_an_unchanged_item_without_links() {
    let registry = registry();
    let dir = indexed_project(&registry);
    let root = dir.path();
    fs::write(root.join("items/a.yaml"), item("A", "speed: 2.5 m/s")).expect("write");
    let (project, one) =
        packwright_core::run_project(root, &registry, RunOptions::default()).expect("runs");
    assert_eq!(computed(&one), ["A", "B", "C"]);
    let decoded = |id: &str| {
        let written = project.items.iter().find(|i| i.id == id).expect("item");
        (
            written.written.is_decoded(),
            one.items[id].inputs.is_decoded(),
        )
    };
    // D and E: keyed from their stored digests, their results files kept.
    assert_eq!(decoded("D"), (false, false));
    assert_eq!(decoded("E"), (false, false));
    // A was read again; B and C took a changed value through their links.
    assert_eq!(decoded("A"), (true, true));
    assert!(decoded("B").1 && decoded("C").1);
    assert_eq!(results(root), fresh_results(root));
    // Looked at later (as a package build does), they read back whole.
    assert_eq!(one.items["D"].inputs.values["speed"].written, "3.0 m/s");
    assert_eq!(one.items["E"].inputs.values["material"].written, "ore");
}

#[test]
fn items_whose_links_give_the_values_as_before_take_their_filled_inputs_from_the_cache() {
    let registry = registry();
    let dir = indexed_project(&registry);
    let root = dir.path();
    // D links to nothing and nothing links to it: B and C link to
    // unchanged items.
    fs::write(root.join("items/d.yaml"), item("D", "speed: 3.5 m/s")).expect("write");
    let (_, one) =
        packwright_core::run_project(root, &registry, RunOptions::default()).expect("runs");
    assert_eq!(computed(&one), ["D"]);
    for id in ["B", "C"] {
        let run = &one.items[id];
        assert!(!run.inputs.is_decoded(), "{id} filled from the cache");
        assert!(run.origins_digest.is_some(), "{id}");
    }
    assert_eq!(results(root), fresh_results(root));
    // Looked at, the stored inputs are those a fresh run fills.
    let fresh = run(root, true);
    for id in ["B", "C"] {
        let shown = |inputs: &packwright_api::Inputs| format!("{inputs:?}");
        assert_eq!(shown(&one.items[id].inputs), shown(&fresh.items[id].inputs));
        assert_eq!(one.items[id].inputs_digest, fresh.items[id].inputs_digest);
        assert_eq!(
            one.items[id].origins_digest,
            Some(packwright_core::index::origins_digest(
                &fresh.items[id].inputs
            ))
        );
    }
    // A changed source value is not taken from the cache.
    fs::write(root.join("items/a.yaml"), item("A", "speed: 2.5 m/s")).expect("write");
    let (_, two) =
        packwright_core::run_project(root, &registry, RunOptions::default()).expect("runs");
    assert_eq!(computed(&two), ["A", "B", "C"]);
    assert_eq!(two.items["B"].origins_digest, None);
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn the_item_index_sees_an_edit_that_keeps_size_and_modification_time() {
    let registry = registry();
    let dir = indexed_project(&registry);
    let root = dir.path();
    edit_keeping_size_and_mtime(&root.join("items/a.yaml"), "2.0 m/s", "2.5 m/s");
    let (one, read) = run_reading(root, &registry);
    assert_eq!(read, ["items/a.yaml"]);
    assert_eq!(computed(&one), ["A", "B", "C"]);
    assert_eq!(results(root), fresh_results(root));
    // A material edit reaches the reused items that use it.
    edit_keeping_size_and_mtime(&root.join("materials/ore.yaml"), "2200 kg/m3", "2300 kg/m3");
    let (one, _) = run_reading(root, &registry);
    assert_eq!(computed(&one), ["E"]);
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn a_changed_module_declaration_reaches_reused_items() {
    let dir = indexed_project(&registry());
    let root = dir.path();
    // Same name and version, another default: no item file changed, but
    // every item that takes the default must see it.
    let mut other = Registry::new();
    other
        .register(Arc::new(Scaled("1500 kg/m3")), ModuleOrigin::BuiltIn)
        .expect("registers");
    let (one, read) = run_reading(root, &other);
    assert!(read.is_empty(), "parsed forms are still good: {read:?}");
    assert_eq!(
        computed(&one),
        ["A", "B", "C", "D"],
        "E takes its material's"
    );
    let forces = |o: &RunOutcome| o.items["D"].outcome.outputs["force"].value;
    assert_eq!(forces(&one), 3.0 * 1500.0 / 3.0);
}

#[test]
fn a_reused_item_whose_link_target_is_gone_is_refused() {
    let registry = registry();
    let dir = indexed_project(&registry);
    let root = dir.path();
    fs::remove_file(root.join("items/a.yaml")).expect("rm");
    let Err(err) = packwright_core::run_project(root, &registry, RunOptions::default()) else {
        panic!("B links to a missing item");
    };
    assert!(err.to_string().contains("no item `A`"), "{err}");
    // A renamed file is another entry of the index, read anew.
    fs::write(root.join("items/a.yaml"), item("A", "speed: 2.0 m/s")).expect("write");
    fs::rename(root.join("items/d.yaml"), root.join("items/d2.yaml")).expect("mv");
    let (_, read) = run_reading(root, &registry);
    assert_eq!(read, ["items/a.yaml", "items/d2.yaml"]);
    assert_eq!(results(root), fresh_results(root));
}

#[test]
fn a_damaged_item_index_costs_only_time() {
    let dir = settled_project();
    let root = dir.path();
    let registry = registry();
    run_reading(root, &registry);
    let good = results(root);
    let index = root.join(".packwright-cache/items.bin");
    let mut bytes = fs::read(&index).expect("the index is written");
    // One byte in the middle of an entry: a checksum catches it.
    let middle = bytes.len() / 2;
    bytes[middle] ^= 0x20;
    fs::write(&index, &bytes).expect("write");
    let (again, read) = run_reading(root, &registry);
    assert_eq!(read.len(), 5, "nothing trusted from a damaged index");
    assert_eq!(again.computed, 0, "the outcomes are still good");
    assert_eq!(results(root), good);
    fs::write(&index, &bytes[..middle]).expect("truncate");
    let (_, read) = run_reading(root, &registry);
    assert_eq!(read.len(), 5);
    assert_eq!(results(root), good);
}

/// [`Scale`] with another default density, same name and version.
struct Scaled(&'static str);

impl Module for Scaled {
    fn declaration(&self) -> ModuleDeclaration {
        let mut decl = Scale.declaration();
        for input in &mut decl.inputs {
            if input.name == "bulk_density" {
                input.need = Need::Default(self.0.into());
            }
        }
        decl
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        Scale.compute(inputs)
    }
}
