//! The amplifier as it is (issue 12, part 5), through the binary: `[amplifier]
//! output_current_max` and `input_common_mode` as checks and in the pre-search screen, and
//! `amplifier = "FILE#NAME"` naming an entry of a file of op-amps (the invented
//! `inventories/opamps.toml`, used by `examples/sensor-amp-5v-opamp-file.toml`), with located
//! errors and exit 2 for bad input.

use assert_cmd::Command;
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::time::Duration;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

const EXAMPLE: &str = "examples/sensor-amp-5v-opamp-file.toml";

/// A copy of the example in a temporary folder beside a copy of the op-amp file, with each
/// `(from, to)` replaced in the spec and each `(from, to)` of `file_edits` in the op-amp file.
fn setup(spec_edits: &[(&str, &str)], file_edits: &[(&str, &str)]) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let mut file = std::fs::read_to_string(root().join("inventories/opamps.toml")).unwrap();
    for (a, b) in file_edits {
        assert!(file.contains(a), "{a}");
        file = file.replace(a, b);
    }
    std::fs::write(dir.path().join("opamps.toml"), file).unwrap();
    let mut spec = std::fs::read_to_string(root().join(EXAMPLE))
        .unwrap()
        .replace("../inventories/opamps.toml", "opamps.toml");
    for (a, b) in spec_edits {
        assert!(spec.contains(a), "{a}");
        spec = spec.replace(a, b);
    }
    let path = dir.path().join("spec.toml");
    std::fs::write(&path, spec).unwrap();
    (dir, path)
}

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
    json: Option<Value>,
}

fn pick(spec: &Path) -> Run {
    let json = spec.with_file_name("out.json");
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .env("NO_COLOR", "1")
        .timeout(Duration::from_secs(180))
        .arg("pick")
        .arg(spec)
        .arg("--json")
        .arg(&json)
        .output()
        .unwrap();
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        json: std::fs::read_to_string(&json)
            .ok()
            .and_then(|t| serde_json::from_str(&t).ok()),
    }
}

#[test]
fn the_example_takes_its_amplifier_from_the_file_and_checks_its_limits() {
    let run = pick(&root().join(EXAMPLE));
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    let doc = run.json.unwrap();
    let b = &doc["builds"][0];
    let checks = b["checks"].as_array().unwrap();
    let check = |name: &str| checks.iter().find(|c| c["name"] == name).unwrap().clone();
    // The file's figures: 5 mA, inputs [0 V, 1.1 V] from the rails, 1 MHz (the high corner
    // check exists only with a GBW).
    assert_eq!(check("output_current")["limit"].as_f64().unwrap(), 5e-3);
    assert_eq!(
        check("input_common_mode_low")["limit"].as_f64().unwrap(),
        0.0
    );
    assert!((check("input_common_mode_high")["limit"].as_f64().unwrap() - 3.9).abs() < 1e-12);
    assert!(checks.iter().any(|c| c["name"] == "high_corner"));
    // Ohm's law (common practice): 2 V into the 1 kΩ load and into r_fb + r_g (c_g a short at
    // mid-band), the resistors at the low end of their 1 % tolerance at worst case.
    let r = |slot: &str| b["parts"][slot]["value"].as_f64().unwrap();
    let want = 2.0 / 1e3 + 2.0 / ((r("r_fb") + r("r_g")) * 0.99);
    let got = b["metrics"]["output_current_peak_a"].as_f64().unwrap();
    assert!((got - want).abs() < 1e-9 * want, "{got} vs {want}");
    // The + input carries 2 V / noise gain around its DC; − follows it.
    let (lo, hi) = (
        b["metrics"]["input_voltage_range_v"][0].as_f64().unwrap(),
        b["metrics"]["input_voltage_range_v"][1].as_f64().unwrap(),
    );
    let ng_min = 1.0 + r("r_fb") * 0.99 / (r("r_g") * 1.01);
    assert!(lo <= b["metrics"]["output_dc_min_v"].as_f64().unwrap() - 2.0 / ng_min * 0.99);
    assert!(hi >= b["metrics"]["output_dc_max_v"].as_f64().unwrap() + 2.0 / ng_min * 0.99);
    assert!(run.stdout.contains("output current 2"));
    assert!(run.stdout.contains("op-amp inputs between"));
}

#[test]
fn an_output_too_weak_for_the_load_alone_is_named_without_a_search() {
    // 2 V into 1 kΩ is 2 mA, above 1.5 mA: the screen rules the spec out and the diagnosis
    // names the amplifier's limit.
    let (_d, spec) = setup(
        &[],
        &[(
            "output_current_max = \"5 mA\"",
            "output_current_max = \"1.5 mA\"",
        )],
    );
    let run = pick(&spec);
    assert_eq!(run.code, 1, "{}{}", run.stdout, run.stderr);
    assert!(
        run.stdout.contains("amplifier.output_current_max"),
        "{}",
        run.stdout
    );
}

#[test]
fn a_common_mode_window_the_bias_misses_fails_its_check() {
    // Inputs may come no nearer than 2.7 V to the high rail of 5 V: at most 2.3 V, below this
    // build's 2.5 V bias point (equal divider), so `check` fails it (exit 1).
    let (_d, spec) = setup(
        &[],
        &[(
            "input_common_mode = [\"0 V\", \"1.1 V\"]",
            "input_common_mode = [\"0 V\", \"2.7 V\"]",
        )],
    );
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .env("NO_COLOR", "1")
        .timeout(Duration::from_secs(180))
        .arg("check")
        .arg(&spec)
        .args([
            "--set",
            "c_in=100n",
            "--set",
            "r_bias_hi=200k",
            "--set",
            "r_bias_lo=200k",
            "--set",
            "r_fb=100k",
            "--set",
            "r_g=10k",
            "--set",
            "c_g=10u",
            "--set",
            "c_out=100u",
        ])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(1), "{stdout}");
    let line = stdout
        .lines()
        .find(|l| l.contains("highest input voltage (common mode)"))
        .unwrap();
    assert!(line.ends_with("FAIL") && line.contains("≤ 2.3 V"), "{line}");
    // With "2.6 V" from each rail no window is left at all: the screen rules it out.
    let (_d, spec) = setup(
        &[],
        &[(
            "input_common_mode = [\"0 V\", \"1.1 V\"]",
            "input_common_mode = \"2.6 V\"",
        )],
    );
    assert_eq!(pick(&spec).code, 1);
}

#[test]
fn the_amplifier_keys_are_checked_where_they_are_written() {
    let (_d, spec) = setup(
        &[(
            "amplifier = \"opamps.toml#drawer-cmos-1m\"",
            "[amplifier]\ninput_common_mode = \"-1 V\"\noutput_current_max = \"lots\"",
        )],
        &[],
    );
    let run = pick(&spec);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("`amplifier.input_common_mode`: how close each input may come to each rail cannot be negative"), "{}", run.stderr);
    assert!(
        run.stderr.contains("`amplifier.output_current_max`"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("line 6"), "{}", run.stderr);
}

#[test]
fn a_missing_entry_lists_the_names_the_file_has() {
    let (_d, spec) = setup(&[("#drawer-cmos-1m", "#drawer-cmos")], &[]);
    let run = pick(&spec);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("opamps.toml"), "{}", run.stderr);
    assert!(
        run.stderr.contains("spec.toml line 5, `amplifier`"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr
            .contains("no amplifier named \"drawer-cmos\"; did you mean `drawer-cmos-1m`?"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr
            .contains("bench-bipolar-10m, drawer-cmos-1m, general-4m"),
        "{}",
        run.stderr
    );
}

#[test]
fn errors_in_the_file_name_the_file_the_entry_the_key_and_the_line() {
    let (_d, spec) = setup(
        &[],
        &[
            (
                "gbw = \"1 MHz\"",
                "gbw = \"1 MHz\"\ngbww = 3\nslew_rate_x = 1",
            ),
            ("psrr = \"80 dB\"", "psrr = \"eighty\""),
        ],
    );
    let run = pick(&spec);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("3 problems in the op-amp file"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr
            .contains("line 9, `drawer-cmos-1m.gbww`: unknown key; did you mean `gbw`?"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.contains("`drawer-cmos-1m.psrr`"),
        "{}",
        run.stderr
    );
    // A file that is not there, and a reference without `#NAME`.
    let (_d, spec) = setup(&[("opamps.toml#", "nofile.toml#")], &[]);
    let run = pick(&spec);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("spec.toml line 5, `amplifier`") && run.stderr.contains("nofile.toml"),
        "{}",
        run.stderr
    );
    let (_d, spec) = setup(&[("opamps.toml#drawer-cmos-1m", "opamps.toml")], &[]);
    let run = pick(&spec);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr
            .contains("line 5, `amplifier`: found \"opamps.toml\", expected \"FILE#NAME\""),
        "{}",
        run.stderr
    );
}

#[test]
fn every_entry_of_the_shipped_file_parses() {
    let text = std::fs::read_to_string(root().join("inventories/opamps.toml")).unwrap();
    for name in ["drawer-cmos-1m", "bench-bipolar-10m", "general-4m"] {
        let a = stockfit::spec::amplifier_from_file(&text, name).unwrap();
        assert!(a.gbw.is_some() && a.psrr.is_some() && a.output_current_max.is_some());
        assert!(a.input_common_mode.is_some());
    }
}
