//! The `packwright` command line: parses arguments, calls the engine and the
//! report, prints what happened, and exits with a code that says how it
//! went (0 done, 1 a calculation error or, with `--strict`, a failed check,
//! 2 bad input or usage).
//!
//! This is the only crate that knows every built-in module (see
//! `builtin.rs`). Owns no state.

mod commands;
mod newproject;
mod render;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Typst's layout allocates and frees small objects by the million; the
/// system allocator spent about a fifth of a package build in `malloc`
/// and `free` (perf, DEVELOPERS.md "Performance").
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// Calculation packages for belt conveyor transfers, chain payout and hoists:
/// a project of YAML files in, units-checked results and a typeset PDF out.
#[derive(Parser, Debug)]
#[command(name = "packwright", version, about, long_about = None)]
pub(crate) struct Cli {
    /// Print nothing but errors.
    #[arg(long, short, global = true, conflicts_with = "verbose")]
    pub(crate) quiet: bool,
    /// Say what each step does, item by item.
    #[arg(long, short, global = true)]
    pub(crate) verbose: bool,
    /// What to do.
    #[command(subcommand)]
    pub(crate) command: Command,
}

/// The verbs.
#[derive(Subcommand, Debug)]
pub(crate) enum Command {
    /// Make a new project folder with one example item per module.
    New {
        /// The folder to create (it must not exist, or be empty).
        dir: PathBuf,
    },
    /// Load and validate the project; report every problem at once.
    Check {
        /// The project folder.
        #[arg(default_value = ".")]
        dir: PathBuf,
    },
    /// Compute every item and write results/.
    Run {
        /// The project folder.
        #[arg(default_value = ".")]
        dir: PathBuf,
        /// Exit with code 1 when any check fails.
        #[arg(long)]
        strict: bool,
        /// Ignore the rerun cache and compute every item.
        #[arg(long)]
        fresh: bool,
    },
    /// Run, then typeset the calculation package to package/<document>-<rev>.pdf.
    Build {
        /// The project folder.
        #[arg(default_value = ".")]
        dir: PathBuf,
        /// Exit with code 1 when any check fails.
        #[arg(long)]
        strict: bool,
        /// Ignore the rerun cache and compute every item.
        #[arg(long)]
        fresh: bool,
    },
    /// Record the current inputs and results as revision REV in issued/REV.yaml.
    Issue {
        /// The revision mark; it must be the newest revision in project.yaml.
        rev: String,
        /// The project folder.
        #[arg(default_value = ".")]
        dir: PathBuf,
        /// Replace an existing record of this revision.
        #[arg(long)]
        force: bool,
    },
    /// Show which inputs, results and checks changed since an issued
    /// revision or a git commit; exit code 1 when anything changed.
    Diff {
        /// The project folder.
        #[arg(default_value = ".")]
        dir: PathBuf,
        /// Compare with this issued revision (default: the newest issued).
        #[arg(long, conflicts_with = "git")]
        since: Option<String>,
        /// Compare with the results committed at this git commit, branch or tag.
        #[arg(long)]
        git: Option<String>,
        /// Relative difference below which two numbers count as equal.
        #[arg(long, default_value_t = packwright_core::diff::DEFAULT_TOLERANCE)]
        tolerance: f64,
        /// Print the changes as JSON (for scripts).
        #[arg(long)]
        json: bool,
    },
    /// List the modules packwright has: built in, and the project's external ones.
    Modules {
        /// A project folder whose external modules to list too.
        #[arg(default_value = ".")]
        dir: PathBuf,
    },
    /// Print what a module needs and gives: inputs, outputs, method, references.
    Explain {
        /// The module name, as in `module:` of an item.
        module: String,
        /// A project folder whose external modules count too.
        #[arg(default_value = ".")]
        dir: PathBuf,
    },
    /// Print a JSON Schema of item files, for editor validation and completion.
    Schema,
}

fn main() -> ExitCode {
    packwright::allocator::use_small_pages();
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    // Typesetting is where the memory peaks; elsewhere returning memory
    // only costs time (see `allocator`).
    if matches!(cli.command, Command::Build { .. }) {
        packwright::allocator::prepare_for_build();
    }
    let out = commands::Output {
        quiet: cli.quiet,
        verbose: cli.verbose,
    };
    ExitCode::from(commands::dispatch(cli.command, &out))
}
