//! The MILP engine: the same exact top N as the walk search, found by a mixed-integer linear
//! program over the stock (good_lp with the pure-Rust microlp backend). The only module that
//! uses good_lp.
//!
//! The model: a binary choice variable per candidate realisation of each slot (one chosen per
//! slot; a locked slot has its part alone), a line variable per stock line (at least every
//! choice that uses the line, so the objective counts distinct lines), the inventory's
//! quantities as rows over the choices that take pieces of a line, and the stage's
//! requirements and objective terms that are linear in the logarithms of the values
//! (`SearchPlan::log_model`: gain window, input resistance, coupling corners, divider ratio window
//! as rows; gain error and offset as lower-bounding terms). The objective — slot points,
//! lines, those terms — never exceeds the exact score of a build that passes.
//!
//! That makes an exact loop: solve; the optimum is a lower bound of every build the model
//! still allows; judge the chosen build with the exact analysis and rank it; exclude that
//! assignment (a no-good row) and solve again — until the optimum reaches the N-th best
//! build found, or nothing is left. The solver is a tool, not an oracle (the microlp backend
//! has had integer bugs in past releases): every answer is checked to choose exactly one
//! candidate per slot with integral values, to fit the quantities, and to score no higher in
//! the model than in the exact analysis; a property test (`tests/milp.rs`) compares the top N
//! with the walk search.

use super::request::{
    slot_candidates, Outcome, Progress, Ranked, Request, SearchError, Stats, TopN,
};
use crate::analysis;
use crate::build::{Build, LineKey, Part, SlotValue};
use crate::circuit::LogModel;
use good_lp::{
    microlp, variable, Expression, ProblemVariables, ResolutionError, Solution, SolutionStatus,
    SolverModel, Variable,
};
use std::collections::HashMap;

/// More choice variables than this make a model microlp takes too long on (its branch and
/// bound is simple); the walk search has no such limit.
pub const MAX_CHOICES: usize = 20_000;
/// Solves at most; past it the result is reported as not proven (`Stats::truncated`).
pub const MAX_SOLVES: usize = 5_000;

/// One candidate of one slot, with what the model needs of it.
struct Choice {
    slot: usize,
    part: Part,
    value: SlotValue,
    /// Slot points plus the model's linear points.
    points: f64,
    /// Line indices of its pieces (a line twice for a pair of one line).
    lines: Vec<usize>,
}

/// Run the MILP engine. `progress` is called after every solve.
pub fn search(req: &Request, progress: &mut dyn FnMut(Progress)) -> Result<Outcome, SearchError> {
    // The same ranking as the walk engine: the tie-break weights and the derived limits.
    let ranking = super::request::ranking_spec(req.spec, req.stage);
    let r = Request {
        spec: &ranking,
        stop: req.stop.clone(),
        ..*req
    };
    let mut outcome = search_ranked(&r, progress)?;
    for b in &mut outcome.builds {
        b.evaluation = analysis::evaluate(req.spec, req.stage, &b.build, Some(req.stock));
    }
    super::request::primary_scores(req.spec, req.stage, &mut outcome.builds);
    Ok(outcome)
}

fn search_ranked(
    req: &Request,
    progress: &mut dyn FnMut(Progress),
) -> Result<Outcome, SearchError> {
    let spec = req.spec;
    let stage = req.stage;
    let n = stage.slots().len();
    let cands = slot_candidates(req)?;
    let model = req
        .own_plan()
        .map(|p| p.log_model(spec))
        .unwrap_or_default();
    let lambda = crate::objective::line_weight(spec);

    // Candidates: every realisation the rows on its slot alone allow.
    let mut choices: Vec<Choice> = Vec::new();
    let mut line_index: HashMap<LineKey, usize> = HashMap::new();
    let mut line_qty: Vec<Option<u32>> = Vec::new();
    let mut per_slot: Vec<Vec<usize>> = vec![Vec::new(); n];
    for (slot, list) in cands.iter().enumerate() {
        for part in list.iter() {
            let value = part.slot_value();
            if !single_slot_rows_hold(&model, slot, &value) {
                continue;
            }
            let mut lines = Vec::new();
            for piece in &part.pieces {
                let key = LineKey::of(part.kind, piece);
                let next = line_index.len();
                let l = *line_index.entry(key).or_insert(next);
                if l == line_qty.len() {
                    line_qty.push(req.stock.quantity(key));
                }
                lines.push(l);
            }
            let own = model
                .points
                .terms
                .iter()
                .filter(|(s, _)| *s == slot)
                .map(|(_, f)| f(&value))
                .sum::<f64>();
            per_slot[slot].push(choices.len());
            choices.push(Choice {
                slot,
                points: analysis::slot_points(spec, part) + own,
                value,
                lines,
                part: part.clone(),
            });
        }
    }
    let mut stats = Stats {
        candidates: per_slot.iter().map(Vec::len).collect(),
        nodes_by_group: Vec::new(),
        ..Stats::default()
    };
    if per_slot.iter().any(Vec::is_empty) {
        // The rows on one slot alone leave it nothing: no build passes.
        return Ok(Outcome {
            builds: Vec::new(),
            stats,
        });
    }
    if choices.len() > MAX_CHOICES {
        return Err(SearchError::ModelTooLarge {
            choices: choices.len(),
            limit: MAX_CHOICES,
        });
    }

    let mut top = TopN::distinct_in(req.top, req.distinct);
    let mut excluded: Vec<Vec<usize>> = Vec::new();
    loop {
        if req.stop.now() {
            stats.truncated = true;
            stats.stopped = true;
            break;
        }
        if excluded.len() >= MAX_SOLVES || req.max_nodes.is_some_and(|m| stats.nodes >= m) {
            stats.truncated = true;
            break;
        }
        let Some(chosen) = solve(req, &model, &choices, &per_slot, &line_qty, &excluded)? else {
            break; // nothing left that the model allows
        };
        stats.nodes += 1;
        let values: Vec<SlotValue> = chosen.iter().map(|&c| choices[c].value).collect();
        let lines = {
            let mut ls: Vec<usize> = chosen
                .iter()
                .flat_map(|&c| choices[c].lines.iter().copied())
                .collect();
            ls.sort_unstable();
            ls.dedup();
            ls.len()
        };
        // The model's optimum: the least any build it still allows can score.
        let floor = chosen.iter().map(|&c| choices[c].points).sum::<f64>()
            + lambda * lines as f64
            + model.terms.iter().map(|t| t.eval(&values)).sum::<f64>();
        (progress)(Progress::Milp {
            solved: excluded.len() + 1,
            best: top.bound(),
        });
        if top.full() && floor >= top.bound() {
            break;
        }
        let build = Build {
            parts: chosen.iter().map(|&c| choices[c].part.clone()).collect(),
        };
        let parts: Vec<&Part> = build.parts.iter().collect();
        if !req.stock.fits(&parts) {
            return Err(SearchError::Solver(
                "the solver's choice takes more pieces than the inventory holds".into(),
            ));
        }
        let evaluation = analysis::judge(spec, stage, &build, Some(req.stock));
        stats.evaluated += 1;
        if evaluation.pass && floor > evaluation.score + 1e-9 * evaluation.score.abs().max(1.0) {
            return Err(SearchError::Solver(format!(
                "the model scores a passing build {floor} but the exact analysis {}: a relaxation of the stage's log model is wrong",
                evaluation.score
            )));
        }
        if evaluation.pass {
            top.offer(Ranked { build, evaluation });
        }
        excluded.push(chosen);
    }
    Ok(Outcome {
        builds: top.into_vec(),
        stats,
    })
}

/// Whether a candidate meets every row that reads its slot alone.
fn single_slot_rows_hold(model: &LogModel, slot: usize, value: &SlotValue) -> bool {
    model.rows.iter().all(|row| {
        if row.sum.terms.is_empty() || row.sum.terms.iter().any(|(s, _)| *s != slot) {
            return true;
        }
        let sum: f64 = row.sum.terms.iter().map(|(_, f)| f(value)).sum();
        if row.at_least {
            sum >= row.limit
        } else {
            sum <= row.limit
        }
    })
}

/// Build and solve the model with the assignments in `excluded` cut off; the chosen choice
/// per slot, or `None` when no assignment is left.
fn solve(
    req: &Request,
    model: &LogModel,
    choices: &[Choice],
    per_slot: &[Vec<usize>],
    line_qty: &[Option<u32>],
    excluded: &[Vec<usize>],
) -> Result<Option<Vec<usize>>, SearchError> {
    let lambda = crate::objective::line_weight(req.spec);
    let mut vars = ProblemVariables::new();
    let x: Vec<Variable> = choices
        .iter()
        .map(|_| vars.add(variable().binary()))
        .collect();
    let y: Vec<Variable> = line_qty
        .iter()
        .map(|_| vars.add(variable().min(0.0).max(1.0)))
        .collect();
    let dev: Vec<(Variable, Variable)> = model
        .terms
        .iter()
        .map(|_| (vars.add(variable().min(0.0)), vars.add(variable().min(0.0))))
        .collect();
    let mut objective = Expression::from(0.0);
    for (i, c) in choices.iter().enumerate() {
        objective += c.points * x[i];
    }
    for &l in &y {
        objective += lambda * l;
    }
    for (t, &(above, below)) in model.terms.iter().zip(&dev) {
        objective += t.above * above + t.below * below;
    }
    let mut problem = vars.minimise(objective).using(microlp);
    // One candidate per slot.
    for list in per_slot {
        let mut one = Expression::from(0.0);
        for &i in list {
            one += x[i];
        }
        problem = problem.with(one.eq(1.0));
    }
    // A line counts once any choice uses it; its pieces taken stay within what is on hand
    // (locked parts take none).
    // Per slot and line, the choices of that slot that use the line: at most one of them is
    // chosen, so their sum is the slot's use of the line, and the line variable is at least
    // that (a tighter linear relaxation than one row per choice).
    let mut taken: Vec<Expression> = vec![Expression::from(0.0); line_qty.len()];
    let mut uses: HashMap<(usize, usize), Expression> = HashMap::new();
    for (i, c) in choices.iter().enumerate() {
        let mut seen: Vec<usize> = Vec::new();
        for &l in &c.lines {
            if !c.part.locked {
                taken[l] += x[i];
            }
            if !seen.contains(&l) {
                seen.push(l);
                *uses
                    .entry((c.slot, l))
                    .or_insert_with(|| Expression::from(0.0)) += x[i];
            }
        }
    }
    let mut uses: Vec<((usize, usize), Expression)> = uses.into_iter().collect();
    uses.sort_by_key(|(k, _)| *k);
    for ((_, l), e) in uses {
        problem = problem.with((y[l] - e).geq(0.0));
    }
    for (l, q) in line_qty.iter().enumerate() {
        if let Some(q) = q {
            problem = problem.with(taken[l].clone().leq(*q as f64));
        }
    }
    // The stage's rows and the deviations of its terms.
    let slot_sum = |sum: &crate::circuit::SlotSum| {
        let mut e = Expression::from(0.0);
        for (slot, f) in &sum.terms {
            for &i in &per_slot[*slot] {
                e += f(&choices[i].value) * x[i];
            }
        }
        e
    };
    for row in &model.rows {
        let e = slot_sum(&row.sum);
        problem = problem.with(if row.at_least {
            e.geq(row.limit)
        } else {
            e.leq(row.limit)
        });
    }
    for (t, &(above, below)) in model.terms.iter().zip(&dev) {
        let e = slot_sum(&t.sum);
        problem = problem.with((e - above + below).eq(t.target));
    }
    // The builds already judged.
    for cut in excluded {
        let mut e = Expression::from(0.0);
        for &i in cut {
            e += x[i];
        }
        problem = problem.with(e.leq(cut.len() as f64 - 1.0));
    }
    let solution = match problem.solve() {
        Ok(s) => s,
        Err(ResolutionError::Infeasible) => return Ok(None),
        Err(e) => return Err(SearchError::Solver(e.to_string())),
    };
    if !matches!(solution.status(), SolutionStatus::Optimal) {
        return Err(SearchError::Solver(
            "the solver stopped without proving its answer optimal".into(),
        ));
    }
    // Check what came back: integral, exactly one choice per slot.
    let mut chosen = Vec::with_capacity(per_slot.len());
    for list in per_slot {
        let mut pick = None;
        for &i in list {
            let v = solution.value(x[i]);
            if (v - v.round()).abs() > 1e-6 {
                return Err(SearchError::Solver(format!(
                    "the solver returned a fractional choice ({v})"
                )));
            }
            if v > 0.5 {
                if pick.is_some() {
                    return Err(SearchError::Solver(
                        "the solver chose two candidates for one slot".into(),
                    ));
                }
                pick = Some(i);
            }
        }
        match pick {
            Some(i) => chosen.push(i),
            None => {
                return Err(SearchError::Solver(
                    "the solver chose no candidate for a slot".into(),
                ))
            }
        }
    }
    debug_assert!(chosen.iter().zip(0..).all(|(&i, s)| choices[i].slot == s));
    Ok(Some(chosen))
}
