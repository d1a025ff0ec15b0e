//! Bounded work and consistent validation through the binary (issue 14, parts 4 and 5):
//! ceilings on `--top` and `--yield`, a slot given twice, bare numbers judged as quoted ones,
//! error lists capped and located in linear time, and inventories whose values repeat on many
//! rows searched as one candidate per distinct line with the quantities pooled.

use assert_cmd::Command;
use serde_json::Value;
use std::fs;
use std::path::Path;
use std::time::Duration;

const SPEC: &str = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
    band = [\"20 Hz\", \"20 kHz\"]\n";

/// A run of the binary in `dir`, with a time limit that only guards against a hang.
fn run(dir: &Path, args: &[&str], env: &[(&str, &str)]) -> (Option<i32>, String, String) {
    let mut cmd = Command::cargo_bin("stockfit").unwrap();
    cmd.current_dir(dir)
        .env("NO_COLOR", "1")
        .timeout(Duration::from_secs(120))
        .args(args);
    for (k, v) in env {
        cmd.env(k, v);
    }
    let out = cmd.output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(!stderr.contains("panicked"), "{stderr}");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr,
    )
}

fn setup(spec: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    fs::write(dir.path().join("amp.toml"), spec).unwrap();
    dir
}

/// `--top` and `--yield` have ceilings (1000 builds, 10⁶ samples), refused above with the
/// reason; `--top 1000000` used to run for 13 minutes, `--yield` of the largest u64 forever.
#[test]
fn top_and_yield_are_refused_above_their_ceilings_with_the_reason() {
    let dir = setup(SPEC);
    for (args, reason) in [
        (&["--top", "1001"][..], "at most 1000 builds"),
        (&["--top", "1000000"][..], "at most 1000 builds"),
        (&["--yield", "1000001"][..], "at most 1000000 samples"),
        (&["--yield", "100000000"][..], "at most 1000000 samples"),
        (
            &["--yield", "18446744073709551615"][..],
            "at most 1000000 samples",
        ),
    ] {
        let mut all = vec!["pick", "amp.toml", "-q"];
        all.extend_from_slice(args);
        let (code, stdout, stderr) = run(dir.path(), &all, &[]);
        assert_eq!(code, Some(2), "{args:?}: {stderr}");
        assert!(stdout.is_empty(), "{args:?}");
        assert!(stderr.contains(reason), "{args:?}: {stderr}");
    }
    let (code, _, stderr) = run(
        dir.path(),
        &["pick", "amp.toml", "-q", "--top", "1000"],
        &[],
    );
    assert_eq!(code, Some(0), "{stderr}");
}

/// A slot given twice on one command line is refused with both values, not the last kept.
#[test]
fn a_slot_given_twice_is_refused() {
    let dir = setup(SPEC);
    let sets = [
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
    let mut check = vec!["check", "amp.toml"];
    check.extend_from_slice(&sets);
    check.extend_from_slice(&["--set", "r_in=22k"]);
    let pick = [
        "pick", "amp.toml", "--lock", "r_in=10k", "--lock", "r_in=22k",
    ];
    for args in [&check[..], &pick[..]] {
        let (code, stdout, stderr) = run(dir.path(), args, &[]);
        assert_eq!(code, Some(2), "{args:?}: {stderr}");
        assert!(stdout.is_empty());
        assert!(
            stderr.contains("r_in=… is given twice (10k and 22k)"),
            "{args:?}: {stderr}"
        );
    }
}

/// A bare number follows the rules of the same number quoted: a negative noise density is
/// refused like `"-1 V/rtHz"` (it used to be accepted bare).
#[test]
fn bare_negative_figures_are_refused_like_quoted_ones() {
    for (entry, key) in [
        ("noise_voltage = -1", "amplifier.noise_voltage"),
        ("noise_current = -1e-12", "amplifier.noise_current"),
        (
            "input_offset_current = -1e-9",
            "amplifier.input_offset_current",
        ),
    ] {
        let dir = setup(&format!("{SPEC}[amplifier]\n{entry}\n"));
        let (code, _, stderr) = run(dir.path(), &["pick", "amp.toml", "-q"], &[]);
        assert_eq!(code, Some(2), "{entry}: {stderr}");
        assert!(
            stderr.contains("line 8") && stderr.contains(key) && stderr.contains("negative"),
            "{entry}: {stderr}"
        );
    }
}

/// 60,000 unknown keys (under the 1 MiB spec limit): a hundred are described, each with its
/// own line, and the rest counted. Positions come from the parser's spans, so this is linear;
/// re-scanning the file per error took about 9 minutes (the time limit of `run` catches that).
#[test]
fn a_spec_of_many_unknown_keys_gives_a_capped_located_list() {
    let mut spec = String::from(SPEC);
    spec.push_str("[amplifier]\n");
    for i in 0..60_000 {
        spec.push_str(&format!("k{i} = 1\n"));
    }
    assert!(spec.len() < 1 << 20);
    let dir = setup(&spec);
    let (code, stdout, stderr) = run(dir.path(), &["pick", "amp.toml", "-q"], &[]);
    assert_eq!(code, Some(2), "{}", &stderr[..stderr.len().min(2000)]);
    assert!(stdout.is_empty());
    assert!(stderr.len() < 32 << 10, "{} bytes", stderr.len());
    // `k{i}` is on line 8 + i.
    let mut listed = 0;
    for l in stderr.lines().filter(|l| l.contains("`amplifier.k")) {
        let line: usize = l.trim_start()[5..]
            .split(',')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        let i: usize = l
            .split("`amplifier.k")
            .nth(1)
            .unwrap()
            .split('`')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        assert_eq!(line, 8 + i, "{l}");
        listed += 1;
    }
    assert_eq!(listed, 100, "{}", &stderr[..2000]);
    assert!(stderr.contains("60000 problems"), "{}", &stderr[..200]);
    assert!(
        stderr.contains("and 59900 more"),
        "{}",
        &stderr[stderr.len() - 500..]
    );
}

/// The twelve distinct lines of the repeated inventories.
const LINES: &str = "r,1k,1%,2\nr,2k2,1%,2\nr,4k7,1%,2\nr,10k,1%,2\nr,22k,1%,2\nr,47k,1%,2\n\
    r,100k,1%,2\nr,220k,1%,2\nc,1u,10%,2\nc,4u7,20%,2\nc,10u,20%,2\nc,47u,20%,2\n";

const HEADER: &str = "kind,value,tolerance,qty\n";

/// `search: [..] candidates per slot, N nodes [..], M builds evaluated` without the time.
fn work(stderr: &str) -> String {
    let line = stderr
        .lines()
        .find(|l| l.starts_with("search: "))
        .unwrap_or_else(|| panic!("no statistics: {stderr}"));
    line.rsplit_once(", ").unwrap().0.to_string()
}

/// An inventory with every value repeated on thousands of rows (50,000 lines, each line
/// identical to one of twelve distinct ones in kind, value, tolerance and everything else the
/// analysis reads) is searched exactly like the twelve lines holding all the pieces: the same
/// candidates, nodes and builds evaluated, the same ranked builds. It used to multiply the search (10,000 lines:
/// 6.8 s and 21 M nodes; 50,000 ran past 300 s).
#[test]
fn repeated_inventory_lines_do_not_multiply_the_search() {
    let dir = setup(&format!(
        "{SPEC}[stock]\nresistors = \"inv.csv\"\ncapacitors = \"inv.csv\"\n"
    ));
    let repeats = 50_000 / LINES.lines().count() + 1;
    // The twelve lines once, each with the pieces of all its repeats (2 each).
    let pooled = LINES.replace(",2\n", &format!(",{}\n", 2 * repeats));
    let mut results = Vec::new();
    for (name, text) in [("one", pooled), ("many", LINES.repeat(repeats))] {
        fs::write(dir.path().join("inv.csv"), format!("{HEADER}{text}")).unwrap();
        let (code, stdout, stderr) = run(
            dir.path(),
            &["pick", "amp.toml", "-q", "--yield", "0", "--json", "-"],
            &[("STOCKFIT_STATS", "1")],
        );
        assert_eq!(code, Some(0), "{name}: {stderr}");
        let doc: Value = serde_json::from_str(&stdout).unwrap();
        results.push((work(&stderr), doc["builds"].clone()));
    }
    // The summary notes each repeated value with ten of its rows, not all 4167.
    let (code, stdout, _) = run(dir.path(), &["stock", "inv.csv"], &[]);
    assert_eq!(code, Some(0));
    assert!(stdout.len() < 4096, "{} bytes: {stdout}", stdout.len());
    assert!(stdout.contains("and 4157 more"), "{stdout}");
    // One line for the kind of note (issue 12, part 8), its count and the first values.
    assert!(
        stdout.contains("note: 8 values appear on several rows, pooled"),
        "{stdout}"
    );
    assert_eq!(
        stdout.matches("note:").count(),
        2,
        "one per kind of part: {stdout}"
    );
    assert_eq!(results[0].0, results[1].0, "the search's work");
    assert_eq!(results[0].1, results[1].1, "the ranked builds");
}

/// Identical rows pool their pieces: three rows of one 10 kΩ piece each serve the three
/// 10 kΩ slots as one line (not three lines, not "too few"), and `take` draws from the rows
/// in file order, naming each; the BOM lists the rows the pieces come from.
#[test]
fn pooled_rows_are_taken_in_file_order_and_named() {
    let inv = format!(
        "{HEADER}r,10k,1%,1\nr,100k,1%,5\nr,10k,1%,1\nc,10u,20%,5\nr,10k,1%,1\nr,10k,1%,4\n"
    );
    let dir = setup(&format!(
        "{SPEC}[stock]\nresistors = \"inv.csv\"\ncapacitors = \"inv.csv\"\n"
    ));
    fs::write(dir.path().join("inv.csv"), &inv).unwrap();
    let (code, stdout, stderr) = run(
        dir.path(),
        &[
            "pick", "amp.toml", "-q", "--top", "1", "--json", "-", "--bom", "bom.csv",
        ],
        &[],
    );
    assert_eq!(code, Some(0), "{stderr}");
    let doc: Value = serde_json::from_str(&stdout).unwrap();
    // 10 kΩ (r_in and the divider), 100 kΩ, 10 µF: three lines.
    assert_eq!(doc["builds"][0]["metrics"]["bom_lines"], 3, "{stdout}");
    let bom = fs::read_to_string(dir.path().join("bom.csv")).unwrap();
    let row = bom.lines().find(|l| l.contains("10 kohm")).unwrap();
    // Three pieces: one each from data rows 1, 3 and 5; 7 on hand over the four rows.
    assert!(row.contains("\"1, 3, 5\""), "{row}");
    assert!(row.contains(",3,7,"), "{row}");

    let (code, stdout, stderr) = run(dir.path(), &["take", "amp.toml", "--stock", "inv.csv"], &[]);
    assert_eq!(code, Some(0), "{stderr}");
    let plan: Vec<&str> = stdout.lines().filter(|l| l.contains("on hand")).collect();
    let tens: Vec<&&str> = plan.iter().filter(|l| l.contains("10 kΩ")).collect();
    assert_eq!(tens.len(), 3, "{stdout}");
    for (line, row) in tens.iter().zip([1, 3, 5]) {
        assert!(line.contains(&format!("(row {row}): ")), "{line}");
        assert!(line.contains("1 on hand → 0"), "{line}");
    }
    let (code, _, stderr) = run(
        dir.path(),
        &["take", "amp.toml", "--stock", "inv.csv", "--yes"],
        &[],
    );
    assert_eq!(code, Some(0), "{stderr}");
    assert_eq!(
        fs::read_to_string(dir.path().join("inv.csv")).unwrap(),
        format!(
            "{HEADER}r,10k,1%,0\nr,100k,1%,4\nr,10k,1%,0\nc,10u,20%,3\nr,10k,1%,0\nr,10k,1%,4\n"
        )
    );
}

/// Magnitudes no stage can have are refused with the key, its line and the plausible range,
/// bare or quoted (`1e308` used to be accepted, and a noise density of 1e308 printed `inf V rms`;
/// tests/malformed.rs has the noise case and the slew rate's "did you mean 0.5 V/us").
#[test]
fn implausible_magnitudes_are_refused_with_the_plausible_range() {
    for (from, to, key, says) in [
        ("gain = -10", "gain = -1e308", "stage.gain", "far outside"),
        (
            "supply = \"9 V\"",
            "supply = 1e308",
            "stage.supply",
            "plausible: 500 mV to 1 kV",
        ),
        (
            "load = \"10k\"",
            "load = \"1e308\"",
            "stage.load",
            "outside the resistance",
        ),
        (
            "band =",
            "gain_tolerance = 1e308\nband =",
            "stage.gain_tolerance",
            "below 100 %",
        ),
    ] {
        let dir = setup(&SPEC.replace(from, to));
        let (code, stdout, stderr) = run(dir.path(), &["pick", "amp.toml", "-q"], &[]);
        assert_eq!(code, Some(2), "{to}: {stderr}");
        assert!(stdout.is_empty());
        assert!(
            stderr.contains(key) && stderr.contains(says),
            "{to}: {stderr}"
        );
        assert!(!stderr.contains("inf"), "{to}: {stderr}");
    }
}
