//! The contract of `SearchPlan::walk` (see `circuit::WalkPlan`), checked directly for every stage on
//! random specs and random parts (invented values; fixed seed):
//!
//! - along each side of the target the bound only grows, and once it says "fails" it keeps
//!   saying so;
//! - it never exceeds the group's share (`group_partial`) of a candidate at that value, for
//!   any tolerance — for the first slot of a pair, whatever the second slot is — and it says
//!   "fails" only where `group_partial` does.
//!
//! `tests/exact.rs` shows the search exact end to end; this test names the stage and the slot
//! when a new stage's plan breaks the contract.

mod common;

use common::{case_strategy, cases, prepare};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use stockfit::build::SlotValue;
use stockfit::circuit::Circuit;
use stockfit::vocab::PartKind;

/// A random part for a slot of `kind`: value log-uniform over the kind's usual span, one of
/// the usual tolerances, a rating now and then.
fn part(kind: PartKind, u: f64, t: usize, rated: bool) -> SlotValue {
    let (lo, hi): (f64, f64) = match kind {
        PartKind::Resistor => (10.0, 1e7),
        PartKind::Capacitor => (1e-10, 1e-3),
    };
    let value = lo * (hi / lo).powf(u);
    let tol = [0.001, 0.01, 0.05, 0.2][t];
    SlotValue {
        value,
        min: value * (1.0 - tol),
        max: value * (1.0 + tol),
        rating: (rated && kind == PartKind::Capacitor).then_some(25.0),
    }
}

/// Random draws for the parts of one check: (log position, tolerance index, rated).
type Draw = (f64, usize, bool);

fn draws(n: usize) -> impl Strategy<Value = Vec<Draw>> {
    prop::collection::vec((0.0f64..1.0, 0usize..4, any::<bool>()), n)
}

/// Comparisons of a bound with a share that passed, to show the test is not vacuous.
static COMPARED: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

fn check_plans(
    spec: &stockfit::Spec,
    stage: &dyn Circuit,
    context: &[Draw],
    probes: &[Draw],
) -> Result<(), TestCaseError> {
    let slots = stage.slots();
    let sp = stage.plan().expect("a hand-tuned plan");
    let groups = sp.groups(spec);
    // Every slot gets a random part; the walk of group g sees the groups before it.
    let all: Vec<SlotValue> = slots
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let d = context[i % context.len()];
            part(s.kind, d.0, d.1, d.2)
        })
        .collect();
    let mut parts: Vec<Option<SlotValue>> = vec![None; slots.len()];
    for (g, group) in groups.iter().enumerate() {
        for (k, &slot) in group.iter().enumerate() {
            let plan = sp.walk(spec, g, k, &parts);
            let kind = slots[slot].kind;
            // Probe values on both sides of the target, sorted outward.
            // Half spread over the kind's span, half within ±10 % of the target, where the
            // bound does its work.
            let near = |t: f64, d: &Draw| {
                let mut p = part(kind, d.0, d.1, d.2);
                if t.is_finite() && t > 0.0 {
                    let r = p.max / p.value;
                    p.value = t * 10f64.powf((d.0 - 0.5) * 0.08);
                    p.min = p.value * (2.0 - r);
                    p.max = p.value * r;
                }
                p
            };
            let mut values: Vec<SlotValue> = probes
                .iter()
                .enumerate()
                .map(|(i, d)| {
                    if i % 2 == 0 {
                        near(plan.target, d)
                    } else {
                        part(kind, d.0, d.1, d.2)
                    }
                })
                .collect();
            let coord = |v: &SlotValue| plan.coord.of(v);
            // Candidates come from the stock, inside the spec's range for their kind (pairs
            // included), which the plans may count on.
            let in_range = |kind: PartKind, p: &SlotValue| {
                let (lo, hi) = match kind {
                    PartKind::Resistor => spec.stock.resistor_range,
                    PartKind::Capacitor => spec.stock.capacitor_range,
                };
                p.value >= lo && p.value <= hi
            };
            values.retain(|p| in_range(kind, p));
            values.sort_by(|a, b| coord(a).total_cmp(&coord(b)));
            for up in [true, false] {
                let side: Vec<&SlotValue> = if up {
                    values.iter().filter(|v| coord(v) >= plan.target).collect()
                } else {
                    values
                        .iter()
                        .rev()
                        .filter(|v| coord(v) < plan.target)
                        .collect()
                };
                let mut last: Option<Option<f64>> = None;
                for v in side {
                    let b = (plan.bound)(coord(v), up);
                    if let Some(prev) = last {
                        match (prev, b) {
                            (None, Some(_)) => {
                                return Err(TestCaseError::fail(format!(
                                    "{} slot {} (group {g}): the bound says 'fails' and then passes again going {}",
                                    stage.kind().name(),
                                    slots[slot].name,
                                    if up { "up" } else { "down" }
                                )))
                            }
                            (Some(a), Some(c)) => prop_assert!(
                                c >= a - 1e-12 * a.abs().max(1.0),
                                "{} slot {}: bound falls from {a} to {c} going {}",
                                stage.kind().name(),
                                slots[slot].name,
                                if up { "up" } else { "down" }
                            ),
                            _ => {}
                        }
                    }
                    last = Some(b);
                    // Against the group's share.
                    let mut with = parts.clone();
                    with[slot] = Some(*v);
                    let completions: Vec<Option<SlotValue>> = if k + 1 == group.len() {
                        vec![None]
                    } else {
                        let other = group[k + 1];
                        let inner = sp.walk(spec, g, k + 1, &with);
                        probes
                            .iter()
                            .enumerate()
                            .map(|(i, d)| {
                                let mut p = part(slots[other].kind, d.0, d.1, d.2);
                                if i % 2 == 0 && inner.target.is_finite() && inner.target > 0.0 {
                                    let r = p.max / p.value;
                                    p.value = inner.target * 10f64.powf((d.0 - 0.5) * 0.02);
                                    p.min = p.value * (2.0 - r);
                                    p.max = p.value * r;
                                }
                                Some(p)
                            })
                            .filter(|p| p.is_some_and(|p| in_range(slots[other].kind, &p)))
                            .collect()
                    };
                    for c in completions {
                        let mut full = with.clone();
                        if let Some(c) = c {
                            full[group[k + 1]] = Some(c);
                        }
                        let share = sp.group_partial(spec, g, &full);
                        let outside = coord(v) < plan.window.0 || coord(v) > plan.window.1;
                        if outside && share.is_some() {
                            return Err(TestCaseError::fail(format!(
                                "{} slot {} (group {g}): {} is outside the plan's window {:?} but the group passes",
                                stage.kind().name(),
                                slots[slot].name,
                                coord(v),
                                plan.window
                            )));
                        }
                        match (b, share) {
                            (None, Some(s)) => {
                                return Err(TestCaseError::fail(format!(
                                    "{} slot {} (group {g}): the bound says 'fails' at {} but the group passes with share {s}; target {}; parts {:?}",
                                    stage.kind().name(),
                                    slots[slot].name,
                                    coord(v),
                                    plan.target,
                                    full
                                )))
                            }
                            (Some(bound), Some(s)) => { COMPARED.fetch_add(1, std::sync::atomic::Ordering::Relaxed); prop_assert!(
                                bound <= s + 1e-9 * s.abs().max(1.0),
                                "{} slot {} (group {g}): bound {bound} above the share {s} at {}",
                                stage.kind().name(),
                                slots[slot].name,
                                coord(v)
                            ) },
                            _ => {}
                        }
                    }
                }
            }
            parts[slot] = Some(all[slot]);
        }
    }
    Ok(())
}

#[test]
fn walk_plans_keep_their_contract() {
    let strategy = (case_strategy("single", 1, 1), draws(7), draws(24));
    let config = Config {
        cases: cases(300),
        failure_persistence: None,
        ..Config::default()
    };
    let mut runner =
        TestRunner::new_with_rng(config, TestRng::deterministic_rng(RngAlgorithm::ChaCha));
    runner
        .run(&strategy, |(case, context, probes)| {
            let p = prepare(&case)?;
            check_plans(&p.spec, p.stage, &context, &probes)
        })
        .unwrap();
    // Not vacuous: most probes meet a group that passes.
    let compared = COMPARED.load(std::sync::atomic::Ordering::Relaxed);
    assert!(
        compared as u32 >= 100 * cases(300),
        "only {compared} bound/share comparisons"
    );
}
