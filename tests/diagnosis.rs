//! The infeasibility report through the binary: each blocking requirement with the value the
//! stock reaches, the smallest relaxation, and the part whose stock range is the limit.

use assert_cmd::Command;

/// A small invented drawer: resistors up to 1 MΩ (1 %), capacitors up to 47 µF.
const DRAWER: &str = "kind,value,tolerance,qty\n\
    r,1k,1%,10\nr,2k2,1%,10\nr,10k,1%,10\nr,22k,1%,10\nr,100k,1%,10\nr,1M,1%,10\n\
    c,100n,10%,5\nc,1u,10%,5\nc,10u,20%,5\nc,47u,20%,5\n";

fn pick(spec: &str, json: bool) -> (Option<i32>, String) {
    let dir = tempfile::tempdir().unwrap();
    let spec_path = dir.path().join("amp.toml");
    let stock_path = dir.path().join("drawer.csv");
    std::fs::write(&spec_path, spec).unwrap();
    std::fs::write(&stock_path, DRAWER).unwrap();
    let mut cmd = Command::cargo_bin("stockfit").unwrap();
    cmd.arg("pick")
        .arg(&spec_path)
        .arg("--stock")
        .arg(&stock_path)
        .arg("--quiet");
    if json {
        cmd.args(["--json", "-"]);
    }
    let out = cmd.output().unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
    )
}

/// Inverting stage: the input resistance is r_in (any op-amp text), so 2.2 MΩ needs an r_in
/// the drawer does not have; at 1 % the largest gives 990 kΩ worst case.
const HIGH_RIN: &str = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -1\n\
    input_resistance_min = \"2.2M\"\nload = \"10k\"\nband = [\"20 Hz\", \"20 kHz\"]\n";

#[test]
fn the_report_names_the_part_whose_range_blocks() {
    let (code, text) = pick(HIGH_RIN, false);
    assert_eq!(code, Some(1), "{text}");
    // The lead's report may wrap long lines: compare with the breaks taken out.
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(
        flat.contains("stage.input_resistance_min 2.2 MΩ cannot be met"),
        "{text}"
    );
    assert!(flat.contains("the best build reaches 990 kΩ"), "{text}");
    assert!(flat.contains("input_resistance_min ≤ 990 kΩ"), "{text}");
    assert!(
        flat.contains("needs r_in ≥ 2.3 MΩ; the largest resistor in stock is 1 MΩ"),
        "{text}"
    );
}

#[test]
fn the_json_report_carries_the_limits() {
    let (code, text) = pick(HIGH_RIN, true);
    assert_eq!(code, Some(1), "{text}");
    let doc: serde_json::Value = serde_json::from_str(&text).unwrap();
    let b = &doc["blockers"][0];
    assert_eq!(b["key"], "stage.input_resistance_min");
    assert!((b["reached"].as_f64().unwrap() - 990e3).abs() < 1.0, "{b}");
    assert_eq!(b["limits"][0]["slot"], "r_in");
    assert_eq!(b["limits"][0]["largest"], true);
    assert_eq!(b["limits"][0]["stock_value"], 1e6);
    assert!(b["limits"][0]["needed"].as_f64().unwrap() > 2.2e6);
}

#[test]
fn a_band_loss_blocked_by_the_largest_capacitor() {
    // 1 kΩ load: c_out with the load sets the low edge; 47 µF gives a corner near 3.4 Hz.
    let spec = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -1\nload = \"1k\"\n\
        band = [\"10 Hz\", \"20 kHz\"]\nband_loss_max = \"0.1 dB\"\ninput_resistance_min = \"1k\"\n";
    let (code, text) = pick(spec, false);
    assert_eq!(code, Some(1), "{text}");
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(flat.contains("stage.band_loss_max 0.1 dB"), "{text}");
    assert!(
        flat.contains("needs c_out ≥ ") && flat.contains("the largest capacitor in stock is 47 µF"),
        "{text}"
    );
}
