//! Reading the files a run names: the spec and inventories, bounded in size, with the file's
//! name in every error. `pick`, `check`, `stock` and `take` all load through here.

use super::failure::Failure;
use anyhow::{anyhow, Context};
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};
use stockfit::spec::{self, Spec};
use stockfit::stock::inventory::{self, Inventory, MAX_INVENTORY_BYTES};

/// Reads a whole file of at most `limit` bytes. The size is checked with the file's metadata
/// first, and the read itself stops one byte past the limit (a file may grow, or be a device
/// without a size), so memory stays bounded whatever the path names.
pub fn read_bounded(path: &Path, limit: usize, what: &str) -> Result<Vec<u8>, Failure> {
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
    let spec = Spec::from_bytes(&bytes).with_context(|| format!("in {}", path.display()))?;
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
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
