//! The spec keys of issue 12 (noise, impedance level, gain as asked) through the binary:
//! `input_noise_max`, `[range]`, `gain_db`, the default gain window as printed, and the
//! `noise` and `divider_current` goals. Specs are invented; figures are checked against the
//! formulas named beside each assertion.

use assert_cmd::Command;
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::time::Duration;

fn stockfit() -> Command {
    let mut cmd = Command::cargo_bin("stockfit").expect("the stockfit binary is built");
    cmd.current_dir(env!("CARGO_MANIFEST_DIR"))
        .env("NO_COLOR", "1")
        .timeout(Duration::from_secs(180));
    cmd
}

struct Run {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

fn run(args: &[&str]) -> Run {
    let out = stockfit().args(args).output().expect("the binary runs");
    Run {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn spec_file(dir: &Path, text: &str) -> PathBuf {
    let path = dir.join("spec.toml");
    std::fs::write(&path, text).unwrap();
    path
}

/// An inverting stage on a small stock (E12 resistors, E6 capacitors): quick to search.
fn inverting(stage_extra: &str, rest: &str) -> String {
    format!(
        "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\nload = \"10k\"\n\
         band = [\"20 Hz\", \"20 kHz\"]\ninput_resistance_min = \"10k\"\n{stage_extra}\n\
         [stock]\nresistors = \"E12\"\ncapacitors = \"E6\"\n{rest}"
    )
}

fn pick_json(text: &str) -> (Run, Value) {
    let dir = tempfile::tempdir().unwrap();
    let spec = spec_file(dir.path(), text);
    let json = dir.path().join("out.json");
    let r = run(&[
        "pick",
        spec.to_str().unwrap(),
        "--json",
        json.to_str().unwrap(),
    ]);
    assert_eq!(r.code, Some(0), "{}\n{}", r.stdout, r.stderr);
    let doc = serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap();
    (r, doc)
}

fn part(build: &Value, slot: &str) -> f64 {
    build["parts"][slot]["value"].as_f64().unwrap()
}

#[test]
fn gain_db_is_the_gain_in_decibels_with_the_kinds_sign() {
    // 20·log10(10) = 20 dB (IEC 60027-3 field level): an inverting stage of gain −10.
    let (r, doc) = pick_json(&inverting("gain_db = 20", ""));
    assert!(r.stdout.contains("gain −10 "), "{}", r.stdout);
    assert!((doc["target_gain"].as_f64().unwrap() + 10.0).abs() < 1e-12);
}

#[test]
fn gain_and_gain_db_together_are_refused_with_their_line() {
    let dir = tempfile::tempdir().unwrap();
    let spec = spec_file(dir.path(), &inverting("gain = -10\ngain_db = 20", ""));
    let r = run(&["pick", spec.to_str().unwrap()]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("stage.gain_db"), "{}", r.stderr);
    assert!(r.stderr.contains("not both"), "{}", r.stderr);
}

#[test]
fn the_default_gain_window_is_applied_and_printed() {
    // Without `gain_tolerance`: ±20 % (spec::DEFAULT_GAIN_TOLERANCE), named in the checks.
    let (r, doc) = pick_json(&inverting("gain = -10", ""));
    assert!(r.stdout.contains("(default ±20 %)"), "{}", r.stdout);
    let checks = doc["builds"][0]["checks"].as_array().unwrap();
    let low = checks.iter().find(|c| c["name"] == "gain_low").unwrap();
    assert!((low["limit"].as_f64().unwrap() - 8.0).abs() < 1e-9, "{low}");
}

#[test]
fn a_slot_range_bounds_that_slot_only() {
    let (_, doc) = pick_json(&inverting(
        "gain = -10",
        "[range]\nr_fb = [\"1k\", \"150k\"]\nr_bias_hi = [\"33k\", \"68k\"]\n",
    ));
    for b in doc["builds"].as_array().unwrap() {
        assert!(
            part(b, "r_fb") <= 150e3 * (1.0 + 1e-9),
            "{}",
            part(b, "r_fb")
        );
        let hi = part(b, "r_bias_hi");
        assert!(
            (33e3 * (1.0 - 1e-9)..=68e3 * (1.0 + 1e-9)).contains(&hi),
            "{hi}"
        );
        assert!(part(b, "r_in") >= 10e3 * (1.0 - 1e-9));
    }
}

#[test]
fn an_unknown_slot_in_range_is_located_and_lists_the_slots() {
    let dir = tempfile::tempdir().unwrap();
    let spec = spec_file(
        dir.path(),
        &inverting("gain = -10", "[range]\nr_feedback = [\"1k\", \"47k\"]\n"),
    );
    let r = run(&["pick", spec.to_str().unwrap()]);
    assert_eq!(r.code, Some(2), "{}", r.stdout);
    assert!(r.stderr.contains("`range.r_feedback`"), "{}", r.stderr);
    assert!(r.stderr.contains("line 12"), "{}", r.stderr);
    assert!(
        r.stderr
            .contains("its slots are r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out"),
        "{}",
        r.stderr
    );
    let bad = spec_file(
        dir.path(),
        &inverting("gain = -10", "[range]\nr_fb = [\"47k\", \"1k\"]\n"),
    );
    let r = run(&["pick", bad.to_str().unwrap()]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("0 < low ≤ high"), "{}", r.stderr);
}

#[test]
fn input_noise_max_is_a_worst_case_check() {
    // The op-amp's e_n alone over the band is e_n·√B at the input (flat density, calculus):
    // 10 nV/√Hz · √19 980 Hz = 1.41 µV; the resistors (r_in ≥ 10k: 12.9 nV/√Hz) add more.
    let amp = "[amplifier]\nnoise_voltage = \"10 nV/rtHz\"\n";
    let (r, doc) = pick_json(&inverting("gain = -10\ninput_noise_max = \"3 uV\"", amp));
    assert!(
        r.stdout.contains("input-referred noise over the band"),
        "{}",
        r.stdout
    );
    for b in doc["builds"].as_array().unwrap() {
        let c = b["checks"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["name"] == "input_noise")
            .unwrap();
        let v = c["value"].as_f64().unwrap();
        assert!((1.41e-6..=3e-6).contains(&v), "{c}");
        // The worst case is at least the nominal figure of the noise report.
        assert!(v >= b["noise"]["input_rms_v"].as_f64().unwrap() * (1.0 - 1e-12));
    }
    // Below e_n·√B no build can pass: exit 1.
    let dir = tempfile::tempdir().unwrap();
    let spec = spec_file(
        dir.path(),
        &inverting("gain = -10\ninput_noise_max = \"1.3 uV\"", amp),
    );
    let r = run(&["pick", spec.to_str().unwrap(), "--time-limit", "20"]);
    assert_eq!(r.code, Some(1), "{}\n{}", r.stdout, r.stderr);
}

#[test]
fn the_noise_goal_lowers_the_impedance_level_and_zero_weight_restores_it() {
    // Non-inverting gain 11 with an ideal source: the input noise is 4kT·(R_fb ∥ R_g) plus the
    // op-amp's (objective::noise), so the noise goal asks small resistors; without it nothing
    // does and the search takes what the capacitors like (large resistors).
    let base = "[stage]\nkind = \"non-inverting\"\nsupply = \"9 V\"\ngain = 11\nload = \"10k\"\n\
                band = [\"20 Hz\", \"20 kHz\"]\ninput_resistance_min = \"100k\"\n\
                [stock]\nresistors = \"E12\"\ncapacitors = \"E6\"\n";
    let (_, quiet) = pick_json(base);
    let (_, loud) = pick_json(&format!("{base}[goals]\nnoise = 0\n"));
    let r_g = |doc: &Value| part(&doc["builds"][0], "r_g");
    assert!(r_g(&quiet) <= 10e3, "{}", r_g(&quiet));
    assert!(
        r_g(&loud) > 10.0 * r_g(&quiet),
        "{} {}",
        r_g(&loud),
        r_g(&quiet)
    );
    let r_fb = part(&quiet["builds"][0], "r_fb");
    assert!((1e3..=1e6).contains(&r_fb), "{r_fb}");
}

fn netlist_of(text: &str) -> (Value, String) {
    let dir = tempfile::tempdir().unwrap();
    let spec = spec_file(dir.path(), text);
    let (json, cir) = (dir.path().join("out.json"), dir.path().join("out.cir"));
    let r = run(&[
        "pick",
        spec.to_str().unwrap(),
        "--top",
        "1",
        "--json",
        json.to_str().unwrap(),
        "--spice",
        cir.to_str().unwrap(),
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    (
        serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap(),
        std::fs::read_to_string(cir).unwrap(),
    )
}

#[test]
fn stray_capacitance_is_in_the_netlist_by_default_and_can_be_left_out() {
    // 0.2 pF across each resistor by default (spec::DEFAULT_STRAY_CAPACITANCE), one per
    // resistor slot of the inverting stage; `stray_capacitance = 0` writes none.
    let (_, net) = netlist_of(&inverting("gain = -10", ""));
    let strays: Vec<&str> = net.lines().filter(|l| l.starts_with("C_STRAY_")).collect();
    assert_eq!(strays.len(), 4, "{net}");
    assert!(net.contains("C_STRAY_R_FB inn amp_out 200f"), "{net}");
    let (_, net) = netlist_of(&inverting("gain = -10\nstray_capacitance = 0", ""));
    assert!(!net.contains("C_STRAY_"), "{net}");
}

#[test]
fn source_capacitance_is_in_series_with_the_input() {
    // 100 nF in series with c_in: the input network's capacitance is C·C_s/(C + C_s) (series
    // capacitors), so its corner is 1/(2π·R_in·C_series).
    let (doc, net) = netlist_of(&inverting(
        "gain = -10\nsource_capacitance = \"100 nF\"",
        "",
    ));
    assert!(net.contains("C_S in in_cs 100n"), "{net}");
    let b = &doc["builds"][0];
    let (c_in, r_in) = (part(b, "c_in"), part(b, "r_in"));
    let series = c_in * 100e-9 / (c_in + 100e-9);
    let want = 1.0 / (2.0 * std::f64::consts::PI * r_in * series);
    let got = b["metrics"]["networks"][0]["corner_hz"].as_f64().unwrap();
    assert!((got / want - 1.0).abs() < 1e-12, "{got} {want}");
}
