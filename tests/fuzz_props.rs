//! Property tests of the loaders — the bounded CI run of the fuzz targets in `fuzz/` (which
//! need nightly Rust), plus spec-loader properties: a generated valid spec round-trips through
//! the loader exactly, and a value broken on any line is reported on that line with its key.
//!
//! The fuzz checks themselves live in `fuzz/checks.rs` and are shared with the cargo-fuzz
//! targets; the seed corpus (`fuzz/corpus/`), any crash a campaign saved (`fuzz/artifacts/`),
//! the shipped examples and inventories are replayed through them here as well.
//!
//! A check asserts its promises about a loaded value, inventory or spec only when loading
//! succeeds, so each property on shaped input counts the cases that loaded and fails below a
//! floor: a generator whose every case is refused would otherwise pass having checked nothing
//! past the loader's errors.

#[path = "../fuzz/checks.rs"]
mod checks;

use proptest::prelude::*;
use std::path::Path;
use stockfit::series::Series;
use stockfit::spec::{Goals, Lock, LockValue, SourceSpec, Spec};
use stockfit::value::{format_sig, Unit};
use stockfit::vocab::{Combine, StageKind};

// ---- the fuzz checks on generated input ---------------------------------------------------

/// `cases` per property in CI; `PROPTEST_CASES=N` in the environment overrides it for a longer
/// run (see fuzz/README.md).
fn config(cases: u32) -> ProptestConfig {
    let mut config = ProptestConfig::default();
    if std::env::var_os("PROPTEST_CASES").is_none() {
        config.cases = cases;
    }
    config
}

/// Runs `check` on `cases` inputs drawn from `strategy` (a proptest run: shrinking and the
/// failure file as in `proptest!`) and returns how many cases were run and how many reached
/// the assertions past loading (`check` returns true for those).
fn run_counting<S>(cases: u32, strategy: S, check: impl Fn(S::Value) -> bool) -> (u32, u32)
where
    S: Strategy,
    S::Value: std::fmt::Debug,
{
    let mut runner = proptest::test_runner::TestRunner::new(ProptestConfig {
        source_file: Some(file!()),
        ..config(cases)
    });
    let (run, reached) = (std::cell::Cell::new(0u32), std::cell::Cell::new(0u32));
    let outcome = runner.run(&strategy, |input| {
        run.set(run.get() + 1);
        if check(input) {
            reached.set(reached.get() + 1);
        }
        Ok(())
    });
    if let Err(e) = outcome {
        panic!("{e}");
    }
    (run.get(), reached.get())
}

/// Fails unless at least `floor` (a share of the cases run) reached the assertions past
/// loading; prints the count either way (`--nocapture` shows it).
fn require_reached(what: &str, (run, reached): (u32, u32), floor: f64) {
    println!("{what}: {reached} of {run} cases reached the checks past loading");
    let need = (floor * f64::from(run)).floor() as u32;
    assert!(
        reached >= need,
        "{what}: only {reached} of {run} generated cases loaded, fewer than the floor of {need} \
         ({:.0} %): the generator no longer reaches the promises this property checks",
        floor * 100.0
    );
}

// Each floor below is about half the mean share measured over 20 runs of 512 cases (written
// beside it with the lowest of the 20), many binomial standard deviations below it at 512
// cases, so it fails only when a generator or a loader changes so that the checks past loading
// stop being reached.

#[test]
fn value_checks_on_arbitrary_text() {
    // Arbitrary text almost never parses: what this property checks is "no panic" on every
    // case, so it has no floor.
    run_counting(512, ".{0,24}", |s: String| {
        checks::value(s.as_bytes());
        true
    });
}

#[test]
fn value_checks_on_value_like_text() {
    let reached = run_counting(
        512,
        "[+\\-±−]?[0-9]{0,4}([.,][0-9]{0,3})?([eE][+\\-]?[0-9]{1,3})? ?([fpnuµmkKMGTRV]|meg)?[0-9]{0,2} ?(Ω|ohm|F|V|A|Hz|V/us|V/µs|W|%|dB|V/rtHz|A/√Hz)?",
        |s: String| checks::value(s.as_bytes()) > 0,
    );
    // Measured: 22 % of the cases parse as at least one unit (lowest 19 %).
    require_reached("value-like text", reached, 0.10);
}

#[test]
fn inventory_checks_on_arbitrary_bytes() {
    // Arbitrary bytes never make a header: "no panic" on every case, no floor.
    run_counting(512, prop::collection::vec(any::<u8>(), 0..300), |bytes| {
        checks::inventory(&bytes);
        true
    });
}

/// The three headers of the CSV-shaped inventories, each with its column order: indices into
/// a [`CsvLine::Row`]'s cells (kind, value, tolerance, qty, voltage, polarized, unit_cost), 7
/// for its free text.
const CSV_HEADERS: [(&str, &[usize]); 3] = [
    ("kind,value,tolerance,qty\n", &[0, 1, 2, 3]),
    (
        "\u{feff}Qty, Kind ,value,TOLERANCE,note\r\n",
        &[3, 0, 1, 2, 7],
    ),
    (
        "# stock\nkind,value,tolerance,qty,voltage,polarized,unit_cost,location\n",
        &[0, 1, 2, 3, 4, 5, 6, 7],
    ),
];

/// One line of a CSV-shaped inventory: mostly a row a stock list really has (a kind with a value
/// of that kind, the tolerance and qty spellings spreadsheets write, quoted or padded), else a
/// comment or a blank line, else a line of noise with wrong, missing or extra cells. A file
/// then loads often enough that the checks on a loaded inventory and on its edit are reached,
/// and fails often enough that the loader's errors are exercised too.
#[derive(Debug, Clone)]
enum CsvLine {
    Row([&'static str; 7], String),
    Other(String),
}

fn csv_line() -> impl Strategy<Value = (CsvLine, &'static str)> {
    use prop::sample::select;
    let kind_value = prop_oneof![
        (
            select(vec!["r", "res", "R", "resistor"]),
            select(vec!["4k7", "\"4.7k\"", "1M", "220", "10 kΩ"]),
        ),
        (
            select(vec!["c", "cap", "C", "capacitor"]),
            select(vec!["100n", "10uF", "\"2u2\"", "1 nF"]),
        ),
    ];
    let row = (
        kind_value,
        select(vec!["1%", "\"5 %\"", "0.1%", "20%"]),
        select(vec![" 3", "\"4\"", "12", "0", "1"]),
        select(vec!["", "25V", "50 V"]),
        select(vec!["", "yes", "no"]),
        select(vec!["", "0.02", "1"]),
        prop_oneof!["[a-z0-9 ]{0,6}", Just("\"a, \"\"b\"\"\nc\"".to_string())],
    )
        .prop_map(|((k, v), t, q, volt, pol, cost, text)| {
            CsvLine::Row([k, v, t, q, volt, pol, cost], text)
        });
    let noise = "(r|c|res|cap|x)?,(4k7|100n|\"4,7k\"|10uF|1M|\"2u2\"|-1)?,(1%|\"5 %\"|200%|x)?,( 3|\"4\"|12|-1|1\\.5|\"1\"2)?(,[a-z0-9\"# ]{0,6}){0,4}";
    let line = prop_oneof![
        12 => row,
        2 => prop_oneof![
            Just(CsvLine::Other(String::new())),
            Just(CsvLine::Other(",,,".into())),
            "#[a-z,\" ]{0,6}".prop_map(CsvLine::Other),
        ],
        1 => noise.prop_map(CsvLine::Other),
    ];
    (line, select(vec!["\n", "\r\n", "\r"]))
}

/// The text of a CSV-shaped inventory: a header and its lines, the cells in its column order.
fn csv_text(header: usize, lines: &[(CsvLine, &'static str)]) -> String {
    let (head, columns) = CSV_HEADERS[header];
    let mut text = head.to_string();
    for (line, eol) in lines {
        match line {
            CsvLine::Row(cells, free) => {
                let cell = |c: usize| cells.get(c).copied().unwrap_or(free.as_str());
                let row: Vec<&str> = columns.iter().map(|&c| cell(c)).collect();
                text.push_str(&row.join(","));
            }
            CsvLine::Other(raw) => text.push_str(raw),
        }
        text.push_str(eol);
    }
    text
}

#[test]
fn inventory_checks_on_csv_shaped_text() {
    let strategy = (
        0..CSV_HEADERS.len(),
        prop::collection::vec(csv_line(), 0..14),
    );
    let (loaded, edited) = (std::cell::Cell::new(0u32), std::cell::Cell::new(0u32));
    let (run, _) = run_counting(512, strategy, |(header, lines)| {
        let reached = checks::inventory(csv_text(header, &lines).as_bytes());
        if reached != checks::InventoryReached::Refused {
            loaded.set(loaded.get() + 1);
        }
        if reached == checks::InventoryReached::Edited {
            edited.set(edited.get() + 1);
        }
        true
    });
    // Measured: 58 % load (lowest 54 %), and all of those were edited and re-loaded (the
    // editor's layout refusal needs a `"1"2` qty cell, which only the rare noise lines write,
    // and those already fail loading).
    require_reached("CSV-shaped inventory", (run, loaded.get()), 0.30);
    require_reached("CSV-shaped inventory, edited", (run, edited.get()), 0.30);
}

#[test]
fn spec_checks_on_arbitrary_bytes() {
    // Arbitrary bytes never make a spec; the error lines are checked on every case, no floor.
    run_counting(512, prop::collection::vec(any::<u8>(), 0..300), |bytes| {
        checks::spec(&bytes);
        true
    });
}

#[test]
fn spec_checks_on_toml_shaped_text() {
    // Lines of the spec's vocabulary alone, or a valid spec with a few of them mixed in.
    let lines = prop_oneof![
        1 => prop::collection::vec(toml_line(), 0..24),
        3 => (
            valid_spec_lines(),
            prop::collection::vec((any::<prop::sample::Index>(), toml_line()), 0..4),
        )
            .prop_map(|(mut lines, extra)| {
                for (at, line) in extra {
                    let at = at.index(lines.len() + 1);
                    lines.insert(at, line);
                }
                lines
            }),
    ];
    let reached = run_counting(512, (lines, any::<bool>()), |(lines, crlf)| {
        let eol = if crlf { "\r\n" } else { "\n" };
        checks::spec(lines.join(eol).as_bytes())
    });
    // Measured: 33 % of the cases load (lowest 29 %).
    require_reached("TOML-shaped spec", reached, 0.15);
}

/// The lines of a spec that loads: the required `[stage]` keys in any order, spelled as
/// numbers or engineering strings, and optionally an `[amplifier]` and a `[stock]` section.
fn valid_spec_lines() -> impl Strategy<Value = Vec<String>> {
    use prop::sample::select;
    (
        any::<bool>(),
        select(vec!["9", "\"12 V\"", "5.0", "\"24V\""]),
        select(vec!["10", "\"4.7\"", "1", "100"]),
        select(vec!["\"10k\"", "2200", "\"1 MΩ\""]),
        select(vec![
            "[\"20 Hz\", \"20 kHz\"]",
            "[1, 2]",
            "[\"0.1Hz\", \"3 MHz\"]",
        ]),
        prop::option::of(select(vec![
            "gbw = \"3 MHz\"",
            "input_bias_current = \"20 nA\"",
            "slew_rate = \"1 V/us\"",
        ])),
        prop::option::of(select(vec![
            "resistors = \"E96\"",
            "combine = \"both\"",
            "capacitor_range = [\"1 nF\", \"10 uF\"]",
        ])),
        Just([0usize, 1, 2, 3, 4]).prop_shuffle(),
    )
        .prop_map(|(inverting, supply, gain, load, band, amp, stock, order)| {
            let (kind, sign) = if inverting {
                ("inverting", "-")
            } else {
                ("non-inverting", "")
            };
            let gain = match gain.strip_prefix('"') {
                Some(g) => format!("\"{sign}{g}"),
                None => format!("{sign}{gain}"),
            };
            let keys = [
                format!("kind = \"{kind}\""),
                format!("supply = {supply}"),
                format!("gain = {gain}"),
                format!("load = {load}"),
                format!("band = {band}"),
            ];
            let mut lines = vec!["[stage]".to_string()];
            lines.extend(order.iter().map(|&i| keys[i].clone()));
            for (section, line) in [("[amplifier]", amp), ("[stock]", stock)] {
                if let Some(line) = line {
                    lines.push(section.to_string());
                    lines.push(line.to_string());
                }
            }
            lines
        })
}

/// One line of TOML-ish text built from the spec's own vocabulary, so the fuzzing reaches the
/// field readers and cross-checks rather than stopping at the TOML parser.
fn toml_line() -> impl Strategy<Value = String> {
    let section = prop::sample::select(vec![
        "[stage]",
        "[amplifier]",
        "[stock]",
        "[goals]",
        "[lock]",
        "[stgae]",
        "[[lock]]",
    ])
    .prop_map(String::from);
    let key = prop::sample::select(vec![
        "kind",
        "supply",
        "gain",
        "gain_tolerance",
        "input_resistance_min",
        "load",
        "band",
        "band_loss_max",
        "corner_low_max",
        "headroom",
        "source_dc",
        "source_resistance",
        "input_peak",
        "output_peak",
        "tolerance_mode",
        "gbw",
        "input_bias_current",
        "input_offset_current",
        "input_offset_voltage",
        "slew_rate",
        "resistors",
        "capacitors",
        "resistor_range",
        "capacitor_range",
        "resistor_tolerance",
        "capacitor_tolerance",
        "combine",
        "gain_error",
        "offset",
        "part_count",
        "bom_lines",
        "capacitance",
        "cost",
        "r_in",
        "r_fb",
        "c_in",
        "c_out",
        "r_bias_hi",
        "r_g",
        "laod",
        "\"load\"",
        "stage.load",
    ]);
    let value = prop::sample::select(vec![
        "\"inverting\"",
        "\"non-inverting\"",
        "\"9 V\"",
        "-10",
        "4.7",
        "\"10k\"",
        "\"4k7/5%\"",
        "[\"20 Hz\", \"20 kHz\"]",
        "[1, 2, 3]",
        "[]",
        "\"1 dB\"",
        "\"5%\"",
        "true",
        "1e400",
        "-0.0",
        "\"E24\"",
        "\"stock.csv\"",
        "\"both\"",
        "\"10 uF\"",
        "\"4,7k\"",
        "\"-1k\"",
        "{ a = 1 }",
        "\"\"",
        "nan",
        "inf",
        "1979-05-27",
        "\"100n\"",
        "\"3 MHz\"",
        "0",
    ]);
    prop_oneof![
        section,
        (key, value).prop_map(|(k, v)| format!("{k} = {v}")),
        Just("# comment".to_string()),
        Just(String::new()),
        "[a-z=\\[\\]\"{}, .]{0,12}",
    ]
}

// ---- corpus replay --------------------------------------------------------------------------

fn replay<R>(dirs: &[&str], check: fn(&[u8]) -> R) -> usize {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut n = 0;
    for dir in dirs {
        let Ok(entries) = std::fs::read_dir(root.join(dir)) else {
            continue;
        };
        for entry in entries.flatten() {
            let path = entry.path();
            if path.is_file() {
                let bytes = std::fs::read(&path).unwrap();
                let outcome = std::panic::catch_unwind(|| check(&bytes));
                assert!(outcome.is_ok(), "finding replayed from {}", path.display());
                n += 1;
            }
        }
    }
    n
}

#[test]
fn the_corpus_and_shipped_files_pass_the_fuzz_checks() {
    assert!(
        replay(
            &["fuzz/corpus/value", "fuzz/artifacts/value"],
            checks::value
        ) > 0
    );
    assert!(
        replay(
            &[
                "fuzz/corpus/inventory",
                "fuzz/artifacts/inventory",
                "inventories",
                "tests/data"
            ],
            checks::inventory
        ) > 0
    );
    assert!(
        replay(
            &[
                "fuzz/corpus/spec",
                "fuzz/artifacts/spec",
                "examples",
                "tests/data"
            ],
            checks::spec
        ) > 0
    );
}

// ---- a generated valid spec round-trips ---------------------------------------------------

/// One written field: its section and key, the TOML text of its value, and nothing else —
/// the expected spec is built alongside.
struct Field {
    section: &'static str,
    key: String,
    text: String,
}

/// How a quantity is written: a plain TOML number in base units (percent for tolerances), or
/// a string in engineering form with 17 significant digits.
fn write_quantity(v: f64, unit: Unit, as_string: bool) -> (String, f64) {
    if as_string {
        (format!("\"{}\"", format_sig(v, unit, 17)), v)
    } else if unit == Unit::Percent {
        // The loader reads a bare tolerance as percent and divides by 100.
        let pct = v * 100.0;
        (format!("{pct:?}"), pct / 100.0)
    } else {
        (format!("{v:?}"), v)
    }
}

/// log-uniform in [lo, hi]
fn log_in(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    (0.0f64..=1.0).prop_map(move |t| lo * (hi / lo).powf(t))
}

#[derive(Debug, Clone)]
struct Draw {
    non_inverting: bool,
    supply: f64,
    gain: f64,
    headroom: (f64, f64),
    load: f64,
    band_lo: f64,
    band_ratio: f64,
    optional: [Option<f64>; 8],
    amp: [f64; 3],
    stock: (usize, usize, f64, f64, f64, f64, f64, f64, usize),
    goals: Option<[f64; 6]>,
    locks: Vec<(usize, f64, Option<f64>)>,
    spell: Vec<bool>,
    layout: (bool, bool, bool, u8),
}

fn draw() -> impl Strategy<Value = Draw> {
    let core = (
        any::<bool>(),
        3.0f64..30.0,
        log_in(1.0, 100.0),
        (0.0f64..0.3, 0.0f64..0.3),
        log_in(100.0, 1e6),
        log_in(1.0, 100.0),
        log_in(10.0, 1e4),
    );
    let optional = prop::array::uniform8(prop::option::of(0.0f64..=1.0));
    let amp = prop::array::uniform3(0.0f64..1e-6);
    let stock = (
        0usize..7,
        0usize..7,
        log_in(1.0, 1e3),
        log_in(10.0, 1e4),
        log_in(1e-13, 1e-9),
        log_in(10.0, 1e6),
        0.0f64..0.2,
        0.0f64..0.2,
        0usize..4,
    );
    let goals = prop::option::of(prop::array::uniform6(0.0f64..10.0));
    let locks = prop::collection::vec(
        (0usize..8, 0.0f64..=1.0, prop::option::of(0.001f64..0.2)),
        0..4,
    );
    let spell = prop::collection::vec(any::<bool>(), 40);
    let layout = (any::<bool>(), any::<bool>(), any::<bool>(), any::<u8>());
    (core, optional, amp, stock, goals, locks, spell, layout).prop_map(
        |(core, optional, amp, stock, goals, locks, spell, layout)| Draw {
            non_inverting: core.0,
            supply: core.1,
            gain: core.2,
            headroom: (core.3 .0 * core.1, core.3 .1 * core.1),
            load: core.4,
            band_lo: core.5,
            band_ratio: core.6,
            optional,
            amp,
            stock,
            goals,
            locks,
            spell,
            layout,
        },
    )
}

/// Renders a drawn spec as TOML and builds the spec the loader must return for it.
fn render(d: &Draw) -> (String, Spec, Vec<(usize, String)>) {
    let mut spell = d.spell.iter().copied().cycle();
    let mut next = || spell.next().unwrap_or(false);
    let kind = if d.non_inverting {
        StageKind::NonInverting
    } else {
        StageKind::Inverting
    };
    let gain = if d.non_inverting { d.gain } else { -d.gain };
    let mut stage: Vec<Field> = Vec::new();
    let q = |section: &'static str, key: &str, v: f64, unit: Unit, s: bool| -> (Field, f64) {
        let (text, value) = write_quantity(v, unit, s);
        (
            Field {
                section,
                key: key.to_string(),
                text,
            },
            value,
        )
    };
    let kind_text = format!("\"{}\"", kind.name());
    stage.push(Field {
        section: "stage",
        key: "kind".into(),
        text: kind_text,
    });
    let (f, supply) = q("stage", "supply", d.supply, Unit::Volt, next());
    stage.push(f);
    stage.push(Field {
        section: "stage",
        key: "gain".into(),
        text: if next() {
            format!("\"{gain:?}\"")
        } else {
            format!("{gain:?}")
        },
    });
    let (f, load) = q("stage", "load", d.load, Unit::Ohm, next());
    stage.push(f);
    let band_hi = d.band_lo * d.band_ratio;
    let (lo_text, band_lo) = write_quantity(d.band_lo, Unit::Hertz, next());
    let (hi_text, band_hi) = write_quantity(band_hi, Unit::Hertz, next());
    stage.push(Field {
        section: "stage",
        key: "band".into(),
        text: format!("[{lo_text}, {hi_text}]"),
    });
    let (h0, headroom_0) = write_quantity(d.headroom.0, Unit::Volt, next());
    let (h1, headroom_1) = write_quantity(d.headroom.1, Unit::Volt, next());
    stage.push(Field {
        section: "stage",
        key: "headroom".into(),
        text: format!("[{h0}, {h1}]"),
    });
    // The optional requirements, each scaled into a range where it is valid.
    let o = d.optional;
    let mut opt = |i: usize, key: &str, lo: f64, hi: f64, unit: Unit| -> Option<f64> {
        let t = o[i]?;
        let (f, v) = q("stage", key, lo * (hi / lo).powf(t), unit, next());
        stage.push(f);
        Some(v)
    };
    let gain_tolerance = opt(0, "gain_tolerance", 0.001, 0.2, Unit::Percent);
    let input_resistance_min = opt(1, "input_resistance_min", 1e3, 1e7, Unit::Ohm);
    let band_loss_max = opt(2, "band_loss_max", 0.01, 3.0, Unit::Decibel);
    let corner_low_max = opt(
        3,
        "corner_low_max",
        d.band_lo * 0.1,
        d.band_lo * 10.0,
        Unit::Hertz,
    );
    let source_resistance = opt(4, "source_resistance", 1.0, 1e4, Unit::Ohm).unwrap_or(0.0);
    let (input_peak, output_peak) = match o[5] {
        Some(t) if t < 0.5 => (opt(5, "input_peak", 1e-3, 1.0, Unit::Volt), None),
        Some(_) => (None, opt(5, "output_peak", 0.1, 1.0, Unit::Volt)),
        None => (None, None),
    };
    let mut amplifier: Vec<Field> = Vec::new();
    let mut aq = |key: &str, v: f64, unit: Unit, s: bool| -> f64 {
        let (text, value) = write_quantity(v, unit, s);
        amplifier.push(Field {
            section: "amplifier",
            key: key.into(),
            text,
        });
        value
    };
    let gbw = o[6].map(|t| aq("gbw", 1e5 * 1e3f64.powf(t), Unit::Hertz, t < 0.5));
    let slew_rate = o[7].map(|t| {
        aq(
            "slew_rate",
            1e5 * 1e3f64.powf(t),
            Unit::VoltPerSecond,
            t > 0.5,
        )
    });
    let input_bias_current = aq("input_bias_current", d.amp[0], Unit::Ampere, next());
    let input_offset_current = aq("input_offset_current", d.amp[1], Unit::Ampere, next());
    let input_offset_voltage = aq("input_offset_voltage", d.amp[2] * 1e3, Unit::Volt, next());

    let (rs, cs, r_lo, r_span, c_lo, c_span, r_tol, c_tol, combine) = d.stock;
    let mut stock: Vec<Field> = Vec::new();
    let resistors = Series::ALL[rs];
    let capacitors = Series::ALL[cs];
    stock.push(Field {
        section: "stock",
        key: "resistors".into(),
        text: format!("\"{}\"", resistors.name()),
    });
    stock.push(Field {
        section: "stock",
        key: "capacitors".into(),
        text: format!("\"{}\"", capacitors.name()),
    });
    let mut pair = |key: &str, lo: f64, hi: f64, unit: Unit, a: bool, b: bool| -> (f64, f64) {
        let (lt, l) = write_quantity(lo, unit, a);
        let (ht, h) = write_quantity(hi, unit, b);
        stock.push(Field {
            section: "stock",
            key: key.into(),
            text: format!("[{lt}, {ht}]"),
        });
        (l, h)
    };
    let resistor_range = pair(
        "resistor_range",
        r_lo,
        r_lo * r_span,
        Unit::Ohm,
        next(),
        next(),
    );
    let capacitor_range = pair(
        "capacitor_range",
        c_lo,
        c_lo * c_span,
        Unit::Farad,
        next(),
        next(),
    );
    let mut tol = |key: &str, v: f64, s: bool| -> f64 {
        let (text, value) = write_quantity(v, Unit::Percent, s);
        stock.push(Field {
            section: "stock",
            key: key.into(),
            text,
        });
        value
    };
    let resistor_tolerance = tol("resistor_tolerance", r_tol, next());
    let capacitor_tolerance = tol("capacitor_tolerance", c_tol, next());
    let combine = [
        Combine::Single,
        Combine::Series,
        Combine::Parallel,
        Combine::Both,
    ][combine];
    let combine_name = ["single", "series", "parallel", "both"][[
        Combine::Single,
        Combine::Series,
        Combine::Parallel,
        Combine::Both,
    ]
    .iter()
    .position(|c| *c == combine)
    .unwrap()];
    stock.push(Field {
        section: "stock",
        key: "combine".into(),
        text: format!("\"{combine_name}\""),
    });

    let mut goals_fields: Vec<Field> = Vec::new();
    let goals = match d.goals {
        None => Goals::default(),
        Some(w) => {
            let keys = [
                "gain_error",
                "offset",
                "part_count",
                "bom_lines",
                "capacitance",
                "cost",
            ];
            for (k, v) in keys.iter().zip(w) {
                goals_fields.push(Field {
                    section: "goals",
                    key: k.to_string(),
                    text: format!("{v:?}"),
                });
            }
            let mut goals = Goals::default();
            for (goal, v) in stockfit::vocab::Goal::ALL.into_iter().zip(w) {
                goals.set(goal, v);
            }
            goals
        }
    };

    // Locks on the stage's own slots, at most one per slot (a TOML table has unique keys).
    let slots = stockfit::circuit::circuit_for(kind).slots();
    let mut lock_fields: Vec<Field> = Vec::new();
    let mut locks: Vec<(String, f64, Option<f64>, String)> = Vec::new();
    for &(i, t, tolerance) in &d.locks {
        let slot = &slots[i % slots.len()];
        if locks.iter().any(|(s, ..)| s == slot.name) {
            continue;
        }
        let (unit, lo, hi): (Unit, f64, f64) = match slot.kind {
            stockfit::vocab::PartKind::Resistor => (Unit::Ohm, 10.0, 1e6),
            stockfit::vocab::PartKind::Capacitor => (Unit::Farad, 1e-12, 1e-3),
        };
        let v = lo * (hi / lo).powf(t);
        let text = format_sig(v, unit, 17);
        let (text, tolerance) = match tolerance {
            Some(tl) => (
                format!("{text}/{}", format_sig(tl, Unit::Percent, 17)),
                Some(tl),
            ),
            None => (text, None),
        };
        lock_fields.push(Field {
            section: "lock",
            key: slot.name.to_string(),
            text: format!("\"{text}\""),
        });
        locks.push((slot.name.to_string(), v, tolerance, text));
    }

    // Layout: sections in either order, optional comments and blank lines, CRLF, BOM.
    let (crlf, bom, comments, order) = d.layout;
    let eol = if crlf { "\r\n" } else { "\n" };
    let mut sections = vec![
        ("stage", stage),
        ("amplifier", amplifier),
        ("stock", stock),
        ("goals", goals_fields),
        ("lock", lock_fields),
    ];
    sections.rotate_left(usize::from(order) % 5);
    let mut text = String::new();
    if bom {
        text.push('\u{feff}');
    }
    let mut line = 1;
    let mut places: Vec<(usize, String)> = Vec::new();
    let mut lock_lines: Vec<(String, usize)> = Vec::new();
    for (name, fields) in &sections {
        if comments {
            text.push_str(&format!(
                "# the {name} section, \"quoted\" = not a key{eol}{eol}"
            ));
            line += 2;
        }
        text.push_str(&format!("[{name}]{eol}"));
        line += 1;
        for f in fields {
            text.push_str(&format!("{} = {}{eol}", f.key, f.text));
            places.push((line, format!("{}.{}", f.section, f.key)));
            if f.section == "lock" {
                lock_lines.push((f.key.clone(), line));
            }
            line += 1;
        }
    }
    // Fields this generator does not write keep the loader's defaults: start from them.
    let minimal = format!(
        "[stage]\nkind = \"{}\"\nsupply = 9\ngain = {gain:?}\nload = 1000\nband = [1, 2]\n",
        kind.name()
    );
    let mut spec = Spec::from_toml(&minimal).expect("the minimal spec loads");
    spec.supply = supply;
    spec.gain = gain;
    spec.gain_tolerance_default = gain_tolerance.is_none();
    spec.gain_tolerance = gain_tolerance.or(Some(stockfit::spec::DEFAULT_GAIN_TOLERANCE));
    spec.input_resistance_min = input_resistance_min;
    spec.load = load;
    spec.band = (band_lo, band_hi);
    spec.band_loss_max = band_loss_max;
    spec.corner_low_max = corner_low_max;
    spec.headroom = (headroom_0, headroom_1);
    spec.source_resistance = source_resistance;
    spec.input_peak = input_peak;
    spec.output_peak = output_peak;
    spec.amplifier.gbw = gbw;
    spec.amplifier.slew_rate = slew_rate;
    spec.amplifier.input_bias_current = input_bias_current;
    spec.amplifier.input_offset_current = input_offset_current;
    spec.amplifier.input_offset_voltage = input_offset_voltage;
    spec.stock.resistors = SourceSpec::Series(resistors);
    spec.stock.capacitors = SourceSpec::Series(capacitors);
    spec.stock.resistor_range = resistor_range;
    spec.stock.capacitor_range = capacitor_range;
    spec.stock.resistor_tolerance = resistor_tolerance;
    spec.stock.capacitor_tolerance = capacitor_tolerance;
    spec.stock.combine = combine;
    spec.goals = goals;
    spec.locks = locks
        .into_iter()
        .map(|(slot, value, tolerance, text)| {
            let line = lock_lines.iter().find(|(s, _)| *s == slot).map(|(_, l)| *l);
            let lock = Lock {
                slot,
                value: LockValue::Text(text),
                line,
            };
            // The value as written parses back exactly with its slot's kind.
            let kind = slots.iter().find(|s| s.name == lock.slot).unwrap().kind;
            assert_eq!(lock.parse(kind), Ok((value, tolerance)), "{lock:?}");
            lock
        })
        .collect();
    (text, spec, places)
}

/// Locks come back in the TOML table's key order; compare them as sets.
fn sorted(mut spec: Spec) -> Spec {
    spec.locks.sort_by(|a, b| a.slot.cmp(&b.slot));
    spec
}

proptest! {
    #![proptest_config(config(256))]

    /// Every field as written comes back exactly: numbers in base units and engineering strings
    /// with 17 significant digits alike, whatever the section order, comments, CRLF or BOM.
    #[test]
    fn a_generated_valid_spec_round_trips(d in draw()) {
        let (text, expected, _) = render(&d);
        match Spec::from_toml(&text) {
            Ok(spec) => prop_assert_eq!(sorted(spec), sorted(expected), "\n{}", text),
            Err(e) => prop_assert!(false, "{}\n{}", e, text),
        }
    }

    /// A wrong-type value on any line is reported with that line and its key, and it is the
    /// only problem reported.
    #[test]
    fn a_value_broken_on_any_line_is_reported_there(d in draw(), pick in any::<prop::sample::Index>()) {
        let (text, _, places) = render(&d);
        let (line, key) = &places[pick.index(places.len())];
        let eol = if text.contains("\r\n") { "\r\n" } else { "\n" };
        let mut lines: Vec<String> = text.split(eol).map(String::from).collect();
        let target = &mut lines[line - 1];
        let name = key.split('.').nth(1).unwrap_or_default();
        prop_assert!(target.trim_start_matches('\u{feff}').starts_with(name), "{} / {}", target, key);
        *target = format!("{name} = {{ not = \"a value\" }}");
        let broken = lines.join(eol);
        match Spec::from_toml(&broken) {
            Ok(_) => prop_assert!(false, "accepted:\n{}", broken),
            Err(e) => {
                prop_assert_eq!(e.0.len(), 1, "{}", e);
                prop_assert_eq!(e.0[0].line, Some(*line), "{}", e);
                prop_assert_eq!(&e.0[0].key, key, "{}", e);
                prop_assert!(e.0[0].message.contains("found a table"), "{}", e);
            }
        }
    }
}
