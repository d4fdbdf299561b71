//! `packwright new DIR`: a new project tree with one example item per
//! module, taken from the demo project so that the examples are the same
//! ones the tests run.

use std::path::Path;

use crate::commands::{Output, BAD_INPUT, FAILED, OK};

/// The demo project's files a new project starts from.
macro_rules! demo {
    ($path:literal) => {
        (
            $path,
            include_str!(concat!("../../../projects/harrow-creek/", $path)),
        )
    };
}

/// The files of a new project: path and contents. One item per module,
/// with the link from a chute to the loading point below it.
const FILES: &[(&str, &str)] = &[
    demo!("materials/iron-ore-fines.yaml"),
    demo!("materials/stud-link-38-u2.yaml"),
    demo!("transfers/TC-02.yaml"),
    demo!("conveyors/cv-102-load.yaml"),
    demo!("transfers/BIN-03-OUTLET.yaml"),
    demo!("chain/CH-02-ANCHOR.yaml"),
    demo!("lifting/H-01-MAINT-CRANE.yaml"),
    (".gitignore", ".packwright-cache/\n"),
];

/// The new project's own `project.yaml`: named after its folder, with a
/// first revision dated today that nobody has signed yet.
fn project_yaml(dir: &Path) -> String {
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "new-project".into());
    let document: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_uppercase()
            } else {
                '-'
            }
        })
        .collect();
    let today = today();
    format!(
        "# Project metadata. Edit the names, then `packwright build`.\n\
         project: {}\n\
         document: {document}-CALC-001\n\
         title: Material handling calculations\n\
         client: {}\n\
         units: si                  # or us, for US customary display units\n\
         revisions:\n\
         \x20 - rev: A\n\
         \x20   date: {today}\n\
         \x20   description: First issue for check\n",
        serde_json::to_string(&name).expect("a string"),
        serde_json::to_string(&name).expect("a string"),
    )
}

/// Today's date (UTC) as YYYY-MM-DD, from the system clock.
fn today() -> String {
    let days = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() / 86_400)
        .unwrap_or(0) as i64;
    // Civil date from days since 1970-01-01 (H. Hinnant's algorithm).
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02}")
}

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
    let project = project_yaml(dir);
    let all = std::iter::once(("project.yaml", project.as_str())).chain(FILES.iter().copied());
    for (path, text) in all {
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
        FILES.len() + 1,
        dir.display()
    ));
    OK
}
