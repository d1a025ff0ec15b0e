//! Ratings and dielectrics the safe way (issue 12, part 6), through the binary: a capacitor's
//! voltage rating covers the rail it can see unless `[stock] rating_rule = "bias"`, class-2
//! ceramics stay out of the signal path unless `[stock] class2_in_signal_path = true` (and are
//! then named in the cautions), and bad values of either key are located errors with exit 2.
//! The stock is `tests/data/safe-16v-caps.csv` (invented): 16 V electrolytics and 50 V X7R
//! ceramics; the spec is a 24 V inverting stage (`tests/data/safe-24v.toml`).

use assert_cmd::Command;
use std::path::Path;
use std::time::Duration;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// The 24 V spec with `extra` lines at the top of `[stock]`, written beside a copy of its
/// stock in a temporary folder.
fn spec_with(extra: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let data = root().join("tests/data");
    std::fs::copy(
        data.join("safe-16v-caps.csv"),
        dir.path().join("safe-16v-caps.csv"),
    )
    .unwrap();
    let text = std::fs::read_to_string(data.join("safe-24v.toml")).unwrap();
    let text = text.replace("[stock]\n", &format!("[stock]\n{extra}\n"));
    let path = dir.path().join("spec.toml");
    std::fs::write(&path, text).unwrap();
    (dir, path)
}

fn pick(extra: &str, json: bool) -> (i32, String, String) {
    let (dir, spec) = spec_with(extra);
    let mut cmd = Command::cargo_bin("stockfit").unwrap();
    cmd.env("NO_COLOR", "1")
        .timeout(Duration::from_secs(180))
        .arg("pick")
        .arg(&spec);
    let out_json = dir.path().join("out.json");
    if json {
        cmd.arg("--json").arg(&out_json);
    }
    let out = cmd.output().unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    let doc = if json {
        std::fs::read_to_string(&out_json).unwrap_or_default()
    } else {
        stderr
    };
    (out.status.code().unwrap_or(-1), stdout, doc)
}

#[test]
fn a_16_volt_electrolytic_is_refused_on_a_24_volt_rail_by_default() {
    // The rail rule: each capacitor can see the 24 V rail (at power-up, or with the output
    // latched), so 16 V parts fail; the X7R parts are class 2, kept out of the signal path.
    let (code, stdout, _) = pick("", false);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("No build from this stock meets the spec."));
}

#[test]
fn the_bias_rule_takes_the_quiescent_dc_over_the_derating() {
    // The stage biases at 12 V; 12 V / 0.8 = 15 V ≤ 16 V, so the electrolytics pass.
    let (code, stdout, _) = pick("rating_rule = \"bias\"", false);
    assert_eq!(code, 0, "{stdout}");
    assert!(stdout.contains("electrolytic"));
    assert!(stdout.contains("voltage rating vs worst-case DC / 0.8"));
    assert!(!stdout.contains("X7R"));
}

#[test]
fn class_two_ceramics_allowed_are_named_in_the_cautions() {
    let (code, stdout, json) = pick("class2_in_signal_path = true", true);
    assert_eq!(code, 0, "{stdout}");
    // Rated 50 V against the 24 V rail: the rail rule's figure is the rail.
    assert!(stdout.contains("c_in rating vs rail and worst-case DC / 0.8"));
    assert!(stdout.contains("needs ≥ 24 V"));
    assert!(stdout.contains("! c_in is a class-2 ceramic (X7R) in the signal path"));
    let doc: serde_json::Value = serde_json::from_str(&json).unwrap();
    let build = &doc["builds"][0];
    assert_eq!(build["parts"]["c_in"]["pieces"][0]["dielectric"], "X7R");
    let cautions = build["cautions"].as_array().unwrap();
    assert!(cautions.iter().any(|c| c
        .as_str()
        .unwrap()
        .starts_with("c_out is a class-2 ceramic (X7R)")));
    let rating = build["capacitors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["slot"] == "c_in")
        .unwrap()["rating_needed"]
        .as_f64()
        .unwrap();
    assert_eq!(rating, 24.0);
}

#[test]
fn a_checked_build_with_a_class_two_coupling_capacitor_fails_its_dielectric_check() {
    let (_dir, spec) = spec_with("");
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .env("NO_COLOR", "1")
        .timeout(Duration::from_secs(180))
        .args(["check"])
        .arg(&spec)
        .args([
            "--set",
            "r_in=100k",
            "--set",
            "r_fb=470k",
            "--set",
            "r_bias_hi=100k",
            "--set",
            "r_bias_lo=100k",
            "--set",
            "c_in=1u",
            "--set",
            "c_out=10u",
        ])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    // `check` looks 1 µF up in the inventory; the first line of that value decides. Whichever
    // it takes, c_in fails: the 16 V electrolytic its rating, the X7R its dielectric.
    assert_eq!(out.status.code(), Some(1), "{stdout}");
    assert!(
        stdout.contains("c_in no class-2 ceramic in the signal path")
            || stdout.contains("c_in rating vs rail"),
        "{stdout}"
    );
}

#[test]
fn bad_values_are_located_errors() {
    let (code, _, stderr) = pick("rating_rule = \"maybe\"", false);
    assert_eq!(code, 2);
    assert!(stderr.contains("`stock.rating_rule`"), "{stderr}");
    assert!(stderr.contains("expected \"supply\""), "{stderr}");
    assert!(stderr.contains("line "), "{stderr}");
    let (code, _, stderr) = pick("class2_in_signal_path = \"yes\"", false);
    assert_eq!(code, 2);
    assert!(stderr.contains("`stock.class2_in_signal_path`"), "{stderr}");
    assert!(stderr.contains("expected true or false"), "{stderr}");
}
