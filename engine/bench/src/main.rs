//! `packwright-bench`: generates a project of many items (copies of the demo
//! project's items, every module, with their links), then measures
//!
//! - a cold `run` (no cache, no results), a warm `run` (nothing changed)
//!   and a `run` after one input changed, each five times, by its median
//!   and with its ratio to the cold run's;
//! - a cold `build` of the whole package, with the time split into run,
//!   package data and plots, templates, Typst compile and PDF write, and the
//!   pages typeset per second;
//! - the peak resident memory after the runs and after the build.
//!
//! Usage: `packwright-bench [RUN_ITEMS] [BUILD_ITEMS]` (defaults 1000 and 100;
//! 0 build items skips the build),
//! or `packwright-bench --generate N DIR` to write a project for profiling
//! `packwright-bench --run DIR` to run it once in process, and
//! `packwright-bench --reruns DIR N` to rerun it N times after a one-input
//! change each time (for profiling the rerun).
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

/// Changes one input of one chute item (its mass flow from 6000 t/h to
/// 5900 t/h, or back): it and the belt items linked to it rerun.
fn edit_one_input(project: &Path) {
    let changed = project.join("transfers").join("TC-02-0.yaml");
    let text = std::fs::read_to_string(&changed).expect("read");
    let (from, to) = if text.contains("mass_flow: 6000 t/h") {
        ("mass_flow: 6000 t/h", "mass_flow: 5900 t/h")
    } else {
        ("mass_flow: 5900 t/h", "mass_flow: 6000 t/h")
    };
    let edited = text.replacen(from, to, 1);
    assert_ne!(text, edited, "the benchmark's edit applies");
    std::fs::write(&changed, edited).expect("write");
    // As an engineer's edit would be, the file is older than the item
    // index's settling time when the rerun starts, so the rerun records it
    // (see `item_index`).
    std::thread::sleep(std::time::Duration::from_millis(150));
}

/// How many times each run is measured.
const REPEATS: usize = 5;

/// Runs the project at `dir` in process as `packwright run` does (compute,
/// then write `results/` and the cache): the time until the results are
/// written, and how many items it computed. Freeing the run's data comes
/// after the clock stops: the `packwright` binary leaves it to the end of
/// the process.
fn timed_run(dir: &Path, registry: &packwright_core::Registry, what: &str) -> (f64, usize) {
    let start = Instant::now();
    let computed = packwright_core::compute_project(dir, registry, RunOptions::default())
        .unwrap_or_else(|e| panic!("{what}: {e}"));
    computed
        .write_results()
        .unwrap_or_else(|e| panic!("{what}: {e}"));
    (seconds(start), computed.outcome.computed)
}

/// The fastest, median and slowest time of some runs (time, items
/// computed).
fn spread(runs: &[(f64, usize)]) -> (f64, f64, f64) {
    let mut times: Vec<f64> = runs.iter().map(|(t, _)| *t).collect();
    times.sort_by(f64::total_cmp);
    (times[0], times[times.len() / 2], times[times.len() - 1])
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

    // `packwright-bench --reruns DIR N` alternates the one-change edit
    // below and reruns N times in process, for profiling the rerun.
    if let Some(dir) = std::env::args()
        .nth(2)
        .filter(|_| std::env::args().nth(1).as_deref() == Some("--reruns"))
    {
        let n: usize = std::env::args()
            .nth(3)
            .and_then(|a| a.parse().ok())
            .unwrap_or(100);
        let dir = Path::new(&dir);
        timed_run(dir, &registry, "first run");
        let runs: Vec<(f64, usize)> = (0..n.max(1))
            .map(|_| {
                edit_one_input(dir);
                timed_run(dir, &registry, "rerun")
            })
            .collect();
        let (fastest, median, slowest) = spread(&runs);
        println!(
            "{} one-change reruns: fastest {fastest:.4} s, median {median:.4} s, slowest {slowest:.4} s",
            runs.len()
        );
        return;
    }

    // Each run is measured several times and reported by its median: one
    // figure of a run of tens of milliseconds says little on a shared
    // machine. Each cold run has a project of its own, as a fresh clone
    // would be (removing a thousand files just before would make the
    // file system slower to create them again, and the cold run slower).
    let projects: Vec<tempfile::TempDir> = (0..REPEATS)
        .map(|_| tempfile::tempdir().expect("temp dir"))
        .collect();
    let mut n = 0;
    for project in &projects {
        n = generate(&demo, project.path(), run_items);
    }
    println!(
        "run benchmark: {n} items (copies of the demo items, every built-in module, with links)"
    );
    let cold: Vec<(f64, usize)> = projects
        .iter()
        .map(|p| timed_run(p.path(), &registry, "cold run"))
        .collect();
    let dir = projects[0].path();
    let warm: Vec<(f64, usize)> = (0..REPEATS)
        .map(|_| timed_run(dir, &registry, "warm run"))
        .collect();
    let one: Vec<(f64, usize)> = (0..REPEATS)
        .map(|_| {
            edit_one_input(dir);
            timed_run(dir, &registry, "one-change run")
        })
        .collect();
    let run_peak = peak_mib();
    let (_, t_cold, _) = spread(&cold);
    let line = |name: &str, runs: &[(f64, usize)], ratio: bool| {
        let (fastest, t, slowest) = spread(runs);
        let ratio = if ratio {
            format!("ratio {:.3}", t / t_cold)
        } else {
            " ".repeat(11)
        };
        println!(
            "  {name:13} {t:8.3} s   {ratio}  ({fastest:.3}-{slowest:.3} s; {} computed)",
            runs[0].1
        );
    };
    println!("  median of {REPEATS} runs each:");
    line("cold run", &cold, false);
    line("warm run", &warm, true);
    line("one change", &one, true);
    println!("  peak memory after the runs: {run_peak:.0} MiB");
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
