//! `stockfit take` through the binary: dry run, byte-exact deduction, backups, refusals
//! (too few pieces, changed file, bad input) and interrupted writes (the process killed while
//! the new file is half written, and just before the rename).

use assert_cmd::Command;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Stdio;
use std::time::{Duration, Instant};

/// An invented drawer (demo data): a comment, CRLF line ends, mixed-case header in its own
/// order, an unknown column, quoted and padded qty cells.
const DRAWER: &str = "# Invented drawer for the take tests\r\n\
    Kind,Value,Tolerance,Qty,Where,voltage\r\n\
    r,1k,1%,10,A1,\r\n\
    r,2k2,1%,\"3\",\"A2, left\",\r\n\
    r,10k,1%, 10 ,A3,\r\n\
    r,22k,1%,10,A4,\r\n\
    r,100k,1%,10,A5,\r\n\
    c,1u,10%,5,B1,50V\r\n\
    c,10u,20%,5,B2,25V\r\n\
    c,47u,20%,5,B3,25V\r\n";

/// An inverting stage that DRAWER can build several ways; which build ranks first is the
/// search's business, so the tests read the plan from the dry run.
const SPEC: &str = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
    band = [\"20 Hz\", \"20 kHz\"]\n";

/// `original` with the qty cell of each planned line (`line N (row R): … A on hand → B`)
/// changed from A to B — written independently of the library's editor: the qty cell is the
/// fourth cell, and in these files no cell before it holds a comma.
fn expected_after(original: &str, plan: &str) -> String {
    let mut lines: Vec<String> = original.split_inclusive('\n').map(String::from).collect();
    let mut planned = 0;
    for p in plan.lines().filter(|l| l.trim_start().starts_with("line ")) {
        let n: usize = p.trim_start()[5..]
            .split_whitespace()
            .next()
            .unwrap()
            .parse()
            .unwrap();
        let tail = p.split(": ").nth(2).unwrap();
        let old = tail.split(" on hand").next().unwrap().trim();
        let new = tail
            .split("→ ")
            .nth(1)
            .unwrap()
            .split_whitespace()
            .next()
            .unwrap();
        let line = &mut lines[n - 1];
        let cells: Vec<&str> = line.splitn(5, ',').collect();
        let qty = cells[3].replacen(old, new, 1);
        assert_ne!(qty, cells[3], "line {n}: {old:?} not in {:?}", cells[3]);
        *line = format!("{},{},{},{qty},{}", cells[0], cells[1], cells[2], cells[4]);
        planned += 1;
    }
    assert!(planned > 0, "no plan lines in {plan}");
    lines.concat()
}

struct Setup {
    dir: tempfile::TempDir,
    spec: PathBuf,
    stock: PathBuf,
}

fn setup(spec: &str, stock: &str) -> Setup {
    let dir = tempfile::tempdir().unwrap();
    let spec_path = dir.path().join("amp.toml");
    let stock_path = dir.path().join("drawer.csv");
    fs::write(&spec_path, spec).unwrap();
    fs::write(&stock_path, stock).unwrap();
    Setup {
        dir,
        spec: spec_path,
        stock: stock_path,
    }
}

struct Run {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

fn take(s: &Setup, extra: &[&str]) -> Run {
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .arg("take")
        .arg(&s.spec)
        .arg("--stock")
        .arg(&s.stock)
        .args(extra)
        .output()
        .unwrap();
    let r = Run {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    };
    assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
    r
}

fn files(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

fn hash_line(stdout: &str) -> String {
    let at = stdout.find("sha256 ").expect("hash printed") + 7;
    stdout[at..at + 64].to_string()
}

#[test]
fn dry_run_shows_the_plan_and_writes_nothing() {
    let s = setup(SPEC, DRAWER);
    let r = take(&s, &[]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(
        r.stdout.contains("Dry run: nothing written"),
        "{}",
        r.stdout
    );
    assert!(r.stdout.contains(" on hand → "), "{}", r.stdout);
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
    assert_eq!(files(s.dir.path()), ["amp.toml", "drawer.csv"]);
    // The printed hash is the file's SHA-256 (FIPS 180-4), the one `--expect-hash` takes.
    assert_eq!(
        hash_line(&r.stdout),
        stockfit::stock::sha256::hex_digest(DRAWER.as_bytes())
    );
}

#[test]
fn yes_changes_only_the_qty_cells_and_keeps_a_backup() {
    let s = setup(SPEC, DRAWER);
    let dry = take(&s, &[]);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    // Six slots, none locked: six pieces.
    assert!(r.stdout.contains("Took 6 piece(s) from "), "{}", r.stdout);
    assert_eq!(
        fs::read_to_string(&s.stock).unwrap(),
        expected_after(DRAWER, &dry.stdout)
    );
    let names = files(s.dir.path());
    assert_eq!(names.len(), 3, "{names:?}");
    let backup = names
        .iter()
        .find(|n| n.starts_with("drawer.csv.bak-"))
        .unwrap();
    // FILE.bak-YYYYmmddTHHMMSS
    let stamp = &backup["drawer.csv.bak-".len()..];
    assert_eq!(stamp.len(), 15, "{stamp}");
    assert_eq!(&stamp[8..9], "T");
    assert_eq!(
        fs::read_to_string(s.dir.path().join(backup)).unwrap(),
        DRAWER
    );
    // Taking again from the new file works the same way.
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(stockfit::stock::inventory::Inventory::parse_str(
        &fs::read_to_string(&s.stock).unwrap()
    )
    .is_ok());
}

#[test]
fn empty_lines_are_never_taken() {
    // The 22 kΩ line has none on hand: the pick uses other lines, and the file still loads
    // with that line at 0.
    let drawer = DRAWER.replace("r,22k,1%,10,", "r,22k,1%,0,");
    let s = setup(SPEC, &drawer);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let text = fs::read_to_string(&s.stock).unwrap();
    assert!(text.contains("r,22k,1%,0,A4"), "{text}");
    let inv = stockfit::stock::inventory::Inventory::parse_str(&text).unwrap();
    assert_eq!(inv.lines.len(), 8);
}

#[test]
fn a_file_changed_since_the_dry_run_is_refused() {
    let s = setup(SPEC, DRAWER);
    let dry = take(&s, &[]);
    let hash = hash_line(&dry.stdout);
    let fewer = DRAWER.replace("\"3\",\"A2", "\"2\",\"A2");
    fs::write(&s.stock, &fewer).unwrap();
    let r = take(&s, &["--yes", "--expect-hash", &hash]);
    assert_eq!(r.code, Some(2), "{}", r.stderr);
    assert!(r.stdout.is_empty(), "{}", r.stdout);
    assert!(r.stderr.contains("changed since the pick"), "{}", r.stderr);
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), fewer);
    assert_eq!(files(s.dir.path()), ["amp.toml", "drawer.csv"]);
}

#[test]
fn expect_hash_takes_a_dry_run_later_if_unchanged() {
    let s = setup(SPEC, DRAWER);
    let dry = take(&s, &[]);
    let hash = hash_line(&dry.stdout);
    let r = take(&s, &["--yes", "--expect-hash", &hash.to_uppercase()]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert_eq!(
        fs::read_to_string(&s.stock).unwrap(),
        expected_after(DRAWER, &dry.stdout)
    );
    // The same hash again: the file has changed (pieces were taken), so it is refused.
    let r = take(&s, &["--yes", "--expect-hash", &hash]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("changed since the pick"), "{}", r.stderr);
    let r = take(&s, &["--yes", "--expect-hash", "abc"]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("64 hex digits"), "{}", r.stderr);
}

#[test]
fn build_numbers_and_sources_are_checked() {
    let s = setup(SPEC, DRAWER);
    let r = take(&s, &["--build", "2"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(r.stdout.starts_with("Build #2 from"), "{}", r.stdout);
    for (args, text) in [
        (&["--build", "0"][..], "numbered from 1"),
        (&["--build", "6"][..], "--top 5"),
        (&["--build", "3", "--top", "2"][..], "--top 2"),
        (&["--lock", "r_zz=1k"][..], "no slot `r_zz`"),
    ] {
        let r = take(&s, args);
        assert_eq!(r.code, Some(2), "{args:?}: {}", r.stderr);
        assert!(r.stdout.is_empty(), "{args:?}");
        assert!(r.stderr.contains(text), "{args:?}: {}", r.stderr);
    }
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
}

#[test]
fn a_locked_slot_takes_nothing_from_stock() {
    let s = setup(SPEC, DRAWER);
    let r = take(&s, &["--lock", "c_out=10u", "--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    // Five slots come from stock; c_out is on the board already.
    assert!(r.stdout.contains("c_out 10 µF*"), "{}", r.stdout);
    assert!(r.stdout.contains("Took 5 piece(s)"), "{}", r.stdout);
    assert!(
        !r.stdout.contains("c_out)") && !r.stdout.contains("c_out,"),
        "{}",
        r.stdout
    );
}

#[test]
fn bad_inventories_and_specs_are_refused_before_anything_is_written() {
    let bad = DRAWER.replace("r,10k,1%, 10 ,", "r,10k,1%,ten,");
    let s = setup(SPEC, &bad);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(2));
    assert!(r.stdout.is_empty());
    assert!(
        r.stderr.contains("drawer.csv") && r.stderr.contains("line 5, column `qty`"),
        "{}",
        r.stderr
    );
    assert_eq!(files(s.dir.path()), ["amp.toml", "drawer.csv"]);

    let s = setup("[stage]\nkind = \"inverting\"\n", DRAWER);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("amp.toml"), "{}", r.stderr);
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);

    // A series is not a file to take from.
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .args(["take"])
        .arg(&s.spec)
        .args(["--stock", "E24", "--yes"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn an_infeasible_spec_takes_nothing() {
    let spec = SPEC.replace("load =", "input_resistance_min = \"10M\"\nload =");
    let s = setup(&spec, DRAWER);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(1), "{}", r.stderr);
    assert!(r.stdout.is_empty());
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
}

#[test]
fn an_oversized_inventory_is_refused_by_its_size() {
    let s = setup(SPEC, DRAWER);
    // Sparse: the size says 64 MiB, nothing is stored or read.
    let f = fs::OpenOptions::new().write(true).open(&s.stock).unwrap();
    f.set_len(64 << 20).unwrap();
    drop(f);
    let started = Instant::now();
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(2));
    assert!(
        r.stderr.contains("64.0 MiB") && r.stderr.contains("16.0 MiB"),
        "{}",
        r.stderr
    );
    assert!(started.elapsed() < Duration::from_secs(20));
}

/// Starts `take --yes` paused at `stage` (the binary's STOCKFIT_TEST_PAUSE test hook, in every
/// build), waits for its temporary file, kills it there, and returns the temporary file's
/// contents.
fn kill_at(s: &Setup, stage: &str, after: &str) -> Vec<u8> {
    let bin = assert_cmd::cargo::cargo_bin("stockfit");
    let mut child = std::process::Command::new(bin)
        .arg("take")
        .arg(&s.spec)
        .arg("--stock")
        .arg(&s.stock)
        .arg("--yes")
        .env("STOCKFIT_TEST_PAUSE", format!("{stage}:30000"))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let tmp = s
        .dir
        .path()
        .join(format!(".drawer.csv.stockfit-tmp-{}", child.id()));
    let deadline = Instant::now() + Duration::from_secs(120);
    let expected_len = if stage == "part" {
        after.len() / 2
    } else {
        after.len()
    };
    // The pause starts once the temporary file holds its bytes for that stage.
    loop {
        if fs::metadata(&tmp).is_ok_and(|m| m.len() as usize == expected_len) {
            break;
        }
        if let Ok(Some(status)) = child.try_wait() {
            panic!("take ended before the pause: {status}");
        }
        assert!(
            Instant::now() < deadline,
            "no temporary file {}",
            tmp.display()
        );
        std::thread::sleep(Duration::from_millis(20));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    fs::read(&tmp).unwrap()
}

#[test]
fn killed_mid_write_leaves_the_old_file() {
    let s = setup(SPEC, DRAWER);
    let after = expected_after(DRAWER, &take(&s, &[]).stdout);
    let partial = kill_at(&s, "part", &after);
    assert!(partial.len() < after.len(), "killed mid-way");
    assert_eq!(partial, after.as_bytes()[..partial.len()]);
    assert_eq!(
        fs::read_to_string(&s.stock).unwrap(),
        DRAWER,
        "old file intact"
    );
}

#[test]
fn killed_before_the_rename_leaves_the_old_file_then_a_rerun_writes_the_new() {
    let s = setup(SPEC, DRAWER);
    let after = expected_after(DRAWER, &take(&s, &[]).stdout);
    let complete = kill_at(&s, "rename", &after);
    assert_eq!(complete, after.as_bytes(), "temporary file complete");
    assert_eq!(
        fs::read_to_string(&s.stock).unwrap(),
        DRAWER,
        "old file intact"
    );
    // A run that is not interrupted replaces it with the new one, whole.
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), after);
}

// ---------------------------------------------------------------------------------------------
// Concurrent takes, file protection, leftovers of killed runs (issue 14)
// ---------------------------------------------------------------------------------------------

/// A drawer with plenty of each value, so that hundreds of takes never run out and always take
/// the same build.
const DEEP: &str = "kind,value,tolerance,qty\n\
    r,10k,1%,100000\n\
    r,100k,1%,100000\n\
    c,10u,20%,100000\n";

/// The `(row, on hand, left)` of each plan line of a take's stdout.
fn plan_rows(stdout: &str) -> Vec<(usize, u64, u64)> {
    stdout
        .lines()
        .filter_map(|l| {
            let l = l.trim_start();
            let rest = l.strip_prefix("line ")?;
            let row = rest
                .split("(row ")
                .nth(1)?
                .split(')')
                .next()?
                .parse()
                .ok()?;
            let tail = rest.rsplit(": ").next()?;
            let on_hand = tail.split(" on hand").next()?.trim().parse().ok()?;
            let left = tail
                .split("→ ")
                .nth(1)?
                .split_whitespace()
                .next()?
                .parse()
                .ok()?;
            Some((row, on_hand, left))
        })
        .collect()
}

fn quantities(path: &Path) -> Vec<u64> {
    stockfit::stock::inventory::Inventory::parse_str(&fs::read_to_string(path).unwrap())
        .unwrap()
        .lines
        .iter()
        .map(|l| u64::from(l.qty))
        .collect()
}

fn spawn_take(s: &Setup, extra: &[&str], pause: Option<&str>) -> std::process::Child {
    let mut cmd = std::process::Command::new(assert_cmd::cargo::cargo_bin("stockfit"));
    cmd.arg("take")
        .arg(&s.spec)
        .arg("--stock")
        .arg(&s.stock)
        .args(extra)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    if let Some(p) = pause {
        cmd.env("STOCKFIT_TEST_PAUSE", p);
    }
    cmd.spawn().unwrap()
}

fn finish(child: std::process::Child) -> Run {
    let out = child.wait_with_output().unwrap();
    let r = Run {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    };
    assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
    r
}

/// Checks that the takes' plans form one chain per row — each take found on hand what the
/// one before it left, so none worked from a stale copy — and that the file holds what the
/// last one left: no deduction lost.
fn assert_serialised(runs: &[Run], start: &[u64], end: &[u64]) {
    let mut by_row: std::collections::BTreeMap<usize, Vec<(u64, u64)>> = Default::default();
    for r in runs.iter().filter(|r| r.code == Some(0)) {
        for (row, on_hand, left) in plan_rows(&r.stdout) {
            by_row.entry(row).or_default().push((on_hand, left));
        }
    }
    assert!(!by_row.is_empty(), "no take took anything");
    for (row, mut steps) in by_row {
        steps.sort_by_key(|s| std::cmp::Reverse(s.0));
        assert_eq!(steps[0].0, start[row - 1], "row {row}: the first take");
        for w in steps.windows(2) {
            assert_eq!(
                w[0].1, w[1].0,
                "row {row}: a take saw {} on hand where the one before left {}",
                w[1].0, w[0].1
            );
        }
        assert_eq!(
            steps.last().unwrap().1,
            end[row - 1],
            "row {row}: the file does not hold what the last take left (a lost deduction)"
        );
    }
}

/// The "Done when": two `take --yes` started together on one inventory, 200 times.
/// Both must succeed (the second waits for the first's lock and reads its result), and the
/// file must end with every deduction made. Before the lock, 100 of 100 pairs lost one.
#[test]
fn concurrent_takes_never_lose_a_deduction() {
    let s = setup(SPEC, DEEP);
    let start = quantities(&s.stock);
    let mut runs = Vec::new();
    for _ in 0..200 {
        let a = spawn_take(&s, &["--yes"], None);
        let b = spawn_take(&s, &["--yes"], None);
        let (a, b) = (finish(a), finish(b));
        for r in [&a, &b] {
            assert_eq!(r.code, Some(0), "{}", r.stderr);
        }
        runs.push(a);
        runs.push(b);
    }
    assert_serialised(&runs, &start, &quantities(&s.stock));
    // Six pieces per take (r_in, r_fb, the two divider resistors, c_in, c_out).
    let taken: u64 = start.iter().sum::<u64>() - quantities(&s.stock).iter().sum::<u64>();
    assert_eq!(taken, 400 * 6);
    // Nothing is left behind but the backups: no lock or temporary file.
    let stray: Vec<String> = files(s.dir.path())
        .into_iter()
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(stray.is_empty(), "{stray:?}");
}

/// Two takes of one dry run's plan (`--expect-hash`) started together: exactly one takes it,
/// the other finds the file changed and refuses with the reason. Before the lock, 14 of 20
/// such pairs both took.
#[test]
fn concurrent_takes_of_one_dry_run_take_it_once() {
    let s = setup(SPEC, DEEP);
    for _ in 0..20 {
        let hash = hash_line(&take(&s, &[]).stdout);
        let before = quantities(&s.stock);
        let args = ["--yes", "--expect-hash", hash.as_str()];
        let a = spawn_take(&s, &args, None);
        let b = spawn_take(&s, &args, None);
        let runs = [finish(a), finish(b)];
        let ok: Vec<&Run> = runs.iter().filter(|r| r.code == Some(0)).collect();
        assert_eq!(
            ok.len(),
            1,
            "{:?}",
            runs.iter().map(|r| &r.stderr).collect::<Vec<_>>()
        );
        let refused = runs.iter().find(|r| r.code != Some(0)).unwrap();
        assert_eq!(refused.code, Some(2));
        assert!(
            refused.stderr.contains("changed since the pick"),
            "{}",
            refused.stderr
        );
        assert_serialised(&runs, &before, &quantities(&s.stock));
    }
}

/// A take that finds the lock held waits for it, says so, and then works from the result of
/// the one that held it (the holder paused before its rename by the test hook).
#[test]
fn a_take_waits_for_the_lock_and_sees_the_holders_result() {
    let s = setup(SPEC, DEEP);
    let start = quantities(&s.stock);
    let a = spawn_take(&s, &["--yes"], Some("rename:1500"));
    let tmp = s
        .dir
        .path()
        .join(format!(".drawer.csv.stockfit-tmp-{}", a.id()));
    let deadline = Instant::now() + Duration::from_secs(60);
    while !tmp.exists() {
        assert!(
            Instant::now() < deadline,
            "the first take never wrote its file"
        );
        std::thread::sleep(Duration::from_millis(10));
    }
    let b = take(&s, &["--yes"]);
    let a = finish(a);
    assert_eq!(
        (a.code, b.code),
        (Some(0), Some(0)),
        "{}\n{}",
        a.stderr,
        b.stderr
    );
    assert!(b.stderr.contains("waiting"), "{}", b.stderr);
    assert_serialised(&[a, b], &start, &quantities(&s.stock));
}

#[cfg(unix)]
fn mode(path: &Path) -> u32 {
    use std::os::unix::fs::PermissionsExt;
    fs::metadata(path).unwrap().permissions().mode() & 0o7777
}

#[cfg(unix)]
fn set_mode(path: &Path, mode: u32) {
    use std::os::unix::fs::PermissionsExt;
    fs::set_permissions(path, fs::Permissions::from_mode(mode)).unwrap();
}

/// A read-only inventory (no write permission) is refused unless `--allow-read-only` says to
/// replace it, and then it stays read-only. A private inventory's backup is private too.
#[cfg(unix)]
#[test]
fn read_only_inventories_are_refused_unless_allowed_and_modes_are_kept() {
    let s = setup(SPEC, DRAWER);
    set_mode(&s.stock, 0o444);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(2), "{}", r.stdout);
    assert!(
        r.stderr.contains("read-only") && r.stderr.contains("--allow-read-only"),
        "{}",
        r.stderr
    );
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
    assert_eq!(files(s.dir.path()), ["amp.toml", "drawer.csv"]);

    let r = take(&s, &["--yes", "--allow-read-only"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert_ne!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
    assert_eq!(mode(&s.stock), 0o444);

    let s = setup(SPEC, DRAWER);
    set_mode(&s.stock, 0o600);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert_eq!(mode(&s.stock), 0o600);
    let backup = files(s.dir.path())
        .into_iter()
        .find(|n| n.starts_with("drawer.csv.bak-"))
        .unwrap();
    // Before: 0644, readable by everyone, whatever the inventory's own mode.
    assert_eq!(mode(&s.dir.path().join(backup)), 0o600);
}

/// An inventory with a second name (a hard link) is refused: replacing one name would leave
/// the other with the old list, silently two inventories.
#[test]
fn a_hard_linked_inventory_is_refused() {
    let s = setup(SPEC, DRAWER);
    let other = s.dir.path().join("also.csv");
    fs::hard_link(&s.stock, &other).unwrap();
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(2), "{}", r.stdout);
    assert!(r.stderr.contains("hard link"), "{}", r.stderr);
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
    assert_eq!(fs::read_to_string(&other).unwrap(), DRAWER);
    assert_eq!(files(s.dir.path()), ["also.csv", "amp.toml", "drawer.csv"]);
}

/// Temporary files of a killed take, and an empty backup an older version could leave, are
/// removed by the next take (which holds the lock, so no other take is writing them).
#[test]
fn leftovers_of_killed_takes_are_removed_by_the_next() {
    let s = setup(SPEC, DRAWER);
    let after = expected_after(DRAWER, &take(&s, &[]).stdout);
    let _ = kill_at(&s, "part", &after);
    let empty = s.dir.path().join("drawer.csv.bak-20200101T000000");
    fs::write(&empty, b"").unwrap();
    let stray = s.dir.path().join(".drawer.csv.stockfit-tmp-1.bak");
    fs::write(&stray, b"half a backup").unwrap();
    assert!(files(s.dir.path())
        .iter()
        .any(|n| n.contains("stockfit-tmp")));
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(r.stderr.contains("removed"), "{}", r.stderr);
    let names = files(s.dir.path());
    assert!(
        names
            .iter()
            .all(|n| !n.starts_with('.') && !n.ends_with("T000000")),
        "{names:?}"
    );
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), after);
}

/// A take killed while its backup is being written leaves no backup at all, never an empty or
/// partial one: backups are written to a temporary name and renamed when complete.
#[test]
fn a_take_killed_while_backing_up_leaves_no_partial_backup() {
    let s = setup(SPEC, DRAWER);
    let bin = assert_cmd::cargo::cargo_bin("stockfit");
    let mut child = std::process::Command::new(bin)
        .arg("take")
        .arg(&s.spec)
        .arg("--stock")
        .arg(&s.stock)
        .arg("--yes")
        .env("STOCKFIT_TEST_PAUSE", "backup:30000")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let tmp = s
        .dir
        .path()
        .join(format!(".drawer.csv.stockfit-tmp-{}.bak", child.id()));
    let deadline = Instant::now() + Duration::from_secs(60);
    while fs::metadata(&tmp).map_or(true, |m| m.len() as usize != DRAWER.len()) {
        assert!(
            child.try_wait().unwrap().is_none(),
            "ended before the pause"
        );
        assert!(Instant::now() < deadline, "no backup in progress");
        std::thread::sleep(Duration::from_millis(10));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    let names = files(s.dir.path());
    assert!(
        !names.iter().any(|n| n.starts_with("drawer.csv.bak")),
        "{names:?}"
    );
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
}

fn running_as_root() -> bool {
    std::process::Command::new("id")
        .arg("-u")
        .output()
        .is_ok_and(|o| o.stdout == b"0\n")
}

/// Owner and group survive the replacement; where the user may not set them (another user's
/// file in a shared folder), the take is refused and nothing changes. Setting this up needs
/// root: a file of another owner, and `setpriv` to run as an unprivileged user.
#[cfg(unix)]
#[test]
#[ignore = "needs root and setpriv (util-linux) to own files as other users; CI runs as root"]
fn owner_and_group_are_kept_or_the_take_is_refused() {
    use std::os::unix::fs::MetadataExt;
    assert!(
        running_as_root(),
        "this test needs root (see its doc comment)"
    );
    let s = setup(SPEC, DRAWER);
    std::os::unix::fs::chown(&s.stock, Some(1234), Some(5678)).unwrap();
    set_mode(&s.stock, 0o640);
    let r = take(&s, &["--yes"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let m = fs::metadata(&s.stock).unwrap();
    assert_eq!((m.uid(), m.gid(), mode(&s.stock)), (1234, 5678, 0o640));
    let backup = files(s.dir.path())
        .into_iter()
        .find(|n| n.starts_with("drawer.csv.bak-"))
        .unwrap();
    let b = fs::metadata(s.dir.path().join(&backup)).unwrap();
    assert_eq!((b.uid(), b.gid(), b.mode() & 0o7777), (1234, 5678, 0o640));

    // Root's file, writable by all, in a folder writable by all: `nobody` may write it but
    // cannot give a new file root's owner, so the take is refused (it used to replace the file
    // and hand it to `nobody`).
    let s = setup(SPEC, DRAWER);
    set_mode(s.dir.path(), 0o777);
    set_mode(&s.stock, 0o666);
    let bin = assert_cmd::cargo::cargo_bin("stockfit");
    let out = std::process::Command::new("setpriv")
        .args(["--reuid=65534", "--regid=65534", "--clear-groups", "--"])
        .arg(bin)
        .arg("take")
        .arg(&s.spec)
        .arg("--stock")
        .arg(&s.stock)
        .arg("--yes")
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("owner"), "{stderr}");
    let m = fs::metadata(&s.stock).unwrap();
    assert_eq!((m.uid(), m.gid()), (0, 0));
    assert_eq!(fs::read_to_string(&s.stock).unwrap(), DRAWER);
    assert_eq!(files(s.dir.path()), ["amp.toml", "drawer.csv"]);
}
