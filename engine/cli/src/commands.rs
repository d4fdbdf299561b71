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
            println!("{}", text.as_ref());
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
        Command::Run { dir, strict, fresh } => run(&dir, strict, fresh, out).0,
        Command::Build { dir, strict, fresh } => build(&dir, strict, fresh, out),
        Command::Modules => modules(out),
        Command::Explain { module } => explain(&module),
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

fn check(dir: &Path, out: &Output) -> u8 {
    let registry = builtin::registry();
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
pub(crate) fn run(
    dir: &Path,
    strict: bool,
    fresh: bool,
    out: &Output,
) -> (
    u8,
    Option<(packwright_core::Project, packwright_core::RunOutcome)>,
) {
    let registry = builtin::registry();
    let (project, outcome) =
        match packwright_core::run_project(dir, &registry, RunOptions { fresh }) {
            Ok(x) => x,
            Err(e) => return (report_error(dir, &e), None),
        };
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
    for run in outcome.items.values() {
        let decl = &registry
            .get(&run.item.module)
            .expect("registered")
            .declaration;
        let key = decl
            .outputs
            .iter()
            .find(|o| o.key && run.outcome.outputs.contains_key(&o.name))
            .or_else(|| {
                decl.outputs
                    .iter()
                    .find(|o| run.outcome.outputs.contains_key(&o.name))
            });
        let key_text = key
            .map(|spec| {
                format!(
                    "{} = {}",
                    spec.name,
                    display::joined(display::output(
                        &run.outcome.outputs[&spec.name],
                        Some(spec),
                        system
                    ))
                )
            })
            .unwrap_or_default();
        let fails: Vec<&str> = run
            .outcome
            .checks
            .iter()
            .filter(|c| c.status == Status::Fail)
            .map(|c| c.name.as_str())
            .collect();
        let checks = if run.outcome.checks.is_empty() {
            "no checks".to_string()
        } else if fails.is_empty() {
            format!("{} pass", run.outcome.checks.len())
        } else {
            format!("{} FAIL of {}", fails.len(), run.outcome.checks.len())
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
    (code, Some((project, outcome)))
}

fn build(dir: &Path, strict: bool, fresh: bool, out: &Output) -> u8 {
    let (code, ran) = run(dir, strict, fresh, out);
    let Some((project, outcome)) = ran else {
        return code;
    };
    let registry = builtin::registry();
    match packwright_report::build_and_write(
        &project,
        &outcome,
        &registry,
        &packwright_report::Review::default(),
    ) {
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

fn modules(out: &Output) -> u8 {
    let registry = builtin::registry();
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

fn explain(name: &str) -> u8 {
    let registry = builtin::registry();
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
