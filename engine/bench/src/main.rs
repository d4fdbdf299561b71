//! `packwright-bench`: generates a project of many items (copies of the demo
//! project's items, every module, with their links), then measures
//!
//! - a cold `run` (no cache), a warm `run` (nothing changed) and a `run`
//!   after one input changed, each with its ratio to the cold run;
//! - a cold `build` of the whole package, with the time split into run,
//!   package data and plots, templates, Typst compile and PDF write, and the
//!   pages typeset per second;
//! - the peak resident memory after the runs and after the build.
//!
//! Usage: `packwright-bench [RUN_ITEMS] [BUILD_ITEMS]` (defaults 1000 and 100;
//! 0 build items skips the build),
//! or `packwright-bench --generate N DIR` to write a project for profiling
//! and `packwright-bench --run DIR` to run it once in process.
//! It prints figures; it asserts nothing about time.

use std::path::Path;
use std::time::Instant;

use packwright_core::RunOptions;

/// The allocator the `packwright` binary uses, so the figures are its own.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// The peak resident set size of this process so far, in MiB (Linux).
fn peak_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|kb| kb.parse::<f64>().ok())
        })
        .map(|kb| kb / 1024.0)
        .unwrap_or(f64::NAN)
}

/// Writes a project of about `items` items into `dir`: copy k of every
/// demo item gets ids and links suffixed with `-k`.
fn generate(demo: &Path, dir: &Path, items: usize) -> usize {
    let mut item_files = Vec::new();
    for entry in walkdir::WalkDir::new(demo)
        .sort_by_file_name()
        .into_iter()
        .flatten()
    {
        let rel = entry.path().strip_prefix(demo).expect("inside the demo");
        let first = rel
            .components()
            .next()
            .map(|c| c.as_os_str().to_string_lossy().into_owned());
        let skip = matches!(
            first.as_deref(),
            Some("results" | "package" | "issued" | "modules" | ".packwright-cache")
        );
        if skip || !entry.file_type().is_file() {
            continue;
        }
        let text = std::fs::read_to_string(entry.path()).expect("demo file is text");
        let target = dir.join(rel);
        std::fs::create_dir_all(target.parent().expect("has a parent")).expect("mkdir");
        let is_item = text.lines().any(|l| l.starts_with("module:"));
        let builtin = !text.contains("module: skirt-seal");
        if is_item && builtin {
            item_files.push((rel.to_path_buf(), text));
        } else if !is_item {
            std::fs::write(&target, text).expect("write");
        }
    }
    // Items that others link to come first, so a partial last copy never
    // holds a link without its source.
    item_files.sort_by_key(|(_, text)| text.contains("{ from:"));
    let ids: Vec<String> = item_files
        .iter()
        .filter_map(|(_, t)| {
            t.lines()
                .find_map(|l| l.strip_prefix("id: "))
                .map(|s| s.trim().to_string())
        })
        .collect();
    let copies = items.div_ceil(item_files.len()).max(1);
    let mut written = 0;
    for k in 0..copies {
        for (rel, text) in &item_files {
            if written == items {
                break;
            }
            let mut t = text.clone();
            for id in &ids {
                t = t.replace(&format!("id: {id}\n"), &format!("id: {id}-{k}\n"));
                t = t.replace(&format!("from: {id}."), &format!("from: {id}-{k}."));
            }
            let name = format!(
                "{}-{k}.yaml",
                rel.file_stem().expect("named").to_string_lossy()
            );
            let target = dir.join(rel.parent().expect("in a folder")).join(name);
            std::fs::write(target, t).expect("write");
            written += 1;
        }
    }
    written
}

fn seconds(start: Instant) -> f64 {
    start.elapsed().as_secs_f64()
}

fn main() {
    // As every `packwright` command does.
    packwright::allocator::use_small_pages();
    let mut args = std::env::args().skip(1);
    let run_items: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(1000);
    let build_items: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(100);
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../projects/harrow-creek");
    let registry = packwright::builtin::registry();
    // `packwright-bench --generate N DIR` only writes the project, for
    // profiling the binary on it.
    if let Some(dir) = std::env::args()
        .nth(3)
        .filter(|_| std::env::args().nth(1).as_deref() == Some("--generate"))
    {
        let n = std::env::args()
            .nth(2)
            .and_then(|a| a.parse().ok())
            .unwrap_or(1000);
        std::fs::create_dir_all(&dir).expect("mkdir");
        println!(
            "{} items written to {dir}",
            generate(&demo, Path::new(&dir), n)
        );
        return;
    }

    // `packwright-bench --run DIR` runs a project once, in process, for
    // profiling what the figures below measure (the binary adds its own
    // registry loading and results table).
    if let Some(dir) = std::env::args()
        .nth(2)
        .filter(|_| std::env::args().nth(1).as_deref() == Some("--run"))
    {
        let start = Instant::now();
        let (_, outcome) =
            packwright_core::run_project(Path::new(&dir), &registry, RunOptions::default())
                .expect("run");
        println!(
            "{} items, {} computed, {:.3} s",
            outcome.items.len(),
            outcome.computed,
            seconds(start)
        );
        return;
    }

    let dir = tempfile::tempdir().expect("temp dir");
    let n = generate(&demo, dir.path(), run_items);
    println!(
        "run benchmark: {n} items (copies of the demo items, every built-in module, with links)"
    );
    let start = Instant::now();
    let (_, cold) = packwright_core::run_project(dir.path(), &registry, RunOptions::default())
        .expect("cold run");
    let t_cold = seconds(start);
    let start = Instant::now();
    let (_, warm) = packwright_core::run_project(dir.path(), &registry, RunOptions::default())
        .expect("warm run");
    let t_warm = seconds(start);
    // One input of one chute item changes: it and the belt items linked to it rerun.
    let changed = dir.path().join("transfers").join("TC-02-0.yaml");
    let text = std::fs::read_to_string(&changed).expect("read");
    let edited = text.replacen("mass_flow: 6000 t/h", "mass_flow: 5900 t/h", 1);
    assert_ne!(text, edited, "the benchmark's edit applies");
    std::fs::write(&changed, edited).expect("write");
    let start = Instant::now();
    let (_, one) = packwright_core::run_project(dir.path(), &registry, RunOptions::default())
        .expect("one-change run");
    let t_one = seconds(start);
    let run_peak = peak_mib();
    println!(
        "  cold run      {t_cold:8.3} s   ({} computed)",
        cold.computed
    );
    println!(
        "  warm run      {t_warm:8.3} s   ratio {:.3}  ({} computed)",
        t_warm / t_cold,
        warm.computed
    );
    println!(
        "  one change    {t_one:8.3} s   ratio {:.3}  ({} computed)",
        t_one / t_cold,
        one.computed
    );
    println!("  peak memory after the runs: {run_peak:.0} MiB");
    // The build's memory is measured without the runs' outcomes held.
    drop((cold, warm, one));
    // `packwright-bench N 0` measures the runs only.
    if build_items == 0 {
        return;
    }

    // As `packwright build` does (the runs above keep the defaults, as
    // `packwright run` does).
    packwright::allocator::prepare_for_build();
    let dir = tempfile::tempdir().expect("temp dir");
    let n = generate(&demo, dir.path(), build_items);
    println!("build benchmark: {n} items, cold (no cache)");
    let start = Instant::now();
    let (project, outcome) =
        packwright_core::run_project(dir.path(), &registry, RunOptions::default()).expect("run");
    let t_run = seconds(start);
    let start = Instant::now();
    let written = packwright_report::build_and_write(
        &project,
        &outcome,
        &registry,
        &packwright_report::Review::default(),
        &packwright::allocator::release_freed_memory,
    )
    .expect("package");
    let t_package = seconds(start);
    let total = t_run + t_package;
    let t = written.timings;
    println!("  pages         {}", written.pages);
    println!(
        "  total         {total:8.3} s   ({:.1} pages/s)",
        written.pages as f64 / total
    );
    println!("  run           {t_run:8.3} s");
    println!("  data, plots   {:8.3} s", t.data.as_secs_f64());
    println!("  templates     {:8.3} s", t.templates.as_secs_f64());
    println!("  Typst compile {:8.3} s", t.compile.as_secs_f64());
    println!("  PDF write     {:8.3} s", t.pdf.as_secs_f64());
    let ours = t_run + t.data.as_secs_f64() + t.templates.as_secs_f64();
    println!(
        "  packwright's own work {ours:.3} s = {:.0} % of Typst's compile and write",
        100.0 * ours / (t.compile + t.pdf).as_secs_f64()
    );
    println!("  peak memory after the build: {:.0} MiB", peak_mib());
}
