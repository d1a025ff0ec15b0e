//! `stockfit take`: run the pick, then take the chosen build's pieces off the inventory file —
//! checked against a content hash, backed up, and replaced atomically so that the file is
//! always either the old list or the new one, never a partial write.

use super::args::TakeArgs;
use super::failure::{Failure, EXIT_BAD_INPUT, EXIT_NO_BUILD, EXIT_OK};
use super::files::{load_spec, read_bounded};
use super::run::{in_spec, split_entries};
use anyhow::{anyhow, Context};
use std::fs::{self, File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{SystemTime, UNIX_EPOCH};
use stockfit::circuit;
use stockfit::pick::{self, Options};
use stockfit::search::SearchError;
use stockfit::stock::edit::{self, EditError};
use stockfit::stock::inventory::{self, MAX_INVENTORY_BYTES};
use stockfit::stock::sha256::hex_digest;
use stockfit::stock::{Source, Stock};
use stockfit::value::{self, Unit};

/// Print to stdout; a closed pipe is not worth a panic.
macro_rules! say {
    ($($t:tt)*) => { let _ = writeln!(std::io::stdout().lock(), $($t)*); };
}

pub fn take(args: &TakeArgs) -> Result<i32, Failure> {
    let (spec, _base) = load_spec(&args.spec)?;
    let path = &args.stock;
    if path.extension().and_then(|e| e.to_str()).is_none()
        && stockfit::series::Series::parse(&path.to_string_lossy()).is_some()
    {
        return Err(Failure::input(anyhow!(
            "--stock {}: take needs an inventory CSV to take pieces from, not a series",
            path.display()
        )));
    }
    let original = read_bounded(path, MAX_INVENTORY_BYTES, "inventory")?;
    let hash = hex_digest(&original);
    if let Some(expected) = &args.expect_hash {
        let expected = expected.trim().to_ascii_lowercase();
        if expected.len() != 64 || !expected.bytes().all(|b| b.is_ascii_hexdigit()) {
            return Err(Failure::input(anyhow!(
                "--expect-hash {expected}: expected the 64 hex digits of a SHA-256, as `take` prints"
            )));
        }
        if expected != hash {
            return Err(Failure::input(anyhow!(
                "the inventory {} changed since the pick (sha256 {expected} then, {hash} now); \
                 nothing taken: run `stockfit take` again without --yes to see the new pick",
                path.display()
            )));
        }
    }
    let inv = Arc::new(
        inventory::parse_bytes(&original).with_context(|| format!("in {}", path.display()))?,
    );

    let stage = circuit::circuit_for(spec.stage);
    // Both kinds come from the one inventory the pieces are taken off.
    let stock = Stock::new(
        Source::Inventory(inv.clone()),
        Source::Inventory(inv.clone()),
        spec.stock.limits(),
    );
    let entries = split_entries(&args.lock, "--lock")?;
    let locked =
        pick::resolve_locks(&spec, stage, &stock, &entries).map_err(|e| in_spec(&args.spec, e))?;
    if args.build > args.top {
        return Err(Failure::input(anyhow!(
            "--build {} with --top {}: the build must be one of the ranked ones",
            args.build,
            args.top
        )));
    }
    let options = Options {
        top: args.top,
        engine: args.engine.engine(),
        ..Options::default()
    };
    let picked = match pick::pick(&spec, &stock, &locked, &options, &mut |_| {}) {
        Ok(p) => p,
        Err(stockfit::Error::Search(e @ SearchError::NoCandidates { .. })) => {
            eprintln!("error: {e}; nothing taken");
            return Ok(EXIT_NO_BUILD);
        }
        Err(e) => return Err(Failure::input(e)),
    };
    if picked.builds.is_empty() {
        eprintln!(
            "error: no build from {} meets the spec; nothing taken (`stockfit pick` explains why)",
            path.display()
        );
        return Ok(EXIT_NO_BUILD);
    }
    let Some(chosen) = picked.builds.get(args.build - 1) else {
        return Err(Failure::input(anyhow!(
            "--build {}: only {} build(s) meet the spec",
            args.build,
            picked.builds.len()
        )));
    };

    let takings = pick::takings(&inv, stage, &chosen.build);
    let deductions: Vec<(usize, u32)> = takings.iter().map(|t| (t.row, t.pieces)).collect();
    let updated = edit::deduct(&original, &deductions).map_err(|e| match e {
        EditError::TooFew(_) => {
            Failure::input(anyhow!("in {}: {e}; nothing taken", path.display()))
        }
        e => Failure::input(anyhow!("in {}: {e}", path.display())),
    })?;

    let mut plan = Vec::new();
    plan.push(format!(
        "Build #{} from {} (sha256 {hash}):",
        args.build,
        path.display()
    ));
    let labels: Vec<String> = chosen
        .build
        .parts
        .iter()
        .zip(stage.slots())
        .map(|(p, s)| {
            format!(
                "{} {}{}",
                s.name,
                p.label(),
                if p.locked { "*" } else { "" }
            )
        })
        .collect();
    plan.push(format!("  {}", labels.join(" · ")));
    for t in &takings {
        let unit = t.kind.unit();
        plan.push(format!(
            "  line {:>4} (row {}): {} {} {}: {} on hand → {} (for {})",
            t.file_line,
            t.row,
            t.kind,
            value::format(t.value, unit),
            value::format(t.tolerance, Unit::Percent),
            t.on_hand,
            t.on_hand - t.pieces,
            t.slots.join(", ")
        ));
    }
    if takings.is_empty() {
        plan.push("  nothing to take: every slot is locked".into());
    }

    if !args.yes {
        for line in &plan {
            say!("{line}");
        }
        say!(
            "Dry run: nothing written. Add --yes to take these pieces; to take them later only if \
             the file is unchanged, add --yes --expect-hash {hash}"
        );
        return Ok(EXIT_OK);
    }
    if takings.is_empty() {
        for line in &plan {
            say!("{line}");
        }
        return Ok(EXIT_OK);
    }

    // The file must still be the one the pick was made from.
    let again = read_bounded(path, MAX_INVENTORY_BYTES, "inventory")?;
    if hex_digest(&again) != hash {
        return Err(Failure::input(anyhow!(
            "the inventory {} changed while stockfit was working on it; nothing taken: run again",
            path.display()
        )));
    }
    let target = fs::canonicalize(path)
        .with_context(|| format!("cannot resolve the inventory path {}", path.display()))?;
    let backup = write_backup(&target, &original, SystemTime::now())
        .with_context(|| format!("cannot write a backup of {}; nothing taken", path.display()))?;
    replace_atomically(&target, &updated, &mut env_hook())
        .with_context(|| format!("cannot replace {}; it is unchanged", path.display()))
        .map_err(|e| Failure {
            code: EXIT_BAD_INPUT,
            error: e,
        })?;
    for line in &plan {
        say!("{line}");
    }
    let pieces: u32 = takings.iter().map(|t| t.pieces).sum();
    say!(
        "Took {pieces} piece(s) from {} line(s); backup of the old list: {}",
        takings.len(),
        backup.display()
    );
    Ok(EXIT_OK)
}

/// `FILE.bak-YYYYmmddTHHMMSS` (UTC) next to the file, never overwriting an earlier backup:
/// a second backup in the same second gets `-2`, `-3`, ….
fn write_backup(target: &Path, bytes: &[u8], now: SystemTime) -> io::Result<PathBuf> {
    let stamp = timestamp(now);
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "inventory".into());
    for n in 1..1000 {
        let suffix = if n == 1 {
            String::new()
        } else {
            format!("-{n}")
        };
        let path = target.with_file_name(format!("{name}.bak-{stamp}{suffix}"));
        match OpenOptions::new().write(true).create_new(true).open(&path) {
            Ok(mut file) => {
                file.write_all(bytes)?;
                file.sync_all()?;
                return Ok(path);
            }
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(e),
        }
    }
    Err(io::Error::other("too many backups with the same timestamp"))
}

/// `YYYYmmddTHHMMSS` in UTC.
fn timestamp(t: SystemTime) -> String {
    let secs = t.duration_since(UNIX_EPOCH).map_or(0, |d| d.as_secs());
    let days = i64::try_from(secs / 86_400).unwrap_or(0);
    let rem = secs % 86_400;
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}{m:02}{d:02}T{:02}{:02}{:02}",
        rem / 3600,
        rem / 60 % 60,
        rem % 60
    )
}

/// Proleptic Gregorian date of a day count since 1970-01-01: H. Hinnant, "chrono-Compatible
/// Low-Level Date Algorithms", `civil_from_days` (from memory; checked against `date -u`).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11]
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32; // [1, 31]
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32; // [1, 12]
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// Points inside [`replace_atomically`] where a test can make it fail or pause.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WriteStage {
    /// Half of the new bytes are in the temporary file.
    PartWritten,
    /// The temporary file is complete and synced; the rename is next.
    BeforeRename,
}

/// Replaces `target` with `bytes` so that a crash at any moment leaves either the old file or
/// the new one (POSIX rename(2) is atomic within a file system): a temporary file in the same
/// folder, written and fsynced, renamed over the target, then the folder fsynced so the rename
/// itself is durable (common practice, cf. the rename(2) and fsync(2) manual pages). The
/// temporary file takes the target's permissions. `hook` runs at each [`WriteStage`]; an error
/// from it aborts the write like an I/O error (the temporary file is removed).
pub fn replace_atomically(
    target: &Path,
    bytes: &[u8],
    hook: &mut dyn FnMut(WriteStage) -> io::Result<()>,
) -> io::Result<()> {
    let dir = match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "inventory".into());
    let tmp = dir.join(format!(".{name}.stockfit-tmp-{}", std::process::id()));
    let result = (|| {
        let mut file = OpenOptions::new().write(true).create_new(true).open(&tmp)?;
        if let Ok(meta) = fs::metadata(target) {
            fs::set_permissions(&tmp, meta.permissions())?;
        }
        let half = bytes.len() / 2;
        file.write_all(&bytes[..half])?;
        file.flush()?;
        hook(WriteStage::PartWritten)?;
        file.write_all(&bytes[half..])?;
        file.sync_all()?;
        drop(file);
        hook(WriteStage::BeforeRename)?;
        fs::rename(&tmp, target)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
        return result;
    }
    // Folders cannot be opened for syncing everywhere (Windows); the rename is done either way.
    if let Ok(d) = File::open(&dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

/// The hook the binary runs with: a test hook, honoured in every build (debug and release) so
/// that `cargo test --release` runs the same kill-mid-write tests as `cargo test`.
/// `STOCKFIT_TEST_PAUSE=part:MS` or `rename:MS` sleeps MS milliseconds at that stage, so an
/// integration test (tests/take.rs) can kill the process there. Only a sleep: it changes
/// neither the bytes written nor the order of the steps, and without the variable it is a no-op.
fn env_hook() -> impl FnMut(WriteStage) -> io::Result<()> {
    let pause: Option<(WriteStage, u64)> =
        std::env::var("STOCKFIT_TEST_PAUSE").ok().and_then(|v| {
            let (at, ms) = v.split_once(':')?;
            let stage = match at {
                "part" => WriteStage::PartWritten,
                "rename" => WriteStage::BeforeRename,
                _ => return None,
            };
            Some((stage, ms.parse().ok()?))
        });
    move |stage| {
        if let Some((at, ms)) = pause {
            if at == stage {
                std::thread::sleep(std::time::Duration::from_millis(ms));
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn timestamps_match_date_u() {
        // `date -u -d @N +%Y%m%dT%H%M%S` for each N.
        let at = |s: u64| timestamp(UNIX_EPOCH + std::time::Duration::from_secs(s));
        assert_eq!(at(0), "19700101T000000");
        assert_eq!(at(951_782_400), "20000229T000000");
        assert_eq!(at(1_700_000_000), "20231114T221320");
        assert_eq!(at(4_102_444_799), "20991231T235959");
        assert_eq!(at(4_107_542_400), "21000301T000000");
    }

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
            let err = replace_atomically(&target, b"new contents, longer\n", &mut hook);
            assert!(err.is_err(), "{stage:?}");
            assert_eq!(fs::read(&target).unwrap(), b"old contents\r\n", "{stage:?}");
            // No temporary file is left behind.
            let names: Vec<_> = fs::read_dir(dir.path()).unwrap().collect();
            assert_eq!(names.len(), 1, "{stage:?}: {names:?}");
        }
        replace_atomically(&target, b"new contents, longer\n", &mut |_| Ok(())).unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"new contents, longer\n");
    }

    #[cfg(unix)]
    #[test]
    fn the_new_file_keeps_the_permissions() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("stock.csv");
        fs::write(&target, b"a").unwrap();
        fs::set_permissions(&target, fs::Permissions::from_mode(0o640)).unwrap();
        replace_atomically(&target, b"b", &mut |_| Ok(())).unwrap();
        let mode = fs::metadata(&target).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o640);
    }

    #[test]
    fn backups_never_overwrite_each_other() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("stock.csv");
        let now = UNIX_EPOCH + std::time::Duration::from_secs(1_700_000_000);
        let a = write_backup(&target, b"one", now).unwrap();
        let b = write_backup(&target, b"two", now).unwrap();
        assert_eq!(a.file_name().unwrap(), "stock.csv.bak-20231114T221320");
        assert_eq!(b.file_name().unwrap(), "stock.csv.bak-20231114T221320-2");
        assert_eq!(fs::read(a).unwrap(), b"one");
        assert_eq!(fs::read(b).unwrap(), b"two");
    }
}
