//! Proof of exactness: on random specs and random small stocks, the branch-and-bound search
//! returns the same top scores as a brute-force enumeration judged by the exact analysis —
//! with and without locks, quantities and two-part realisations.
//!
//! Fixed seed (ChaCha, deterministic) so CI runs the same cases every time; raise CASES via
//! the environment variable STOCKFIT_EXACT_CASES for a longer campaign.

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use std::sync::Arc;
use stockfit::build::Part;
use stockfit::search::{brute::brute_force, search, Request};
use stockfit::spec::Spec;
use stockfit::stage::{self, Stage};
use stockfit::stock::inventory::{Inventory, PartKind};
use stockfit::stock::{Source, Stock};

#[derive(Debug, Clone)]
struct Case {
    spec_toml: String,
    csv: String,
    /// Lock (slot index, value) applied to the search.
    lock: Option<(usize, f64)>,
    top: usize,
}

const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];

fn case_strategy(combine: &'static str, n_res: usize, n_cap: usize) -> impl Strategy<Value = Case> {
    (
        any::<bool>(),                                   // inverting?
        5.0f64..15.0,                                    // supply
        1.2f64..12.0,                                    // |gain|
        prop::option::of(0.05f64..0.6),                  // gain tolerance
        prop::option::of(1.5f64..3.5),                   // log10 input_resistance_min
        (3.0f64..5.0, 1.0f64..40.0, 3.0f64..4.5),        // log10 load, band low, log10 band high
        (prop::option::of(0.2f64..3.0), prop::option::of(1.0f64..30.0)), // band loss, corner max
        (0.0f64..1.5, 0.0f64..1.5, prop::option::of(0.001f64..0.1)),      // headroom, input peak
        (0.0f64..200e-9, 0.0f64..20e-9, 0.0f64..5e-3, prop::option::of(0.5e6f64..10e6)),
        (
            prop::collection::vec((0usize..12, 3i32..5, 1u32..4, 0usize..3), n_res),
            prop::collection::vec((0usize..12, -7i32..-3, 1u32..4, any::<bool>()), n_cap),
        ),
        (prop::option::of((0usize..7, 0usize..12, 2i32..6)), 1usize..5),
    )
        .prop_map(
            move |(inv, supply, g, gtol, rin, (load, f_lo, f_hi), (loss, corner), (h1, h2, peak), (ib, ios, vos, gbw), (res, caps), (lock, top))| {
                let kind = if inv { "inverting" } else { "non-inverting" };
                let gain = if inv { -g } else { g };
                let mut t = format!(
                    "[stage]\nkind = \"{kind}\"\nsupply = {supply}\ngain = {gain}\nload = {}\nband = [{f_lo}, {}]\nheadroom = [{h1}, {h2}]\n",
                    10f64.powf(load),
                    10f64.powf(f_hi)
                );
                if let Some(tol) = gtol {
                    t += &format!("gain_tolerance = \"{}%\"\n", tol * 100.0);
                }
                if let Some(r) = rin {
                    t += &format!("input_resistance_min = {}\n", 10f64.powf(r));
                }
                if let Some(l) = loss {
                    t += &format!("band_loss_max = \"{l} dB\"\n");
                }
                if let Some(c) = corner {
                    t += &format!("corner_low_max = {}\n", c.min(f_lo * 2.0));
                }
                if let Some(p) = peak {
                    t += &format!("input_peak = {p}\n");
                }
                t += &format!(
                    "[amplifier]\ninput_bias_current = {ib}\ninput_offset_current = {ios}\ninput_offset_voltage = {vos}\n"
                );
                if let Some(gbw) = gbw {
                    t += &format!("gbw = {gbw}\n");
                }
                t += &format!(
                    "[stock]\nresistor_range = [1, 1e8]\ncapacitor_range = [1e-12, 0.01]\ncombine = \"{combine}\"\n"
                );
                t += "[goals]\ncost = 0.5\n";
                let tols = ["1%", "5%", "0.1%"];
                let mut csv = String::from("kind,value,tolerance,qty,voltage,polarized,unit_cost\n");
                for (m, e, q, tt) in &res {
                    csv += &format!("resistor,{},{},{q},,,{}\n", E12[*m] * 10f64.powi(*e), tols[*tt], 0.01 * (*m as f64 + 1.0));
                }
                for (m, e, q, pol) in &caps {
                    let v = if *pol { "16" } else { "" };
                    csv += &format!("capacitor,{},20%,{q},{v},{pol},{}\n", E12[*m] * 10f64.powi(*e), 0.05 * (*e as f64 + 9.0));
                }
                let lock = lock.map(|(slot, m, e)| (slot, E12[m] * 10f64.powi(e)));
                Case { spec_toml: t, csv, lock, top }
            },
        )
}

fn run_case(case: &Case, found: &std::cell::Cell<u32>) -> Result<(), TestCaseError> {
    let spec = Spec::from_toml(&case.spec_toml)
        .map_err(|e| TestCaseError::fail(format!("{e}\n{}", case.spec_toml)))?;
    let stage: &dyn Stage = stage::stage_for(spec.stage);
    let inv =
        Arc::new(Inventory::parse_str(&case.csv).map_err(|e| TestCaseError::fail(e.to_string()))?);
    let stock = Stock::new(
        Source::Inventory(inv.clone()),
        Source::Inventory(inv),
        &spec.stock,
    );
    let locks: Vec<(usize, Part)> = case
        .lock
        .iter()
        .filter(|(slot, _)| *slot < stage.slots().len())
        .map(|&(slot, v)| {
            let kind = stage.slots()[slot].kind;
            let v = if kind == PartKind::Capacitor {
                v * 1e-10
            } else {
                v
            };
            (slot, Part::locked(kind, v, 0.02))
        })
        .collect();
    let req = Request {
        spec: &spec,
        stage,
        stock: &stock,
        locks: &locks,
        top: case.top,
        max_nodes: None,
    };
    let fast = search(&req, &mut |_| {});
    let slow = brute_force(&req);
    let (fast, slow) = match (fast, slow) {
        (Ok(f), Ok(s)) => (f, s),
        (Err(a), Err(b)) => {
            prop_assert_eq!(a, b);
            return Ok(());
        }
        (a, b) => {
            return Err(TestCaseError::fail(format!(
                "one side failed: {:?} / {:?}",
                a.err(),
                b.err()
            )))
        }
    };
    if !slow.builds.is_empty() {
        found.set(found.get() + 1);
    }
    let fs: Vec<f64> = fast.builds.iter().map(|r| r.evaluation.score).collect();
    let ss: Vec<f64> = slow.builds.iter().map(|r| r.evaluation.score).collect();
    prop_assert_eq!(
        fs.len(),
        ss.len(),
        "fast {:?} brute {:?}\n{}\n{}",
        fs,
        ss,
        case.spec_toml,
        case.csv
    );
    for (a, b) in fs.iter().zip(&ss) {
        prop_assert!(
            (a - b).abs() <= 1e-9 * b.abs().max(1.0),
            "fast {:?} brute {:?}\n{}\n{}",
            fs,
            ss,
            case.spec_toml,
            case.csv
        );
    }
    for r in &fast.builds {
        // Every reported build passes the exact analysis and fits the quantities.
        prop_assert!(r.evaluation.pass);
        let parts: Vec<&Part> = r.build.parts.iter().collect();
        prop_assert!(stock.fits(&parts));
        for (slot, part) in &locks {
            prop_assert_eq!(&r.build.parts[*slot], part);
        }
    }
    Ok(())
}

fn cases(default: u32) -> u32 {
    std::env::var("STOCKFIT_EXACT_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

/// Runs the cases; at least `min_feasible` of every 10 must have a build, so the comparison is
/// not carried by empty results.
fn check(strategy: impl Strategy<Value = Case>, n: u32, min_feasible: u32) {
    let n = cases(n);
    let found = std::cell::Cell::new(0);
    let config = Config {
        cases: n,
        failure_persistence: None,
        ..Config::default()
    };
    let mut runner =
        TestRunner::new_with_rng(config, TestRng::deterministic_rng(RngAlgorithm::ChaCha));
    runner.run(&strategy, |c| run_case(&c, &found)).unwrap();
    assert!(
        found.get() * 10 >= min_feasible * n,
        "only {} of {n} cases had a build",
        found.get()
    );
}

#[test]
fn single_parts_match_brute_force() {
    check(case_strategy("single", 3, 2), 40, 3);
}

#[test]
fn series_pairs_match_brute_force() {
    check(case_strategy("series", 2, 2), 8, 2);
}

#[test]
fn both_pairs_match_brute_force() {
    check(case_strategy("both", 2, 1), 6, 2);
}
