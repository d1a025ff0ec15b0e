//! The MILP engine against the walk search, and the stages' log models against the exact
//! analysis, on random specs and random small inventories (invented data; fixed seed).
//!
//! - Both engines are exact, so on the same inventory they must return the same top scores
//!   (with and without locks, quantities and two-piece realisations).
//! - Every build the exact analysis passes must meet every row of its stage's log model, and
//!   the model's objective terms must not exceed the stage terms of its score (gain and
//!   offset points): the MILP engine's stopping rule rests on both.
//!
//! `STOCKFIT_EXACT_CASES=N` runs N cases of each property.

mod common;

use common::{
    both_or_same_error, builds_are_sound, case_strategy, prepare, run_property, same_scores, Case,
};
use proptest::prelude::*;
use stockfit::analysis;
use stockfit::build::SlotValue;
use stockfit::search::{brute::each_build, milp, search, slot_candidates};

fn agree(case: &Case, found: &std::cell::Cell<u32>) -> Result<(), TestCaseError> {
    let p = prepare(case)?;
    let req = p.request(case.top);
    let walk = search(&req, &mut |_| {});
    let lp = milp::search(&req, &mut |_| {});
    let Some((walk, lp)) = both_or_same_error(case, walk, lp)? else {
        return Ok(());
    };
    prop_assert!(!lp.stats.truncated, "MILP solve cap reached");
    if !walk.builds.is_empty() {
        found.set(found.get() + 1);
    }
    same_scores(case, ("walk", "milp"), &walk, &lp)?;
    builds_are_sound(&p, &lp)
}

/// Every build of the case's stock that passes meets the log model.
fn model_holds(case: &Case, found: &std::cell::Cell<u32>) -> Result<(), TestCaseError> {
    let p = prepare(case)?;
    let Ok(cands) = slot_candidates(&p.request(1)) else {
        return Ok(());
    };
    let model = p
        .stage
        .plan()
        .expect("a hand-tuned plan")
        .log_model(&p.spec);
    let mut passed = 0;
    each_build(&cands, |build| {
        let e = analysis::evaluate(&p.spec, p.stage, &build, Some(&p.stock));
        if !e.pass {
            return Ok(());
        }
        passed += 1;
        let values: Vec<SlotValue> = build.parts.iter().map(|p| p.slot_value()).collect();
        for row in &model.rows {
            let sum = row.sum.eval(&values);
            let ok = if row.at_least {
                sum >= row.limit
            } else {
                sum <= row.limit
            };
            prop_assert!(
                ok,
                "row {} fails ({sum} vs {}) on a passing build {:?}\n{}",
                row.name,
                row.limit,
                build.parts.iter().map(|p| p.label()).collect::<Vec<_>>(),
                case.spec_toml
            );
        }
        let v = build.values();
        let stage_points =
            stockfit::objective::circuit_points(&p.spec, &p.stage.figures(&p.spec, &v));
        let model_points: f64 =
            model.terms.iter().map(|t| t.eval(&values)).sum::<f64>() + model.points.eval(&values);
        prop_assert!(
            model_points <= stage_points + 1e-12,
            "model terms {model_points} above the stage terms {stage_points} for {:?}\n{}",
            build.parts.iter().map(|p| p.label()).collect::<Vec<_>>(),
            case.spec_toml
        );
        Ok(())
    })?;
    if passed > 0 {
        found.set(found.get() + 1);
    }
    Ok(())
}

fn check(
    strategy: impl Strategy<Value = Case>,
    n: u32,
    min_feasible: u32,
    property: fn(&Case, &std::cell::Cell<u32>) -> Result<(), TestCaseError>,
) {
    run_property(strategy, n, min_feasible, property);
}

// Inventories small enough that the MILP engine ends in a few hundred solves even where
// the stage's log model is weak (a non-inverting stage with a source resistance, whose gain
// the model barely sees, has it judge nearly every assignment).
#[test]
fn milp_agrees_with_the_walk_search() {
    check(case_strategy("single", 3, 2), 24, 2, agree);
}

#[test]
fn milp_agrees_on_two_piece_realisations() {
    check(case_strategy("series", 2, 1), 8, 1, agree);
}

#[test]
fn log_models_hold_on_every_passing_build() {
    check(case_strategy("single", 3, 2), 30, 2, model_holds);
}
