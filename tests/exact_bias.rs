//! Exactness with the decoupled bias network and the new requirements (issue 12, parts 3, 5
//! and 6): on random specs with `bias = "decoupled"` (the inverting stage's hand-tuned plan
//! extended by c_bias, the non-inverting decoupled stage's own plan over its nine slots), supply
//! ripple with `ripple_out_max` and a PSRR, `output_current_max` and `input_common_mode`,
//! the search returns the same top scores as brute force judged by the exact analysis.
//!
//! Fixed seed (ChaCha) as in `tests/exact.rs`; STOCKFIT_EXACT_CASES raises the count.

mod common;

use common::{both_or_same_error, builds_are_sound, case_strategy, prepare, run_property, Case};
use proptest::prelude::*;
use stockfit::search::{brute::brute_force, search};

/// The cases of `tests/exact.rs`, decoupled, with the ripple and amplifier limits drawn.
fn decoupled_strategy(n_res: usize, n_cap: usize) -> impl Strategy<Value = Case> {
    (
        case_strategy("single", n_res, n_cap),
        prop::option::of(-5.0f64..-2.0), // log10 ripple_out_max (20 mV of supply ripple)
        prop::option::of(40.0f64..100.0), // psrr
        prop::option::weighted(0.3, -4.0f64..-1.5), // log10 output_current_max
        prop::option::weighted(0.3, (0.0f64..2.0, 0.0f64..2.0)), // input_common_mode
        any::<bool>(),                   // decoupled, or today's divider with the ripple
    )
        .prop_map(|(mut case, ripple_max, psrr, i_max, cm, decoupled)| {
            let mut stage = String::new();
            if decoupled {
                stage += "bias = \"decoupled\"\n";
            }
            stage += "supply_ripple = \"20 mV\"\n";
            if let Some(r) = ripple_max {
                stage += &format!("ripple_out_max = {}\n", 10f64.powf(r));
            }
            let mut amp = String::from("[amplifier]\n");
            if let Some(p) = psrr {
                amp += &format!("psrr = {p}\n");
            }
            if let Some(i) = i_max {
                amp += &format!("output_current_max = {}\n", 10f64.powf(i));
            }
            if let Some((lo, hi)) = cm {
                amp += &format!("input_common_mode = [{lo}, {hi}]\n");
            }
            case.spec_toml = case.spec_toml.replacen("[amplifier]\n", &(stage + &amp), 1);
            case
        })
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
    common::same_scores(case, ("fast", "brute"), &fast, &slow)?;
    builds_are_sound(&p, &fast)
}

#[test]
fn decoupled_bias_and_ripple_match_brute_force() {
    run_property(decoupled_strategy(3, 3), 24, 1, run_case);
}
