//! Reading an external module's manifest (`module.yaml`): the declaration a
//! built-in module makes in code, plus the command to run, its timeout and
//! the protocol version it speaks. Every problem names the file and line
//! and says what was expected.
//!
//! Owns no state; starts nothing.

use std::sync::Arc;
use std::time::Duration;

use packwright_api::{
    CheckSpec, CriterionSpec, InputSpec, MethodStep, ModuleDeclaration, Node, OutputSpec, Span,
};
use packwright_core::Diagnostic;
use serde::Deserialize;

use crate::protocol::PROTOCOL_VERSION;

/// The file name of a manifest inside a module folder.
pub const MANIFEST_FILE: &str = "module.yaml";

/// Seconds a module may take when its manifest gives no `timeout`.
pub const DEFAULT_TIMEOUT_SECONDS: f64 = 10.0;

/// The longest `timeout` a manifest may ask for, in seconds.
pub const MAX_TIMEOUT_SECONDS: f64 = 600.0;

/// A short manifest, shown when a manifest is so wrong that a pointer to the
/// offending key would not help.
pub const EXAMPLE: &str = "`protocol: 1`, `name: skirt-seal`, `version: 1.0.0`, `purpose: ...`, \
`inputs: [...]`, `outputs: [...]`, `command: [python3, seal_drag.py]` \
(see engine/external/README.md)";

/// The manifest as written; the declaration's own fields are repeated here
/// because serde cannot refuse unknown keys through a flattened struct.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ManifestFile {
    protocol: u32,
    name: String,
    version: String,
    purpose: String,
    inputs: Vec<InputSpec>,
    outputs: Vec<OutputSpec>,
    #[serde(default)]
    criteria: Vec<CriterionSpec>,
    #[serde(default)]
    checks: Vec<CheckSpec>,
    #[serde(default)]
    method: Vec<MethodStep>,
    #[serde(default)]
    assumptions: Vec<String>,
    #[serde(default)]
    cautions: Vec<String>,
    #[serde(default)]
    references: Vec<String>,
    command: Vec<String>,
    #[serde(default = "default_timeout")]
    timeout: f64,
    #[serde(default)]
    files: Vec<String>,
}

fn default_timeout() -> f64 {
    DEFAULT_TIMEOUT_SECONDS
}

/// A manifest read and checked on its own (its command not yet resolved).
#[derive(Debug, Clone)]
pub struct Manifest {
    /// What the module declares.
    pub declaration: ModuleDeclaration,
    /// Program and arguments, as written.
    pub command: Vec<String>,
    /// How long one item may take.
    pub timeout: Duration,
    /// Further files (relative to the manifest's folder) whose bytes enter
    /// the module's fingerprint: helper libraries, data tables.
    pub files: Vec<String>,
    /// The position-keeping tree of the file, to point later problems at.
    pub tree: Node,
}

impl Manifest {
    /// The position of a top-level key's value, or the file's start.
    pub fn span_of(&self, key: &str) -> Span {
        self.tree
            .get(key)
            .map(|n| n.span.clone())
            .unwrap_or_else(|| self.tree.span.clone())
    }
}

/// Parses the bytes of the manifest at `file` (project-relative, for
/// messages). Every problem found is returned at once.
pub fn parse(file: &Arc<str>, bytes: &[u8]) -> Result<Manifest, Vec<Diagnostic>> {
    // The engine's own reader first: it refuses aliases, tags, duplicate
    // keys and absurd sizes, and keeps positions for later messages.
    let tree = match packwright_core::yaml::parse_bytes(file, bytes) {
        Ok(Some(tree)) => tree,
        Ok(None) => {
            return Err(vec![Diagnostic::new(
                Some(Span::new(file.clone(), 1, 1)),
                "the module manifest is empty".into(),
            )
            .expected(EXAMPLE)])
        }
        Err(d) => return Err(vec![d]),
    };
    let text = std::str::from_utf8(bytes).expect("the reader checked UTF-8");
    // Enums as one-key mappings (`kind: { quantity: { dimension: length } }`),
    // the form the declaration's serde uses everywhere else, not YAML tags.
    let raw: ManifestFile = serde_yaml_ng::with::singleton_map_recursive::deserialize(
        serde_yaml_ng::Deserializer::from_str(text),
    )
    .map_err(|e: serde_yaml_ng::Error| {
        let span = e
            .location()
            .map(|l| Span::new(file.clone(), l.line() as u32, l.column() as u32))
            .unwrap_or_else(|| Span::new(file.clone(), 1, 1));
        let message = e.to_string();
        let message = message
            .rsplit_once(" at line ")
            .map_or(message.as_str(), |(m, _)| m)
            .to_string();
        vec![Diagnostic::new(
            Some(span),
            format!("the module manifest does not read: {message}"),
        )
        .expected(EXAMPLE)]
    })?;
    let manifest = Manifest {
        declaration: ModuleDeclaration {
            name: raw.name,
            version: raw.version,
            purpose: raw.purpose,
            inputs: raw.inputs,
            outputs: raw.outputs,
            criteria: raw.criteria,
            checks: raw.checks,
            method: raw.method,
            assumptions: raw.assumptions,
            cautions: raw.cautions,
            references: raw.references,
        },
        command: raw.command,
        timeout: Duration::ZERO,
        files: raw.files,
        tree,
    };
    let mut problems = Vec::new();
    if raw.protocol != PROTOCOL_VERSION {
        problems.push(
            Diagnostic::new(
                Some(manifest.span_of("protocol")),
                format!(
                    "the manifest asks for protocol {}; this packwright speaks protocol {PROTOCOL_VERSION}",
                    raw.protocol
                ),
            )
            .expected(format!("`protocol: {PROTOCOL_VERSION}`")),
        );
    }
    if !(raw.timeout > 0.0 && raw.timeout <= MAX_TIMEOUT_SECONDS) {
        problems.push(
            Diagnostic::new(
                Some(manifest.span_of("timeout")),
                format!(
                    "`timeout: {}` is not a usable number of seconds",
                    raw.timeout
                ),
            )
            .expected(format!(
                "seconds above 0 and at most {MAX_TIMEOUT_SECONDS}, for example `timeout: 10`"
            )),
        );
    }
    if manifest.command.is_empty() || manifest.command[0].trim().is_empty() {
        problems.push(
            Diagnostic::new(
                Some(manifest.span_of("command")),
                "`command` names no program".into(),
            )
            .expected("the program and its arguments as a list, for example `command: [python3, seal_drag.py]`"),
        );
    }
    if let Err(declared) = manifest.declaration.validate() {
        for problem in declared {
            problems.push(
                Diagnostic::new(
                    Some(manifest.span_of(section_of(&problem))),
                    format!("the module's declaration is wrong: {problem}"),
                )
                .expected("a declaration as engine/external/README.md describes: known units, defaults that parse, unique lower-case names"),
            );
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    Ok(Manifest {
        timeout: Duration::from_secs_f64(raw.timeout),
        ..manifest
    })
}

/// The top-level key a problem from [`ModuleDeclaration::validate`] is
/// about, so the message points at the right part of the file.
fn section_of(problem: &str) -> &'static str {
    if problem.starts_with("module name") {
        "name"
    } else if problem.contains("of input") || problem.starts_with("input ") {
        "inputs"
    } else if problem.contains("of output") || problem.starts_with("output ") {
        "outputs"
    } else if problem.contains("criterion") {
        "criteria"
    } else {
        "name"
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(text: &str) -> Result<Manifest, Vec<Diagnostic>> {
        parse(&Arc::from("modules/m/module.yaml"), text.as_bytes())
    }

    const GOOD: &str = "\
protocol: 1
name: tiny
version: 1.0.0
purpose: A tiny module.
inputs:
  - name: length
    kind: { quantity: { dimension: length } }
    meaning: a length
outputs:
  - { name: twice, dimension: length, si_unit: m, us_unit: ft, meaning: twice the length }
command: [python3, tiny.py]
";

    #[test]
    fn a_good_manifest_reads_with_the_default_timeout() {
        let m = read(GOOD).expect("reads");
        assert_eq!(m.declaration.name, "tiny");
        assert_eq!(m.command, vec!["python3", "tiny.py"]);
        assert_eq!(m.timeout, Duration::from_secs(10));
    }

    fn first(result: Result<Manifest, Vec<Diagnostic>>) -> Diagnostic {
        result.expect_err("should be refused").remove(0)
    }

    #[test]
    fn an_unknown_key_names_its_line_and_the_known_keys() {
        let d = first(read(&GOOD.replace("purpose:", "purpos:")));
        let span = d.span.expect("a span");
        assert_eq!((&*span.file, span.line), ("modules/m/module.yaml", 4));
        assert!(
            d.message.contains("unknown field `purpos`"),
            "{}",
            d.message
        );
        assert!(d.message.contains("`purpose`"), "{}", d.message);
    }

    #[test]
    fn a_wrong_dimension_name_in_an_input_names_its_line() {
        let d = first(read(
            &GOOD.replace("dimension: length } }", "dimension: lenght } }"),
        ));
        assert_eq!(d.span.expect("a span").line, 7);
        assert!(
            d.message.contains("unknown variant `lenght`"),
            "{}",
            d.message
        );
    }

    #[test]
    fn protocol_timeout_and_units_are_checked_with_their_lines() {
        let text = GOOD
            .replace("protocol: 1", "protocol: 2")
            .replace("us_unit: ft", "us_unit: lbf")
            + "timeout: 0\n";
        let problems = read(&text).expect_err("refused");
        let lines: Vec<(u32, &str)> = problems
            .iter()
            .map(|d| (d.span.as_ref().expect("span").line, d.message.as_str()))
            .collect();
        assert!(
            lines
                .iter()
                .any(|(l, m)| *l == 1 && m.contains("protocol 2")),
            "{lines:?}"
        );
        assert!(
            lines
                .iter()
                .any(|(l, m)| *l == 12 && m.contains("timeout: 0")),
            "{lines:?}"
        );
        assert!(
            lines.iter().any(|(l, m)| *l == 10 && m.contains("`lbf`")),
            "{lines:?}"
        );
    }

    #[test]
    fn an_empty_command_and_an_empty_file_are_refused() {
        let d = first(read(&GOOD.replace("[python3, tiny.py]", "[]")));
        assert!(d.message.contains("names no program"));
        assert_eq!(d.span.expect("span").line, 11);
        let d = first(read("# nothing\n"));
        assert!(d.message.contains("empty"));
    }
}
