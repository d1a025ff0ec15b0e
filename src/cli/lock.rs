//! The exclusive lock `take --yes` holds on an inventory from its first read to its rename,
//! so that concurrent takes run one after the other and each reads what the one before wrote.
//!
//! The lock is an advisory `flock(2)` (LockFileEx on Windows; the fs4 crate) on a separate,
//! empty lock file `.NAME.stockfit-lock` beside the inventory, not on the inventory itself:
//! `take` replaces the inventory by renaming a new file over it, so a lock on the inventory's
//! inode would be a lock on a file no longer in the folder — a second take waiting on the old
//! inode would wake up holding a lock nobody else checks, and read a list already replaced.
//!
//! The lock file is removed when the lock is released, while it is still held, so that no
//! file stays behind after a take. That opens the classic race of lock files that are deleted:
//! a process that opened the file just before it was removed gets its lock on a file no longer
//! in the folder. So after locking, the locked file must still be the one at the path (same
//! device and inode); if not, it is opened and locked again. A run killed while holding the
//! lock leaves the file; the system released the lock with the process, and the next take
//! locks, uses and removes it.
//!
//! Advisory means only other `take`s honour it. An editor or spreadsheet saving the inventory
//! meanwhile is caught by the hash check just before the rename, not prevented.

use std::fs::{self, File, OpenOptions};
use std::io;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// How long a take waits for another to finish with the inventory before it gives up.
pub const WAIT: Duration = Duration::from_secs(120);

/// How often a waiting take tries the lock again.
const POLL: Duration = Duration::from_millis(10);

/// The lock file of `target`: `.NAME.stockfit-lock` in its folder.
pub fn lock_path(target: &Path) -> PathBuf {
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "inventory".into());
    super::write::folder_of(target).join(format!(".{name}.stockfit-lock"))
}

/// Why the lock could not be had.
#[derive(Debug)]
pub enum LockError {
    /// Another process held it for all of [`WAIT`].
    Busy(PathBuf),
    /// The lock file could not be opened or locked.
    Io(PathBuf, io::Error),
}

/// An exclusive lock on an inventory, held until dropped.
#[derive(Debug)]
pub struct Lock {
    file: File,
    path: PathBuf,
}

impl Lock {
    /// Locks `target` (a resolved path), waiting up to [`WAIT`] for another holder; `waiting`
    /// is called once if the lock is busy.
    pub fn acquire(target: &Path, waiting: &mut dyn FnMut(&Path)) -> Result<Lock, LockError> {
        let path = lock_path(target);
        let deadline = Instant::now() + WAIT;
        let mut told = false;
        loop {
            let file = open(&path).map_err(|e| LockError::Io(path.clone(), e))?;
            match fs4::FileExt::try_lock(&file) {
                Ok(()) => {
                    if still_there(&file, &path) {
                        return Ok(Lock { file, path });
                    }
                    // Locked a file its holder had just removed: try the one at the path now.
                    continue;
                }
                Err(fs4::TryLockError::WouldBlock) => {
                    if !told {
                        waiting(&path);
                        told = true;
                    }
                    if Instant::now() >= deadline {
                        return Err(LockError::Busy(path));
                    }
                    std::thread::sleep(POLL);
                }
                Err(fs4::TryLockError::Error(e)) => return Err(LockError::Io(path, e)),
            }
        }
    }
}

/// Opens (creating) the lock file; read-only where it exists but may not be written (a lock
/// needs no write access to the file, only an open descriptor).
fn open(path: &Path) -> io::Result<File> {
    match OpenOptions::new()
        .read(true)
        .write(true)
        .create(true)
        .truncate(false)
        .open(path)
    {
        Err(e) if e.kind() == io::ErrorKind::PermissionDenied && path.exists() => File::open(path),
        other => other,
    }
}

/// The locked file is still the one at `path` (same device and inode), not one its last
/// holder removed.
#[cfg(unix)]
fn still_there(file: &File, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (file.metadata(), fs::metadata(path)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

/// Without inodes to compare, the lock file is never removed, so it is always the one.
#[cfg(not(unix))]
fn still_there(_file: &File, _path: &Path) -> bool {
    true
}

impl Drop for Lock {
    fn drop(&mut self) {
        // Removed while still locked (see the module docs); the lock goes with the descriptor.
        #[cfg(unix)]
        let _ = fs::remove_file(&self.path);
        let _ = fs4::FileExt::unlock(&self.file);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_second_lock_waits_and_no_lock_file_stays() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("stock.csv");
        fs::write(&target, b"x").unwrap();
        let first = Lock::acquire(&target, &mut |_| panic!("free")).unwrap();
        assert!(lock_path(&target).exists());
        let (tx, rx) = std::sync::mpsc::channel();
        let t = target.clone();
        let waiter = std::thread::spawn(move || {
            let mut told = false;
            let lock = Lock::acquire(&t, &mut |_| told = true).unwrap();
            tx.send(()).unwrap();
            drop(lock);
            told
        });
        std::thread::sleep(Duration::from_millis(200));
        assert!(rx.try_recv().is_err(), "the second lock did not wait");
        drop(first);
        rx.recv_timeout(Duration::from_secs(10)).unwrap();
        assert!(waiter.join().unwrap(), "the waiter was not told");
        assert!(!lock_path(&target).exists());
        let names: Vec<_> = fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(names.len(), 1);
    }
}
