//! Writing files whole: the bytes go to a temporary file in the target's folder, which is
//! fsynced and renamed over the target, so that a crash or a kill at any moment leaves either
//! the old file or the new one, never a part (POSIX rename(2) is atomic within a file system;
//! the folder is fsynced after the rename so that the rename itself is durable — common
//! practice, cf. the rename(2) and fsync(2) manual pages).
//!
//! Temporary files are named `.NAME.stockfit-tmp-PID` (hidden, beside NAME). One left by a
//! killed run is removed by the next `take` of that inventory (which holds its lock, so no
//! other take can be writing it); beside an output it is only a hidden file, named so that
//! its origin is plain, and the next write of that output uses its own.

use std::fs::{self, File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// The mark in the name of every temporary file: `.NAME` + this + the process id.
pub const TMP_MARK: &str = ".stockfit-tmp-";

/// The folder of `target` (`.` for a bare name).
pub fn folder_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

fn name_of(target: &Path) -> String {
    target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into())
}

/// The temporary file beside `target` for this process, with `suffix` to tell several apart.
pub fn temp_path(target: &Path, suffix: &str) -> PathBuf {
    folder_of(target).join(format!(
        ".{}{TMP_MARK}{}{suffix}",
        name_of(target),
        std::process::id()
    ))
}

/// The temporary files of any process beside `target` (`.NAME.stockfit-tmp-*`).
pub fn leftovers(target: &Path) -> Vec<PathBuf> {
    let prefix = format!(".{}{TMP_MARK}", name_of(target));
    let Ok(entries) = fs::read_dir(folder_of(target)) else {
        return Vec::new();
    };
    let mut out: Vec<PathBuf> = entries
        .filter_map(Result::ok)
        .filter(|e| e.file_name().to_string_lossy().starts_with(&prefix))
        .filter(|e| e.file_type().is_ok_and(|t| t.is_file()))
        .map(|e| e.path())
        .collect();
    out.sort();
    out
}

/// What a new file takes over from the one it replaces.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Keep {
    /// Permission bits (`st_mode & 0o7777`); `None`: the default for a new file (umask).
    pub mode: Option<u32>,
    /// Owner and group; `None`: whoever creates the file.
    pub owner: Option<(u32, u32)>,
}

impl Keep {
    /// The mode of `meta`, and with `owner` its owner and group too (Unix; nothing elsewhere).
    #[cfg(unix)]
    pub fn of(meta: &fs::Metadata, owner: bool) -> Keep {
        use std::os::unix::fs::MetadataExt;
        Keep {
            mode: Some(meta.mode() & 0o7777),
            owner: owner.then(|| (meta.uid(), meta.gid())),
        }
    }

    /// The mode of `meta`, and with `owner` its owner and group too (Unix; nothing elsewhere).
    #[cfg(not(unix))]
    pub fn of(_meta: &fs::Metadata, _owner: bool) -> Keep {
        Keep::default()
    }
}

/// A new file could not be given the owner and group of the one it replaces: the user may not
/// set them (only root may give a file away, and a group only to one of the user's own).
#[derive(Debug)]
pub struct OwnerRefused {
    /// The owner and group asked for.
    pub owner: (u32, u32),
    /// What the system said.
    pub source: io::Error,
}

impl std::fmt::Display for OwnerRefused {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "cannot give the new file the owner and group of the old one (user {}, group {}): {}",
            self.owner.0, self.owner.1, self.source
        )
    }
}

impl std::error::Error for OwnerRefused {}

/// Points inside [`write_temp`] and [`replace`] where a test can make the write fail or pause.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WriteStage {
    /// Half of the new bytes are in the temporary file.
    PartWritten,
    /// The temporary file is complete and synced; the rename is next.
    BeforeRename,
}

/// A hook that does nothing.
pub fn no_hook(_: WriteStage) -> io::Result<()> {
    Ok(())
}

#[cfg(unix)]
fn create_temp(path: &Path, keep: &Keep) -> io::Result<File> {
    use std::os::unix::fs::{MetadataExt, OpenOptionsExt, PermissionsExt};
    let mut options = OpenOptions::new();
    options.write(true).create_new(true);
    if keep.mode.is_some() {
        // Nobody else may read it until it has the old file's mode.
        options.mode(0o600);
    }
    let file = options.open(path)?;
    if let Some((uid, gid)) = keep.owner {
        let meta = file.metadata()?;
        if (meta.uid(), meta.gid()) != (uid, gid) {
            std::os::unix::fs::fchown(&file, Some(uid), Some(gid)).map_err(|source| {
                io::Error::new(
                    source.kind(),
                    OwnerRefused {
                        owner: (uid, gid),
                        source,
                    },
                )
            })?;
        }
    }
    // After the chown, which clears set-user-ID and set-group-ID bits (chown(2)).
    if let Some(mode) = keep.mode {
        file.set_permissions(fs::Permissions::from_mode(mode))?;
    }
    Ok(file)
}

#[cfg(not(unix))]
fn create_temp(path: &Path, _keep: &Keep) -> io::Result<File> {
    OpenOptions::new().write(true).create_new(true).open(path)
}

/// Writes `bytes` to a new temporary file beside `target` (`suffix` after its name) with
/// `keep` applied, and fsyncs it; returns its path. On any error the file is removed.
pub fn write_temp(
    target: &Path,
    suffix: &str,
    bytes: &[u8],
    keep: &Keep,
    hook: &mut dyn FnMut(WriteStage) -> io::Result<()>,
) -> io::Result<PathBuf> {
    let tmp = temp_path(target, suffix);
    let result = (|| {
        let mut file = create_temp(&tmp, keep)?;
        let half = bytes.len() / 2;
        file.write_all(&bytes[..half])?;
        file.flush()?;
        hook(WriteStage::PartWritten)?;
        file.write_all(&bytes[half..])?;
        file.sync_all()
    })();
    match result {
        Ok(()) => Ok(tmp),
        Err(e) => {
            // Only a file this call created: `create_new` refuses an existing one.
            if e.kind() != io::ErrorKind::AlreadyExists {
                let _ = fs::remove_file(&tmp);
            }
            Err(e)
        }
    }
}

/// Makes a rename in `dir` durable. Folders cannot be opened for syncing everywhere
/// (Windows); the rename is done either way.
pub fn sync_folder(dir: &Path) {
    if let Ok(d) = File::open(dir) {
        let _ = d.sync_all();
    }
}

/// Replaces `target` with `bytes` whole (see the module docs), the new file given `keep`.
/// `hook` runs at each [`WriteStage`]; an error from it aborts the write like an I/O error
/// (the temporary file is removed and `target` is untouched).
pub fn replace(
    target: &Path,
    bytes: &[u8],
    keep: &Keep,
    hook: &mut dyn FnMut(WriteStage) -> io::Result<()>,
) -> io::Result<()> {
    let tmp = write_temp(target, "", bytes, keep, hook)?;
    let result = hook(WriteStage::BeforeRename).and_then(|()| fs::rename(&tmp, target));
    if let Err(e) = result {
        let _ = fs::remove_file(&tmp);
        return Err(e);
    }
    sync_folder(&folder_of(target));
    Ok(())
}

/// Writes an output file whole. An existing file keeps its permissions, and one this user may
/// not write (read-only) is refused, as a plain write would be — a rename could replace it
/// all the same; a symbolic link is followed (the file it names is replaced, the link stays);
/// a device or pipe (`/dev/null`, `/dev/stdout`) is written directly, since it cannot be
/// renamed over. A hard link is not kept: this name gets the new file.
pub fn output(path: &Path, bytes: &[u8]) -> io::Result<()> {
    match fs::metadata(path) {
        Ok(meta) if !meta.is_file() => {
            if meta.is_dir() {
                return Err(io::Error::new(
                    io::ErrorKind::IsADirectory,
                    "it is a folder",
                ));
            }
            let mut file = OpenOptions::new().write(true).open(path)?;
            file.write_all(bytes)?;
            file.flush()
        }
        Ok(meta) => {
            if meta.permissions().readonly() || OpenOptions::new().write(true).open(path).is_err() {
                return Err(io::Error::new(
                    io::ErrorKind::PermissionDenied,
                    "it is read-only",
                ));
            }
            let target = fs::canonicalize(path)?;
            replace(&target, bytes, &Keep::of(&meta, false), &mut no_hook)
        }
        Err(e) if e.kind() == io::ErrorKind::NotFound => {
            replace(path, bytes, &Keep::default(), &mut no_hook)
        }
        Err(e) => Err(e),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_failure_before_the_rename_leaves_the_old_file() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("stock.csv");
        fs::write(&target, b"old contents\r\n").unwrap();
        for stage in [WriteStage::PartWritten, WriteStage::BeforeRename] {
            let mut hook = |s: WriteStage| {
                if s == stage {
                    Err(io::Error::other("injected"))
                } else {
                    Ok(())
                }
            };
            let err = replace(
                &target,
                b"new contents, longer\n",
                &Keep::default(),
                &mut hook,
            );
            assert!(err.is_err(), "{stage:?}");
            assert_eq!(fs::read(&target).unwrap(), b"old contents\r\n", "{stage:?}");
            // No temporary file is left behind.
            let names: Vec<_> = fs::read_dir(dir.path()).unwrap().collect();
            assert_eq!(names.len(), 1, "{stage:?}: {names:?}");
        }
        replace(
            &target,
            b"new contents, longer\n",
            &Keep::default(),
            &mut no_hook,
        )
        .unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"new contents, longer\n");
    }

    #[cfg(unix)]
    #[test]
    fn the_new_file_keeps_the_mode_and_links_are_followed() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out.csv");
        fs::write(&target, b"a").unwrap();
        fs::set_permissions(&target, fs::Permissions::from_mode(0o640)).unwrap();
        let link = dir.path().join("link.csv");
        std::os::unix::fs::symlink("out.csv", &link).unwrap();
        output(&link, b"b").unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"b");
        assert!(fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        let mode = fs::metadata(&target).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o640);
        // A device is written in place, not replaced.
        output(Path::new("/dev/null"), b"x").unwrap();
        assert!(!fs::metadata("/dev/null").unwrap().is_file());
        assert_eq!(leftovers(&target), Vec::<PathBuf>::new());
    }
}
