//! A battery of malformed specs and inventories run through the binary. Each one must exit 2,
//! print nothing on stdout, not panic, and say where the problem is: the file's name, the line,
//! and the key or column — plus what was found or expected where that is the point.
//!
//! The inputs are typing and export accidents seen in spreadsheets and hand-written config
//! (common practice): wrong units, decimal commas, negative counts, values of the other kind of
//! part, byte-order marks, CRLF and CR line ends, non-UTF-8 bytes, truncated quotes.

use assert_cmd::Command;
use std::path::Path;

/// A valid spec; the line numbers in the cases below refer to it.
const BASE: &str = "[stage]\n\
kind = \"inverting\"\n\
supply = \"9 V\"\n\
gain = -10\n\
load = \"10k\"\n\
band = [\"20 Hz\", \"20 kHz\"]\n";

/// A valid inventory header.
const H: &str = "kind,value,tolerance,qty\n";

enum Run {
    /// `stockfit pick FILE`
    Spec,
    /// `stockfit stock FILE`
    Stock,
    /// `stockfit pick <valid spec> --stock FILE`
    PickStock,
}

struct Case {
    what: &'static str,
    file: &'static str,
    bytes: Vec<u8>,
    run: Run,
    /// Every one of these must be in stderr (the file name is checked for every case).
    expect: Vec<String>,
}

fn spec(what: &'static str, file: &'static str, text: &str, expect: &[&str]) -> Case {
    Case {
        what,
        file,
        bytes: text.as_bytes().to_vec(),
        run: Run::Spec,
        expect: expect.iter().map(|s| s.to_string()).collect(),
    }
}

fn csv(what: &'static str, file: &'static str, text: &str, expect: &[&str]) -> Case {
    Case {
        what,
        file,
        bytes: text.as_bytes().to_vec(),
        run: Run::Stock,
        expect: expect.iter().map(|s| s.to_string()).collect(),
    }
}

/// BASE with `from` replaced by `to` (which must occur).
fn base_with(from: &str, to: &str) -> String {
    assert!(BASE.contains(from), "{from}");
    BASE.replacen(from, to, 1)
}

fn run_case(dir: &Path, case: &Case) -> Result<(), String> {
    let path = dir.join(case.file);
    std::fs::write(&path, &case.bytes).unwrap();
    let mut cmd = Command::cargo_bin("stockfit").unwrap();
    match case.run {
        Run::Spec => cmd.arg("pick").arg(&path).arg("--quiet"),
        Run::Stock => cmd.arg("stock").arg(&path),
        Run::PickStock => {
            let spec = dir.join("valid-for-stock.toml");
            std::fs::write(&spec, BASE).unwrap();
            cmd.arg("pick")
                .arg(&spec)
                .arg("--stock")
                .arg(&path)
                .arg("--quiet")
        }
    };
    let out = cmd.output().unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    let stderr = String::from_utf8_lossy(&out.stderr);
    let mut problems = Vec::new();
    if out.status.code() != Some(2) {
        problems.push(format!("exit {:?}, expected 2", out.status.code()));
    }
    if !stdout.is_empty() {
        problems.push(format!("stdout not empty: {stdout:?}"));
    }
    if stderr.contains("panicked") {
        problems.push("panicked".to_string());
    }
    if !stderr.contains(case.file) {
        problems.push(format!("file name {} not named", case.file));
    }
    for e in &case.expect {
        if !stderr.contains(e.as_str()) {
            problems.push(format!("missing {e:?}"));
        }
    }
    if problems.is_empty() {
        Ok(())
    } else {
        Err(format!(
            "{} ({}): {}\nstderr:\n{stderr}",
            case.what,
            case.file,
            problems.join("; ")
        ))
    }
}

fn run_all(cases: &[Case]) {
    let dir = tempfile::tempdir().unwrap();
    let failures: Vec<String> = cases
        .iter()
        .filter_map(|c| run_case(dir.path(), c).err())
        .collect();
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n\n")
    );
}

fn spec_cases() -> Vec<Case> {
    let lock = |entry: &str| format!("{BASE}\n[lock]\n{entry}\n");
    let stock = |entry: &str| format!("{BASE}\n[stock]\n{entry}\n");
    let mut bom_bytes = b"\xEF\xBB\xBF".to_vec();
    bom_bytes.extend_from_slice(base_with("\"10k\"", "\"10 uF\"").as_bytes());
    let mut utf8 = BASE.as_bytes().to_vec();
    let at = BASE.find("10k").unwrap();
    utf8[at] = 0xB5; // Latin-1 µ in line 5
    vec![
        spec(
            "boolean where a resistance goes",
            "bool-load.toml",
            &base_with("\"10k\"", "true"),
            &["line 5", "`stage.load`", "found `true`", "ohms"],
        ),
        spec(
            "capacitance where a resistance goes",
            "unit-load.toml",
            &base_with("\"10k\"", "\"10 uF\""),
            &["line 5", "`stage.load`", "is a capacitance"],
        ),
        spec(
            "decimal comma",
            "comma-load.toml",
            &base_with("\"10k\"", "\"4,7k\""),
            &["line 5", "`stage.load`", "decimal comma", "4k7"],
        ),
        spec(
            "negative resistance",
            "negative-load.toml",
            &base_with("\"10k\"", "\"-10k\""),
            &["line 5", "`stage.load`", "negative"],
        ),
        spec(
            "capacitor value as a load",
            "cap-value-load.toml",
            &base_with("\"10k\"", "\"100n\""),
            &["line 5", "`stage.load`", "is this a capacitance?"],
        ),
        spec(
            "frequency where a voltage goes",
            "unit-supply.toml",
            &base_with("\"9 V\"", "\"9 Hz\""),
            &["line 3", "`stage.supply`", "is a frequency"],
        ),
        spec(
            "negative supply",
            "negative-supply.toml",
            &base_with("\"9 V\"", "-9"),
            &["line 3", "`stage.supply`", "positive"],
        ),
        spec(
            "band of three values",
            "band-3.toml",
            &base_with("[\"20 Hz\", \"20 kHz\"]", "[1, 2, 3]"),
            &["line 6", "`stage.band`", "3 value(s)", "two values"],
        ),
        spec(
            "band as one value",
            "band-1.toml",
            &base_with("[\"20 Hz\", \"20 kHz\"]", "\"20 Hz\""),
            &["line 6", "`stage.band`", "pair [low, high]"],
        ),
        spec(
            "band the wrong way round",
            "band-reversed.toml",
            &base_with("[\"20 Hz\", \"20 kHz\"]", "[\"20 kHz\", \"20 Hz\"]"),
            &["line 6", "`stage.band`", "low < high"],
        ),
        spec(
            "band with a wrong unit inside",
            "band-unit.toml",
            &base_with("\"20 kHz\"", "\"20 kV\""),
            &["line 6", "`stage.band`", "is a voltage"],
        ),
        spec(
            "gain as words",
            "gain-text.toml",
            &base_with("-10", "\"ten\""),
            &["line 4", "`stage.gain`", "\"ten\""],
        ),
        spec(
            "positive gain for an inverting stage",
            "gain-sign.toml",
            &base_with("-10", "10"),
            &["line 4", "`stage.gain`", "negative"],
        ),
        spec(
            "unknown stage kind",
            "kind-unknown.toml",
            &base_with("\"inverting\"", "\"differential\""),
            &["line 2", "`stage.kind`", "\"differential\""],
        ),
        spec(
            "stage kind as a number",
            "kind-number.toml",
            &base_with("\"inverting\"", "3"),
            &[
                "line 2",
                "`stage.kind`",
                "found the number 3",
                "quoted string",
            ],
        ),
        spec(
            "misspelt key",
            "typo-key.toml",
            &base_with("load =", "laod ="),
            &["line 5", "`stage.laod`", "did you mean `load`"],
        ),
        spec(
            "misspelt section",
            "typo-section.toml",
            &base_with("[stage]", "[stgae]"),
            &["line 1", "`stgae`", "did you mean `[stage]`"],
        ),
        spec(
            "lock on a slot the stage does not have",
            "lock-slot.toml",
            &lock("r_inn = \"10k\""),
            &["line 9", "`lock.r_inn`", "did you mean `r_in`", "r_fb"],
        ),
        spec(
            "lock with a capacitance on a resistor slot",
            "lock-unit.toml",
            &lock("r_in = \"10 uF\""),
            &["line 9", "`lock.r_in`", "is a capacitance"],
        ),
        spec(
            "lock with a resistor value on a capacitor slot",
            "lock-cap.toml",
            &lock("c_in = \"4k7\""),
            &["line 9", "`lock.c_in`", "is this a resistance?"],
        ),
        spec(
            "lock tolerance of 200 %",
            "lock-tol.toml",
            &lock("r_in = \"4k7/200%\""),
            &["line 9", "`lock.r_in`", "below 100 %"],
        ),
        spec(
            "lock as a boolean",
            "lock-bool.toml",
            &lock("r_in = true"),
            &["line 9", "`lock.r_in`", "found `true`"],
        ),
        spec(
            "unknown combine",
            "combine.toml",
            &stock("combine = \"twice\""),
            &["line 9", "`stock.combine`", "\"twice\""],
        ),
        spec(
            "range of one value",
            "range-1.toml",
            &stock("resistor_range = [\"1k\"]"),
            &["line 9", "`stock.resistor_range`", "1 value(s)"],
        ),
        spec(
            "range the wrong way round",
            "range-reversed.toml",
            &stock("resistor_range = [\"10k\", \"1k\"]"),
            &["line 9", "`stock.resistor_range`", "low ≤ high"],
        ),
        spec(
            "capacitor range in ohms",
            "range-unit.toml",
            &stock("capacitor_range = [\"1k\", \"10k\"]"),
            &["line 9", "`stock.capacitor_range`", "is this a resistance?"],
        ),
        spec(
            "stock source as a number",
            "stock-number.toml",
            &stock("resistors = 5"),
            &["line 9", "`stock.resistors`", "quoted string"],
        ),
        spec(
            "tolerance of 150 %",
            "tolerance.toml",
            &stock("resistor_tolerance = \"150%\""),
            &["line 9", "`stock.resistor_tolerance`", "below 100 %"],
        ),
        spec(
            "slew rate as a bare 0.5 (V/s)",
            "slew-bare.toml",
            &format!("{BASE}\n[amplifier]\nslew_rate = 0.5\n"),
            &[
                "line 9",
                "`amplifier.slew_rate`",
                "did you mean \"0.5 V/us\"",
            ],
        ),
        spec(
            "load of 1 milliohm",
            "load-milli.toml",
            &base_with("\"10k\"", "\"1m\""),
            &["line 5", "`stage.load`", "a small `m` is milli"],
        ),
        spec(
            "noise density of 1e308",
            "noise-huge.toml",
            &format!("{BASE}\n[amplifier]\nnoise_voltage = 1e308\n"),
            &[
                "line 9",
                "`amplifier.noise_voltage`",
                "far above",
                "plausible",
            ],
        ),
        spec(
            "bare negative bias current",
            "ib-negative.toml",
            &format!("{BASE}\n[amplifier]\ninput_bias_current = -20e-9\n"),
            &[
                "line 9",
                "`amplifier.input_bias_current`",
                "cannot be negative",
            ],
        ),
        spec(
            "gain tolerance of 100 %",
            "gain-tol-100.toml",
            &base_with("band =", "gain_tolerance = \"100%\"\nband ="),
            &["line 6", "`stage.gain_tolerance`", "below 100 %"],
        ),
        spec(
            "GBW as words",
            "gbw.toml",
            &format!("{BASE}\n[amplifier]\ngbw = \"fast\"\n"),
            &["line 9", "`amplifier.gbw`", "\"fast\""],
        ),
        spec(
            "slew rate in volts",
            "slew.toml",
            &format!("{BASE}\n[amplifier]\nslew_rate = \"10 V\"\n"),
            &["line 9", "`amplifier.slew_rate`", "is a voltage"],
        ),
        spec(
            "goal weight as text",
            "goal-text.toml",
            &format!("{BASE}\n[goals]\ncost = \"x\"\n"),
            &["line 9", "`goals.cost`", "plain number"],
        ),
        spec(
            "negative goal weight",
            "goal-negative.toml",
            &format!("{BASE}\n[goals]\ncost = -1\n"),
            &["line 9", "`goals.cost`", "≥ 0"],
        ),
        spec(
            "unterminated string",
            "toml-quote.toml",
            &base_with("\"10k\"", "\"10k"),
            &["line 5", "`toml`", "not valid TOML"],
        ),
        spec(
            "duplicate key",
            "toml-duplicate.toml",
            &format!("{BASE}load = \"1k\"\n"),
            &["line 7", "`toml`", "duplicate key"],
        ),
        spec(
            "empty file",
            "empty.toml",
            "",
            &["line 1", "`spec`", "empty"],
        ),
        spec(
            "comments only",
            "comments.toml",
            "# to do\n\n# later\n",
            &["line 1", "`spec`", "empty"],
        ),
        Case {
            what: "BOM before an error",
            file: "bom.toml",
            bytes: bom_bytes,
            run: Run::Spec,
            expect: ["line 5", "`stage.load`", "is a capacitance"]
                .map(String::from)
                .to_vec(),
        },
        spec(
            "CRLF before an error",
            "crlf.toml",
            &base_with("\"10k\"", "\"10 uF\"").replace('\n', "\r\n"),
            &["line 5", "`stage.load`", "is a capacitance"],
        ),
        Case {
            what: "Latin-1 byte",
            file: "latin1.toml",
            bytes: utf8,
            run: Run::Spec,
            expect: ["line 5", "`spec`", "0xB5", "not UTF-8"]
                .map(String::from)
                .to_vec(),
        },
        spec(
            "classic Mac line ends",
            "cr.toml",
            &BASE.replace('\n', "\r"),
            &["line 1", "`toml`", "carriage returns"],
        ),
        spec(
            "headroom that leaves no swing",
            "headroom.toml",
            &base_with("band =", "headroom = \"5 V\"\nband ="),
            &["line 6", "`stage.headroom`", "no output swing"],
        ),
        spec(
            "stage that is not a table",
            "stage-value.toml",
            "stage = 3\n",
            &["line 1", "`stage`", "expected a table `[stage]`"],
        ),
        spec(
            "dotted key with a wrong unit",
            "dotted.toml",
            "stage.kind = \"inverting\"\nstage.supply = \"9 V\"\nstage.gain = -10\n\
             stage.load = \"10 uF\"\nstage.band = [\"20 Hz\", \"20 kHz\"]\n",
            &["line 4", "`stage.load`", "is a capacitance"],
        ),
        spec(
            "misspelt key in an inline table",
            "inline.toml",
            "\n\nstage = { kind = \"inverting\", supply = \"9 V\", gain = -10, laod = \"1k\", \
             load = \"10k\", band = [\"20 Hz\", \"20 kHz\"] }\n",
            &["line 3", "`stage.laod`", "did you mean `load`"],
        ),
        spec(
            "unknown tolerance mode",
            "mode.toml",
            &base_with("band =", "tolerance_mode = \"typical\"\nband ="),
            &["line 6", "`stage.tolerance_mode`", "\"typical\""],
        ),
        spec(
            "both input and output peak",
            "peaks.toml",
            &base_with(
                "band =",
                "input_peak = \"0.1 V\"\noutput_peak = \"1 V\"\nband =",
            ),
            &["line 7", "`stage.output_peak`", "not both"],
        ),
        spec(
            "several problems at once",
            "several.toml",
            "[stage]\nkind = \"inverting\"\nsupply = true\ngain = -10\nload = \"10 uF\"\n\
             band = [1]\n[stock]\ncombine = \"twice\"\n",
            &[
                "4 problems",
                "line 3, `stage.supply`",
                "line 5, `stage.load`",
                "line 6, `stage.band`",
                "line 8, `stock.combine`",
            ],
        ),
    ]
}

fn csv_cases() -> Vec<Case> {
    let mut bom = b"\xEF\xBB\xBF".to_vec();
    bom.extend_from_slice(b"kind,value,tolerance,qty\r\nr,1k,1%,1\r\nr,1k,x,1\r\n");
    let mut latin1 = b"kind,value,tolerance,qty,location\nr,1k,1%,1,Schrank ".to_vec();
    latin1.extend_from_slice(b"\xC4\n");
    vec![
        csv(
            "qty in words",
            "qty-words.csv",
            &format!("{H}r,1k,1%,many\n"),
            &["line 2, column `qty`", "\"many\"", "whole number"],
        ),
        csv(
            "negative qty",
            "qty-negative.csv",
            &format!("{H}r,1k,1%,-3\n"),
            &["line 2, column `qty`", "\"-3\""],
        ),
        csv(
            "fractional qty",
            "qty-fraction.csv",
            &format!("{H}r,1k,1%,1.5\n"),
            &["line 2, column `qty`", "\"1.5\""],
        ),
        csv(
            "qty beyond any count",
            "qty-huge.csv",
            &format!("{H}r,1k,1%,99999999999\n"),
            &["line 2, column `qty`"],
        ),
        csv(
            "quoted decimal comma",
            "comma-quoted.csv",
            &format!("{H}r,\"4,7k\",1%,3\n"),
            &["line 2, column `value`", "decimal comma", "4k7"],
        ),
        csv(
            "unquoted decimal comma",
            "comma-bare.csv",
            &format!("{H}r,4,7k,1%,3\n"),
            &["line 2, column `tolerance`", "\"7k\"", "column `#5`"],
        ),
        csv(
            "resistor value on a capacitor line",
            "cap-4k7.csv",
            &format!("{H}c,4k7,10%,3\n"),
            &["line 2, column `value`", "is this a resistance?"],
        ),
        csv(
            "capacitor value on a resistor line",
            "res-100n.csv",
            &format!("{H}r,100n,5%,3\n"),
            &["line 2, column `value`", "is this a capacitance?"],
        ),
        csv(
            "bare number on a capacitor line",
            "cap-bare.csv",
            &format!("{H}c,100,10%,3\n"),
            &["line 2, column `value`", "bare number is in farads"],
        ),
        csv(
            "capacitance unit on a resistor line",
            "res-uf.csv",
            &format!("{H}r,10uF,10%,3\n"),
            &["line 2, column `value`", "is a capacitance"],
        ),
        csv(
            "tolerance of 200 %",
            "tol-200.csv",
            &format!("{H}c,1n,200%,1\n"),
            &["line 2, column `tolerance`", "\"200%\""],
        ),
        csv(
            "tolerance of 0 %",
            "tol-0.csv",
            &format!("{H}r,1k,0%,1\n"),
            &["line 2, column `tolerance`", "\"0%\""],
        ),
        csv(
            "unknown kind",
            "kind.csv",
            &format!("{H}transistor,1k,1%,1\n"),
            &["line 2, column `kind`", "\"transistor\""],
        ),
        csv("empty file", "empty.csv", "", &["line 1", "no header row"]),
        csv(
            "comments only",
            "comments.csv",
            "# to do\n\n",
            &["line 1", "no header row"],
        ),
        csv(
            "header only",
            "header-only.csv",
            H,
            &["line 1", "no data rows"],
        ),
        csv(
            "missing qty column",
            "no-qty.csv",
            "# stock\nkind,value,tolerance\nr,1k,1%\n",
            &["line 2", "no column `qty`", "\"tolerance\""],
        ),
        csv(
            "data where the header goes",
            "no-header.csv",
            "r,4k7,5%,10\n",
            &["line 1", "must be the header"],
        ),
        csv(
            "quote never closed",
            "quote.csv",
            &format!("{H}r,1k,1%,1\nr,\"2k,1%,1\nr,3k,1%,1\n"),
            &["line 3", "never closed"],
        ),
        csv(
            "short row",
            "short.csv",
            &format!("{H}r,1k\n"),
            &["line 2, column `tolerance`", "a row of 2 cell(s)"],
        ),
        csv(
            "voltage rating in hertz",
            "voltage.csv",
            "kind,value,tolerance,qty,voltage\nc,1u,10%,1,10 Hz\n",
            &["line 2, column `voltage`", "is a frequency"],
        ),
        csv(
            "polarized as maybe",
            "polar.csv",
            "kind,value,tolerance,qty,polarized\nc,1u,10%,1,maybe\n",
            &["line 2, column `polarized`", "\"maybe\""],
        ),
        csv(
            "cost in scientific notation",
            "cost.csv",
            "kind,value,tolerance,qty,unit_cost\nr,1k,1%,1,1e3\n",
            &["line 2, column `unit_cost`", "\"1e3\""],
        ),
        csv(
            "column twice",
            "dup-column.csv",
            "kind,value,tolerance,qty,Value\nr,1k,1%,1,2k\n",
            &["line 1, column `value`", "each column once"],
        ),
        Case {
            what: "BOM and CRLF before an error",
            file: "bom-crlf.csv",
            bytes: bom,
            run: Run::Stock,
            expect: ["line 3, column `tolerance`", "\"x\""]
                .map(String::from)
                .to_vec(),
        },
        csv(
            "CR-only line ends (classic Mac)",
            "cr-only.csv",
            "# export\rkind,value,tolerance,qty\rr,1k,1%,1\rr,1k,x,1\rc,4k7,10%,3\r",
            &[
                "2 problems",
                "line 4, column `tolerance`",
                "line 5, column `value`",
            ],
        ),
        Case {
            what: "Latin-1 byte in a location",
            file: "latin1.csv",
            bytes: latin1,
            run: Run::Stock,
            expect: ["line 2, column `location`", "UTF-8"]
                .map(String::from)
                .to_vec(),
        },
        csv(
            "several bad rows at once",
            "several.csv",
            &format!("{H}r,x,1%,1\nr,1k,1%,1\nc,1n,200%,1\nr,1k,1%,1.5\n"),
            &[
                "3 problems",
                "line 2, column `value`",
                "line 4, column `tolerance`",
                "line 5, column `qty`",
            ],
        ),
        csv(
            "comments and blank lines before the bad row",
            "comments-before.csv",
            &format!("# drawer\n\n{H}# moved\n\nr,1k,1%,1\n\"r\",\"2k\",\"1%\",\"-1\"\n"),
            &["line 7, column `qty`", "\"-1\""],
        ),
        csv(
            "multi-line quoted note before the bad row",
            "multiline.csv",
            "kind,value,tolerance,qty,note\nr,1k,1%,1,\"two\nlines\"\nr,1k,1%,x,\n",
            &["line 4, column `qty`"],
        ),
        Case {
            what: "bad inventory through pick --stock",
            file: "pick-stock.csv",
            bytes: format!("{H}r,1k,1%,1\nc,4k7,10%,3\n").into_bytes(),
            run: Run::PickStock,
            expect: ["line 3, column `value`", "is this a resistance?"]
                .map(String::from)
                .to_vec(),
        },
    ]
}

#[test]
fn malformed_specs_exit_2_with_a_located_message() {
    let cases = spec_cases();
    assert!(cases.len() >= 40, "{} spec cases", cases.len());
    run_all(&cases);
}

#[test]
fn malformed_inventories_exit_2_with_a_located_message() {
    let cases = csv_cases();
    assert!(cases.len() >= 25, "{} inventory cases", cases.len());
    run_all(&cases);
}

/// Files far larger than any spec or stock list are refused by their size, before they are
/// read (sparse files: the size is set, nothing is stored).
#[test]
fn oversized_files_are_refused_before_reading() {
    let dir = tempfile::tempdir().unwrap();
    for (name, size, args) in [
        ("huge.toml", 2u64 << 20, vec!["pick"]),
        ("huge.csv", 17 << 20, vec!["stock"]),
    ] {
        let path = dir.path().join(name);
        std::fs::File::create(&path).unwrap().set_len(size).unwrap();
        let out = Command::cargo_bin("stockfit")
            .unwrap()
            .args(&args)
            .arg(&path)
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{name}: {stderr}");
        assert!(out.stdout.is_empty(), "{name}");
        assert!(
            stderr.contains(name) && stderr.contains("more than") && stderr.contains("MiB"),
            "{name}: {stderr}"
        );
    }
}

/// A CSV with more lines than the loader reads is refused with the first line past the limit
/// (a real file, 1,000,001 short lines, about 2 MB).
#[test]
fn too_many_lines_are_refused_with_the_line() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("long.csv");
    let mut text = String::from(H);
    text.push_str(&"r,1k,1%,1\n".repeat(1_000_000));
    std::fs::write(&path, text).unwrap();
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .arg("stock")
        .arg(&path)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(out.stdout.is_empty());
    assert!(
        stderr.contains("long.csv") && stderr.contains("line 1000001"),
        "{stderr}"
    );
}

/// The error-dense inventory: 999,000 rows of `x` (16 MB, within both size limits), seven bad
/// cells each. The first hundred problems are described and the rest counted, so the message
/// stays a screenful and the work stays bounded (it used to write 899 MB of errors).
#[test]
fn an_error_dense_inventory_gives_a_capped_list() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("dense.csv");
    let mut text = String::from(H);
    text.push_str(&"x,x,x,x,x,x,x,x\n".repeat(999_000));
    assert!(text.len() > 15_000_000 && text.len() < 16 << 20);
    std::fs::write(&path, text).unwrap();
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .arg("stock")
        .arg(&path)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(
        out.status.code(),
        Some(2),
        "{}",
        &stderr[..stderr.len().min(2000)]
    );
    assert!(out.stdout.is_empty());
    assert!(stderr.len() < 32 << 10, "{} bytes of stderr", stderr.len());
    // Per row: kind, tolerance and qty, and four cells past the header's four columns.
    assert!(
        stderr.contains("6993000 problems in the inventory"),
        "{stderr}"
    );
    assert!(stderr.contains("line 2, column `kind`"), "{stderr}");
    assert!(stderr.contains("… and 6992900 more problems"), "{stderr}");
}
