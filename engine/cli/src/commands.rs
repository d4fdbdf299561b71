//! One function per verb; each returns the process exit code.
//! Owns no state.

use std::io::Write as _;
use std::path::Path;

use packwright_api::{InputKind, Need, Status};
use packwright_core::{display, EngineError, RunOptions};

use crate::{newproject, render, Command};
use packwright::builtin;

/// How chatty to be.
pub(crate) struct Output {
    /// Errors only.
    pub(crate) quiet: bool,
    /// Every step.
    pub(crate) verbose: bool,
}

impl Output {
    pub(crate) fn say(&self, text: impl AsRef<str>) {
        if !self.quiet {
            // A closed pipe (`packwright run | head`) is not an error.
            let _ = writeln!(std::io::stdout(), "{}", text.as_ref());
        }
    }
}

/// Exit codes with meaning.
pub(crate) const OK: u8 = 0;
/// A calculation error, or a failed check with `--strict`.
pub(crate) const FAILED: u8 = 1;
/// Bad input or usage.
pub(crate) const BAD_INPUT: u8 = 2;

/// Runs one verb.
pub(crate) fn dispatch(command: Command, out: &Output) -> u8 {
    match command {
        Command::New { dir } => newproject::create(&dir, out),
        Command::Check { dir } => check(&dir, out),
        Command::Run { dir, strict, fresh } => run(&dir, strict, fresh, out),
        Command::Build { dir, strict, fresh } => build(&dir, strict, fresh, out),
        Command::Issue { rev, dir, force } => issue(&dir, &rev, force, out),
        Command::Diff {
            dir,
            since,
            git,
            tolerance,
            json,
        } => diff(&dir, since, git, tolerance, json, out),
        Command::Modules { dir } => modules(&dir, out),
        Command::Explain { module, dir } => explain(&module, &dir),
        Command::Schema => schema(),
    }
}

/// Prints an engine error and gives its exit code.
pub(crate) fn report_error(root: &Path, error: &EngineError) -> u8 {
    match error {
        EngineError::BadInput(problems) => {
            eprint!("{}", render::diagnostics(root, &problems.0));
            eprintln!(
                "{} problem{} found; nothing was written.",
                problems.0.len(),
                if problems.0.len() == 1 { "" } else { "s" }
            );
            BAD_INPUT
        }
        EngineError::Calculation(..) => {
            eprint!("{error}");
            eprintln!("the calculation did not complete; results/ was left as it was.");
            FAILED
        }
        EngineError::Io(_) => {
            eprintln!("{error}");
            FAILED
        }
    }
}

/// Run options with a progress bar on stderr when it is a terminal.
fn run_options(fresh: bool, out: &Output) -> RunOptions {
    use std::io::IsTerminal;
    use std::sync::Arc;
    let mut options = RunOptions {
        fresh,
        ..RunOptions::default()
    };
    if out.quiet || !std::io::stderr().is_terminal() {
        return options;
    }
    let bar = indicatif::ProgressBar::hidden();
    bar.set_style(
        indicatif::ProgressStyle::with_template("{prefix} [{bar:30}] {pos}/{len} {msg}")
            .expect("valid template")
            .progress_chars("=> "),
    );
    bar.set_prefix("computing");
    let on_plan = bar.clone();
    options.on_plan = Some(Arc::new(move |n| {
        on_plan.set_length(n as u64);
        on_plan.set_draw_target(indicatif::ProgressDrawTarget::stderr());
    }));
    options.progress = Some(Arc::new(move |id: &str| {
        bar.inc(1);
        bar.set_message(id.to_string());
        if bar.length() == Some(bar.position()) {
            bar.finish_and_clear();
        }
    }));
    options
}

/// The registry for a project: built-ins and the project's external
/// modules; a bad manifest is bad input.
fn registry_for(dir: &Path) -> Result<packwright_core::Registry, u8> {
    builtin::registry_for(dir).map_err(|problems| {
        report_error(
            dir,
            &EngineError::BadInput(packwright_core::Diagnostics(problems)),
        )
    })
}

fn check(dir: &Path, out: &Output) -> u8 {
    let registry = match registry_for(dir) {
        Ok(r) => r,
        Err(code) => return code,
    };
    match packwright_core::check(dir, &registry) {
        Ok((project, plan)) => {
            out.say(format!(
                "{}: {} items and {} materials, no problems found.",
                project.meta.document,
                plan.items.len(),
                project.materials.len()
            ));
            OK
        }
        Err(e) => report_error(dir, &e),
    }
}

/// Runs the project and prints the results table. Returns the exit code and,
/// on success, what ran.
pub(crate) fn run(dir: &Path, strict: bool, fresh: bool, out: &Output) -> u8 {
    run_and_maybe_package(dir, strict, fresh, false, out)
}

/// Computes the project; with `package`, also makes the package before
/// anything is written, so that a bad template leaves results/ and
/// package/ as they were. Then writes results/ (and package/) and prints
/// the results table.
fn run_and_maybe_package(dir: &Path, strict: bool, fresh: bool, package: bool, out: &Output) -> u8 {
    let registry = match registry_for(dir) {
        Ok(r) => r,
        Err(code) => return code,
    };
    let computed = match packwright_core::compute_project(dir, &registry, run_options(fresh, out)) {
        // The process ends after this command: freeing every item's data
        // one allocation at a time would only cost time (a few
        // milliseconds of a rerun of a thousand items).
        Ok(x) => std::mem::ManuallyDrop::new(x),
        Err(e) => return report_error(dir, &e),
    };
    let made = if package {
        match make_package(&computed, &registry) {
            Ok(p) => Some(p),
            Err(code) => return code,
        }
    } else {
        None
    };
    if let Err(e) = computed.write_results() {
        return report_error(dir, &e);
    }
    let (project, outcome) = (&computed.project, &computed.outcome);
    let system = project.meta.units;
    let rev = project
        .meta
        .current_revision()
        .map(|r| r.rev.as_str())
        .unwrap_or("-");
    out.say(format!(
        "{} rev {}: {}",
        project.meta.document, rev, project.meta.project
    ));
    let mut rows = Vec::new();
    let mut failed = Vec::new();
    // Quiet, the table is not shown, and only `--strict` needs the checks:
    // an outcome taken from the cache is then not even decoded.
    let looked_at = !out.quiet || out.verbose || strict;
    for run in outcome.items.values().filter(|_| looked_at) {
        let decl = &registry
            .get(&run.item.module)
            .expect("registered")
            .declaration;
        // Through the outcome's glance: an outcome taken from the cache is
        // not decoded whole for one line of the table.
        let outcome = &run.outcome;
        let key = decl
            .outputs
            .iter()
            .filter(|o| o.key)
            .chain(&decl.outputs)
            .find_map(|spec| Some((spec, outcome.output(&spec.name)?)));
        let key_text = key
            .map(|(spec, value)| {
                format!(
                    "{} = {}",
                    spec.name,
                    display::joined(display::output(&value, Some(spec), system))
                )
            })
            .unwrap_or_default();
        let statuses = outcome.check_statuses();
        let fails: Vec<&str> = statuses
            .iter()
            .filter(|(_, status)| *status == Status::Fail)
            .map(|(name, _)| *name)
            .collect();
        let checks = if statuses.is_empty() {
            "no checks".to_string()
        } else if fails.is_empty() {
            format!("{} pass", statuses.len())
        } else {
            format!("{} FAIL of {}", fails.len(), statuses.len())
        };
        for f in &fails {
            failed.push(format!("{} {}", run.item.id, f));
        }
        if out.verbose {
            eprintln!(
                "{}: {} ({})",
                run.item.id,
                if run.from_cache {
                    "taken from the cache"
                } else {
                    "computed"
                },
                run.inputs_digest
            );
        }
        rows.push([
            run.item.id.clone(),
            run.item.module.clone(),
            key_text,
            checks,
        ]);
    }
    let header = ["item", "module", "key result", "checks"];
    let widths: Vec<usize> = (0..4)
        .map(|i| {
            rows.iter()
                .map(|r| r[i].chars().count())
                .chain([header[i].len()])
                .max()
                .unwrap_or(0)
        })
        .collect();
    let line = |cells: [&str; 4]| {
        let mut s = String::from("  ");
        for (i, c) in cells.iter().enumerate() {
            if i < 3 {
                s.push_str(&format!("{c:<w$}  ", w = widths[i]));
            } else {
                s.push_str(c);
            }
        }
        s
    };
    out.say(line(header));
    for r in &rows {
        out.say(line([&r[0], &r[1], &r[2], &r[3]]));
    }
    let cached = outcome.items.len() - outcome.computed;
    out.say(format!(
        "{} items: {} computed, {} unchanged from the cache; results written to {}",
        outcome.items.len(),
        outcome.computed,
        cached,
        dir.join("results").display()
    ));
    if !failed.is_empty() {
        out.say(format!(
            "{} check(s) failed: {}",
            failed.len(),
            failed.join(", ")
        ));
    }
    let code = if strict && !failed.is_empty() {
        FAILED
    } else {
        OK
    };
    let Some(package) = made else {
        return code;
    };
    match packwright_report::write(project, package) {
        Ok(written) => {
            out.say(format!(
                "package: {} ({} pages)",
                written
                    .pdf_path
                    .strip_prefix(&project.root)
                    .unwrap_or(&written.pdf_path)
                    .display(),
                written.pages
            ));
            if out.verbose {
                eprintln!("{}", written.timings);
            }
            code
        }
        Err(e) => {
            eprintln!("{e}");
            eprintln!("the package was not written; package/ was left as it was.");
            e.exit_code()
        }
    }
}

fn build(dir: &Path, strict: bool, fresh: bool, out: &Output) -> u8 {
    run_and_maybe_package(dir, strict, fresh, true, out)
}

/// Makes (does not write) the package of a computed project, with the
/// review against issued revisions.
fn make_package(
    computed: &packwright_core::Computed,
    registry: &packwright_core::Registry,
) -> Result<packwright_report::Package, u8> {
    let (project, outcome) = (&computed.project, &computed.outcome);
    let state = packwright_core::issued::review(project, outcome, packwright_core::diff::DEFAULT_TOLERANCE).map_err(|e| {
        eprintln!("error: {e}");
        eprintln!("  expected: issued/ records written by `packwright issue`; restore the file from git or remove it");
        BAD_INPUT
    })?;
    if let Some(stale) = &state.stale {
        eprintln!("warning: {stale}; the package says so on every page.");
    }
    let review = packwright_report::Review::from_state(&state);
    packwright_report::make_with(
        project,
        outcome,
        registry,
        &review,
        &packwright::allocator::release_freed_memory,
    )
    .map_err(|e| {
        eprintln!("{e}");
        eprintln!("nothing was written; results/ and package/ were left as they were.");
        e.exit_code()
    })
}

fn modules(dir: &Path, out: &Output) -> u8 {
    let registry = match registry_for(dir) {
        Ok(r) => r,
        Err(code) => return code,
    };
    let width = registry.names().map(str::len).max().unwrap_or(0);
    for r in registry.iter() {
        let origin = match &r.origin {
            packwright_core::ModuleOrigin::BuiltIn => "built in".to_string(),
            packwright_core::ModuleOrigin::External(path) => format!("external: {path}"),
        };
        out.say(format!(
            "{:<width$}  {:<8} {}  [{origin}]",
            r.declaration.name, r.declaration.version, r.declaration.purpose
        ));
    }
    OK
}

fn explain(name: &str, dir: &Path) -> u8 {
    let registry = match registry_for(dir) {
        Ok(r) => r,
        Err(code) => return code,
    };
    let Some(r) = registry.get(name) else {
        let known: Vec<&str> = registry.names().collect();
        eprintln!("error: there is no module `{name}`");
        eprintln!("  expected: one of {}", known.join(", "));
        return BAD_INPUT;
    };
    let d = &r.declaration;
    let mut s = String::new();
    s.push_str(&format!(
        "{} {}\n  {}\n\nINPUTS\n",
        d.name, d.version, d.purpose
    ));
    for i in &d.inputs {
        let kind = match &i.kind {
            InputKind::Quantity { dimension } => format!(
                "{} [{}]",
                dimension.describe(),
                packwright_api::units::units_of(*dimension).join(", ")
            ),
            other => packwright_core::resolve::kind_words(&packwright_api::InputSpec {
                kind: other.clone(),
                ..i.clone()
            }),
        };
        let need = match &i.need {
            Need::Required => "required".to_string(),
            Need::Optional => "optional".to_string(),
            Need::Default(v) => format!("default {v}"),
        };
        s.push_str(&format!(
            "  {:<26} {}\n  {:<26}   {kind}; {need}\n",
            i.name, i.meaning, ""
        ));
    }
    s.push_str("\nOUTPUTS\n");
    for o in &d.outputs {
        s.push_str(&format!(
            "  {:<26} {} [{} | {}]{}\n",
            o.name,
            o.meaning,
            o.si_unit,
            o.us_unit,
            if o.optional { " (in some cases)" } else { "" }
        ));
    }
    if !d.criteria.is_empty() {
        s.push_str("\nCRITERIA (override under `criteria:`)\n");
        for c in &d.criteria {
            s.push_str(&format!(
                "  {:<26} {}; default {} ({})\n",
                c.name,
                c.meaning,
                c.default.as_deref().unwrap_or("none"),
                c.basis
            ));
        }
    }
    if !d.checks.is_empty() {
        s.push_str("\nCHECKS\n");
        for c in &d.checks {
            s.push_str(&format!("  {:<26} {}\n", c.name, c.meaning));
        }
    }
    s.push_str("\nMETHOD\n");
    for (n, m) in d.method.iter().enumerate() {
        s.push_str(&format!("  {}. {}\n", n + 1, m.text));
        if let Some(eq) = &m.equation {
            s.push_str(&format!("       {eq}\n"));
        }
    }
    for (title, list) in [
        ("ASSUMPTIONS", &d.assumptions),
        ("CAUTIONS", &d.cautions),
        ("REFERENCES", &d.references),
    ] {
        s.push_str(&format!("\n{title}\n"));
        for a in list {
            s.push_str(&format!("  - {a}\n"));
        }
    }
    let _ = std::io::stdout().write_all(s.as_bytes());
    OK
}

fn issue(dir: &Path, rev: &str, force: bool, out: &Output) -> u8 {
    let registry = match registry_for(dir) {
        Ok(r) => r,
        Err(code) => return code,
    };
    match packwright_core::issued::issue(dir, &registry, rev, force, run_options(false, out)) {
        Ok((project, outcome, path)) => {
            out.say(format!(
                "issued revision {rev} of {}: {} items recorded in {}",
                project.meta.document,
                outcome.items.len(),
                path.strip_prefix(&project.root).unwrap_or(&path).display()
            ));
            OK
        }
        Err(e) => report_error(dir, &e),
    }
}

fn diff(
    dir: &Path,
    since: Option<String>,
    git: Option<String>,
    tolerance: f64,
    json: bool,
    out: &Output,
) -> u8 {
    if !(tolerance.is_finite() && tolerance >= 0.0) {
        eprintln!("error: --tolerance {tolerance} is not a relative tolerance");
        eprintln!("  expected: a number at least 0, such as `--tolerance 1e-6`");
        return BAD_INPUT;
    }
    let registry = match registry_for(dir) {
        Ok(r) => r,
        Err(code) => return code,
    };
    let (project, plan) = match packwright_core::check(dir, &registry) {
        Ok(x) => x,
        Err(e) => return report_error(dir, &e),
    };
    let store = packwright_core::cache::Cache::open(&project.root);
    let outcome = packwright_core::run::run(&plan, &registry, Some(&store));
    if !outcome.failures.is_empty() || !outcome.skipped.is_empty() {
        return report_error(
            dir,
            &EngineError::Calculation(outcome.failures, outcome.skipped),
        );
    }
    let (label, baseline) = if let Some(git_ref) = &git {
        match packwright_core::diff::at_git_ref(&project.root, git_ref) {
            Ok(set) => (format!("git {git_ref}"), set),
            Err(e) => {
                eprintln!("error: {e}");
                eprintln!("  expected: a commit, branch or tag whose tree holds this project's results/, such as `--git HEAD~1`");
                return BAD_INPUT;
            }
        }
    } else {
        let records = match packwright_core::issued::all(&project) {
            Ok(r) => r,
            Err(e) => {
                eprintln!("error: {e}");
                return BAD_INPUT;
            }
        };
        let wanted = since
            .clone()
            .or_else(|| records.last().map(|r| r.revision.clone()));
        let Some(record) = wanted
            .as_ref()
            .and_then(|w| records.iter().find(|r| &r.revision == w))
        else {
            let known: Vec<&str> = records.iter().map(|r| r.revision.as_str()).collect();
            eprintln!(
                "error: {}",
                match &since {
                    Some(rev) =>
                        format!("revision `{rev}` has not been issued (no issued/{rev}.yaml)"),
                    None => "no revision has been issued yet, so there is nothing to compare with"
                        .into(),
                }
            );
            eprintln!(
                "  expected: {}",
                if known.is_empty() {
                    "`packwright issue REV` first, or `--git REF` to compare with committed results"
                        .to_string()
                } else {
                    format!("`--since` one of {}", known.join(", "))
                }
            );
            return BAD_INPUT;
        };
        (
            format!("revision {}", record.revision),
            record.items.clone(),
        )
    };
    let changes = packwright_core::diff::compare(
        &baseline,
        &packwright_core::diff::current(&outcome),
        tolerance,
    );
    if json {
        let doc =
            serde_json::json!({ "baseline": label, "tolerance": tolerance, "changes": changes });
        let _ = writeln!(
            std::io::stdout(),
            "{}",
            serde_json::to_string_pretty(&doc).expect("serialisable")
        );
    } else if changes.is_empty() {
        out.say(format!(
            "no changes since {label} (relative tolerance {tolerance:e})"
        ));
    } else {
        out.say(format!(
            "changes since {label} (relative tolerance {tolerance:e}):"
        ));
        let rows: Vec<[String; 6]> = changes
            .iter()
            .map(|c| {
                [
                    c.item.clone(),
                    c.kind.clone(),
                    c.name.clone(),
                    c.old.clone(),
                    c.new.clone(),
                    c.percent.map(|p| format!("{p:+.3} %")).unwrap_or_default(),
                ]
            })
            .collect();
        let header = ["item", "what", "name", "was", "now", "change"].map(String::from);
        let widths: Vec<usize> = (0..6)
            .map(|i| {
                rows.iter()
                    .chain([&header])
                    .map(|r| r[i].chars().count())
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        for r in std::iter::once(&header).chain(rows.iter()) {
            let cells: Vec<String> = r
                .iter()
                .enumerate()
                .map(|(i, c)| format!("{c:<w$}", w = widths[i]))
                .collect();
            out.say(format!("  {}", cells.join("  ").trim_end()));
        }
        let items: std::collections::BTreeSet<&str> =
            changes.iter().map(|c| c.item.as_str()).collect();
        out.say(format!(
            "{} change(s) in {} item(s)",
            changes.len(),
            items.len()
        ));
    }
    if changes.is_empty() {
        OK
    } else {
        FAILED
    }
}

fn schema() -> u8 {
    // The built-ins, and the external modules of a project in the current folder.
    let registry = match registry_for(Path::new(".")) {
        Ok(r) => r,
        Err(code) => return code,
    };
    // Inside a project the schema knows its materials: a material input
    // takes only their ids, and what a material does not fill stays required.
    let here = Path::new(".");
    let schema = match packwright_core::project::load(here) {
        Ok((project, _)) if here.join("project.yaml").is_file() => {
            packwright_core::schema::item_schema_with_materials(&registry, &project.materials)
        }
        _ => packwright_core::schema::item_schema(&registry),
    };
    let _ = writeln!(
        std::io::stdout(),
        "{}",
        serde_json::to_string_pretty(&schema).expect("serialisable")
    );
    OK
}
