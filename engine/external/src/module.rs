//! [`ExternalModule`]: a manifest whose command has been found inside the
//! project, implementing the plug-in contract by running that command once
//! per item.
//!
//! Owns the resolved command and the fingerprint; holds no process between
//! calls.

use std::path::{Component, Path, PathBuf};
use std::sync::Arc;
use std::time::Duration;

use packwright_api::{CalcError, Inputs, Module, ModuleDeclaration, Outcome, Span};
use packwright_core::Diagnostic;
use sha2::{Digest, Sha256};

use crate::manifest;
use crate::process::{self, Failure};
use crate::protocol::{self, Problem, Request};

/// How many lines of a module's standard error a message quotes.
const STDERR_LINES: usize = 8;

/// An external module: a manifest and the program it names.
#[derive(Debug, Clone)]
pub struct ExternalModule {
    declaration: ModuleDeclaration,
    manifest_file: String,
    workdir: PathBuf,
    program: PathBuf,
    args: Vec<String>,
    command_text: String,
    timeout: Duration,
    fingerprint: String,
    name_span: Span,
}

impl ExternalModule {
    /// Reads the manifest at `manifest_file` (relative to `project_root`,
    /// `/`-separated) and resolves its command: a bare program name is
    /// looked up on `PATH` (an interpreter such as `python3`); a program
    /// or argument that is a path is taken relative to the manifest's
    /// folder and must stay inside the project tree.
    pub fn load(
        project_root: &Path,
        manifest_file: &str,
    ) -> Result<ExternalModule, Vec<Diagnostic>> {
        let file: Arc<str> = Arc::from(manifest_file);
        let whole_file = || Some(Span::new(file.clone(), 1, 1));
        let root = project_root.canonicalize().map_err(|e| {
            vec![Diagnostic::new(
                None,
                format!(
                    "cannot open the project folder {}: {e}",
                    project_root.display()
                ),
            )]
        })?;
        let path = inside(&root, &root.join(manifest_file)).map_err(|why| {
            vec![
                Diagnostic::new(whole_file(), format!("the module manifest {why}")).expected(
                    "a manifest inside the project, for example `modules/skirt-seal/module.yaml`",
                ),
            ]
        })?;
        let bytes = std::fs::read(&path).map_err(|e| {
            vec![Diagnostic::new(
                whole_file(),
                format!("cannot read the module manifest: {e}"),
            )]
        })?;
        let manifest = manifest::parse(&file, &bytes)?;
        let workdir = path.parent().expect("a file has a folder").to_path_buf();
        let mut problems = Vec::new();
        let command_span = manifest.span_of("command");
        let mut digested: Vec<(String, PathBuf)> = Vec::new();

        let program_text = &manifest.command[0];
        let program = if is_bare_name(program_text) {
            match find_on_path(program_text) {
                Some(found) => found,
                None => {
                    problems.push(
                        Diagnostic::new(
                            Some(command_span.clone()),
                            format!("the program `{program_text}` is not on the PATH"),
                        )
                        .expected("an installed interpreter (`python3`) or a program in the module's folder written as a path (`./seal_drag`)"),
                    );
                    PathBuf::new()
                }
            }
        } else {
            match in_project(&root, &workdir, program_text) {
                Ok(found) if found.is_file() => {
                    if !is_executable(&found) {
                        problems.push(
                            Diagnostic::new(
                                Some(command_span.clone()),
                                format!("the program `{program_text}` is not executable"),
                            )
                            .expected(format!("mark it executable (`chmod +x {program_text}`) or run it through an interpreter (`[python3, {program_text}]`)")),
                        );
                    }
                    digested.push((relative(&root, &found), found.clone()));
                    found
                }
                Ok(_) => {
                    problems.push(
                        Diagnostic::new(
                            Some(command_span.clone()),
                            format!("the program `{program_text}` is not a file"),
                        )
                        .expected(
                            "the path of the module's program, relative to the manifest's folder",
                        ),
                    );
                    PathBuf::new()
                }
                Err(why) => {
                    problems.push(
                        Diagnostic::new(Some(command_span.clone()), format!("the program `{program_text}` {why}"))
                            .expected("a program inside the project, relative to the manifest's folder (`./seal_drag`), or an interpreter on the PATH (`python3`)"),
                    );
                    PathBuf::new()
                }
            }
        };

        for arg in &manifest.command[1..] {
            if Path::new(arg).is_absolute() {
                problems.push(
                    Diagnostic::new(Some(command_span.clone()), format!("the argument `{arg}` is an absolute path"))
                        .expected("paths relative to the manifest's folder, inside the project (`seal_drag.py`)"),
                );
                continue;
            }
            let candidate = workdir.join(arg);
            if candidate.symlink_metadata().is_err() && !escapes(arg) {
                continue; // a plain word (`--strict`), not a path
            }
            match in_project(&root, &workdir, arg) {
                Ok(found) if found.is_file() => digested.push((relative(&root, &found), found)),
                Ok(_) => {}
                Err(why) => problems.push(
                    Diagnostic::new(
                        Some(command_span.clone()),
                        format!("the argument `{arg}` {why}"),
                    )
                    .expected("files inside the project, relative to the manifest's folder"),
                ),
            }
        }
        let files_span = manifest.span_of("files");
        for extra in &manifest.files {
            match in_project(&root, &workdir, extra) {
                Ok(found) if found.is_file() => digested.push((relative(&root, &found), found)),
                Ok(_) => problems.push(
                    Diagnostic::new(
                        Some(files_span.clone()),
                        format!("`{extra}` under `files` is not a file"),
                    )
                    .expected("files the module reads, relative to the manifest's folder"),
                ),
                Err(why) => problems.push(
                    Diagnostic::new(
                        Some(files_span.clone()),
                        format!("`{extra}` under `files` {why}"),
                    )
                    .expected("files inside the project, relative to the manifest's folder"),
                ),
            }
        }
        if !problems.is_empty() {
            return Err(problems);
        }
        let fingerprint = fingerprint(&bytes, &digested).map_err(|e| {
            vec![Diagnostic::new(
                Some(command_span.clone()),
                format!("cannot read the module's files to digest them: {e}"),
            )]
        })?;
        Ok(ExternalModule {
            command_text: manifest.command.join(" "),
            args: manifest.command[1..].to_vec(),
            declaration: manifest.declaration.clone(),
            manifest_file: manifest_file.to_string(),
            workdir,
            program,
            timeout: manifest.timeout,
            fingerprint,
            name_span: manifest.span_of("name"),
        })
    }

    /// The manifest's path relative to the project root.
    pub fn manifest_file(&self) -> &str {
        &self.manifest_file
    }

    /// The command as the manifest writes it (`python3 seal_drag.py`).
    pub fn command_text(&self) -> &str {
        &self.command_text
    }

    /// How long one item may take.
    pub fn timeout(&self) -> Duration {
        self.timeout
    }

    /// Where the manifest gives the module's name, for messages about it.
    pub fn name_span(&self) -> &Span {
        &self.name_span
    }

    fn context(&self, item: &str) -> String {
        format!(
            "external module `{}` ({}) on item `{item}`",
            self.declaration.name, self.manifest_file
        )
    }

    fn failed(&self, item: &str, what: &str, stderr: &[u8]) -> CalcError {
        CalcError::Contract(format!(
            "{}: {what}{}",
            self.context(item),
            quote_stderr(stderr)
        ))
    }
}

impl Module for ExternalModule {
    fn declaration(&self) -> ModuleDeclaration {
        self.declaration.clone()
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        let item = inputs.item.as_str();
        let request = Request::new(&self.declaration, inputs).to_bytes();
        let finished = match process::run(&self.program, &self.args, &self.workdir, &request, self.timeout) {
            Ok(finished) => finished,
            Err(Failure::Spawn(e)) => {
                return Err(self.failed(item, &format!("the command `{}` could not be started: {e}", self.command_text), b""))
            }
            Err(Failure::Timeout { stderr }) => {
                return Err(self.failed(
                    item,
                    &format!(
                        "the command `{}` gave no answer within {} s and was stopped (raise `timeout:` in the manifest if it needs longer)",
                        self.command_text,
                        self.timeout.as_secs_f64()
                    ),
                    &stderr,
                ))
            }
        };
        if !finished.status.success() {
            let how = match finished.status.code() {
                Some(code) => format!("exited with status {code}"),
                None => "was killed by a signal".to_string(),
            };
            return Err(self.failed(
                item,
                &format!("the command `{}` {how}", self.command_text),
                &finished.stderr,
            ));
        }
        protocol::read_response(&finished.stdout, &self.declaration).map_err(
            |problem| match problem {
                Problem::Contract(message) => self.failed(item, &message, &finished.stderr),
                Problem::Numerical { quantity, message } => CalcError::Numerical {
                    quantity: format!("{quantity} of {}", self.context(item)),
                    message: format!("{message}{}", quote_stderr(&finished.stderr)),
                    inputs: inputs.values.keys().cloned().collect(),
                },
                Problem::Refused(CalcError::Input {
                    input,
                    message,
                    expected,
                    ..
                }) => CalcError::Input {
                    span: inputs.span_of(&input),
                    message: format!("{message} (said by {})", self.context(item)),
                    input,
                    expected,
                },
                Problem::Refused(CalcError::Numerical {
                    quantity,
                    message,
                    inputs: driven,
                }) => CalcError::Numerical {
                    quantity: format!("{quantity} ({})", self.context(item)),
                    message,
                    inputs: driven,
                },
                Problem::Refused(other) => other,
            },
        )
    }

    fn fingerprint(&self) -> Option<String> {
        Some(self.fingerprint.clone())
    }
}

/// `sha256:` of the manifest's bytes and of every project file the command
/// names, each framed by its path and length so that no two sets of files
/// digest alike.
fn fingerprint(manifest: &[u8], files: &[(String, PathBuf)]) -> std::io::Result<String> {
    let mut h = Sha256::new();
    h.update(format!(
        "packwright external module\nmanifest {}\n",
        manifest.len()
    ));
    h.update(manifest);
    for (rel, path) in files {
        let bytes = std::fs::read(path)?;
        h.update(format!("\nfile {rel} {}\n", bytes.len()));
        h.update(&bytes);
    }
    let hex: String = h.finalize().iter().map(|b| format!("{b:02x}")).collect();
    Ok(format!("sha256:{hex}"))
}

/// The first lines of standard error, indented under the message.
fn quote_stderr(stderr: &[u8]) -> String {
    let text = String::from_utf8_lossy(stderr);
    let lines: Vec<&str> = text.lines().filter(|l| !l.trim().is_empty()).collect();
    if lines.is_empty() {
        return String::new();
    }
    let mut quoted = String::from("\n    its standard error began:");
    for line in lines.iter().take(STDERR_LINES) {
        quoted.push_str("\n      ");
        quoted.push_str(&protocol::excerpt(line, 200));
    }
    if lines.len() > STDERR_LINES {
        quoted.push_str(&format!(
            "\n      ({} more lines)",
            lines.len() - STDERR_LINES
        ));
    }
    quoted
}

fn is_bare_name(program: &str) -> bool {
    !program.contains('/') && !program.contains('\\')
}

/// Whether a relative path climbs out of its folder with `..`.
fn escapes(path: &str) -> bool {
    Path::new(path)
        .components()
        .any(|c| c == Component::ParentDir)
}

/// `text` relative to `workdir`, resolved through symbolic links, if it
/// lies inside `root`.
fn in_project(root: &Path, workdir: &Path, text: &str) -> Result<PathBuf, String> {
    if Path::new(text).is_absolute() {
        return Err("is an absolute path; it must be relative to the manifest's folder".into());
    }
    inside(root, &workdir.join(text))
}

fn inside(root: &Path, path: &Path) -> Result<PathBuf, String> {
    let resolved = path
        .canonicalize()
        .map_err(|e| format!("cannot be found ({e})"))?;
    if resolved.starts_with(root) {
        Ok(resolved)
    } else {
        Err("lies outside the project tree, which packwright does not run or read".into())
    }
}

fn relative(root: &Path, path: &Path) -> String {
    path.strip_prefix(root)
        .unwrap_or(path)
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/")
}

fn find_on_path(name: &str) -> Option<PathBuf> {
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .map(|dir| dir.join(name))
        .find(|candidate| candidate.is_file() && is_executable(candidate))
}

#[cfg(unix)]
fn is_executable(path: &Path) -> bool {
    use std::os::unix::fs::PermissionsExt;
    path.metadata()
        .is_ok_and(|m| m.permissions().mode() & 0o111 != 0)
}

#[cfg(not(unix))]
fn is_executable(path: &Path) -> bool {
    path.is_file()
}

#[cfg(test)]
mod tests {
    use super::*;

    const MANIFEST: &str = "\
protocol: 1
name: twice
version: 1.0.0
purpose: Twice a length.
inputs:
  - name: length
    kind: { quantity: { dimension: length } }
    meaning: a length
outputs:
  - { name: twice, dimension: length, si_unit: m, us_unit: ft, meaning: twice the length }
command: COMMAND
";

    fn project(command: &str, files: &[(&str, &str)]) -> tempfile::TempDir {
        let dir = tempfile::tempdir().expect("temp dir");
        let module = dir.path().join("modules/twice");
        std::fs::create_dir_all(&module).expect("mkdir");
        std::fs::write(
            module.join("module.yaml"),
            MANIFEST.replace("COMMAND", command),
        )
        .expect("write");
        for (name, text) in files {
            let p = module.join(name);
            std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
            std::fs::write(p, text).expect("write");
        }
        dir
    }

    fn problem(dir: &tempfile::TempDir) -> String {
        let problems =
            ExternalModule::load(dir.path(), "modules/twice/module.yaml").expect_err("refused");
        let d = &problems[0];
        let span = d.span.as_ref().expect("a span");
        assert_eq!(
            (&*span.file, span.line),
            ("modules/twice/module.yaml", 11),
            "{d}"
        );
        d.message.clone()
    }

    #[test]
    fn paths_outside_the_project_are_refused() {
        let outside = tempfile::tempdir().expect("temp dir");
        std::fs::write(outside.path().join("x.py"), "print(1)").expect("write");
        let sibling = outside
            .path()
            .file_name()
            .expect("name")
            .to_string_lossy()
            .into_owned();
        // Both temporary folders share a parent; climb from modules/twice to it.
        let dir = project(&format!("[python3, ../../../{sibling}/x.py]"), &[]);
        assert!(problem(&dir).contains("outside the project tree"));
        let dir = project("[python3, /etc/passwd]", &[]);
        assert!(problem(&dir).contains("absolute path"));
        let dir = project("[/bin/sh, run.sh]", &[("run.sh", "")]);
        assert!(problem(&dir).contains("absolute path"));
    }

    #[cfg(unix)]
    #[test]
    fn a_symlink_out_of_the_project_is_refused() {
        let outside = tempfile::tempdir().expect("temp dir");
        std::fs::write(outside.path().join("evil.py"), "print(1)").expect("write");
        let dir = project("[python3, evil.py]", &[]);
        std::os::unix::fs::symlink(
            outside.path().join("evil.py"),
            dir.path().join("modules/twice/evil.py"),
        )
        .expect("symlink");
        assert!(problem(&dir).contains("outside the project tree"));
    }

    #[test]
    fn a_missing_program_and_a_non_executable_one_are_named() {
        let dir = project("[no-such-interpreter-here, x.py]", &[("x.py", "")]);
        assert!(problem(&dir).contains("`no-such-interpreter-here` is not on the PATH"));
        let dir = project("[./run.sh]", &[("run.sh", "#!/bin/sh\n")]);
        assert!(problem(&dir).contains("not executable"));
    }

    #[test]
    fn the_fingerprint_follows_the_manifest_and_the_script() {
        let dir = project(
            "[sh, run.sh, --fast]",
            &[("run.sh", "echo one\n"), ("lib/table.csv", "1,2\n")],
        );
        let load = || ExternalModule::load(dir.path(), "modules/twice/module.yaml").expect("loads");
        let first = load().fingerprint().expect("fingerprint");
        assert!(first.starts_with("sha256:") && first.len() == 7 + 64);
        assert_eq!(
            load().fingerprint().expect("fp"),
            first,
            "the same files give the same digest"
        );
        std::fs::write(dir.path().join("modules/twice/run.sh"), "echo two\n").expect("write");
        let second = load().fingerprint().expect("fp");
        assert_ne!(second, first, "a changed script changes the digest");
        let manifest = dir.path().join("modules/twice/module.yaml");
        let text = std::fs::read_to_string(&manifest).expect("read");
        std::fs::write(&manifest, text.replace("version: 1.0.0", "version: 1.0.1")).expect("write");
        assert_ne!(
            load().fingerprint().expect("fp"),
            second,
            "a changed manifest changes the digest"
        );
        std::fs::write(&manifest, text + "files: [lib/table.csv]\n").expect("write");
        let with_table = load().fingerprint().expect("fp");
        std::fs::write(dir.path().join("modules/twice/lib/table.csv"), "1,3\n").expect("write");
        assert_ne!(
            load().fingerprint().expect("fp"),
            with_table,
            "a listed file enters the digest"
        );
    }
}
