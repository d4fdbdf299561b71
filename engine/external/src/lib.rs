//! External packwright modules: a calculation an office adds without
//! rebuilding packwright.
//!
//! An external module is a folder holding a YAML manifest (`module.yaml`:
//! the same declaration a built-in module makes in code, plus the command
//! to run) and the program it names, in any language. For each item the
//! engine starts the command, writes one JSON request to its standard input
//! and reads one JSON response from its standard output (protocol version 1,
//! see `PROTOCOL.md` and `protocol/*.schema.json`). [`ExternalModule`]
//! implements [`packwright_api::Module`], so the engine validates inputs,
//! links, caches and typesets external modules exactly as built-in ones.
//!
//! [`discover`] finds a project's external modules; [`register`] adds them
//! to a [`Registry`] beside the built-ins.
//!
//! Depends on the contract crate and the engine's diagnostics and YAML
//! reader; never on the report or on any module.

pub mod manifest;
pub mod module;
pub mod process;
pub mod protocol;

use std::collections::BTreeMap;
use std::path::Path;
use std::sync::Arc;

use packwright_api::Span;
use packwright_core::{Diagnostic, ModuleOrigin, Registry};

pub use manifest::MANIFEST_FILE;
pub use module::ExternalModule;
pub use protocol::PROTOCOL_VERSION;

/// The folder of a project whose sub-folders are external modules.
pub const MODULES_FOLDER: &str = "modules";

/// Finds every external module of the project at `project_root`: each
/// `modules/*/module.yaml`, and each manifest `named` in project.yaml's
/// `modules:` list (a manifest path, or a folder holding `module.yaml`,
/// relative to the root). Returns the modules with their manifest paths
/// relative to the root, in path order, or every problem found.
pub fn discover(
    project_root: &Path,
    named: &[String],
) -> Result<Vec<(ExternalModule, String)>, Vec<Diagnostic>> {
    let mut problems = Vec::new();
    let mut manifests: Vec<String> = Vec::new();

    let folder = project_root.join(MODULES_FOLDER);
    if folder.is_dir() {
        let mut entries: Vec<_> = match std::fs::read_dir(&folder) {
            Ok(entries) => entries.flatten().collect(),
            Err(e) => {
                problems.push(Diagnostic::new(
                    None,
                    format!("cannot read the project's {MODULES_FOLDER}/ folder: {e}"),
                ));
                Vec::new()
            }
        };
        entries.sort_by_key(|e| e.file_name());
        for entry in entries {
            let name = entry.file_name().to_string_lossy().into_owned();
            if name.starts_with('.') || !entry.path().is_dir() {
                continue;
            }
            let dir = format!("{MODULES_FOLDER}/{name}");
            if entry.path().join(MANIFEST_FILE).is_file() {
                manifests.push(format!("{dir}/{MANIFEST_FILE}"));
            } else if entry.path().join("module.yml").is_file() {
                problems.push(
                    Diagnostic::new(
                        Some(Span::new(format!("{dir}/module.yml"), 1, 1)),
                        "an external module's manifest must be called module.yaml".into(),
                    )
                    .expected(format!("rename it to {dir}/{MANIFEST_FILE}")),
                );
            }
            // A folder without a manifest is the module author's helper
            // code or data; it is not an error.
        }
    }

    let entry_spans = project_yaml_module_spans(project_root);
    for written in named {
        let span = entry_spans
            .get(written)
            .cloned()
            .unwrap_or_else(|| Span::new("project.yaml", 1, 1));
        let clean = written
            .trim()
            .trim_start_matches("./")
            .trim_end_matches('/');
        let as_path = project_root.join(clean);
        let manifest = if as_path.is_dir() {
            format!("{clean}/{MANIFEST_FILE}")
        } else {
            clean.to_string()
        };
        if Path::new(clean).is_absolute() || !project_root.join(&manifest).is_file() {
            problems.push(
                Diagnostic::new(
                    Some(span),
                    format!("project.yaml names the external module `{written}`, which is not a manifest in the project"),
                )
                .expected("a path relative to the project folder, for example `modules: [tools/seal-drag/module.yaml]`"),
            );
            continue;
        }
        manifests.push(manifest);
    }

    // The same manifest found in modules/ and named in project.yaml is one module.
    let mut seen = BTreeMap::new();
    manifests.retain(|m| {
        let key = project_root.join(m).canonicalize().ok();
        seen.insert(key, ()).is_none()
    });
    manifests.sort();

    let mut modules: Vec<(ExternalModule, String)> = Vec::new();
    let mut by_name: BTreeMap<String, String> = BTreeMap::new();
    for manifest in manifests {
        match ExternalModule::load(project_root, &manifest) {
            Ok(module) => {
                let name = packwright_api::Module::declaration(&module).name;
                if let Some(other) = by_name.get(&name) {
                    problems.push(
                        Diagnostic::new(
                            Some(module.name_span().clone()),
                            format!("two external modules are named `{name}`"),
                        )
                        .expected("a different name in one of the manifests")
                        .related(Span::new(other.as_str(), 1, 1), "the other manifest"),
                    );
                    continue;
                }
                by_name.insert(name, manifest.clone());
                modules.push((module, manifest));
            }
            Err(more) => problems.extend(more),
        }
    }
    if problems.is_empty() {
        Ok(modules)
    } else {
        Err(problems)
    }
}

/// Discovers the project's external modules and adds them to `registry`
/// (which normally holds the built-ins already), each with its manifest as
/// its origin. A name that clashes with a registered module is a problem
/// pointing at the manifest's `name:`.
pub fn register(
    registry: &mut Registry,
    project_root: &Path,
    named: &[String],
) -> Result<(), Vec<Diagnostic>> {
    let modules = discover(project_root, named)?;
    let mut problems = Vec::new();
    for (module, manifest) in modules {
        let span = module.name_span().clone();
        if let Err(why) = registry.register(Arc::new(module), ModuleOrigin::External(manifest)) {
            problems.push(
                Diagnostic::new(Some(span), why)
                    .expected("a name no built-in module uses (see `packwright modules`)"),
            );
        }
    }
    if problems.is_empty() {
        Ok(())
    } else {
        Err(problems)
    }
}

/// The manifests project.yaml names under `modules:`, as written, for a
/// caller that has not loaded the project (`packwright modules DIR`,
/// `explain`). Empty when project.yaml does not read; the loader reports
/// that itself. After [`packwright_core::project::load`], use
/// `project.meta.modules` instead: it is the same list.
pub fn named_modules(project_root: &Path) -> Vec<String> {
    project_yaml_module_spans(project_root)
        .into_keys()
        .collect()
}

/// The positions of the entries of project.yaml's `modules:` list, so that
/// a problem with one points at its line. Empty when the file does not
/// read (the loader reports that itself).
fn project_yaml_module_spans(project_root: &Path) -> BTreeMap<String, Span> {
    let file: Arc<str> = Arc::from("project.yaml");
    let Ok(bytes) = std::fs::read(project_root.join("project.yaml")) else {
        return BTreeMap::new();
    };
    let Ok(Some(tree)) = packwright_core::yaml::parse_bytes(&file, &bytes) else {
        return BTreeMap::new();
    };
    tree.get("modules")
        .and_then(|list| list.as_list())
        .map(|entries| {
            entries
                .iter()
                .filter_map(|e| e.as_text().map(|t| (t.to_string(), e.span.clone())))
                .collect()
        })
        .unwrap_or_default()
}
