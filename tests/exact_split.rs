//! Proof of exactness for the split-supply circuits (the DC-coupled inverting and
//! non-inverting stages, with and without r_comp, and the difference amplifier): on random
//! specs and random small resistor stocks, the search (generic plan) returns the same top
//! scores as a brute-force enumeration judged by the exact analysis — with locks, quantities
//! (a line of one piece cannot fill two slots; a line of several can pair two of them) and
//! two-part realisations. Fixed seed (ChaCha), as `exact.rs`.

mod common;

use common::{both_or_same_error, builds_are_sound, prepare, run_property, same_scores, Case, E12};
use proptest::prelude::*;
use stockfit::search::{brute::brute_force, search};

const KINDS: [&str; 5] = [
    "inverting-dc",
    "inverting-dc-compensated",
    "non-inverting-dc",
    "non-inverting-dc-compensated",
    "difference",
];

/// Random cases of every split-supply kind, or (`difference`) of the difference amplifier
/// with a `cmrr_min` always set (the generic plan narrows its gain bound by it).
fn split_strategy(
    combine: &'static str,
    n_res: usize,
    difference: bool,
) -> impl Strategy<Value = Case> {
    let kinds = if difference { 4..5 } else { 0..KINDS.len() };
    let cmrr_weight = if difference { 0.95 } else { 0.5 };
    (
        kinds,
        (5.0f64..15.0, 0.0f64..1.5, 0.0f64..1.5), // rail, headroom low and high
        (0.3f64..12.0, prop::option::of(0.05f64..0.5)), // |gain|, tolerance
        prop::option::of(2.5f64..4.0),            // log10 input_resistance_min
        (
            prop::option::of(0.001f64..0.5),        // input peak
            prop::option::weighted(0.5, -3.0f64..0.0), // log10 output_offset_max
            prop::option::weighted(cmrr_weight, 10.0f64..50.0), // cmrr_min (difference)
            -2.0f64..2.0,                           // source DC (common mode)
            prop::option::weighted(0.3, 1.0f64..3.5), // log10 source resistance
        ),
        (0.0f64..200e-9, 0.0f64..20e-9, 0.0f64..5e-3, prop::option::of(0.5e6f64..10e6)),
        prop::collection::vec((0usize..12, 2i32..6, 1u32..4, 0usize..3), n_res),
        (prop::option::of((0usize..4, 0usize..12, 3i32..5)), 1usize..5),
    )
        .prop_map(
            move |(k, (rail, h1, h2), (g, gtol), rin, (peak, offset, cmrr, vdc, rs), (ib, ios, vos, gbw), res, (lock, top))| {
                let kind = KINDS[k];
                let gain = match kind {
                    "inverting-dc" | "inverting-dc-compensated" => -g,
                    "difference" => g,
                    _ => 1.0 + g,
                };
                let mut t = format!(
                    "[stage]\nkind = \"{kind}\"\nsupply = [{}, {rail}]\ngain = {gain}\nload = 4700\nband = [1, 2000]\nheadroom = [{h1}, {h2}]\nsource_dc = {vdc}\n",
                    -rail * 0.9
                );
                t += &format!("gain_tolerance = \"{}%\"\n", gtol.unwrap_or(0.9) * 100.0);
                if let Some(r) = rin {
                    t += &format!("input_resistance_min = {}\n", 10f64.powf(r));
                }
                if let Some(p) = peak {
                    t += &format!("input_peak = {p}\n");
                }
                if let Some(o) = offset {
                    t += &format!("output_offset_max = {}\n", 10f64.powf(o));
                }
                if let (Some(c), "difference") = (cmrr, kind) {
                    t += &format!("cmrr_min = \"{c} dB\"\n");
                }
                if let Some(r) = rs {
                    t += &format!("source_resistance = {}\n", 10f64.powf(r));
                }
                t += &format!(
                    "[amplifier]\ninput_bias_current = {ib}\ninput_offset_current = {ios}\ninput_offset_voltage = {vos}\n"
                );
                if let Some(gbw) = gbw {
                    t += &format!("gbw = {gbw}\n");
                }
                t += &format!(
                    "[stock]\nresistor_range = [1, 1e8]\ncombine = \"{combine}\"\n[goals]\ncost = 0.5\n"
                );
                let tols = ["1%", "5%", "0.1%"];
                let mut csv = String::from("kind,value,tolerance,qty,voltage,polarized,unit_cost\n");
                for (m, e, q, tt) in &res {
                    csv += &format!(
                        "resistor,{},{},{q},,,{}\n",
                        E12[*m] * 10f64.powi(*e),
                        tols[*tt],
                        0.01 * (*m as f64 + 1.0)
                    );
                }
                let lock = lock.map(|(slot, m, e)| (slot, E12[m] * 10f64.powi(e)));
                Case { spec_toml: t, csv, lock, top }
            },
        )
}

fn run_case(case: &Case, found: &std::cell::Cell<u32>) -> Result<(), TestCaseError> {
    let p = prepare(case)?;
    let req = p.request(case.top);
    let fast = search(&req, &mut |_| {});
    let slow = brute_force(&req);
    let Some((fast, slow)) = both_or_same_error(case, fast, slow)? else {
        return Ok(());
    };
    if !slow.builds.is_empty() {
        found.set(found.get() + 1);
    }
    same_scores(case, ("search", "brute"), &fast, &slow)?;
    builds_are_sound(&p, &fast)
}

#[test]
fn split_supply_circuits_match_brute_force() {
    run_property(split_strategy("single", 5, false), 100, 3, run_case);
}

#[test]
fn split_supply_two_piece_stocks_match_brute_force() {
    run_property(split_strategy("both", 3, false), 20, 2, run_case);
}

/// The difference amplifier with `cmrr_min`: its gain bound narrowed by the rejection
/// (`search::generic`, `Figures::matched_gain`) keeps brute force's top scores.
#[test]
fn difference_with_cmrr_matches_brute_force() {
    run_property(split_strategy("single", 6, true), 60, 2, run_case);
}
