//! Criterion benchmarks of the search at scale (issue 3, item 7): two-part E96, E24 single
//! parts against two-part E96, the search against brute force on a reduced instance, and a
//! generated 5,000-line inventory; plus the peak memory of each.
//!
//! Run with `cargo bench` (or `cargo bench --bench search -- e24` for one case). Every case is
//! first run once in a child process (this binary started again with `STOCKFIT_BENCH_CHILD`
//! set), for three reasons: a case that runs longer than its budget is stopped instead of
//! holding `cargo bench` for hours, its peak memory (VmHWM in /proc/<pid>/status, Linux) is its
//! own and not that of every case before it, and the brute-force comparison is asserted there
//! before anything is timed. Criterion then times the cases whose single run took at most
//! `CRITERION_MAX`; slower ones are reported by their single run. A summary with the issue's
//! targets closes the output.
//!
//! Environment: `STOCKFIT_BENCH_BUDGET` (seconds, default 60; 15 in test mode) caps the single
//! run of each case; `STOCKFIT_BENCH_CHILD=<case>` runs one case once in this process, and
//! `STOCKFIT_BENCH_REPEAT=n` repeats its search n times first and prints the median (for a
//! profiler, or a quick comparison of two builds).
//!
//! All specs and the inventory are invented for these benchmarks.

use criterion::{Criterion, SamplingMode};
use std::io::Read;
use std::process::{Command, Stdio};
use std::sync::Arc;
use std::time::{Duration, Instant};
use stockfit::build::Part;
use stockfit::circuit::{circuit_for, Circuit};
use stockfit::search::{brute::brute_force, search, Outcome, Request};
use stockfit::series::Series;
use stockfit::spec::{SourceSpec, Spec};
use stockfit::stock::inventory::Inventory;
use stockfit::stock::{Source, Stock};
use stockfit::value::{format_sig, Unit};

/// Builds to keep, as the issue asks ("top 10").
const TOP: usize = 10;
/// Criterion times a case only if one run takes at most this long: ten samples of one
/// iteration each plus the warm-up then stay under a minute.
const CRITERION_MAX: Duration = Duration::from_secs(5);
/// How the child reports its figures: one line starting with this tag.
const TAG: &str = "STOCKFIT-BENCH";

/// The stage every case searches: an inverting 12 V stage for the pressure pick-up of an
/// invented school wind-tunnel rig. Gain −27.4 is not a ratio of two E-series values, so the
/// gain pair has to be searched, not looked up.
const STAGE: &str = r#"
[stage]
kind = "inverting"
supply = "12 V"
gain = -27.4
gain_tolerance = "3%"
input_resistance_min = "10k"
load = "10k"
band = ["20 Hz", "20 kHz"]
band_loss_max = "0.5 dB"
headroom = "1 V"
input_peak = "100 mV"

[amplifier]
gbw = "10 MHz"
input_bias_current = "50 nA"
input_offset_current = "5 nA"
input_offset_voltage = "1 mV"
"#;

/// Case 1: two-part E96 over 10 Ω–10 MΩ (`combine` applies to the E12 capacitors too).
const E96_TWO_PART: &str = r#"
[stock]
resistors = "E96"
resistor_range = ["10", "10M"]
capacitors = "E12"
combine = "both"
"#;

/// Case 2: the same search from E24 single parts (capacitors E12 single too).
const E24_SINGLE: &str = r#"
[stock]
resistors = "E24"
resistor_range = ["10", "10M"]
capacitors = "E12"
combine = "single"
"#;

/// Case 3: the reduced instance for brute force. Two-part E12 over three decades has 1,339
/// realisations per resistor slot and 5,299 per capacitor slot: brute force over all six slots
/// would be ~10^20 builds, and even the gain pair alone (1,339², the other four slots locked)
/// took 90 s at ~50 µs per exact evaluation on the 2-core bench machine. So: 10 kΩ–470 kΩ
/// (410 realisations per resistor slot), the bias divider and both capacitors locked to the
/// parts an unlocked search picks, and brute force walks all 410² gain pairs (~10 s).
const REDUCED: &str = r#"
[stock]
resistors = "E12"
resistor_range = ["10k", "470k"]
capacitors = "E12"
combine = "both"
"#;

/// Case 4: a generated 5,000-line inventory, single parts, cost counted in the objective.
const INVENTORY: &str = r#"
[stock]
resistor_range = ["10", "10M"]
capacitor_range = ["1n", "1m"]

[goals]
cost = 0.5
"#;

/// Case 5 (issue 15): a difference stage for an invented load-cell bridge on ±12 V, from a
/// generated 500-line resistor inventory (its own stage: the four resistors and their ratios'
/// match are the whole search).
const DIFFERENCE: &str = r#"
[stage]
kind = "difference"
supply = "±12 V"
gain = 33
gain_tolerance = "3%"
input_resistance_min = "10k"
load = "10k"
band = ["0.5 Hz", "1 kHz"]
band_loss_max = "0.1 dB"
headroom = "1.5 V"
source_dc = "2.5 V"
source_resistance = "175"
input_peak = "100 mV"
cmrr_min = "45 dB"
output_offset_max = "25 mV"

[amplifier]
gbw = "1 MHz"
input_bias_current = "20 nA"
input_offset_current = "2 nA"
input_offset_voltage = "0.5 mV"

[stock]
resistor_range = ["10", "10M"]

[goals]
cost = 0.5
"#;

/// Lines of the difference case's inventory, all resistors.
const DIFFERENCE_LINES: usize = 500;

/// Lines in the generated inventory (`STOCKFIT_BENCH_INVENTORY_LINES` overrides it, to see
/// how the search scales); 70 % of them are resistors.
const INVENTORY_LINES: usize = 5_000;

fn inventory_lines() -> usize {
    std::env::var("STOCKFIT_BENCH_INVENTORY_LINES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(INVENTORY_LINES)
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Case {
    E96TwoPart,
    E24Single,
    Reduced,
    Inventory,
    Difference,
}

impl Case {
    const ALL: [Case; 5] = [
        Case::E96TwoPart,
        Case::E24Single,
        Case::Reduced,
        Case::Inventory,
        Case::Difference,
    ];

    fn name(self) -> &'static str {
        match self {
            Case::E96TwoPart => "e96_two_part",
            Case::E24Single => "e24_single",
            Case::Reduced => "reduced_e12_two_part",
            Case::Inventory => "inventory_5000",
            Case::Difference => "difference_500",
        }
    }

    fn describe(self) -> &'static str {
        match self {
            Case::E96TwoPart => "two-part E96, 10 Ω–10 MΩ, top 10",
            Case::E24Single => "E24 single parts, 10 Ω–10 MΩ, top 10",
            Case::Reduced => "two-part E12, 10 kΩ–470 kΩ, divider and capacitors locked, top 10",
            Case::Inventory => "5,000-line inventory, single parts, top 10",
            Case::Difference => "difference amplifier, 500-line resistor inventory, top 10",
        }
    }

    fn parse(name: &str) -> Option<Case> {
        Case::ALL.into_iter().find(|c| c.name() == name)
    }
}

/// Everything a search of one case needs, built outside the timed code.
struct Prepared {
    spec: Spec,
    stage: &'static dyn Circuit,
    stock: Stock,
    locks: Vec<(usize, Part)>,
}

impl Prepared {
    fn request(&self) -> Request<'_> {
        Request {
            spec: &self.spec,
            stage: self.stage,
            stock: &self.stock,
            locks: &self.locks,
            top: TOP,
            // No node cap: the benches time the proven search.
            max_nodes: None,
            plan: stockfit::search::PlanChoice::Best,
            stop: stockfit::search::Stop::NEVER,
            distinct: &[],
        }
    }

    fn search(&self) -> Outcome {
        search(&self.request(), &mut |_| {}).expect("the bench specs are valid")
    }
}

fn spec_of(stock: &str) -> Spec {
    Spec::from_toml(&format!("{STAGE}{stock}")).unwrap_or_else(|e| panic!("bench spec: {e}"))
}

/// The series stock a spec names, as the binary builds it.
fn series_stock(spec: &Spec) -> Stock {
    let source = |s: &SourceSpec, tolerance: f64| match s {
        SourceSpec::Series(series) => Source::Series {
            series: *series,
            tolerance,
        },
        SourceSpec::File(p) => panic!("bench specs name series, found {p}"),
    };
    Stock::new(
        source(&spec.stock.resistors, spec.stock.resistor_tolerance),
        source(&spec.stock.capacitors, spec.stock.capacitor_tolerance),
        spec.stock.limits(),
    )
}

fn prepare(case: Case) -> Prepared {
    let stage_of = |spec: &Spec| circuit_for(spec.stage);
    match case {
        Case::E96TwoPart | Case::E24Single => {
            let spec = spec_of(if case == Case::E96TwoPart {
                E96_TWO_PART
            } else {
                E24_SINGLE
            });
            Prepared {
                stage: stage_of(&spec),
                stock: series_stock(&spec),
                locks: Vec::new(),
                spec,
            }
        }
        Case::Reduced => {
            let spec = spec_of(REDUCED);
            let mut p = Prepared {
                stage: stage_of(&spec),
                stock: series_stock(&spec),
                locks: Vec::new(),
                spec,
            };
            // Lock every slot but the gain pair to the best unlocked build.
            let best = p.search().builds.into_iter().next().expect(
                "the reduced instance has a build; if a change to the analysis made it \
                 infeasible, adjust REDUCED",
            );
            let gain_pair = &p.stage.plan().expect("a hand-tuned plan").groups(&p.spec)[0];
            p.locks = (0..p.stage.slots().len())
                .filter(|s| !gain_pair.contains(s))
                .map(|s| (s, best.build.parts[s].clone()))
                .collect();
            p
        }
        Case::Difference => {
            let spec = Spec::from_toml(DIFFERENCE).unwrap_or_else(|e| panic!("bench spec: {e}"));
            let inv = Arc::new(
                Inventory::parse_str(&inventory_csv_of(DIFFERENCE_LINES, DIFFERENCE_LINES))
                    .expect("the generated inventory parses"),
            );
            assert_eq!(inv.lines.len(), DIFFERENCE_LINES);
            Prepared {
                stage: stage_of(&spec),
                stock: Stock::new(
                    Source::Inventory(inv.clone()),
                    Source::Inventory(inv),
                    spec.stock.limits(),
                ),
                locks: Vec::new(),
                spec,
            }
        }
        Case::Inventory => {
            let spec = spec_of(INVENTORY);
            let inv = Arc::new(
                Inventory::parse_str(&inventory_csv(inventory_lines()))
                    .expect("the generated inventory parses"),
            );
            assert_eq!(inv.lines.len(), inventory_lines());
            Prepared {
                stage: stage_of(&spec),
                stock: Stock::new(
                    Source::Inventory(inv.clone()),
                    Source::Inventory(inv),
                    spec.stock.limits(),
                ),
                locks: Vec::new(),
                spec,
            }
        }
    }
}

/// 64-bit linear congruential generator, x ← a·x + c mod 2^64, with Knuth's MMIX constants
/// (from memory; the same as inventories/tools/gen_lab_stock.py). Deterministic, no crate.
struct Lcg(u64);

impl Lcg {
    fn next_f64(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        // The top 53 bits: the low bits of an LCG are its weakest.
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }

    fn below(&mut self, n: usize) -> usize {
        ((self.next_f64() * n as f64) as usize).min(n - 1)
    }

    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// An invented 5,000-line parts store: resistors drawn from E96 over 10 Ω–10 MΩ at 0.1/1/5 %,
/// capacitors from E12 over 1 nF–1 mF at 5/10/20 % (electrolytic from 1 µF up, half the
/// time), quantities from none to a reel with many lines at one or two pieces (so quantities
/// bind), and costs by tolerance and size.
fn inventory_csv(lines: usize) -> String {
    inventory_csv_of(lines, lines * 7 / 10)
}

/// [`inventory_csv`] with `resistors` of its `lines` resistors.
fn inventory_csv_of(lines: usize, resistors: usize) -> String {
    let mut rng = Lcg(0x5eed_0fb3_c4d5);
    let res = Series::E96.values_in(10.0, 10e6);
    let caps = Series::E12.values_in(1e-9, 1e-3);
    let mut csv =
        String::from("kind,value,tolerance,qty,voltage,power,polarized,dielectric,unit_cost\n");
    let qty = |rng: &mut Lcg| match rng.below(20) {
        0 => 0,
        1..=5 => 1 + rng.below(2),
        6..=9 => 3 + rng.below(8),
        _ => 20 + rng.below(481),
    };
    for _ in 0..resistors {
        let v = *rng.pick(&res);
        let (tol, cost) = *rng.pick(&[("0.1%", 0.12), ("1%", 0.02), ("1%", 0.015), ("5%", 0.01)]);
        let power = *rng.pick(&["0.125W", "0.25W", "0.5W"]);
        let q = qty(&mut rng);
        csv += &format!(
            "resistor,{},{tol},{q},,{power},false,,{:.3}\n",
            format_sig(v, Unit::Ohm, 12),
            cost * (1.0 + rng.next_f64())
        );
    }
    for _ in resistors..lines {
        let v = *rng.pick(&caps);
        let electrolytic = v >= 1e-6 && rng.below(2) == 0;
        let (tol, dielectric, polarized) = if electrolytic {
            ("20%", "aluminium electrolytic", true)
        } else {
            (
                *rng.pick(&["5%", "10%", "20%"]),
                *rng.pick(&["film", "X7R"]),
                false,
            )
        };
        let volts = *rng.pick(&["16V", "25V", "50V", "100V"]);
        let q = qty(&mut rng);
        // Bigger capacitors cost more: a few cents per decade above 1 nF (invented).
        let cost = 0.03 * (1.0 + (v / 1e-9).log10()) * (1.0 + rng.next_f64());
        csv += &format!(
            "capacitor,{},{tol},{q},{volts},,{polarized},{dielectric},{cost:.3}\n",
            format_sig(v, Unit::Farad, 12)
        );
    }
    csv
}

/// Peak resident set of this process, kB (VmHWM, Linux), `None` elsewhere.
fn vm_hwm_kb(pid: Option<u32>) -> Option<u64> {
    let path = match pid {
        Some(p) => format!("/proc/{p}/status"),
        None => "/proc/self/status".into(),
    };
    let status = std::fs::read_to_string(path).ok()?;
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
}

fn scores(o: &Outcome) -> Vec<f64> {
    o.builds.iter().map(|r| r.evaluation.score).collect()
}

/// The child: run one case once, check it, print its figures.
fn child(case: Case) {
    let p = prepare(case);
    // `STOCKFIT_BENCH_REPEAT=n` runs the search n more times first, for a profiler
    // (`perf record` on the child) to see the search rather than the set-up.
    let repeat: usize = std::env::var("STOCKFIT_BENCH_REPEAT")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0);
    if repeat > 0 {
        let mut times: Vec<f64> = (0..repeat)
            .map(|_| {
                let start = Instant::now();
                std::hint::black_box(p.search());
                start.elapsed().as_secs_f64()
            })
            .collect();
        times.sort_by(f64::total_cmp);
        println!(
            "{TAG} note {repeat} repeats: median {}, fastest {}",
            seconds(times[repeat / 2]),
            seconds(times[0])
        );
    }
    let start = Instant::now();
    let fast = p.search();
    let search_s = start.elapsed().as_secs_f64();
    let mut brute_s = None;
    if case == Case::Reduced {
        let start = Instant::now();
        let slow = brute_force(&p.request()).expect("the reduced instance is valid");
        brute_s = Some(start.elapsed().as_secs_f64());
        let (f, s) = (scores(&fast), scores(&slow));
        assert_eq!(f.len(), s.len(), "search {f:?} vs brute force {s:?}");
        for (a, b) in f.iter().zip(&s) {
            assert!(
                (a - b).abs() <= 1e-9 * b.abs().max(1.0),
                "search {f:?} vs brute force {s:?}"
            );
        }
        println!(
            "{TAG} note brute force evaluated {} builds; both found the same {} scores",
            slow.stats.evaluated,
            s.len()
        );
    }
    assert!(!fast.builds.is_empty(), "{}: no build found", case.name());
    let cands = fast.stats.candidates.clone();
    println!(
        "{TAG} result search_s={search_s} brute_s={} peak_kb={} builds={} best={} candidates={cands:?}",
        brute_s.map_or("-".into(), |b| b.to_string()),
        vm_hwm_kb(None).unwrap_or(0),
        fast.builds.len(),
        fast.builds[0].evaluation.score,
    );
    let labels: Vec<String> = fast.builds[0]
        .build
        .parts
        .iter()
        .map(|p| p.label())
        .collect();
    println!("{TAG} note best build: {}", labels.join(", "));
}

/// What the single run of one case gave.
#[derive(Debug, Default, Clone)]
struct Single {
    /// `None`: stopped at the budget, or failed.
    search_s: Option<f64>,
    brute_s: Option<f64>,
    peak_kb: Option<u64>,
    failed: Option<String>,
    /// The child exited with an error (a failed check), not just stopped at the budget.
    crashed: bool,
    notes: Vec<String>,
}

/// Run one case once in a child process, stopping it at `budget`.
fn single_run(case: Case, budget: Duration) -> Single {
    let exe = std::env::current_exe().expect("the bench knows its own path");
    let mut cmd = Command::new(exe);
    cmd.env("STOCKFIT_BENCH_CHILD", case.name())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    let mut proc = match cmd.spawn() {
        Ok(p) => p,
        Err(e) => {
            return Single {
                failed: Some(format!("cannot start the child: {e}")),
                ..Single::default()
            }
        }
    };
    let start = Instant::now();
    let mut peak = None;
    let status = loop {
        if let Some(kb) = vm_hwm_kb(Some(proc.id())) {
            peak = Some(kb);
        }
        match proc.try_wait() {
            Ok(Some(status)) => break Some(status),
            Ok(None) if start.elapsed() < budget => std::thread::sleep(Duration::from_millis(20)),
            _ => {
                let _ = proc.kill();
                let _ = proc.wait();
                break None;
            }
        }
    };
    let mut out = String::new();
    let mut err = String::new();
    if let Some(mut s) = proc.stdout.take() {
        let _ = s.read_to_string(&mut out);
    }
    if let Some(mut s) = proc.stderr.take() {
        let _ = s.read_to_string(&mut err);
    }
    let mut single = Single {
        peak_kb: peak,
        ..Single::default()
    };
    for line in out.lines() {
        if let Some(note) = line.strip_prefix(&format!("{TAG} note ")) {
            single.notes.push(note.to_string());
        }
        if let Some(rest) = line.strip_prefix(&format!("{TAG} result ")) {
            for field in rest.split(' ') {
                match field.split_once('=') {
                    Some(("search_s", v)) => single.search_s = v.parse().ok(),
                    Some(("brute_s", v)) => single.brute_s = v.parse().ok(),
                    Some(("peak_kb", v)) => single.peak_kb = v.parse().ok().or(single.peak_kb),
                    _ => {}
                }
            }
        }
    }
    match status {
        None => {
            single.failed = Some(format!(
                "stopped after the {:.0} s budget (STOCKFIT_BENCH_BUDGET)",
                budget.as_secs_f64()
            ))
        }
        Some(s) if !s.success() => {
            single.search_s = None;
            single.crashed = true;
            single.failed = Some(format!("the child failed ({s}): {}", err.trim()));
        }
        Some(_) => {}
    }
    single
}

/// Median of the per-iteration times of the last `n` criterion samples.
fn median_of_last(samples: &[(u64, Duration)], n: usize) -> Option<f64> {
    let mut per: Vec<f64> = samples[samples.len().saturating_sub(n)..]
        .iter()
        .map(|(iters, d)| d.as_secs_f64() / (*iters).max(1) as f64)
        .collect();
    if per.is_empty() {
        return None;
    }
    per.sort_by(f64::total_cmp);
    let m = per.len() / 2;
    Some(if per.len() % 2 == 1 {
        per[m]
    } else {
        (per[m - 1] + per[m]) / 2.0
    })
}

fn seconds(s: f64) -> String {
    if s < 1e-3 {
        format!("{:.1} µs", s * 1e6)
    } else if s < 1.0 {
        format!("{:.1} ms", s * 1e3)
    } else {
        format!("{s:.2} s")
    }
}

fn mb(kb: u64) -> String {
    format!("{:.1} MB", kb as f64 / 1024.0)
}

fn verdict(ok: bool) -> &'static str {
    if ok {
        "met"
    } else {
        "NOT met"
    }
}

fn main() {
    if let Ok(name) = std::env::var("STOCKFIT_BENCH_CHILD") {
        let case = Case::parse(&name).unwrap_or_else(|| panic!("unknown case {name}"));
        child(case);
        return;
    }
    let args: Vec<String> = std::env::args().skip(1).collect();
    // `cargo bench` passes --bench; `cargo test --benches` does not (criterion's test mode:
    // each routine once).
    let bench_mode = args.iter().any(|a| a == "--bench");
    let filters: Vec<&str> = args
        .iter()
        .filter(|a| !a.starts_with('-'))
        .map(String::as_str)
        .collect();
    let budget = Duration::from_secs_f64(
        std::env::var("STOCKFIT_BENCH_BUDGET")
            .ok()
            .and_then(|v| v.parse().ok())
            .unwrap_or(if bench_mode { 60.0 } else { 15.0 }),
    );
    let cases: Vec<Case> = Case::ALL
        .into_iter()
        .filter(|c| filters.is_empty() || filters.iter().any(|f| c.name().contains(f)))
        .collect();

    let mut singles = Vec::new();
    for &case in &cases {
        println!("single run of {} ({}) …", case.name(), case.describe());
        let s = single_run(case, budget);
        for n in &s.notes {
            println!("  {n}");
        }
        match (&s.failed, s.search_s) {
            (Some(f), _) => println!("  {f}"),
            (None, Some(t)) => println!("  search {}", seconds(t)),
            _ => {}
        }
        if let Some(kb) = s.peak_kb {
            println!("  peak memory of the child: {}", mb(kb));
        }
        singles.push(s);
    }

    let mut c = Criterion::default()
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(3))
        .without_plots()
        .configure_from_args();
    let mut medians: Vec<Option<f64>> = vec![None; cases.len()];
    for (i, &case) in cases.iter().enumerate() {
        let s = &singles[i];
        match s.search_s {
            Some(t) if t <= CRITERION_MAX.as_secs_f64() => {}
            _ => {
                println!(
                    "criterion skips {}: its single run {}",
                    case.name(),
                    s.search_s.map_or_else(
                        || "did not finish".to_string(),
                        |t| format!(
                            "took {}, over {}",
                            seconds(t),
                            seconds(CRITERION_MAX.as_secs_f64())
                        )
                    )
                );
                continue;
            }
        }
        let p = prepare(case);
        let mut samples: Vec<(u64, Duration)> = Vec::new();
        {
            let mut group = c.benchmark_group("search");
            // Flat: every sample the same iteration count, ten iterations at least (criterion's
            // advice for long routines).
            group.sampling_mode(SamplingMode::Flat);
            group.bench_function(case.name(), |b| {
                b.iter_custom(|iters| {
                    let start = Instant::now();
                    for _ in 0..iters {
                        criterion::black_box(p.search());
                    }
                    let d = start.elapsed();
                    samples.push((iters, d));
                    d
                })
            });
            group.finish();
        }
        // The measured samples are the last ten calls (criterion warms up first).
        medians[i] = median_of_last(&samples, 10);
        if let Some(kb) = vm_hwm_kb(None) {
            println!("peak memory of the bench process so far: {}", mb(kb));
        }
    }
    c.final_summary();

    // Summary with the issue's targets.
    let idx = |case: Case| cases.iter().position(|&c| c == case);
    // The criterion median where criterion ran, else the single run.
    let time_of = |i: usize| -> Option<(f64, &'static str)> {
        match (medians[i], singles[i].search_s) {
            (Some(m), _) if bench_mode => Some((m, "criterion median")),
            (Some(m), _) => Some((m, "one run, criterion test mode")),
            (None, Some(t)) => Some((t, "single run")),
            _ => None,
        }
    };
    let why = |i: usize| singles[i].failed.clone().unwrap_or_default();
    println!("\n## summary (targets from issue 3)");
    if let Some(i) = idx(Case::E96TwoPart) {
        let d = Case::E96TwoPart.describe();
        match time_of(i) {
            Some((t, how)) => println!(
                "- {d}: {} ({how}); target < 0.2 s: {}",
                seconds(t),
                verdict(t < 0.2)
            ),
            None => println!("- {d}: did not finish, {}; target < 0.2 s: NOT met", why(i)),
        }
    }
    if let (Some(i), Some(j)) = (idx(Case::E24Single), idx(Case::E96TwoPart)) {
        if let Some((small, how)) = time_of(i) {
            println!(
                "- {}: {} ({how})",
                Case::E24Single.describe(),
                seconds(small)
            );
            match time_of(j) {
                Some((big, _)) => println!(
                    "- ratio two-part E96 / E24 single: {:.1}×; target < 20×: {}",
                    big / small,
                    verdict(big / small < 20.0)
                ),
                None => println!(
                    "- ratio two-part E96 / E24 single: over {:.0}× (two-part E96 stopped at {:.0} s); target < 20×: NOT met",
                    budget.as_secs_f64() / small,
                    budget.as_secs_f64()
                ),
            }
        }
    }
    if let Some(i) = idx(Case::Reduced) {
        let d = Case::Reduced.describe();
        match (time_of(i), singles[i].brute_s) {
            (Some((t, how)), Some(b)) => println!(
                "- {d}: search {} ({how}), brute force {} (single run), same top-10 scores; search {:.0}× faster",
                seconds(t),
                seconds(b),
                b / t
            ),
            _ => println!("- {d}: the brute-force comparison did not complete: {}", why(i)),
        }
    }
    if let Some(i) = idx(Case::Inventory) {
        let d = Case::Inventory.describe();
        match time_of(i) {
            Some((t, how)) => println!(
                "- {d}: {} ({how}); target < 2 s: {}",
                seconds(t),
                verdict(t < 2.0)
            ),
            None => println!("- {d}: did not finish, {}; target < 2 s: NOT met", why(i)),
        }
    }
    if let Some(i) = idx(Case::Difference) {
        let d = Case::Difference.describe();
        match time_of(i) {
            Some((t, how)) => println!(
                "- {d}: {} ({how}); target < 1 s (issue 15): {}",
                seconds(t),
                verdict(t < 1.0)
            ),
            None => println!("- {d}: did not finish, {}; target < 1 s: NOT met", why(i)),
        }
    }
    for (case, s) in cases.iter().zip(&singles) {
        if let Some(kb) = s.peak_kb {
            let verdict = match (s.failed.is_some(), kb < 200 * 1024) {
                (false, ok) => verdict(ok).to_string(),
                (true, false) => "NOT met".to_string(),
                // Under the target when stopped, but the whole run's peak is unknown.
                (true, true) => "unknown (the run was stopped)".to_string(),
            };
            let stopped = if s.failed.is_some() {
                " when stopped"
            } else {
                ""
            };
            println!(
                "- peak memory, {}: {}{stopped}; target < 200 MB: {verdict}",
                case.name(),
                mb(kb)
            );
        }
    }
    if let Some(kb) = vm_hwm_kb(None) {
        println!(
            "- peak memory of the bench process (criterion runs): {}",
            mb(kb)
        );
    }
    if let Some(case) = cases.iter().zip(&singles).find(|(_, s)| s.crashed) {
        eprintln!("{} failed a check; see above", case.0.name());
        std::process::exit(1);
    }
}
