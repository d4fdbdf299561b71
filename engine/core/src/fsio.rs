//! Writing to disk so that nothing already there is lost or half-written.
//!
//! A folder the tool owns (`results/`, `package/`) is written whole into a
//! hidden sibling and then swapped in with one atomic `renameat2` exchange;
//! a single file (`issued/B.yaml`) is written beside its target and renamed
//! over it. A crash at any moment leaves the complete old or the complete new
//! version. Owns no state; leftovers of a crash are hidden and removed by
//! the next write.

use std::fs;
use std::io::{self, Write};
use std::os::unix::ffi::OsStrExt;
use std::path::{Path, PathBuf};

fn hidden_sibling(target: &Path, tag: &str) -> io::Result<PathBuf> {
    let name = target
        .file_name()
        .ok_or_else(|| io::Error::new(io::ErrorKind::InvalidInput, "target has no name"))?
        .to_string_lossy()
        .into_owned();
    let parent = target.parent().unwrap_or_else(|| Path::new("."));
    Ok(parent.join(format!(".{name}.{tag}-{}", std::process::id())))
}

/// Removes leftovers of earlier interrupted writes of `target`.
fn clean_leftovers(target: &Path) {
    let (Some(parent), Some(name)) = (target.parent(), target.file_name()) else {
        return;
    };
    let prefix = format!(".{}.", name.to_string_lossy());
    if let Ok(entries) = fs::read_dir(parent) {
        for entry in entries.flatten() {
            let n = entry.file_name().to_string_lossy().into_owned();
            if n.starts_with(&prefix) && (n.contains(".new-") || n.contains(".old-")) {
                let p = entry.path();
                let _ = if p.is_dir() {
                    fs::remove_dir_all(&p)
                } else {
                    fs::remove_file(&p)
                };
            }
        }
    }
}

fn sync_dir(dir: &Path) -> io::Result<()> {
    fs::File::open(dir)?.sync_all()
}

/// Writes a file's bytes and flushes them to disk.
fn write_synced(path: &Path, bytes: &[u8]) -> io::Result<()> {
    let mut f = fs::File::create(path)?;
    f.write_all(bytes)?;
    f.sync_all()
}

/// Whether the folder `target` already holds exactly `files`.
fn holds_exactly(target: &Path, files: &[(String, Vec<u8>)]) -> bool {
    let Ok(entries) = fs::read_dir(target) else {
        return false;
    };
    let count = entries.count();
    count == files.len()
        && files
            .iter()
            .all(|(name, bytes)| fs::read(target.join(name)).is_ok_and(|old| &old == bytes))
}

/// Replaces the folder `target` with one holding exactly `files` (relative
/// names and contents), atomically. A folder that already holds exactly
/// these files is left alone; files that did not change are hard-linked
/// into the new folder rather than written again, so a rerun that changes
/// one result of a thousand writes one file.
pub fn replace_dir(target: &Path, files: &[(String, Vec<u8>)]) -> io::Result<()> {
    clean_leftovers(target);
    if holds_exactly(target, files) {
        return Ok(());
    }
    let staging = hidden_sibling(target, "new")?;
    fs::create_dir_all(&staging)?;
    for (name, bytes) in files {
        let path = staging.join(name);
        if let Some(p) = path.parent() {
            fs::create_dir_all(p)?;
        }
        let old = target.join(name);
        let unchanged = fs::read(&old).is_ok_and(|b| &b == bytes);
        if !(unchanged && fs::hard_link(&old, &path).is_ok()) {
            fs::write(&path, bytes)?;
        }
    }
    // One flush of the file system for the whole folder: a thousand
    // result files would otherwise cost a thousand fsyncs.
    let dir = fs::File::open(&staging)?;
    rustix::fs::syncfs(&dir).map_err(io::Error::from)?;
    if target.exists() {
        // One system call swaps the two folders: there is no moment with
        // neither, nor with a mix of both.
        rustix::fs::renameat_with(
            rustix::fs::CWD,
            &staging,
            rustix::fs::CWD,
            target,
            rustix::fs::RenameFlags::EXCHANGE,
        )
        .map_err(io::Error::from)?;
        fs::remove_dir_all(&staging)?;
    } else {
        fs::rename(&staging, target)?;
    }
    if let Some(parent) = target.parent() {
        sync_dir(parent)?;
    }
    Ok(())
}

/// What [`update_dir`] does with one file of the new version.
#[derive(Debug, Clone, Copy)]
pub enum Update<'a> {
    /// The target folder already holds this file with the new content.
    Keep,
    /// The file's new content.
    Write(&'a [u8]),
}

/// Calls `each` with the name and inode number of every entry of a folder
/// (none when the folder is missing), without making a string of each name.
fn each_entry(dir: &Path, mut each: impl FnMut(&[u8], u64)) -> io::Result<()> {
    use rustix::fs::{Mode, OFlags, RawDir};
    let flags = OFlags::RDONLY | OFlags::DIRECTORY | OFlags::CLOEXEC;
    let fd = match rustix::fs::open(dir, flags, Mode::empty()) {
        Ok(fd) => fd,
        Err(rustix::io::Errno::NOENT) => return Ok(()),
        Err(e) => return Err(e.into()),
    };
    let mut buf = Vec::with_capacity(64 * 1024);
    let mut entries = RawDir::new(&fd, buf.spare_capacity_mut());
    while let Some(entry) = entries.next() {
        let entry = entry?;
        let name = entry.file_name().to_bytes();
        if name != b"." && name != b".." {
            each(name, entry.ino());
        }
    }
    Ok(())
}

fn remove_any(path: &Path) -> io::Result<()> {
    match fs::symlink_metadata(path) {
        Ok(m) if m.is_dir() => fs::remove_dir_all(path),
        Ok(_) => fs::remove_file(path),
        Err(e) if e.kind() == io::ErrorKind::NotFound => Ok(()),
        Err(e) => Err(e),
    }
}

/// More new files than this are flushed with one `syncfs` rather than one
/// `fsync` each.
const SYNC_EACH_UP_TO: usize = 16;

/// Makes the flat folder `target` hold exactly `files`, atomically, with
/// work in proportion to what changed.
///
/// `spare` is a folder on the same file system that this function alone
/// writes (in the cache); after a call it holds the version of `target`
/// before it. The next call turns the spare into the new version: files
/// that are the same inode in both folders are left alone, kept files are
/// hard-linked from `target`, new contents are written over the spare's
/// own copy of the file (an inode with no other name) or as new files,
/// never into an inode `target` shares, and stale entries go. Then one
/// `renameat2(RENAME_EXCHANGE)` swaps the two folders, so `target` holds
/// the complete old or the complete new version at every moment, as
/// [`replace_dir`] guarantees, without a thousand links and unlinks for a
/// one-file change. Nothing in the spare is trusted but its inode numbers.
///
/// Every [`Update::Keep`] must name a file that `target` holds with the new
/// content. The caller keeps other writers out (the cache's lock). A
/// caller that stamped `target`'s files since it took the lock passes the
/// inode of each of `files` there (`None` for one it does not hold), and
/// `target` is not listed again.
///
/// Returns, for each of `files`, whether it was written or linked anew:
/// the others are the inodes `target` held before, untouched (their change
/// time too), so a caller that knew their stamps need not look again.
pub fn update_dir(
    target: &Path,
    spare: &Path,
    files: &[(String, Update<'_>)],
    in_target: Option<Vec<Option<u64>>>,
) -> io::Result<Vec<bool>> {
    clean_leftovers(target);
    fs::create_dir_all(spare)?;
    let position: crate::fast::HashMap<&[u8], usize> = files
        .iter()
        .enumerate()
        .map(|(i, (name, _))| (name.as_bytes(), i))
        .collect();
    // The inode each of `files` has in the spare and in the target.
    let mut in_spare: Vec<Option<u64>> = vec![None; files.len()];
    let mut stale = Vec::new();
    each_entry(spare, |name, ino| match position.get(name) {
        Some(&i) => in_spare[i] = Some(ino),
        None => stale.push(std::ffi::OsStr::from_bytes(name).to_owned()),
    })?;
    let in_target = match in_target.filter(|known| known.len() == files.len()) {
        Some(known) => known,
        None => {
            let mut listed: Vec<Option<u64>> = vec![None; files.len()];
            each_entry(target, |name, ino| {
                if let Some(&i) = position.get(name) {
                    listed[i] = Some(ino);
                }
            })?;
            listed
        }
    };
    for name in stale {
        remove_any(&spare.join(name))?;
    }
    let written = files
        .iter()
        .filter(|(_, u)| matches!(u, Update::Write(_)))
        .count();
    let sync_each = written <= SYNC_EACH_UP_TO;
    let mut touched = vec![true; files.len()];
    let mut to_sync = Vec::new();
    for (i, ((name, update), touched)) in files.iter().zip(&mut touched).enumerate() {
        let shared = in_spare[i].is_some() && in_spare[i] == in_target[i];
        if shared && matches!(update, Update::Keep) {
            *touched = false;
            continue;
        }
        let path = spare.join(name);
        match update {
            Update::Keep => {
                remove_any(&path)?;
                let old = target.join(name);
                if fs::hard_link(&old, &path).is_err() {
                    fs::copy(&old, &path)?;
                    if sync_each {
                        to_sync.push(path);
                    }
                }
            }
            Update::Write(bytes) => {
                let own = in_spare[i].is_some() && !shared;
                if !(own && overwrite_alone(&path, bytes)?) {
                    remove_any(&path)?;
                    fs::write(&path, bytes)?;
                }
                if sync_each {
                    to_sync.push(path);
                }
            }
        }
    }
    if sync_each {
        // Side by side: the file system commits flushes that wait at once
        // together, where one after another each waits for a commit.
        to_sync.push(spare.to_path_buf());
        sync_all(&to_sync)?;
    } else {
        // One flush of the file system for the whole folder: a thousand
        // result files would otherwise cost a thousand fsyncs.
        let dir = fs::File::open(spare)?;
        rustix::fs::syncfs(&dir).map_err(io::Error::from)?;
    }
    if target.exists() {
        rustix::fs::renameat_with(
            rustix::fs::CWD,
            spare,
            rustix::fs::CWD,
            target,
            rustix::fs::RenameFlags::EXCHANGE,
        )
        .map_err(io::Error::from)?;
    } else {
        fs::rename(spare, target)?;
        // The first write of the folder also leaves a spare (links to the
        // same files), so the next update costs what changed, not a link
        // per file. Without one the next update only costs more.
        if fs::create_dir(spare).is_ok() {
            for (name, _) in files {
                if fs::hard_link(target.join(name), spare.join(name)).is_err() {
                    let _ = fs::remove_dir_all(spare);
                    break;
                }
            }
        }
    }
    let parents: Vec<PathBuf> = [target.parent(), spare.parent()]
        .into_iter()
        .flatten()
        .map(Path::to_path_buf)
        .collect();
    sync_all(&parents)?;
    Ok(touched)
}

/// Writes `bytes` over the file at `path` in place when it is a regular
/// file with no other name (so no other folder sees the change); says
/// whether it did. Reusing the spare's own copy, and its blocks, spares
/// the file system a new inode and freeing the old one's blocks: on ext4
/// without a journal, finding a free inode skips those freed in the last
/// minute, and a new file cost as much as stamping a hundred.
fn overwrite_alone(path: &Path, bytes: &[u8]) -> io::Result<bool> {
    use std::os::unix::fs::{FileExt, MetadataExt};
    let file = match fs::OpenOptions::new().write(true).open(path) {
        Ok(f) => f,
        Err(_) => return Ok(false),
    };
    let meta = file.metadata()?;
    if !meta.is_file() || meta.nlink() != 1 {
        return Ok(false);
    }
    file.write_all_at(bytes, 0)?;
    if meta.len() > bytes.len() as u64 {
        file.set_len(bytes.len() as u64)?;
    }
    Ok(true)
}

/// Flushes files and folders to disk, all at once.
fn sync_all(paths: &[PathBuf]) -> io::Result<()> {
    use rayon::prelude::*;
    paths
        .par_iter()
        .try_for_each(|path| fs::File::open(path)?.sync_all())
}

/// Writes one file atomically: the new content goes to a hidden file beside
/// the target's folder (so a crash leaves nothing inside the folder, where
/// `git add issued/` would pick it up) and is renamed over the target.
pub fn write_file(target: &Path, bytes: &[u8]) -> io::Result<()> {
    let folder = target
        .parent()
        .ok_or_else(|| io::Error::new(io::ErrorKind::InvalidInput, "target has no folder"))?;
    fs::create_dir_all(folder)?;
    let outside = folder.parent().unwrap_or(folder);
    let folder_name = folder
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let file_name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let stand_in = outside.join(format!("{folder_name}-{file_name}"));
    clean_leftovers(&stand_in);
    clean_leftovers(target);
    let staging = hidden_sibling(&stand_in, "new")?;
    write_synced(&staging, bytes)?;
    fs::rename(&staging, target)?;
    sync_dir(folder)?;
    Ok(())
}

/// Writes one file by rename, without flushing it to disk: for the cache,
/// where a lost file costs only a recomputation.
pub fn write_file_unsynced(target: &Path, bytes: &[u8]) -> io::Result<()> {
    let staging = hidden_sibling(target, "new")?;
    fs::write(&staging, bytes)?;
    fs::rename(&staging, target)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn replaces_a_folder_whole() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("results");
        replace_dir(
            &target,
            &[
                ("a.yaml".into(), b"1".to_vec()),
                ("b.yaml".into(), b"2".to_vec()),
            ],
        )
        .unwrap();
        replace_dir(&target, &[("a.yaml".into(), b"3".to_vec())]).unwrap();
        assert_eq!(fs::read(target.join("a.yaml")).unwrap(), b"3");
        assert!(
            !target.join("b.yaml").exists(),
            "stale files go with the old folder"
        );
        let names: Vec<_> = fs::read_dir(dir.path())
            .unwrap()
            .flatten()
            .map(|e| e.file_name())
            .collect();
        assert_eq!(
            names.len(),
            1,
            "no staging folder is left behind: {names:?}"
        );
    }

    #[test]
    fn writes_a_file_whole() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("issued").join("A.yaml");
        write_file(&target, b"old").unwrap();
        write_file(&target, b"new").unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"new");
        assert_eq!(fs::read_dir(target.parent().unwrap()).unwrap().count(), 1);
    }

    /// After an update the folder holds exactly the new files; a file kept
    /// as the same inode is reported untouched, with its stamp as before,
    /// and a written or newly linked one touched.
    #[test]
    fn updates_a_folder_and_says_what_it_touched() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("results");
        let spare = dir.path().join("cache").join("spare");
        let names = ["a.yaml", "b.yaml", "c.yaml"];
        let first: Vec<(String, Update<'_>)> = names
            .iter()
            .map(|n| (n.to_string(), Update::Write(b"1")))
            .collect();
        assert_eq!(
            update_dir(&target, &spare, &first, None).unwrap(),
            [true; 3]
        );
        let before = crate::index::stamp_of(&target.join("a.yaml"));
        let second = vec![
            ("a.yaml".to_string(), Update::Keep),
            ("b.yaml".to_string(), Update::Write(b"2")),
            ("d.yaml".to_string(), Update::Write(b"4")),
        ];
        assert_eq!(
            update_dir(&target, &spare, &second, None).unwrap(),
            [false, true, true]
        );
        assert_eq!(crate::index::stamp_of(&target.join("a.yaml")), before);
        let mut held: Vec<_> = fs::read_dir(&target)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().into_string().unwrap())
            .collect();
        held.sort();
        assert_eq!(held, ["a.yaml", "b.yaml", "d.yaml"]);
        assert_eq!(fs::read(target.join("b.yaml")).unwrap(), b"2");
        assert_eq!(fs::read(target.join("a.yaml")).unwrap(), b"1");
        // The spare now holds the version before; the next update links
        // the kept files it does not share.
        let third = vec![
            ("a.yaml".to_string(), Update::Keep),
            ("b.yaml".to_string(), Update::Keep),
            ("d.yaml".to_string(), Update::Keep),
        ];
        assert_eq!(
            update_dir(&target, &spare, &third, None).unwrap(),
            [false, true, true]
        );
        assert_eq!(fs::read(target.join("d.yaml")).unwrap(), b"4");
        // Two writes of one file: the first makes a new file (the spare's
        // copy is the one `target` holds), the second writes over the
        // spare's own copy, which `target` no longer holds.
        use std::os::unix::fs::MetadataExt;
        let ino = |dir: &Path| fs::metadata(dir.join("b.yaml")).unwrap().ino();
        let shared_before = ino(&target);
        for content in [&b"5"[..], b"66"] {
            let update = vec![
                ("a.yaml".to_string(), Update::Keep),
                ("b.yaml".to_string(), Update::Write(content)),
                ("d.yaml".to_string(), Update::Keep),
            ];
            // Told the target's inodes (as a run that stamped them is),
            // the update does what it does after listing the folder.
            let known = update
                .iter()
                .map(|(name, _)| fs::metadata(target.join(name)).ok().map(|m| m.ino()))
                .collect();
            assert_eq!(
                update_dir(&target, &spare, &update, Some(known)).unwrap(),
                [false, true, false]
            );
            assert_eq!(fs::read(target.join("b.yaml")).unwrap(), content);
        }
        assert_eq!(ino(&target), shared_before, "written over in place");
        assert_eq!(fs::read(spare.join("b.yaml")).unwrap(), b"5");
        assert_eq!(fs::read(target.join("a.yaml")).unwrap(), b"1");
    }
}
