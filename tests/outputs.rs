//! The files and streams a run writes, through the binary: no output may be one of the run's
//! inputs (the spec, an inventory) or another output — by name, through a symbolic link or a
//! hard link — and a clash is refused before anything is written; outputs replace their file
//! whole (temporary file and rename); a failed write to standard output is exit 2, a reader
//! that closes the pipe early (`| head`) is not an error.

use assert_cmd::Command;
use std::fs;
use std::path::{Path, PathBuf};

const SPEC: &str = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
    band = [\"20 Hz\", \"20 kHz\"]\n[stock]\nresistors = \"inv.csv\"\ncapacitors = \"inv.csv\"\n";

const INVENTORY: &str = "kind,value,tolerance,qty\nr,10k,1%,10\nr,100k,1%,10\nc,10u,20%,10\n";

struct Setup {
    dir: tempfile::TempDir,
}

impl Setup {
    fn new() -> Setup {
        let dir = tempfile::tempdir().unwrap();
        fs::write(dir.path().join("amp.toml"), SPEC).unwrap();
        fs::write(dir.path().join("inv.csv"), INVENTORY).unwrap();
        Setup { dir }
    }

    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Every entry of the folder with the length and a hash of its bytes, to show that
    /// nothing changed.
    fn snapshot(&self) -> Vec<(String, usize, u64)> {
        use std::hash::{Hash, Hasher};
        let mut v: Vec<(String, usize, u64)> = fs::read_dir(self.dir.path())
            .unwrap()
            .map(|e| {
                let e = e.unwrap();
                let bytes = fs::read(e.path()).unwrap_or_default();
                let mut h = std::collections::hash_map::DefaultHasher::new();
                bytes.hash(&mut h);
                let name = e.file_name().to_string_lossy().into_owned();
                (name, bytes.len(), h.finish())
            })
            .collect();
        v.sort();
        v
    }

    fn run(&self, args: &[&str]) -> Out {
        let out = Command::cargo_bin("stockfit")
            .unwrap()
            .current_dir(self.dir.path())
            .env("NO_COLOR", "1")
            .args(args)
            .output()
            .unwrap();
        let r = Out {
            code: out.status.code(),
            stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
            stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        };
        assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
        r
    }
}

struct Out {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

/// Runs that name one of their inputs, or one file twice, as an output: exit 2 with both
/// names, nothing written (every file of the folder byte-identical, no new file).
#[test]
fn an_output_onto_an_input_or_another_output_is_refused_and_nothing_is_written() {
    let s = Setup::new();
    fs::write(s.path("other.csv"), INVENTORY).unwrap();
    #[cfg(unix)]
    std::os::unix::fs::symlink("inv.csv", s.path("link.csv")).unwrap();
    fs::hard_link(s.path("inv.csv"), s.path("hard.csv")).unwrap();
    fs::create_dir(s.path("sub")).unwrap();
    let check_sets = [
        "--set",
        "r_in=10k",
        "--set",
        "r_fb=100k",
        "--set",
        "r_bias_hi=10k",
        "--set",
        "r_bias_lo=10k",
        "--set",
        "c_in=10u",
        "--set",
        "c_out=10u",
    ];
    let mut cases: Vec<(&str, Vec<&str>, [&str; 2])> = vec![
        (
            "the BOM onto the spec's inventory",
            vec!["pick", "amp.toml", "--bom", "inv.csv"],
            ["--bom", "inv.csv"],
        ),
        (
            "the JSON onto the spec",
            vec!["pick", "amp.toml", "--json", "amp.toml"],
            ["--json", "amp.toml"],
        ),
        (
            "the report onto --stock",
            vec![
                "pick",
                "amp.toml",
                "--stock",
                "other.csv",
                "--report",
                "other.csv",
            ],
            ["--report", "other.csv"],
        ),
        (
            "two outputs on one path",
            vec!["pick", "amp.toml", "--json", "out.txt", "--plot", "out.txt"],
            ["--json", "--plot"],
        ),
        (
            "two outputs on one path, spelt differently",
            vec![
                "pick",
                "amp.toml",
                "--spice",
                "sub/../x.cir",
                "--bom",
                "./x.cir",
            ],
            ["--spice", "--bom"],
        ),
        (
            "a hard link to the inventory",
            vec!["pick", "amp.toml", "--schematic", "hard.csv"],
            ["--schematic", "hard.csv"],
        ),
        (
            "check: the BOM onto the inventory",
            [
                &["check", "amp.toml", "--bom", "inv.csv"][..],
                &check_sets[..],
            ]
            .concat(),
            ["--bom", "inv.csv"],
        ),
    ];
    #[cfg(unix)]
    cases.push((
        "a symbolic link to the inventory",
        vec!["pick", "amp.toml", "--bom", "link.csv"],
        ["--bom", "link.csv"],
    ));
    for (what, args, names) in cases {
        let before = s.snapshot();
        let out = s.run(&args);
        assert_eq!(out.code, Some(2), "{what}: {}{}", out.stdout, out.stderr);
        for n in names {
            assert!(
                out.stderr.contains(n),
                "{what}: {n} not named: {}",
                out.stderr
            );
        }
        assert!(out.stdout.is_empty(), "{what}: {}", out.stdout);
        assert_eq!(s.snapshot(), before, "{what}: a file changed or appeared");
    }
    assert_eq!(fs::read_to_string(s.path("inv.csv")).unwrap(), INVENTORY);
}

/// An output into a folder that does not exist is refused before the search, so no other
/// output of the run is written either.
#[test]
fn an_output_into_a_missing_folder_is_refused_before_anything_is_written() {
    let s = Setup::new();
    let before = s.snapshot();
    let out = s.run(&[
        "pick",
        "amp.toml",
        "--json",
        "a.json",
        "--plot",
        "nowhere/p.svg",
    ]);
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(out.stderr.contains("nowhere"), "{}", out.stderr);
    assert_eq!(s.snapshot(), before);
}

/// A folder as an output, or a read-only output file, is refused (exit 2) and nothing changes.
#[test]
fn a_folder_or_a_read_only_file_as_an_output_is_refused() {
    let s = Setup::new();
    fs::create_dir(s.path("dir")).unwrap();
    let out = s.run(&["pick", "amp.toml", "-q", "--json", "a.json", "--bom", "dir"]);
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(
        out.stderr.contains("--bom dir: that is a folder"),
        "{}",
        out.stderr
    );
    assert!(!s.path("a.json").exists());
    fs::write(s.path("ro.csv"), "keep").unwrap();
    let mut perms = fs::metadata(s.path("ro.csv")).unwrap().permissions();
    perms.set_readonly(true);
    fs::set_permissions(s.path("ro.csv"), perms).unwrap();
    let out = s.run(&[
        "pick", "amp.toml", "-q", "--json", "a.json", "--bom", "ro.csv",
    ]);
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(
        out.stderr
            .contains("--bom ro.csv: that is a read-only file"),
        "{}",
        out.stderr
    );
    assert!(!s.path("a.json").exists());
    assert_eq!(fs::read_to_string(s.path("ro.csv")).unwrap(), "keep");
}

/// Outputs replace an existing file whole and keep its permissions; no temporary file stays.
#[test]
fn outputs_replace_their_file_whole_and_leave_no_temporary_file() {
    let s = Setup::new();
    let bom = s.path("bom.csv");
    fs::write(&bom, "x".repeat(100_000)).unwrap();
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        fs::set_permissions(&bom, fs::Permissions::from_mode(0o640)).unwrap();
    }
    let out = s.run(&[
        "pick", "amp.toml", "-q", "--bom", "bom.csv", "--json", "b.json",
    ]);
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    let text = fs::read_to_string(&bom).unwrap();
    assert!(text.contains("item") && !text.contains('x'), "{text}");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = fs::metadata(&bom).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o640);
    }
    let mut names: Vec<String> = s.snapshot().into_iter().map(|(n, ..)| n).collect();
    names.sort();
    assert_eq!(names, ["amp.toml", "b.json", "bom.csv", "inv.csv"]);
}

fn path_str(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// `bash -c SCRIPT` with `$0` the binary, in the setup's folder.
fn shell(s: &Setup, script: &str) -> Out {
    let bin = assert_cmd::cargo::cargo_bin("stockfit");
    let out = std::process::Command::new("bash")
        .current_dir(s.dir.path())
        .env("NO_COLOR", "1")
        .arg("-c")
        .arg(script)
        .arg(path_str(&bin))
        .output()
        .unwrap();
    Out {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// Standard output that cannot be written (a full disk: /dev/full, ENOSPC) is exit 2 with a
/// message, for the JSON and for the table alike; it used to exit 0 with nothing written.
#[cfg(target_os = "linux")]
#[test]
fn a_failed_write_to_standard_output_is_exit_2() {
    let s = Setup::new();
    for (what, command) in [
        ("JSON", "pick amp.toml -q --json -"),
        ("table", "pick amp.toml -q"),
        (
            "check table",
            "check amp.toml --set r_in=10k --set r_fb=100k --set r_bias_hi=10k \
                         --set r_bias_lo=10k --set c_in=10u --set c_out=10u",
        ),
        ("stock summary", "stock inv.csv"),
        ("series", "series E24"),
        ("take plan", "take amp.toml --stock inv.csv"),
    ] {
        let out = shell(&s, &format!("\"$0\" {command} > /dev/full"));
        assert_eq!(out.code, Some(2), "{what}: {}", out.stderr);
        assert!(
            out.stderr.contains("standard output"),
            "{what}: {}",
            out.stderr
        );
        assert!(!out.stderr.contains("panicked"), "{what}: {}", out.stderr);
    }
}

/// A reader that stops early (`| head`) closes the pipe: the run ends quietly with its own
/// exit code, no message (common practice for command-line tools). The table of 1000 builds
/// is larger than a pipe's buffer (64 KiB on Linux), so the write after `head` exits fails.
#[cfg(unix)]
#[test]
fn a_closed_pipe_is_quiet() {
    let s = Setup::new();
    fs::write(
        s.path("e24.toml"),
        SPEC.replace("resistors = \"inv.csv\"", "resistors = \"E24\"")
            .replace("capacitors = \"inv.csv\"", "capacitors = \"E6\""),
    )
    .unwrap();
    let out = shell(
        &s,
        "\"$0\" pick e24.toml -q --yield 0 --top 1000 | head -c 10 > /dev/null; \
         echo \"status ${PIPESTATUS[0]}\" >&2",
    );
    assert!(out.stderr.ends_with("status 0\n"), "{}", out.stderr);
    assert_eq!(out.stderr.lines().count(), 1, "{}", out.stderr);
}
