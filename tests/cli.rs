//! Integration tests that run the `stockfit` binary: every example and inventory, stock
//! quantities, locks, `check` against hand-derived figures, exit codes and error messages,
//! the series listing, the demo, the terminal table and the JSON document.
//!
//! Each example is run once (cached in [`example_runs`]) and that run serves several tests:
//! its JSON (written with `--json FILE`) and its terminal report (printed at the same time).
//! Fixtures live in `tests/data/cli-*`.

use assert_cmd::Command;
use predicates::prelude::*;
use serde_json::Value;
use std::collections::{BTreeMap, HashMap};
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use std::time::Duration;

/// No run of the binary should take anywhere near this long; a hang fails the test instead of
/// stalling the suite.
const RUN_TIMEOUT: Duration = Duration::from_secs(180);

/// The slots of the inverting stage, in the stage's order (the public contract of `--lock`,
/// `--set` and the JSON `parts`).
const INVERTING_SLOTS: &str = "r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out";

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// A path as the `&str` argument of a run (the repository's paths are UTF-8).
fn p(path: &Path) -> &str {
    path.to_str().expect("a UTF-8 path")
}

fn data(name: &str) -> PathBuf {
    root().join("tests/data").join(name)
}

/// The binary, run from the crate root with colour off and a time limit.
fn stockfit() -> Command {
    let mut cmd = Command::cargo_bin("stockfit").expect("the stockfit binary is built");
    cmd.current_dir(root())
        .env("NO_COLOR", "1")
        .timeout(RUN_TIMEOUT);
    cmd
}

/// What one run printed and how it ended.
#[derive(Debug, Clone)]
struct Run {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

impl Run {
    fn json(&self) -> Value {
        serde_json::from_str(&self.stdout).unwrap_or_else(|e| {
            panic!(
                "stdout is not JSON ({e}); exit {:?}\nstderr:\n{}\nstdout:\n{}",
                self.code, self.stderr, self.stdout
            )
        })
    }

    fn expect_code(&self, code: i32, what: &str) -> &Run {
        assert!(
            self.code.is_some(),
            "{what}: killed before it finished (time limit?)\nstderr:\n{}",
            self.stderr
        );
        assert_eq!(
            self.code,
            Some(code),
            "{what}: expected exit {code}\nstderr:\n{}\nstdout:\n{}",
            self.stderr,
            self.stdout
        );
        self
    }
}

fn output_of(mut cmd: Command) -> Run {
    let out = cmd
        .output()
        .expect("the binary runs (within the time limit)");
    Run {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn run<S: AsRef<std::ffi::OsStr>>(args: &[S]) -> Run {
    let mut cmd = stockfit();
    cmd.args(args);
    output_of(cmd)
}

/// Files of a folder with an extension, sorted, so that a new example or inventory is covered
/// without editing this file.
fn files_in(dir: &str, ext: &str) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(root().join(dir))
        .unwrap_or_else(|e| panic!("cannot list {dir}: {e}"))
        .map(|e| e.expect("a directory entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == ext))
        .collect();
    files.sort();
    assert!(!files.is_empty(), "no *.{ext} in {dir}");
    files
}

fn num(v: &Value, what: &str) -> f64 {
    v.as_f64()
        .unwrap_or_else(|| panic!("{what}: expected a number, found {v}"))
}

fn close(actual: f64, expected: f64, rel: f64, what: &str) {
    let scale = expected.abs().max(1e-30);
    assert!(
        (actual - expected).abs() <= rel * scale,
        "{what}: {actual} vs expected {expected} (relative error {:.3e}, allowed {rel:.0e})",
        (actual - expected).abs() / scale
    );
}

/// An engineering value as the inventories write it: plain (`100`), with an SI prefix and unit
/// (`100pF`, `1 uF`), or in the RKM code where the letter stands for the decimal point (`4k7`,
/// `4k99`, `10R`; IEC 60062). Test-side parser, so the binary is not checked against itself.
fn parse_value(text: &str) -> f64 {
    let t: String = text.chars().filter(|c| !c.is_whitespace()).collect();
    let t = t.trim_end_matches("ohm").trim_end_matches(['F', 'Ω']);
    let Some(at) = t.find(|c: char| c.is_alphabetic()) else {
        return t
            .parse()
            .unwrap_or_else(|_| panic!("not a value: {text:?}"));
    };
    let letter = t[at..].chars().next().expect("a letter");
    let multiplier = match letter {
        'p' => 1e-12,
        'n' => 1e-9,
        'u' | 'µ' => 1e-6,
        'm' => 1e-3,
        'R' | 'r' => 1.0,
        'k' | 'K' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        other => panic!("unknown prefix {other:?} in {text:?}"),
    };
    let (whole, fraction) = (&t[..at], &t[at + letter.len_utf8()..]);
    let digits = if fraction.is_empty() {
        whole.to_string()
    } else {
        format!("{whole}.{fraction}")
    };
    let mantissa: f64 = digits
        .parse()
        .unwrap_or_else(|_| panic!("not a value: {text:?}"));
    mantissa * multiplier
}

fn parse_percent(text: &str) -> f64 {
    let t = text.trim().trim_end_matches('%').trim();
    t.parse::<f64>()
        .unwrap_or_else(|_| panic!("not a percentage: {text:?}"))
        / 100.0
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
enum Kind {
    Resistor,
    Capacitor,
}

/// Slot names say their kind: `r_…` resistors, `c_…` capacitors (the stages' naming).
fn slot_kind(slot: &str) -> Kind {
    if slot.starts_with("c_") {
        Kind::Capacitor
    } else {
        assert!(slot.starts_with("r_"), "unexpected slot name {slot}");
        Kind::Resistor
    }
}

#[derive(Debug, Clone)]
struct Row {
    kind: Kind,
    value: f64,
    tolerance: f64,
    qty: u32,
}

/// An inventory CSV read with the csv crate, keyed by 1-based data row: the first row after the
/// header is 1, comment lines (`#`) and blank lines are not rows (src/stock/inventory.rs,
/// `Line::row`).
fn read_inventory(path: &Path) -> BTreeMap<usize, Row> {
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .comment(Some(b'#'))
        .from_path(path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    let mut header: Option<Vec<String>> = None;
    let mut rows = BTreeMap::new();
    for record in reader.records() {
        let record = record.unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let cells: Vec<&str> = record.iter().map(str::trim).collect();
        if cells.iter().all(|c| c.is_empty()) || cells[0].starts_with('#') {
            continue;
        }
        let Some(names) = &header else {
            header = Some(cells.iter().map(|c| c.to_ascii_lowercase()).collect());
            continue;
        };
        let cell = |name: &str| {
            let i = names
                .iter()
                .position(|n| n == name)
                .unwrap_or_else(|| panic!("{}: no column {name}", path.display()));
            cells.get(i).copied().unwrap_or("")
        };
        let kind = match cell("kind").to_ascii_lowercase().as_str() {
            "resistor" | "res" | "r" => Kind::Resistor,
            "capacitor" | "cap" | "c" => Kind::Capacitor,
            other => panic!("{}: unknown kind {other:?}", path.display()),
        };
        let row = Row {
            kind,
            value: parse_value(cell("value")),
            tolerance: parse_percent(cell("tolerance")),
            qty: cell("qty").parse().expect("a whole qty"),
        };
        rows.insert(rows.len() + 1, row);
    }
    rows
}

/// The inventories a spec draws from, per kind (`None` for a series).
fn spec_inventories(spec: &Path) -> HashMap<Kind, PathBuf> {
    let text = std::fs::read_to_string(spec).expect("spec readable");
    let table: toml::Table = toml::from_str(&text).expect("spec is TOML");
    let mut out = HashMap::new();
    let Some(stock) = table.get("stock").and_then(|s| s.as_table()) else {
        return out;
    };
    for (key, kind) in [
        ("resistors", Kind::Resistor),
        ("capacitors", Kind::Capacitor),
    ] {
        if let Some(source) = stock.get(key).and_then(|v| v.as_str()) {
            if source.to_ascii_lowercase().ends_with(".csv") {
                let dir = spec.parent().expect("spec in a folder");
                out.insert(kind, dir.join(source));
            }
        }
    }
    out
}

/// Checks every build's pieces against the stock lines: each piece that names a line matches
/// that line's kind, value and tolerance, and no line gives more pieces than it holds.
fn assert_quantities(doc: &Value, inventories: &HashMap<Kind, PathBuf>, what: &str) {
    let stocks: HashMap<Kind, BTreeMap<usize, Row>> = inventories
        .iter()
        .map(|(k, p)| (*k, read_inventory(p)))
        .collect();
    for build in doc["builds"].as_array().expect("builds") {
        let rank = &build["rank"];
        let mut used: BTreeMap<(Kind, usize), u32> = BTreeMap::new();
        for (slot, part) in build["parts"].as_object().expect("parts") {
            let kind = slot_kind(slot);
            if part["locked"].as_bool() == Some(true) {
                continue; // already on the board, not taken from stock
            }
            for piece in part["pieces"].as_array().expect("pieces") {
                let Some(line) = piece["line"].as_u64() else {
                    assert!(
                        !stocks.contains_key(&kind),
                        "{what} #{rank} {slot}: a piece from an inventory has no line: {piece}"
                    );
                    continue;
                };
                let line = line as usize;
                let stock = stocks.get(&kind).unwrap_or_else(|| {
                    panic!("{what} #{rank} {slot}: line {line} but {kind:?}s come from a series")
                });
                let row = stock.get(&line).unwrap_or_else(|| {
                    panic!("{what} #{rank} {slot}: line {line} is not a data row of the CSV")
                });
                assert_eq!(row.kind, kind, "{what} #{rank} {slot}: line {line} kind");
                close(
                    num(&piece["value"], "piece value"),
                    row.value,
                    1e-9,
                    &format!("{what} #{rank} {slot}: value of line {line}"),
                );
                close(
                    num(&piece["tolerance"], "piece tolerance"),
                    row.tolerance,
                    1e-9,
                    &format!("{what} #{rank} {slot}: tolerance of line {line}"),
                );
                *used.entry((kind, line)).or_insert(0) += 1;
            }
        }
        for ((kind, line), n) in used {
            let qty = stocks[&kind][&line].qty;
            assert!(
                n <= qty,
                "{what} #{rank}: {n} pieces of {kind:?} line {line}, which holds {qty}"
            );
        }
    }
}

/// A slot's nominal value from its pieces: resistors add in series, capacitors in parallel;
/// the other arrangement combines as the product over the sum (circuit theory).
fn combined_value(kind: Kind, arrangement: &str, pieces: &[f64]) -> f64 {
    let sum = || pieces.iter().sum::<f64>();
    let product_over_sum = || pieces.iter().product::<f64>() / sum();
    match (arrangement, kind) {
        ("single", _) => pieces[0],
        ("series", Kind::Resistor) | ("parallel", Kind::Capacitor) => sum(),
        ("series", Kind::Capacitor) | ("parallel", Kind::Resistor) => product_over_sum(),
        (other, _) => panic!("unknown arrangement {other}"),
    }
}

/// The pieces counted by line (inventory) per build.
fn line_uses(build: &Value) -> BTreeMap<usize, u32> {
    let mut used = BTreeMap::new();
    for part in build["parts"].as_object().expect("parts").values() {
        for piece in part["pieces"].as_array().expect("pieces") {
            if let Some(line) = piece["line"].as_u64() {
                *used.entry(line as usize).or_insert(0) += 1;
            }
        }
    }
    used
}

fn builds(doc: &Value) -> &Vec<Value> {
    doc["builds"].as_array().expect("`builds` is an array")
}

fn part_value(build: &Value, slot: &str) -> f64 {
    num(&build["parts"][slot]["value"], slot)
}

/// Spec text written to a temporary folder (with any files it refers to copied beside it).
fn temp_spec(dir: &tempfile::TempDir, name: &str, text: &str) -> PathBuf {
    let path = dir.path().join(name);
    std::fs::write(&path, text).expect("temp spec written");
    path
}

// ---------------------------------------------------------------------------------------------
// Every example, run once
// ---------------------------------------------------------------------------------------------

struct ExampleRun {
    spec: PathBuf,
    run: Run,
    /// The JSON document written with `--json FILE` (as text), if the file was written.
    json_text: Option<String>,
}

impl ExampleRun {
    fn name(&self) -> String {
        self.spec
            .file_name()
            .unwrap()
            .to_string_lossy()
            .into_owned()
    }

    fn doc(&self) -> Value {
        let text = self.json_text.as_deref().unwrap_or_else(|| {
            panic!(
                "{}: no JSON file written; exit {:?}\nstderr:\n{}",
                self.name(),
                self.run.code,
                self.run.stderr
            )
        });
        serde_json::from_str(text).unwrap_or_else(|e| panic!("{}: bad JSON: {e}", self.name()))
    }
}

/// `pick EXAMPLE --json FILE --quiet` for every example, with NO_COLOR=1 and stdout a pipe: the
/// terminal report on stdout and the JSON in the file, from one run. Runs in parallel once.
fn example_runs() -> &'static [ExampleRun] {
    static RUNS: OnceLock<Vec<ExampleRun>> = OnceLock::new();
    RUNS.get_or_init(|| {
        let dir = tempfile::tempdir().expect("temp dir");
        let specs = files_in("examples", "toml");
        std::thread::scope(|scope| {
            let handles: Vec<_> = specs
                .iter()
                .enumerate()
                .map(|(i, spec)| {
                    let json = dir.path().join(format!("example-{i}.json"));
                    scope.spawn(move || {
                        let run = run(&["pick", p(spec), "--json", p(&json), "--quiet"]);
                        ExampleRun {
                            spec: spec.clone(),
                            run,
                            json_text: std::fs::read_to_string(&json).ok(),
                        }
                    })
                })
                .collect();
            handles
                .into_iter()
                .map(|h| h.join().expect("example run thread"))
                .collect()
        })
    })
}

const METRICS: &[&str] = &[
    "gain",
    "gain_error",
    "gain_min",
    "gain_max",
    "input_resistance",
    "low_corner_hz",
    "band_low_loss_db",
    "high_corner_hz",
    "output_dc_v",
    "swing_peak_v",
    "input_range_peak_v",
    "part_count",
    "bom_lines",
    "cost",
];

/// Common practice for a CLI test suite (as casey/just does): every shipped example runs, and
/// its report has the documented shape (README, "JSON").
#[test]
fn every_example_picks_passing_ranked_builds() {
    for ex in example_runs() {
        let name = ex.name();
        ex.run.expect_code(0, &name);
        let doc = ex.doc();
        let list = builds(&doc);
        assert!(!list.is_empty(), "{name}: no build");

        let spec: toml::Table =
            toml::from_str(&std::fs::read_to_string(&ex.spec).unwrap()).unwrap();
        let spec_gain = spec["stage"]["gain"]
            .as_float()
            .or(spec["stage"]["gain"].as_integer().map(|g| g as f64))
            .expect("examples write the gain as a number");
        let target = num(&doc["target_gain"], "target_gain");
        assert_eq!(target, spec_gain, "{name}: target_gain is the spec's gain");

        let mut last_score = f64::NEG_INFINITY;
        for (i, b) in list.iter().enumerate() {
            let what = format!("{name} build #{}", i + 1);
            assert_eq!(b["rank"].as_u64(), Some(i as u64 + 1), "{what}: rank");
            assert_eq!(b["pass"].as_bool(), Some(true), "{what}: pass");

            // Parts: value, pieces with value/tolerance/line, and a value that is the
            // combination of its pieces.
            let parts = b["parts"].as_object().expect("parts is an object");
            assert!(!parts.is_empty(), "{what}: no parts");
            let mut pieces_total = 0;
            for (slot, part) in parts {
                let value = num(&part["value"], &format!("{what} {slot}.value"));
                let pieces = part["pieces"].as_array().expect("pieces");
                assert!(!pieces.is_empty(), "{what} {slot}: no pieces");
                let mut values = Vec::new();
                for p in pieces {
                    let obj = p.as_object().expect("piece object");
                    for key in ["value", "tolerance", "line"] {
                        assert!(obj.contains_key(key), "{what} {slot}: piece lacks `{key}`");
                    }
                    values.push(num(&p["value"], "piece value"));
                    let tol = num(&p["tolerance"], "piece tolerance");
                    assert!((0.0..1.0).contains(&tol), "{what} {slot}: tolerance {tol}");
                }
                pieces_total += pieces.len();
                let arrangement = part["arrangement"].as_str().expect("arrangement");
                close(
                    value,
                    combined_value(slot_kind(slot), arrangement, &values),
                    1e-9,
                    &format!("{what} {slot}: value from its pieces"),
                );
            }

            // Metrics.
            let m = &b["metrics"];
            let mo = m.as_object().expect("metrics object");
            for key in METRICS {
                assert!(mo.contains_key(*key), "{what}: metrics lack `{key}`");
            }
            let gain = num(&m["gain"], "gain");
            // gain_error is defined as |gain − target| / |target| (README, "JSON").
            close(
                num(&m["gain_error"], "gain_error"),
                (gain - target).abs() / target.abs(),
                1e-9,
                &format!("{what}: gain_error"),
            );
            let (lo, hi) = (
                num(&m["gain_min"], "gain_min"),
                num(&m["gain_max"], "gain_max"),
            );
            assert!(
                lo <= gain && gain <= hi,
                "{what}: nominal gain {gain} outside its worst-case range {lo} … {hi}"
            );
            // Hand count: part_count is the number of physical pieces.
            assert_eq!(
                m["part_count"].as_u64(),
                Some(pieces_total as u64),
                "{what}: part_count"
            );
            let lines = m["bom_lines"].as_u64().expect("bom_lines");
            assert!(
                lines >= 1 && lines <= pieces_total as u64,
                "{what}: bom_lines {lines}"
            );

            // Checks: each with name, value, limit, pass; all pass.
            let checks = b["checks"].as_array().expect("checks");
            assert!(!checks.is_empty(), "{what}: no checks");
            for c in checks {
                let obj = c.as_object().expect("check object");
                for key in ["name", "value", "limit", "pass"] {
                    assert!(obj.contains_key(key), "{what}: check lacks `{key}`: {c}");
                }
                assert_eq!(c["pass"].as_bool(), Some(true), "{what}: check fails: {c}");
            }

            // Sorted by score, best (lowest) first.
            let score = num(&b["score"], "score");
            assert!(
                score >= last_score,
                "{what}: score {score} after {last_score}: not sorted"
            );
            last_score = score;
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Inventories and quantities
// ---------------------------------------------------------------------------------------------

/// Common practice: every shipped inventory loads, and `stock` reports its size. The count of
/// data rows comes from this file's own CSV reading (csv crate), not from the binary.
#[test]
fn every_inventory_loads_and_reports_its_lines() {
    for inv in files_in("inventories", "csv") {
        let rows = read_inventory(&inv).len();
        let r = run(&["stock", p(&inv)]);
        r.expect_code(0, &inv.display().to_string());
        assert!(
            r.stdout.contains(&format!("{rows} lines")),
            "{}: expected `{rows} lines` in:\n{}",
            inv.display(),
            r.stdout
        );
    }
}

/// Common practice: a pick from any inventory either finds builds (0) or explains why not (1);
/// never a usage error (2), never a panic. Where it finds builds, they fit the quantities.
#[test]
fn pick_with_every_inventory_exits_0_or_1_and_respects_quantities() {
    for inv in files_in("inventories", "csv") {
        let r = run(&[
            "pick",
            "examples/piezo-knock-5v.toml",
            "--stock",
            p(&inv),
            "--json",
            "-",
            "--quiet",
        ]);
        let what = format!("pick --stock {}", inv.display());
        assert!(
            matches!(r.code, Some(0) | Some(1)),
            "{what}: exit {:?}\n{}",
            r.code,
            r.stderr
        );
        assert!(!r.stderr.contains("panicked"), "{what}: {}", r.stderr);
        if r.code == Some(0) {
            let inventories = HashMap::from([
                (Kind::Resistor, inv.clone()),
                (Kind::Capacitor, inv.clone()),
            ]);
            assert_quantities(&r.json(), &inventories, &what);
        }
    }
}

/// Every example that draws from an inventory: the pieces of each build, counted per line over
/// all slots, never exceed that line's qty, and each `line` is the data row holding that value
/// and tolerance (the row numbering of src/stock/inventory.rs: comments are not rows).
#[test]
fn example_builds_fit_the_inventory_quantities() {
    let mut checked = 0;
    for ex in example_runs() {
        let inventories = spec_inventories(&ex.spec);
        if inventories.is_empty() {
            continue;
        }
        ex.run.expect_code(0, &ex.name());
        assert_quantities(&ex.doc(), &inventories, &ex.name());
        checked += 1;
    }
    assert!(checked > 0, "no example uses an inventory");
}

/// Hand-made trap (tests/data/cli-qty-one-10k.*): unity gain wants r_in = r_fb = 10 kΩ and the
/// free 10 kΩ line is the cheapest, but it holds one piece. The pick must not use it twice; with
/// a second piece on hand it does (so the fixture really is a trap).
#[test]
fn a_one_piece_line_is_not_used_twice() {
    let spec = data("cli-qty-one-10k.toml");
    let r = run(&["pick", p(&spec), "--json", "-", "--quiet"]);
    r.expect_code(0, "pick cli-qty-one-10k.toml");
    let doc = r.json();
    let inventories = spec_inventories(&spec);
    assert_quantities(&doc, &inventories, "cli-qty-one-10k");
    for b in builds(&doc) {
        let uses = line_uses(b);
        assert!(
            uses.get(&1).copied().unwrap_or(0) <= 1,
            "build #{} uses the one-piece line 1 {:?} times",
            b["rank"],
            uses.get(&1)
        );
    }

    // The same stock with two pieces of the 10 kΩ line.
    let dir = tempfile::tempdir().unwrap();
    let csv = std::fs::read_to_string(data("cli-qty-one-10k.csv")).unwrap();
    let two = csv.replace("resistor,10k,1%,1,,0", "resistor,10k,1%,2,,0");
    assert_ne!(csv, two, "fixture row for 10k not found");
    std::fs::write(dir.path().join("cli-qty-one-10k.csv"), two).unwrap();
    let spec2 = temp_spec(
        &dir,
        "cli-qty-two.toml",
        &std::fs::read_to_string(&spec).unwrap(),
    );
    let r2 = run(&["pick", p(&spec2), "--json", "-", "--quiet"]);
    r2.expect_code(0, "pick with two 10k pieces");
    let doc2 = r2.json();
    let best = &builds(&doc2)[0];
    assert_eq!(
        line_uses(best).get(&1).copied(),
        Some(2),
        "with two pieces on hand the best build uses both: {}",
        best["parts"]
    );
}

// ---------------------------------------------------------------------------------------------
// Engines
// ---------------------------------------------------------------------------------------------

/// The MILP engine ranks the same builds as the walk search (both are exact), on the
/// quantity trap and on a small stock, and keeps to the quantities.
#[test]
fn the_milp_engine_ranks_the_same_builds() {
    for spec in [data("cli-qty-one-10k.toml"), data("cli-engines.toml")] {
        let walk = pick_json(&spec, &["--yield", "0"]);
        let milp = pick_json(&spec, &["--yield", "0", "--engine", "milp"]);
        let scores = |doc: &Value| -> Vec<f64> {
            builds(doc)
                .iter()
                .map(|b| num(&b["score"], "score"))
                .collect()
        };
        let (a, b) = (scores(&walk), scores(&milp));
        assert_eq!(
            a.len(),
            b.len(),
            "{}: walk {a:?} milp {b:?}",
            spec.display()
        );
        for (x, y) in a.iter().zip(&b) {
            close(*y, *x, 1e-9, &format!("{} scores", spec.display()));
        }
        assert_quantities(&milp, &spec_inventories(&spec), "milp engine");
    }
}

/// A stock whose pairs would make more realisations than the search takes is refused at
/// once, with what to change, by both engines: not minutes of work and gigabytes of memory.
/// The inventory is invented: 1 500 resistor lines (E96 values over 10 Ω–10 MΩ, in several
/// tolerances), whose series and parallel pairs make over a million realisations.
#[test]
fn a_stock_with_too_many_pairs_is_refused_with_advice() {
    let dir = tempfile::tempdir().unwrap();
    let mut csv = String::from("kind,value,tolerance,qty\n");
    let mut lines = 0;
    'fill: for tol in ["1%", "0.1%", "5%"] {
        for decade in 1..7 {
            for i in 0..96 {
                if lines == 1500 {
                    break 'fill;
                }
                // E96 significant figures, round(100 · 10^(i/96)) (IEC 60063; from memory).
                let sig = (100.0 * 10f64.powf(i as f64 / 96.0)).round();
                csv += &format!("resistor,{},{tol},10\n", sig * 10f64.powi(decade) / 100.0);
                lines += 1;
            }
        }
    }
    csv += "capacitor,100n,10%,10\ncapacitor,10u,20%,10\n";
    std::fs::write(dir.path().join("big.csv"), csv).unwrap();
    let text = std::fs::read_to_string(data("cli-engines.toml"))
        .unwrap()
        .replace("cli-small-stock.csv", "big.csv")
        + "combine = \"both\"\nresistor_range = [\"10\", \"10M\"]\n";
    let spec = temp_spec(&dir, "big.toml", &text);
    for engine in ["walk", "milp"] {
        let r = run(&["pick", p(&spec), "--engine", engine, "--quiet"]);
        r.expect_code(
            2,
            &format!("pick --engine {engine} on 1 500 lines, combine both"),
        );
        assert!(
            r.stderr.contains("more than 1000000 resistor realisations")
                && r.stderr.contains("1500 resistor lines")
                && r.stderr.contains("combine = \"single\""),
            "{}",
            r.stderr
        );
        assert!(r.stdout.is_empty(), "{}", r.stdout);
    }
}

#[test]
fn an_unknown_engine_exits_2() {
    let spec = data("cli-qty-one-10k.toml");
    let r = run(&["pick", p(&spec), "--engine", "simplex", "--quiet"]);
    r.expect_code(2, "pick --engine simplex");
    // clap names the value, the option and the choices.
    assert!(
        r.stderr.contains("'simplex'")
            && r.stderr.contains("--engine")
            && r.stderr.contains("walk, milp"),
        "{}",
        r.stderr
    );
}

// ---------------------------------------------------------------------------------------------
// Locks
// ---------------------------------------------------------------------------------------------

fn pick_json(spec: &Path, extra: &[&str]) -> Value {
    let mut args: Vec<&str> = vec!["pick", p(spec)];
    args.extend(extra.iter().copied());
    args.extend(["--json", "-", "--quiet"]);
    let r = run(&args);
    r.expect_code(0, &format!("pick {} {extra:?}", spec.display()));
    r.json()
}

fn assert_locked(doc: &Value, slot: &str, value: f64, tolerance: Option<f64>, what: &str) {
    for b in builds(doc) {
        let part = &b["parts"][slot];
        close(
            part_value(b, slot),
            value,
            1e-12,
            &format!("{what}: {slot}"),
        );
        assert_eq!(
            part["locked"].as_bool(),
            Some(true),
            "{what}: {slot} locked"
        );
        for p in part["pieces"].as_array().unwrap() {
            assert!(
                p["line"].is_null(),
                "{what}: a locked part is not from stock"
            );
        }
        if let Some(t) = tolerance {
            close(num(&part["tolerance"], "tolerance"), t, 1e-9, what);
        }
        assert_eq!(b["pass"].as_bool(), Some(true), "{what}: pass");
    }
}

/// A lock fixes one slot and the search re-optimises the rest: with r_in = 33 kΩ the E24 r_fb
/// that keeps a gain of −10 is 330 kΩ (hand derivation: |gain| = r_fb / r_in); with 33.2 kΩ,
/// not an E24 value, the nearest is again 330 kΩ (error 0.6 %).
#[test]
fn lock_fixes_a_slot_and_the_rest_follow() {
    let spec = data("cli-lock-inverting-e24.toml");
    let free = pick_json(&spec, &[]);
    let free_r_in = part_value(&builds(&free)[0], "r_in");

    let locked = pick_json(&spec, &["--lock", "r_in=33k"]);
    assert_locked(&locked, "r_in", 33e3, Some(0.01), "--lock r_in=33k");
    for b in builds(&locked) {
        close(part_value(b, "r_fb"), 330e3, 1e-12, "r_fb follows the lock");
        assert!(num(&b["metrics"]["gain_error"], "gain_error") < 1e-9);
    }
    if (free_r_in - 33e3).abs() > 1.0 {
        let free_r_fb = part_value(&builds(&free)[0], "r_fb");
        assert_ne!(free_r_fb, 330e3, "the lock changed the choice of r_fb");
    }

    // A value that is not in the series, with its own tolerance.
    let off = pick_json(&spec, &["--lock", "r_in=33.2k/0.1%"]);
    assert_locked(&off, "r_in", 33.2e3, Some(0.001), "--lock r_in=33.2k/0.1%");
    for b in builds(&off) {
        let err = num(&b["metrics"]["gain_error"], "gain_error");
        assert!(err <= 0.01, "gain error {err} with r_in locked to 33.2k");
    }
    close(
        part_value(&builds(&off)[0], "r_fb"),
        330e3,
        1e-12,
        "best r_fb for 33.2k",
    );

    // The same lock from the spec's [lock] table gives the same builds.
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(&spec).unwrap() + "\n[lock]\nr_in = \"33k\"\n";
    let from_table = pick_json(&temp_spec(&dir, "cli-lock-table.toml", &text), &[]);
    let parts =
        |doc: &Value| -> Vec<Value> { builds(doc).iter().map(|b| b["parts"].clone()).collect() };
    assert_eq!(
        parts(&from_table),
        parts(&locked),
        "[lock] r_in = \"33k\" equals --lock r_in=33k"
    );
}

/// Common practice: a lock on a slot the stage does not have, or a value that is not a
/// resistance, is bad input (exit 2) with a message that says what to write instead.
#[test]
fn bad_locks_exit_2_with_a_message() {
    let spec = data("cli-lock-inverting-e24.toml");
    let spec = spec.to_str().unwrap();
    stockfit()
        .args(["pick", spec, "--lock", "r_x=33k"])
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("r_x").and(predicate::str::contains(INVERTING_SLOTS)));
    stockfit()
        .args(["pick", spec, "--lock", "r_in=33uF"])
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("r_in").and(predicate::str::contains("capacitance")));

    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(spec).unwrap() + "\n[lock]\nr_x = \"33k\"\n";
    let lines = text.lines().count();
    let path = temp_spec(&dir, "cli-lock-unknown.toml", &text);
    stockfit()
        .args(["pick", p(&path)])
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(
            predicate::str::contains(format!("line {lines}"))
                .and(predicate::str::contains("r_x"))
                .and(predicate::str::contains(INVERTING_SLOTS)),
        );
}

// ---------------------------------------------------------------------------------------------
// `check` against hand-derived figures
// ---------------------------------------------------------------------------------------------

/// First-order high-pass corner 1/(2πRC) (any circuit-theory text).
fn corner(r: f64, c: f64) -> f64 {
    1.0 / (2.0 * PI * r * c)
}

/// Exact −3 dB corner of two buffered first-order high-passes with corners f1, f2: solve
/// (1 + (f1/f)²)(1 + (f2/f)²) = 2. With x = f², x² − (f1² + f2²)x − f1²f2² = 0, so
/// x = ((f1² + f2²) + √((f1² + f2²)² + 4f1²f2²)) / 2 (hand derivation).
fn two_section_corner(f1: f64, f2: f64) -> f64 {
    let (a, b) = (f1 * f1, f2 * f2);
    (((a + b) + ((a + b).powi(2) + 4.0 * a * b).sqrt()) / 2.0).sqrt()
}

/// Loss in dB of a first-order high-pass with corner fc at f: 10·log10(1 + (fc/f)²).
fn hp_loss_db(fc: f64, f: f64) -> f64 {
    10.0 * (1.0 + (fc / f).powi(2)).log10()
}

fn check_json(spec: &Path, sets: &[&str]) -> Value {
    let mut args: Vec<&str> = vec!["check", p(spec)];
    for s in sets {
        args.push("--set");
        args.push(s);
    }
    args.extend(["--json", "-"]);
    let r = run(&args);
    r.expect_code(0, &format!("check {}", spec.display()));
    r.json()
}

const INVERTING_BUILD: &[&str] = &[
    "r_in=10k",
    "r_fb=100k",
    "r_bias_hi=100k",
    "r_bias_lo=100k",
    "c_in=1u",
    "c_out=10u",
];

/// Hand derivation for tests/data/cli-check-inverting-9v.toml (ideal op-amp, 9 V, 1 % resistors,
/// 10 % capacitors, 1 V headroom each side, R_L = 1 kΩ):
/// gain −R_fb/R_in = −10; R_in = 10 kΩ; corners 1/(2π·10k·1µ) = 1/(2π·1k·10µ) = 15.92 Hz, two
/// equal sections so the −3 dB corner is fc/√(√2 − 1) (textbook formula for n equal high-pass
/// sections: fc/√(2^(1/n) − 1)); DC out = 9 V·R_lo/(R_hi + R_lo) = 4.5 V; worst |gain|
/// 10·0.99/1.01 … 10·1.01/0.99; worst DC 9·0.99/2 … 9·1.01/2 (divider at opposite ends), so the
/// swing is 9·0.99/2 − 1 V = 3.455 V.
#[test]
fn check_reproduces_a_hand_computed_inverting_build() {
    let doc = check_json(&data("cli-check-inverting-9v.toml"), INVERTING_BUILD);
    let b = &builds(&doc)[0];
    assert_eq!(b["pass"].as_bool(), Some(true), "{}", b["checks"]);
    let m = &b["metrics"];
    let get = |k: &str| num(&m[k], k);
    let tight = 1e-9;
    close(get("gain"), -10.0, tight, "gain");
    close(get("gain_error") + 1.0, 1.0, tight, "gain_error");
    close(get("gain_min"), -10.0 * 1.01 / 0.99, tight, "gain_min");
    close(get("gain_max"), -10.0 * 0.99 / 1.01, tight, "gain_max");
    close(get("input_resistance"), 10e3, tight, "input_resistance");
    close(
        get("input_resistance_worst"),
        9.9e3,
        tight,
        "input_resistance_worst",
    );
    close(get("output_dc_v"), 4.5, tight, "output_dc_v");
    close(get("output_dc_min_v"), 4.5 * 0.99, tight, "output_dc_min_v");
    close(get("output_dc_max_v"), 4.5 * 1.01, tight, "output_dc_max_v");
    close(get("swing_peak_v"), 4.5 * 0.99 - 1.0, tight, "swing_peak_v");
    close(
        get("input_range_peak_v"),
        (4.5 * 0.99 - 1.0) / (10.0 * 1.01 / 0.99),
        tight,
        "input_range_peak_v",
    );
    close(get("noise_gain"), 11.0, tight, "noise gain 1 + R_fb/R_in");
    assert!(
        m["high_corner_hz"].is_null(),
        "ideal op-amp: no high corner"
    );
    assert_eq!(m["part_count"].as_u64(), Some(6));

    let fc = corner(10e3, 1e-6);
    let networks = m["networks"].as_array().expect("networks");
    close(
        num(&networks[0]["corner_hz"], "input"),
        fc,
        tight,
        "input corner",
    );
    close(
        num(&networks[1]["corner_hz"], "output"),
        corner(1e3, 10e-6),
        tight,
        "output corner",
    );
    close(
        get("low_corner_hz"),
        fc / (2f64.sqrt() - 1.0).sqrt(),
        1e-3,
        "two equal sections: fc/√(√2 − 1)",
    );
    close(
        get("low_corner_hz"),
        two_section_corner(fc, fc),
        1e-3,
        "quadratic solution agrees",
    );
    // Worst case: every corner at its highest (R_in −1 %, both capacitors −10 %).
    close(
        get("low_corner_worst_hz"),
        two_section_corner(corner(9.9e3, 0.9e-6), corner(1e3, 9e-6)),
        1e-3,
        "worst low corner",
    );
    close(
        get("band_low_loss_db"),
        2.0 * hp_loss_db(fc, 40.0),
        1e-3,
        "loss at the band's 40 Hz edge",
    );
}

/// The same build with R_L = 10 kΩ: unequal corners 15.92 Hz and 1.59 Hz, combined by the
/// quadratic solution of (1 + (f1/f)²)(1 + (f2/f)²) = 2 (hand derivation).
#[test]
fn check_combines_unequal_corners_exactly() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(data("cli-check-inverting-9v.toml")).unwrap();
    let text = text.replace("load = \"1k\"", "load = \"10k\"");
    assert!(text.contains("load = \"10k\""));
    let doc = check_json(
        &temp_spec(&dir, "cli-check-10k.toml", &text),
        INVERTING_BUILD,
    );
    let m = &builds(&doc)[0]["metrics"];
    let (f1, f2) = (corner(10e3, 1e-6), corner(10e3, 10e-6));
    close(
        num(&m["networks"][1]["corner_hz"], "output corner"),
        f2,
        1e-9,
        "output corner 1/(2π·R_L·10µ)",
    );
    close(
        num(&m["low_corner_hz"], "low corner"),
        two_section_corner(f1, f2),
        1e-3,
        "combined corner",
    );
}

/// Hand derivation for tests/data/cli-check-non-inverting-9v.toml: gain 1 + R_fb/R_g =
/// 1 + 100k/10k = 11; input resistance R_hi ∥ R_lo = 1M ∥ 1M = 500 kΩ; input corner
/// 1/(2π·500k·100n); c_g blocks DC so the output sits on the divider, 4.5 V; worst gain
/// 1 + 100k·0.99/(10k·1.01) … 1 + 100k·1.01/(10k·0.99). The gain leg's loss at f follows from
/// G(f) = 1 + R_fb/(R_g + 1/(jωC_g)) against G_mid = 11 (circuit theory), the other two
/// networks are first-order high-passes.
#[test]
fn check_reproduces_a_hand_computed_non_inverting_build() {
    let doc = check_json(
        &data("cli-check-non-inverting-9v.toml"),
        &[
            "c_in=100n",
            "r_bias_hi=1M",
            "r_bias_lo=1M",
            "r_fb=100k",
            "r_g=10k",
            "c_g=10u",
            "c_out=10u",
        ],
    );
    let b = &builds(&doc)[0];
    assert_eq!(b["pass"].as_bool(), Some(true), "{}", b["checks"]);
    let m = &b["metrics"];
    let get = |k: &str| num(&m[k], k);
    let tight = 1e-9;
    close(get("gain"), 11.0, tight, "gain");
    close(get("gain_min"), 1.0 + 10.0 * 0.99 / 1.01, tight, "gain_min");
    close(get("gain_max"), 1.0 + 10.0 * 1.01 / 0.99, tight, "gain_max");
    close(get("input_resistance"), 500e3, tight, "R_hi ∥ R_lo");
    close(
        get("input_resistance_worst"),
        495e3,
        tight,
        "worst R_hi ∥ R_lo",
    );
    close(get("output_dc_v"), 4.5, tight, "output_dc_v");
    close(get("swing_peak_v"), 4.5 * 0.99 - 1.0, tight, "swing_peak_v");
    let networks = m["networks"].as_array().expect("networks");
    close(
        num(&networks[0]["corner_hz"], "input"),
        corner(500e3, 100e-9),
        tight,
        "input corner",
    );
    close(
        num(&networks[2]["corner_hz"], "output"),
        corner(10e3, 10e-6),
        tight,
        "output corner",
    );

    // Loss at the band's 20 Hz edge, by hand.
    let f = 20.0;
    let x = 1.0 / (2.0 * PI * f * 10e-6); // reactance of c_g
    let (r_fb, r_g) = (100e3, 10e3);
    let d = r_g * r_g + x * x;
    let (re, im) = (1.0 + r_fb * r_g / d, r_fb * x / d);
    let leg_db = 20.0 * (11.0 / (re * re + im * im).sqrt()).log10();
    let expected =
        hp_loss_db(corner(500e3, 100e-9), f) + leg_db + hp_loss_db(corner(10e3, 10e-6), f);
    close(get("band_low_loss_db"), expected, 1e-3, "loss at 20 Hz");
}

/// Consistency (common practice): `check` of the best build `pick` found for a series stock
/// gives the same figures and verdict.
#[test]
fn check_of_the_picked_build_agrees_with_pick() {
    let spec = data("cli-lock-inverting-e24.toml");
    let picked = pick_json(&spec, &["--top", "1"]);
    let best = &builds(&picked)[0];
    let sets: Vec<String> = best["parts"]
        .as_object()
        .unwrap()
        .iter()
        .map(|(slot, part)| {
            assert_eq!(
                part["arrangement"], "single",
                "this fixture picks single parts"
            );
            format!("{slot}={}", num(&part["value"], slot))
        })
        .collect();
    let sets: Vec<&str> = sets.iter().map(String::as_str).collect();
    let checked = check_json(&spec, &sets);
    let again = &builds(&checked)[0];
    assert_eq!(again["pass"], best["pass"]);
    for key in METRICS
        .iter()
        .chain(&["low_corner_worst_hz", "output_dc_min_v"])
    {
        let (a, b) = (&again["metrics"][key], &best["metrics"][key]);
        match (a.as_f64(), b.as_f64()) {
            (Some(x), Some(y)) => close(x, y, 1e-9, key),
            _ => assert_eq!(a, b, "{key}"),
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Exit codes and messages
// ---------------------------------------------------------------------------------------------

/// README, "Exit codes": 1 when no build meets the spec, and the report names what blocks it.
#[test]
fn infeasible_spec_exits_1_and_names_the_blocker() {
    let spec = data("cli-infeasible-rin.toml");
    stockfit()
        .args(["pick", p(&spec), "--quiet"])
        .assert()
        .code(1)
        .stdout(predicate::str::contains("input_resistance_min"));
    let r = run(&["pick", p(&spec), "--json", "-", "--quiet"]);
    r.expect_code(1, "infeasible --json -");
    let doc = r.json();
    assert!(builds(&doc).is_empty(), "no builds: {}", doc["builds"]);
    let blockers = doc["blockers"].as_array().expect("blockers");
    assert!(
        blockers.iter().any(|b| b["key"]
            .as_str()
            .unwrap_or("")
            .contains("input_resistance_min")),
        "blockers name input_resistance_min: {blockers:?}"
    );
}

/// A valid base spec; line numbers below refer to it (1-based).
const BASE: &str = r#"[stage]
kind = "inverting"
supply = "9 V"
gain = -10
gain_tolerance = "5%"
load = "10k"
band = ["20 Hz", "20 kHz"]
band_loss_max = "1 dB"
headroom = "1 V"

[stock]
resistors = "E24"
capacitors = "E6"
"#;

struct Bad {
    what: &'static str,
    args: Vec<String>,
    /// Substrings the message must contain (with the file name where one is involved).
    expect: Vec<String>,
}

/// README, "Exit codes": bad input exits 2, prints nothing on stdout, and the message on stderr
/// names the place (file, line, key or column) and what was expected (common practice for
/// config errors, as ripgrep's).
#[test]
fn malformed_inputs_exit_2_with_a_located_message() {
    let dir = tempfile::tempdir().unwrap();
    let spec = |name: &str, text: &str| -> String {
        temp_spec(&dir, name, text).to_string_lossy().into_owned()
    };
    let base = spec("base.toml", BASE);
    let s = |x: &str| x.to_string();
    let bad_row = data("cli-bad-row.csv").to_string_lossy().into_owned();
    let no_column = data("cli-missing-column.csv")
        .to_string_lossy()
        .into_owned();
    let with_stock = |name: &str, csv: &str| {
        let text = BASE
            .replace("\"E24\"", &format!("{csv:?}"))
            .replace("\"E6\"", &format!("{csv:?}"));
        spec(name, &text)
    };

    let cases = vec![
        Bad {
            what: "unknown key",
            args: vec![
                s("pick"),
                spec("laod.toml", &BASE.replace("load =", "laod =")),
            ],
            expect: vec![
                s("laod.toml"),
                s("line 6"),
                s("stage.laod"),
                s("did you mean `load`"),
            ],
        },
        Bad {
            what: "wrong unit",
            args: vec![
                s("pick"),
                spec("unit.toml", &BASE.replace("\"10k\"", "\"10 uF\"")),
            ],
            expect: vec![
                s("unit.toml"),
                s("line 6"),
                s("stage.load"),
                s("resistance"),
            ],
        },
        Bad {
            what: "non-inverting gain below 1",
            args: vec![
                s("pick"),
                spec(
                    "ni.toml",
                    &BASE
                        .replace("\"inverting\"", "\"non-inverting\"")
                        .replace("gain = -10", "gain = 0.5"),
                ),
            ],
            expect: vec![s("line 4"), s("stage.gain"), s("at least 1")],
        },
        Bad {
            what: "positive inverting gain",
            args: vec![
                s("pick"),
                spec("pos.toml", &BASE.replace("gain = -10", "gain = 10")),
            ],
            expect: vec![s("line 4"), s("stage.gain"), s("negative")],
        },
        Bad {
            what: "headroom leaves no swing",
            args: vec![
                s("pick"),
                spec("head.toml", &BASE.replace("\"1 V\"", "\"4.5 V\"")),
            ],
            expect: vec![s("line 9"), s("stage.headroom"), s("no output swing")],
        },
        Bad {
            what: "missing spec file",
            args: vec![s("pick"), s("tests/data/cli-no-such-spec.toml")],
            expect: vec![s("cli-no-such-spec.toml")],
        },
        Bad {
            what: "inventory with a bad row (stock)",
            args: vec![s("stock"), bad_row.clone()],
            expect: vec![s("cli-bad-row.csv"), s("line 5"), s("qty"), s("many")],
        },
        Bad {
            what: "inventory with a bad row (pick --stock)",
            args: vec![s("pick"), base.clone(), s("--stock"), bad_row.clone()],
            expect: vec![s("cli-bad-row.csv"), s("line 5"), s("qty")],
        },
        Bad {
            what: "spec naming an inventory with a bad row",
            args: vec![s("pick"), with_stock("badrow.toml", &bad_row)],
            expect: vec![s("cli-bad-row.csv"), s("line 5"), s("qty")],
        },
        Bad {
            what: "inventory without a required column",
            args: vec![s("stock"), no_column],
            expect: vec![s("cli-missing-column.csv"), s("tolerance")],
        },
        Bad {
            what: "spec naming a missing inventory",
            args: vec![
                s("pick"),
                with_stock("nofile.toml", "cli-no-such-stock.csv"),
            ],
            expect: vec![s("cli-no-such-stock.csv")],
        },
        Bad {
            what: "unknown series for `series`",
            args: vec![s("series"), s("E25")],
            expect: vec![s("E25"), s("E24")],
        },
        Bad {
            what: "unknown series for --stock",
            args: vec![s("pick"), base.clone(), s("--stock"), s("E25")],
            expect: vec![s("E25")],
        },
        Bad {
            what: "unknown section",
            args: vec![
                s("pick"),
                spec("sec.toml", &format!("{BASE}\n[stuff]\nx = 1\n")),
            ],
            expect: vec![s("line 15"), s("stuff")],
        },
        Bad {
            what: "TOML syntax error",
            args: vec![s("pick"), spec("syntax.toml", "[stage]\nkind = \n")],
            expect: vec![s("syntax.toml"), s("line 2")],
        },
        Bad {
            what: "missing required keys",
            args: vec![
                s("pick"),
                spec("missing.toml", "[stage]\nkind = \"inverting\"\n"),
            ],
            expect: vec![s("supply"), s("gain"), s("load"), s("band")],
        },
        Bad {
            what: "a capacitor lock in ohms",
            args: vec![s("pick"), base.clone(), s("--lock"), s("c_in=10k")],
            expect: vec![s("c_in"), s("capacitance")],
        },
        Bad {
            what: "lock without a value",
            args: vec![s("pick"), base.clone(), s("--lock"), s("r_in")],
            expect: vec![s("--lock"), s("SLOT=VALUE")],
        },
        Bad {
            what: "check with slots missing",
            args: vec![s("check"), base.clone(), s("--set"), s("r_in=10k")],
            expect: vec![s("r_fb"), s("c_out")],
        },
        Bad {
            what: "--top 0",
            args: vec![s("pick"), base.clone(), s("--top"), s("0")],
            expect: vec![s("--top")],
        },
        Bad {
            what: "series range with a capacitance above the default --from",
            args: vec![s("series"), s("E24"), s("--to"), s("10uF")],
            expect: vec![s("--to"), s("10uF")],
        },
    ];
    assert!(cases.len() >= 12);
    for case in cases {
        let r = run(&case.args);
        assert_eq!(
            r.code,
            Some(2),
            "{}: expected exit 2, got {:?}\nstderr:\n{}",
            case.what,
            r.code,
            r.stderr
        );
        assert!(
            r.stdout.is_empty(),
            "{}: stdout should be empty, found:\n{}",
            case.what,
            r.stdout
        );
        for e in &case.expect {
            assert!(
                r.stderr.contains(e.as_str()),
                "{}: message lacks {e:?}:\n{}",
                case.what,
                r.stderr
            );
        }
        assert!(
            !r.stderr.contains("panicked"),
            "{}: {}",
            case.what,
            r.stderr
        );
    }
}

// ---------------------------------------------------------------------------------------------
// Series, demo, terminal table, JSON file
// ---------------------------------------------------------------------------------------------

/// IEC 60063 E24, one decade (from memory): 1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0
/// 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1, and 10 closes the range.
#[test]
fn series_lists_iec_60063_values() {
    const E24: [f64; 25] = [
        1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1,
        5.6, 6.2, 6.8, 7.5, 8.2, 9.1, 10.0,
    ];
    let r = run(&["series", "E24", "--from", "1", "--to", "10"]);
    r.expect_code(0, "series E24");
    let values: Vec<f64> = r.stdout.lines().map(parse_value).collect();
    assert_eq!(values.len(), 25, "{}", r.stdout);
    for (got, want) in values.iter().zip(E24) {
        close(*got, want, 1e-12, "E24 value");
    }

    // E96 from 10 Ω to 10 MΩ: six decades of 96 values, plus 10 MΩ itself = 577 (IEC 60063).
    let r = run(&["series", "E96", "--from", "10", "--to", "10M"]);
    r.expect_code(0, "series E96");
    let values: Vec<f64> = r.stdout.lines().map(parse_value).collect();
    assert_eq!(values.len(), 577);
    close(values[0], 10.0, 1e-12, "first E96 value");
    close(
        values[1],
        10.2,
        1e-12,
        "second E96 value (from memory: 1.00 1.02 1.05 …)",
    );
    close(values[576], 10e6, 1e-12, "last value");
    assert!(values.windows(2).all(|w| w[0] < w[1]), "ascending");
}

const CAUTION_WORDS: &[&str] = &["datasheet", "polarised", "mains"];

/// Common practice: the demo runs out of the box; its report ranks builds and carries the
/// cautions. Without NO_COLOR, colour must still be off when stdout is not a terminal.
#[test]
fn demo_prints_a_ranked_table_and_the_cautions() {
    let mut cmd = stockfit();
    cmd.env_remove("NO_COLOR").arg("demo");
    let r = output_of(cmd);
    r.expect_code(0, "demo");
    assert!(
        !r.stdout.contains('\u{1b}'),
        "ANSI escape in piped output:\n{}",
        r.stdout
    );
    let table = table_lines(&r.stdout, "Parts");
    assert!(
        table.iter().any(|l| l.starts_with("1 ")),
        "a ranked row 1:\n{}",
        r.stdout
    );
    for word in CAUTION_WORDS {
        assert!(
            r.stdout.contains(word),
            "caution about {word}:\n{}",
            r.stdout
        );
    }
}

/// The lines of the block that follows a title line (`Parts`, `Figures`, `Checks`) up to the
/// next blank line: one table of the terminal report.
fn table_lines<'a>(report: &'a str, title: &str) -> Vec<&'a str> {
    let mut lines = report.lines().skip_while(|l| l.trim() != title);
    assert!(lines.next().is_some(), "no `{title}` table in:\n{report}");
    lines.take_while(|l| !l.trim().is_empty()).collect()
}

fn columns(line: &str) -> usize {
    line.chars().count()
}

/// src/report/table.rs: the terminal report fits 100 columns, counted in characters (all our
/// symbols are one column wide): the ranked tables (parts, figures), the checks table, and every
/// other line, heading and cautions included. With NO_COLOR=1 and a pipe there are no ANSI
/// escapes.
#[test]
fn every_example_report_fits_100_columns_without_escapes() {
    for ex in example_runs() {
        let name = ex.name();
        ex.run.expect_code(0, &name);
        let out = &ex.run.stdout;
        assert!(!out.contains('\u{1b}'), "{name}: ANSI escape in:\n{out}");
        for title in ["Parts", "Figures", "Checks"] {
            assert!(
                !table_lines(out, title).is_empty(),
                "{name}: empty {title} table"
            );
        }
        // No requirement is cut short: a check's label names its part.
        let cut: Vec<&str> = table_lines(out, "Checks")
            .into_iter()
            .filter(|l| l.contains("… "))
            .collect();
        assert!(
            cut.is_empty(),
            "{name}: cut check labels:\n{}",
            cut.join("\n")
        );
        let long: Vec<&str> = out.lines().filter(|l| columns(l) > 100).collect();
        assert!(
            long.is_empty(),
            "{name}: lines over 100 columns:\n{}",
            long.join("\n")
        );
        for word in CAUTION_WORDS {
            assert!(out.contains(word), "{name}: caution about {word}");
        }
    }
}

/// `--json FILE` writes the same document as `--json -` prints (README, "JSON").
#[test]
fn json_file_equals_json_stdout() {
    let ex = example_runs()
        .iter()
        .find(|e| e.name() == "piezo-knock-5v.toml")
        .expect("the piezo example exists");
    let r = run(&["pick", p(&ex.spec), "--json", "-", "--quiet"]);
    r.expect_code(0, "--json -");
    assert_eq!(r.json(), ex.doc(), "same document");
    assert_eq!(
        Some(r.stdout.as_str()),
        ex.json_text.as_deref(),
        "same text"
    );
    // With --json FILE the terminal report still goes to stdout; with `-` only the JSON does.
    assert!(ex.run.stdout.contains("Parts"));
}

// ---------------------------------------------------------------------------------------------
// Known bugs (ignored until fixed; see the reasons)
// ---------------------------------------------------------------------------------------------

/// `check` of the build `pick` ranked first, each value given with its piece's tolerance
/// (`--set r_in=100000/1%`), must judge the same requirements. `--stock`'s help says the stock
/// gives the set values "their tolerances and ratings", but the inventory's voltage and power
/// ratings are not used: the `rating_*` and `power_*` checks of the pick are missing.
/// (Without `/TOL` a set value takes the widest tolerance of its kind in the file, the cautious
/// choice `Stock::default_tolerance` documents; then the same build even fails `gain_high`.)
#[test]
fn check_of_picks_best_inventory_build_judges_the_same_requirements() {
    let ex = example_runs()
        .iter()
        .find(|e| e.name() == "piezo-knock-5v.toml")
        .expect("the piezo example exists");
    let doc = ex.doc();
    let best = &builds(&doc)[0];
    let mut args: Vec<String> = vec!["check".into(), p(&ex.spec).into()];
    for (slot, part) in best["parts"].as_object().unwrap() {
        assert_eq!(
            part["arrangement"], "single",
            "the piezo pick uses single parts"
        );
        let piece = &part["pieces"][0];
        args.push("--set".into());
        args.push(format!(
            "{slot}={}/{}%",
            num(&piece["value"], slot),
            num(&piece["tolerance"], slot) * 100.0
        ));
    }
    args.extend(["--json".into(), "-".into()]);
    let r = run(&args);
    r.expect_code(0, "check of pick's best build");
    let checked = r.json();
    let names = |d: &Value| -> Vec<String> {
        builds(d)[0]["checks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c["name"].as_str().unwrap().to_string())
            .filter(|n| n != "quantity")
            .collect()
    };
    assert_eq!(
        names(&checked),
        names(&doc),
        "the same checks (ratings included)"
    );
}

/// A spec with neither `band_loss_max` nor `corner_low_max` (only the low-corner check) should
/// be picked as quickly as one with a loss budget; it ran for over 5 minutes in release.
#[test]
fn pick_without_a_loss_budget_is_fast() {
    let dir = tempfile::tempdir().unwrap();
    let text = BASE.replace("band_loss_max = \"1 dB\"\n", "");
    let path = temp_spec(&dir, "cli-no-loss-budget.toml", &text);
    let mut cmd = stockfit();
    cmd.timeout(Duration::from_secs(60))
        .args(["pick", p(&path), "--json", "-", "--quiet"]);
    output_of(cmd).expect_code(0, "pick without a loss budget");
}

/// An infeasible pick from a full series should be diagnosed in seconds; this lock makes the
/// geophone example infeasible (no E96 r_fb meets ±2.5 % with 33 kΩ) and ran over 15 minutes.
#[test]
fn infeasible_diagnosis_is_fast() {
    let mut cmd = stockfit();
    cmd.timeout(Duration::from_secs(60)).args([
        "pick",
        "examples/geophone-inverting-e96.toml",
        "--lock",
        "r_in=33k",
        "--quiet",
    ]);
    output_of(cmd).expect_code(1, "infeasible geophone lock");
}

/// `--stock E25` is taken for a file name ("cannot open the inventory E25"); a name shaped like
/// a series should be reported as an unknown series with the known ones listed, as `series`
/// does.
#[test]
fn unknown_series_for_stock_lists_the_series() {
    stockfit()
        .args(["pick", "examples/piezo-knock-5v.toml", "--stock", "E25"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("E24").and(predicate::str::contains("series")));
}

/// The ranking is a total order (scores, then tighter parts, then the parts' values and rows,
/// with the default weights breaking ties a zero weight leaves): `--top 3` is the start of
/// `--top 5` on every example and on a spec whose zero-weight goals make most builds tie.
#[test]
fn top_3_is_the_start_of_top_5() {
    let dir = tempfile::tempdir().unwrap();
    let mut specs = files_in("examples", "toml");
    let text = std::fs::read_to_string(data("cli-check-inverting-9v.toml")).unwrap()
        + "\n[goals]\ngain_error = 1.0\noffset = 0.0\npart_count = 0.0\nbom_lines = 0.0\ncapacitance = 0.0\ncost = 0.0\n";
    specs.push(temp_spec(&dir, "gain-only.toml", &text));
    for spec in &specs {
        let parts = |top: &str| -> Vec<String> {
            let doc = pick_json(spec, &["--top", top, "--yield", "0"]);
            builds(&doc)
                .iter()
                .map(|b| b["parts"].to_string())
                .collect()
        };
        let (three, five) = (parts("3"), parts("5"));
        assert_eq!(three[..], five[..three.len()], "{}", spec.display());
    }
}

/// `--time-limit` stops a long search and prints the best builds found so far, marked as not
/// proven best in the table and in the JSON (`proven_best: false`), with exit 0 since they
/// pass; without the limit the same spec is searched to the end (`proven_best: true`). The
/// spec is a two-part E96 stage over 10 Ω–10 MΩ (330 268 realisations per resistor slot)
/// asked for its best 1 000 builds: about 2 s of CPU in a release build, several in a test
/// build, so 1.5 s stops it, and the single-part seed search finds builds well before.
#[test]
fn a_time_limit_stops_the_search_and_says_the_builds_are_not_proven() {
    let spec = data("slow-noninverting-e96-both.toml");
    let r = run(&[
        "pick",
        p(&spec),
        "--top",
        "1000",
        "--yield",
        "0",
        "--time-limit",
        "1.5",
        "--json",
        "-",
        "--quiet",
    ]);
    r.expect_code(0, "pick --time-limit 1.5");
    let doc = r.json();
    assert_eq!(doc["proven_best"], Value::Bool(false), "{}", r.stdout);
    assert!(!builds(&doc).is_empty());
    let table = run(&[
        "pick",
        p(&spec),
        "--top",
        "1000",
        "--yield",
        "0",
        "--time-limit",
        "1.5",
    ]);
    table.expect_code(0, "pick --time-limit 1.5 (table)");
    assert!(
        table.stdout.contains("Not proven best"),
        "{}",
        &table.stdout[..table.stdout.len().min(2000)]
    );
    let proven = pick_json(&spec, &["--top", "3", "--yield", "0"]);
    assert_eq!(proven["proven_best"], Value::Bool(true));
}
