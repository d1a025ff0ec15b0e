//! `stockfit take`: run the pick, then take the chosen build's pieces off the inventory file.
//!
//! With `--yes` the whole edit runs under an exclusive lock on the inventory (`lock`), from
//! the first read to the rename, so concurrent takes run one after another and each works
//! from the list the previous one wrote. The file must still hash as it did when it was read
//! (or as `--expect-hash` says), a backup is written first, and the new list replaces the old
//! whole (`write::replace`): the file is always either the old list or the new one.
//!
//! The replacement keeps what protects the file: its mode, owner and group (refused when the
//! user may not give a new file that owner and group); a read-only inventory is refused
//! unless `--allow-read-only`; an inventory with several names (hard links) is refused,
//! since a rename would give only this name the new list. Backups get the inventory's mode,
//! owner and group, and appear complete or not at all (written under a temporary name and
//! renamed). Temporary files left by a killed take, and empty backups an older version could
//! leave, are removed by the next take, which holds the lock.

use super::args::TakeArgs;
use super::console::{self, say, tell};
use super::failure::{Failure, EXIT_BAD_INPUT, EXIT_NO_BUILD, EXIT_OK};
use super::files::{load_spec, read_bounded};
use super::lock::{self, Lock, LockError};
use super::run::{in_spec, split_entries};
use super::write::{self, Keep, WriteStage};
use anyhow::{anyhow, Context};
use std::fs::{self, OpenOptions};
use std::io;
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
    // A run that writes locks the inventory before its first read (a dry run reads only).
    let held = args.yes.then(|| lock_inventory(path)).transpose()?;
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
    if let Some((target, _)) = &held {
        check_protection(path, target, args.allow_read_only)?;
    }
    let inv = Arc::new(
        inventory::parse_bytes(&original).with_context(|| format!("in {}", path.display()))?,
    );

    let stage = circuit::circuit_of(&spec);
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
            tell!("error: {e}; nothing taken");
            return Ok(EXIT_NO_BUILD);
        }
        Err(e) => return Err(Failure::input(e)),
    };
    if picked.builds.is_empty() {
        tell!(
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
        console::shown(path)
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

    let Some(target) = held.as_ref().map(|(t, _)| t.clone()) else {
        for line in &plan {
            say!("{line}");
        }
        say!(
            "Dry run: nothing written. Add --yes to take these pieces; to take them later only if \
             the file is unchanged, add --yes --expect-hash {hash}"
        );
        return Ok(EXIT_OK);
    };
    if takings.is_empty() {
        for line in &plan {
            say!("{line}");
        }
        return Ok(EXIT_OK);
    }

    // The file must still be the one the pick was made from: the lock keeps other takes
    // out, this catches anything else that saved it meanwhile (an editor, a spreadsheet).
    let again = read_bounded(path, MAX_INVENTORY_BYTES, "inventory")?;
    if hex_digest(&again) != hash {
        return Err(Failure::input(anyhow!(
            "the inventory {} changed while stockfit was working on it; nothing taken: run again",
            path.display()
        )));
    }
    let meta = fs::metadata(&target)
        .with_context(|| format!("cannot read the inventory {}", path.display()))?;
    let keep = Keep::of(&meta, true);
    let mut hook = env_hook();
    let backup = write_backup(&target, &original, &keep, SystemTime::now(), &mut hook).map_err(
        |e| match e
            .get_ref()
            .and_then(|r| r.downcast_ref::<write::OwnerRefused>())
        {
            Some(refused) => Failure::input(anyhow!(
                "in {}: {refused}; nothing taken: run take as the file's owner, or take from a \
                 copy of your own",
                path.display()
            )),
            None => Failure::input(anyhow::Error::new(e).context(format!(
                "cannot write a backup of {}; nothing taken",
                path.display()
            ))),
        },
    )?;
    if let Err(e) = write::replace(&target, &updated, &keep, &mut |s| hook(Pause::Write(s))) {
        // Nothing was taken: the backup of an unchanged file is not worth keeping.
        let _ = fs::remove_file(&backup);
        return Err(Failure {
            code: EXIT_BAD_INPUT,
            error: anyhow::Error::new(e).context(format!(
                "cannot replace {}; it is unchanged",
                path.display()
            )),
        });
    }
    drop(held);
    for line in &plan {
        say!("{line}");
    }
    let pieces: u32 = takings.iter().map(|t| t.pieces).sum();
    say!(
        "Took {pieces} piece(s) from {} line(s); backup of the old list: {}",
        takings.len(),
        console::shown(&backup)
    );
    Ok(EXIT_OK)
}

/// Resolves the inventory's path (links followed: the file they name is the one replaced, and
/// locked), takes its lock — waiting for another take to finish, and saying so — and removes
/// what killed takes left beside it. Returns the resolved path and the lock.
fn lock_inventory(path: &Path) -> Result<(PathBuf, Lock), Failure> {
    let target = fs::canonicalize(path)
        .with_context(|| format!("cannot open the inventory {}", path.display()))?;
    let lock = Lock::acquire(&target, &mut |lock_file| {
        tell!(
            "waiting for another `stockfit take` to finish with {} (it holds {}) …",
            path.display(),
            lock_file.display()
        );
    })
    .map_err(|e| match e {
        LockError::Busy(lock_file) => Failure::input(anyhow!(
            "another `stockfit take` has held the inventory {} for {} s (lock file {}); \
             nothing taken: run again when it has finished",
            path.display(),
            lock::WAIT.as_secs(),
            lock_file.display()
        )),
        LockError::Io(lock_file, e) => Failure::input(anyhow!(
            "cannot lock the inventory {} with {}: {e}; nothing taken (take needs to write \
             in the inventory's folder)",
            path.display(),
            lock_file.display()
        )),
    })?;
    let removed = remove_leftovers(&target);
    if !removed.is_empty() {
        let names: Vec<String> = removed.iter().map(|p| p.display().to_string()).collect();
        tell!(
            "note: removed {} file(s) an interrupted take left beside {}: {}",
            removed.len(),
            path.display(),
            names.join(", ")
        );
    }
    Ok((target, lock))
}

/// Removes, beside `target`, every temporary file of a take (`.NAME.stockfit-tmp-*`) and
/// every empty backup (`NAME.bak-…` of 0 bytes: versions before atomic backups could leave
/// one when killed). Only called under the inventory's lock, so none belongs to a take that
/// is still running. Returns what was removed.
fn remove_leftovers(target: &Path) -> Vec<PathBuf> {
    let mut found = write::leftovers(target);
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let prefix = format!("{name}.bak-");
    if let Ok(entries) = fs::read_dir(write::folder_of(target)) {
        for e in entries.filter_map(Result::ok) {
            let n = e.file_name().to_string_lossy().into_owned();
            let empty = e.metadata().is_ok_and(|m| m.is_file() && m.len() == 0);
            if n.starts_with(&prefix) && is_stamp(&n[prefix.len()..]) && empty {
                found.push(e.path());
            }
        }
    }
    found
        .into_iter()
        .filter(|p| fs::remove_file(p).is_ok())
        .collect()
}

/// `YYYYmmddTHHMMSS`, optionally `-N`: the suffix of a backup's name.
fn is_stamp(s: &str) -> bool {
    let (stamp, n) = s.split_once('-').unwrap_or((s, "1"));
    let b = stamp.as_bytes();
    b.len() == 15
        && b[8] == b'T'
        && b.iter()
            .enumerate()
            .all(|(i, c)| i == 8 || c.is_ascii_digit())
        && !n.is_empty()
        && n.bytes().all(|c| c.is_ascii_digit())
}

/// Refuses to replace an inventory the replacement would loosen or split: not a regular
/// file; read-only (no write permission for anyone, or none for this user) unless
/// `allow_read_only`; with more than one name (hard links).
fn check_protection(path: &Path, target: &Path, allow_read_only: bool) -> Result<(), Failure> {
    let meta = fs::metadata(target)
        .with_context(|| format!("cannot read the inventory {}", path.display()))?;
    if !meta.is_file() {
        return Err(Failure::input(anyhow!(
            "the inventory {} is not a regular file; nothing taken",
            path.display()
        )));
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if meta.nlink() > 1 {
            return Err(Failure::input(anyhow!(
                "the inventory {} has {} names (hard links); replacing it would give only this \
                 name the new list and leave the others with the old one; nothing taken: take \
                 from a file with one name (copy it, or remove the other links)",
                path.display(),
                meta.nlink()
            )));
        }
    }
    // Opening for writing (without truncating) changes nothing; it fails where this user may
    // not write the file. A file with no write bit at all is read-only even for root.
    let writable =
        !meta.permissions().readonly() && OpenOptions::new().write(true).open(target).is_ok();
    if !writable && !allow_read_only {
        return Err(Failure::input(anyhow!(
            "the inventory {} is read-only{}; nothing taken: make it writable, or add \
             --allow-read-only to replace it anyway (the new list stays read-only)",
            path.display(),
            mode_text(&meta)
        )));
    }
    Ok(())
}

#[cfg(unix)]
fn mode_text(meta: &fs::Metadata) -> String {
    use std::os::unix::fs::MetadataExt;
    format!(" (mode {:04o})", meta.mode() & 0o7777)
}

#[cfg(not(unix))]
fn mode_text(_meta: &fs::Metadata) -> String {
    String::new()
}

/// Writes `bytes` as `FILE.bak-YYYYmmddTHHMMSS` (UTC) next to the file, never overwriting an
/// earlier backup (a second in the same second gets `-2`, `-3`, …), with the inventory's
/// mode, owner and group (`keep`). The bytes go to a temporary file first, renamed to the
/// backup's name when complete, so that no empty or partial backup ever appears.
fn write_backup(
    target: &Path,
    bytes: &[u8],
    keep: &Keep,
    now: SystemTime,
    hook: &mut dyn FnMut(Pause) -> io::Result<()>,
) -> io::Result<PathBuf> {
    let tmp = write::write_temp(target, ".bak", bytes, keep, &mut |_| Ok(()))?;
    let result = hook(Pause::Backup).and_then(|()| name_backup(target, &tmp, now));
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    let path = result?;
    write::sync_folder(&write::folder_of(target));
    Ok(path)
}

/// Gives the complete temporary backup `tmp` the first free backup name: a hard link fails
/// rather than replace an existing name; where links are not supported, a rename to a name
/// that does not exist (under the inventory's lock no other take is naming backups).
fn name_backup(target: &Path, tmp: &Path, now: SystemTime) -> io::Result<PathBuf> {
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
        match fs::hard_link(tmp, &path) {
            Ok(()) => {
                fs::remove_file(tmp)?;
                return Ok(path);
            }
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
            Err(_) if fs::symlink_metadata(&path).is_err() => {
                fs::rename(tmp, &path)?;
                return Ok(path);
            }
            Err(_) => continue,
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

/// Where a test can pause a take (`STOCKFIT_TEST_PAUSE`, see [`env_hook`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Pause {
    /// The backup's temporary file is complete; its rename to the backup's name is next.
    Backup,
    /// A stage of writing the new inventory.
    Write(WriteStage),
}

/// The hook the binary runs with: a test hook, honoured in every build (debug and release) so
/// that `cargo test --release` runs the same kill-mid-write tests as `cargo test`.
/// `STOCKFIT_TEST_PAUSE=part:MS`, `rename:MS` or `backup:MS` sleeps MS milliseconds with the
/// new inventory's temporary file half written, complete before its rename, or with the
/// backup's temporary file complete before its rename, so that an integration test
/// (tests/take.rs) can kill the process there or start another take meanwhile. Only a sleep:
/// it changes neither the bytes written nor the order of the steps, and without the variable
/// it is a no-op.
fn env_hook() -> impl FnMut(Pause) -> io::Result<()> {
    let pause: Option<(Pause, u64)> = std::env::var("STOCKFIT_TEST_PAUSE").ok().and_then(|v| {
        let (at, ms) = v.split_once(':')?;
        let stage = match at {
            "part" => Pause::Write(WriteStage::PartWritten),
            "rename" => Pause::Write(WriteStage::BeforeRename),
            "backup" => Pause::Backup,
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
        assert!(is_stamp("20231114T221320") && is_stamp("20231114T221320-12"));
        assert!(!is_stamp("20231114T22132") && !is_stamp("20231114T221320-") && !is_stamp("x"));
    }

    #[test]
    fn backups_never_overwrite_each_other() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("stock.csv");
        let now = UNIX_EPOCH + std::time::Duration::from_secs(1_700_000_000);
        let keep = Keep::default();
        let a = write_backup(&target, b"one", &keep, now, &mut |_| Ok(())).unwrap();
        let b = write_backup(&target, b"two", &keep, now, &mut |_| Ok(())).unwrap();
        assert_eq!(a.file_name().unwrap(), "stock.csv.bak-20231114T221320");
        assert_eq!(b.file_name().unwrap(), "stock.csv.bak-20231114T221320-2");
        assert_eq!(fs::read(a).unwrap(), b"one");
        assert_eq!(fs::read(b).unwrap(), b"two");
        assert!(write::leftovers(&target).is_empty());
    }
}
