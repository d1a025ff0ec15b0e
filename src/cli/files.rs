//! Reading the files a run names: the spec and inventories, bounded in size, with the file's
//! name in every error. `pick`, `check`, `stock` and `take` all load through here, and every
//! file read is recorded ([`inputs`]) so that no output of the run can be one of them.

use super::failure::Failure;
use anyhow::{anyhow, Context};
use std::fs::File;
use std::io::{self, Read};
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use stockfit::spec::{self, Spec};
use stockfit::stock::inventory::{self, Inventory, MAX_INVENTORY_BYTES};

/// Reads a whole file of at most `limit` bytes. The size is checked with the file's metadata
/// first, and the read itself stops one byte past the limit (a file may grow, or be a device
/// without a size), so memory stays bounded whatever the path names.
pub fn read_bounded(path: &Path, limit: usize, what: &'static str) -> Result<Vec<u8>, Failure> {
    let too_big = |size: String| {
        Failure::input(anyhow!(
            "the {what} {} is {size}, more than the {} this tool reads; is this the right file?",
            path.display(),
            human_bytes(limit as u64)
        ))
    };
    let file =
        File::open(path).with_context(|| format!("cannot open the {what} {}", path.display()))?;
    let meta = file
        .metadata()
        .with_context(|| format!("cannot read the {what} {}", path.display()))?;
    record_input(path, what, &meta);
    if meta.is_dir() {
        return Err(Failure::input(anyhow!(
            "the {what} {} is a folder, not a file",
            path.display()
        )));
    }
    if meta.len() > limit as u64 {
        return Err(too_big(human_bytes(meta.len())));
    }
    let mut bytes = Vec::with_capacity(usize::try_from(meta.len()).unwrap_or(0).min(limit));
    file.take(limit as u64 + 1)
        .read_to_end(&mut bytes)
        .with_context(|| format!("cannot read the {what} {}", path.display()))?;
    if bytes.len() > limit {
        return Err(too_big("larger than that".into()));
    }
    Ok(bytes)
}

/// A file as the outputs check compares it: its path resolved (links followed, `.` and `..`
/// gone), and where the file exists, its device and inode, which name it through hard links
/// too (Unix; elsewhere the resolved path alone).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FileId {
    /// The path as the user wrote it, for messages.
    pub given: PathBuf,
    /// What the file is ("spec", "inventory"), for messages.
    pub what: &'static str,
    /// The resolved path: `canonicalize`, or for a file that does not exist yet, its
    /// resolved folder joined with its name.
    pub resolved: PathBuf,
    /// Device and inode of an existing file.
    pub inode: Option<(u64, u64)>,
}

impl FileId {
    /// The same file: the same resolved path, or the same device and inode.
    pub fn same(&self, other: &FileId) -> bool {
        self.resolved == other.resolved || (self.inode.is_some() && self.inode == other.inode)
    }
}

#[cfg(unix)]
fn inode_of(meta: &std::fs::Metadata) -> Option<(u64, u64)> {
    use std::os::unix::fs::MetadataExt;
    Some((meta.dev(), meta.ino()))
}

#[cfg(not(unix))]
fn inode_of(_meta: &std::fs::Metadata) -> Option<(u64, u64)> {
    None
}

/// Identifies `path` as a file to compare: an existing file by its resolved path and inode;
/// a file not written yet by its resolved folder (which must exist) and name.
pub fn identify(path: &Path, what: &'static str) -> io::Result<FileId> {
    match std::fs::canonicalize(path) {
        Ok(resolved) => Ok(FileId {
            given: path.to_path_buf(),
            what,
            inode: std::fs::metadata(&resolved)
                .ok()
                .as_ref()
                .and_then(inode_of),
            resolved,
        }),
        Err(e) if e.kind() == io::ErrorKind::NotFound => {
            let name = path
                .file_name()
                .ok_or_else(|| io::Error::new(io::ErrorKind::InvalidInput, "names no file"))?;
            let folder = match path.parent() {
                Some(p) if !p.as_os_str().is_empty() => p,
                _ => Path::new("."),
            };
            let folder = std::fs::canonicalize(folder).map_err(|e| {
                io::Error::new(e.kind(), format!("its folder {}: {e}", folder.display()))
            })?;
            if !folder.is_dir() {
                return Err(io::Error::new(
                    io::ErrorKind::NotADirectory,
                    format!("{} is not a folder", folder.display()),
                ));
            }
            Ok(FileId {
                given: path.to_path_buf(),
                what,
                resolved: folder.join(name),
                inode: None,
            })
        }
        Err(e) => Err(e),
    }
}

/// Every file the run has read so far. A registry rather than a list handed around, so that
/// a loader added later cannot be forgotten by the check that no output overwrites an input.
static INPUTS: Mutex<Vec<FileId>> = Mutex::new(Vec::new());

fn record_input(path: &Path, what: &'static str, meta: &std::fs::Metadata) {
    let resolved = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
    let id = FileId {
        given: path.to_path_buf(),
        what,
        resolved,
        inode: inode_of(meta),
    };
    let mut list = INPUTS.lock().unwrap_or_else(|p| p.into_inner());
    if !list.iter().any(|f| f.same(&id)) {
        list.push(id);
    }
}

/// The files read so far (the spec, every inventory), each once.
pub fn inputs() -> Vec<FileId> {
    INPUTS.lock().unwrap_or_else(|p| p.into_inner()).clone()
}

fn human_bytes(n: u64) -> String {
    if n >= 1 << 20 {
        format!("{:.1} MiB", n as f64 / f64::from(1u32 << 20))
    } else if n >= 1 << 10 {
        format!("{:.1} KiB", n as f64 / 1024.0)
    } else {
        format!("{n} bytes")
    }
}

/// Loads an inventory CSV from a path, bounded in size, with the file name in every error.
pub fn load_inventory(path: &Path) -> Result<Inventory, Failure> {
    let bytes = read_bounded(path, MAX_INVENTORY_BYTES, "inventory")?;
    Ok(inventory::parse_bytes(&bytes).with_context(|| format!("in {}", path.display()))?)
}

/// Loads a spec, bounded in size, and the folder its relative paths start from.
pub fn load_spec(path: &Path) -> Result<(Spec, PathBuf), Failure> {
    let bytes = read_bounded(path, spec::MAX_SPEC_BYTES, "spec")?;
    let mut spec = Spec::from_bytes(&bytes).with_context(|| format!("in {}", path.display()))?;
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    if let Some(f) = spec.amplifier_file.clone() {
        // `amplifier = "FILE#NAME"`: the file relative to the spec's folder, read here.
        let file = base.join(&f.path);
        let named_by = match f.line {
            Some(line) => format!("named by {} line {line}, `amplifier`", path.display()),
            None => format!("named by {}, `amplifier`", path.display()),
        };
        let bytes = read_bounded(&file, spec::MAX_SPEC_BYTES, "op-amp file")
            .map_err(|e| Failure::input(e.error.context(named_by.clone())))?;
        let text = String::from_utf8(bytes).map_err(|_| {
            Failure::input(anyhow::anyhow!(
                "{}: not UTF-8 text ({named_by})",
                file.display()
            ))
        })?;
        spec.resolve_amplifier(&text).map_err(|e| {
            let n = e.0.len() + e.1;
            let mut text = format!(
                "{n} problem{} in the op-amp file:",
                if n == 1 { "" } else { "s" }
            );
            for p in &e.0 {
                text.push_str(&format!("\n  {p}"));
            }
            if e.1 > 0 {
                text.push_str(&format!("\n  and {} more", e.1));
            }
            Failure::input(
                anyhow::anyhow!(text).context(format!("in {} ({named_by})", file.display())),
            )
        })?;
    }
    Ok((spec, base))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn read_bounded_refuses_large_files_by_their_size() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("big.csv");
        // A sparse file: its size says 1 GiB, nothing is written or read.
        let f = File::create(&path).unwrap();
        f.set_len(1 << 30).unwrap();
        let e = read_bounded(&path, 16 << 20, "inventory").unwrap_err();
        let text = format!("{:#}", e.error);
        assert!(
            text.contains("1024.0 MiB") && text.contains("16.0 MiB"),
            "{text}"
        );
        std::fs::write(&path, b"small").unwrap();
        assert_eq!(read_bounded(&path, 16, "inventory").unwrap(), b"small");
        assert!(read_bounded(dir.path(), 16, "inventory").is_err());
    }
}
