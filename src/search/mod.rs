//! The exact search: the stock's candidates per slot → branch and bound over the stage's
//! groups → the top N builds, each re-checked by the exact analysis.
//!
//! The objective is a sum of shares: each slot's own points (pieces, capacitance, cost), each
//! group's stage terms (gain error, offset), and the distinct lines added. The groups are
//! decided in the stage's order; within a group the candidates are sorted by a context-free
//! lower bound, so a whole tail is cut once `so far + bound + best of the rest` reaches the
//! N-th best build found. Stage filters are relaxations, and every build that reaches the end
//! is judged by `analysis::evaluate`: the result is the exact top N (a property test compares
//! it with brute force).

pub mod brute;
pub mod diagnose;
pub mod groups;

use crate::analysis::{self, Evaluation};
use crate::build::{Build, LineKey, Part};
use crate::spec::Spec;
use crate::stage::Stage;
use crate::stock::inventory::PartKind;
use crate::stock::Stock;
use groups::{GroupList, PairWalk, MAX_GROUP_SLOTS};
use std::collections::HashMap;
use std::sync::Arc;

/// More tuples than this in one group would take too long to sort and too much memory.
pub const MAX_GROUP_TUPLES: usize = 40_000_000;

/// One ranked build.
#[derive(Debug, Clone)]
pub struct Ranked {
    pub build: Build,
    pub evaluation: Evaluation,
}

/// Search progress, for a bar in the binary.
#[derive(Debug, Clone, Copy)]
pub struct Progress {
    /// First-group candidates tried so far and in all.
    pub done: usize,
    pub total: usize,
}

/// What a search did.
#[derive(Debug, Clone, Default)]
pub struct Stats {
    pub candidates: Vec<usize>,
    pub nodes: u64,
    /// True when `max_nodes` stopped the search before it was complete.
    pub truncated: bool,
    /// Nodes per group, to see where a search spends its time.
    pub nodes_by_group: Vec<u64>,
    pub evaluated: u64,
}

#[derive(Debug, Clone)]
pub struct Outcome {
    pub builds: Vec<Ranked>,
    pub stats: Stats,
}

#[derive(Debug, thiserror::Error, PartialEq)]
pub enum SearchError {
    #[error(
        "the stock has no {kind} for slot `{slot}` within {range}; widen the range or add stock"
    )]
    NoCandidates {
        slot: String,
        kind: String,
        range: String,
    },
    #[error("slot group {slots} would need {tuples} combinations, more than this release searches ({MAX_GROUP_TUPLES}); narrow `resistor_range`, use `combine = \"single\"`, or lock a slot")]
    TooLarge { slots: String, tuples: usize },
}

/// A request: what to search and how many builds to keep.
pub struct Request<'a> {
    pub spec: &'a Spec,
    pub stage: &'a dyn Stage,
    pub stock: &'a Stock,
    /// Parts fixed by the user, by slot index.
    pub locks: &'a [(usize, Part)],
    pub top: usize,
    /// Stop after this many search nodes (the result is then not proven); `None`: no limit.
    pub max_nodes: Option<u64>,
}

/// The candidates of every slot: the stock's realisations (one shared list per kind), or the
/// locked part alone.
pub fn slot_candidates(req: &Request) -> Result<Vec<Arc<Vec<Part>>>, SearchError> {
    let mut by_kind: HashMap<PartKind, Arc<Vec<Part>>> = HashMap::new();
    req.stage
        .slots()
        .iter()
        .enumerate()
        .map(|(i, slot)| {
            if let Some((_, part)) = req.locks.iter().find(|(s, _)| *s == i) {
                return Ok(Arc::new(vec![part.clone()]));
            }
            let parts = by_kind
                .entry(slot.kind)
                .or_insert_with(|| Arc::new(req.stock.candidates(slot.kind)))
                .clone();
            if parts.is_empty() {
                let (lo, hi) = req.stock.range(slot.kind);
                let unit = parts_unit(slot.kind);
                return Err(SearchError::NoCandidates {
                    slot: slot.name.to_string(),
                    kind: format!("{:?}", slot.kind).to_lowercase(),
                    range: format!(
                        "{} … {}",
                        crate::value::format(lo, unit),
                        crate::value::format(hi, unit)
                    ),
                });
            }
            Ok(parts)
        })
        .collect()
}

fn parts_unit(kind: PartKind) -> crate::value::Unit {
    match kind {
        PartKind::Resistor => crate::value::Unit::Ohm,
        PartKind::Capacitor => crate::value::Unit::Farad,
    }
}

/// The best `top` builds, kept sorted; builds that look identical (same values, tolerances and
/// arrangement per slot, e.g. two inventory lines of one value) count once, the better kept.
pub(crate) struct TopN {
    cap: usize,
    items: Vec<(f64, Vec<u64>, Ranked)>,
}

impl TopN {
    pub fn new(cap: usize) -> TopN {
        TopN {
            cap: cap.max(1),
            items: Vec::new(),
        }
    }

    /// Score a new build must beat to enter.
    pub fn bound(&self) -> f64 {
        if self.items.len() < self.cap {
            f64::INFINITY
        } else {
            self.items.last().map_or(f64::INFINITY, |i| i.0)
        }
    }

    pub fn offer(&mut self, ranked: Ranked) {
        let score = ranked.evaluation.score;
        let key = look_key(&ranked.build);
        if let Some(pos) = self.items.iter().position(|i| i.1 == key) {
            if self.items[pos].0 <= score {
                return;
            }
            self.items.remove(pos);
        }
        if self.items.len() >= self.cap && score >= self.bound() {
            return;
        }
        // Equal scores: the tighter parts first (what a person would pick between twins).
        let spread: f64 = ranked.build.parts.iter().map(Part::tolerance).sum();
        let at = self.items.partition_point(|i| {
            i.0 < score
                || (i.0 == score
                    && i.2.build.parts.iter().map(Part::tolerance).sum::<f64>() <= spread)
        });
        self.items.insert(at, (score, key, ranked));
        self.items.truncate(self.cap);
    }

    pub fn into_vec(self) -> Vec<Ranked> {
        self.items.into_iter().map(|i| i.2).collect()
    }
}

/// What a person sees of a build: arrangement, value and tolerance of every piece.
fn look_key(build: &Build) -> Vec<u64> {
    let mut key = Vec::new();
    for part in &build.parts {
        key.push(part.arrangement as u64);
        for p in &part.pieces {
            key.push(p.value.to_bits());
            key.push(p.tolerance.to_bits());
        }
    }
    key
}

struct Dfs<'a> {
    req: &'a Request<'a>,
    cands: &'a [&'a [Part]],
    groups: Vec<(&'static [usize], GroupList<'a>)>,
    rest: Vec<f64>,
    /// Per group: for one-capacitor groups, (least effective capacitance, best key of every
    /// candidate at least that large) ascending, for the look-ahead bound.
    cap_bounds: Vec<Option<Vec<(f64, f64)>>>,
    assigned: Vec<Option<&'a Part>>,
    /// Pieces in use per line; a build has a dozen pieces at most, so a short list beats a map.
    lines: Vec<(LineKey, u32)>,
    top: TopN,
    stats: Stats,
    progress: &'a mut dyn FnMut(Progress),
}

/// Run the exact search. `progress` is called now and then with how far the first group is.
pub fn search(req: &Request, progress: &mut dyn FnMut(Progress)) -> Result<Outcome, SearchError> {
    let owned = slot_candidates(req)?;
    let cands: Vec<&[Part]> = owned.iter().map(|c| c.as_slice()).collect();
    let spec = req.spec;
    let stage = req.stage;
    let n = stage.slots().len();
    // Pass 1: the groups enumerated as sorted products; two-slot groups with a plan wait.
    let mut lists: Vec<Option<GroupList>> = Vec::new();
    let mut plans = Vec::new();
    for (g, &slots) in stage.groups().iter().enumerate() {
        let names = || {
            slots
                .iter()
                .map(|&s| stage.slots()[s].name)
                .collect::<Vec<_>>()
                .join("+")
        };
        if slots.len() > MAX_GROUP_SLOTS {
            return Err(SearchError::TooLarge {
                slots: names(),
                tuples: usize::MAX,
            });
        }
        match stage.pair_plan(spec, g).filter(|_| slots.len() == 2) {
            Some(plan) => {
                lists.push(None);
                plans.push(Some(plan));
            }
            None => {
                let total = slots
                    .iter()
                    .try_fold(1usize, |a, &s| a.checked_mul(cands[s].len()));
                match total {
                    Some(t) if t <= MAX_GROUP_TUPLES => {}
                    _ => {
                        return Err(SearchError::TooLarge {
                            slots: names(),
                            tuples: total.unwrap_or(usize::MAX),
                        })
                    }
                }
                lists.push(Some(GroupList::Sorted(groups::product(
                    spec, stage, g, slots, &cands,
                ))));
                plans.push(None);
            }
        }
    }
    let groups_def = stage.groups();
    let cap_bounds: Vec<Option<Vec<(f64, f64)>>> = lists
        .iter_mut()
        .enumerate()
        .map(|(g, list)| {
            let slots = groups_def[g];
            let list = list.as_mut()?;
            if slots.len() != 1 || stage.slots()[slots[0]].kind != PartKind::Capacitor {
                return None;
            }
            let mut rows = Vec::new();
            let mut t = 0;
            while let Some((key, idx)) = list.get(t) {
                let part = &cands[slots[0]][idx[0] as usize];
                rows.push((
                    if spec.worst_case() {
                        part.min
                    } else {
                        part.value
                    },
                    key,
                ));
                t += 1;
            }
            rows.sort_by(|a, b| a.0.total_cmp(&b.0));
            // Suffix minimum: the cheapest candidate among those at least this large.
            for i in (0..rows.len().saturating_sub(1)).rev() {
                rows[i].1 = rows[i].1.min(rows[i + 1].1);
            }
            Some(rows)
        })
        .collect();
    // Pass 2: the lazy walks. The first group's walk also counts, per outer part, how much
    // more than their cheapest the later capacitor groups must cost once that part is fixed
    // (a constant per outer part keeps each walk monotone; no earlier group can count it).
    for (g, plan) in plans.into_iter().enumerate() {
        let Some(plan) = plan else { continue };
        let extra: Vec<f64> = if g == 0 {
            let statics: Vec<f64> = lists
                .iter_mut()
                .map(|l| l.as_mut().and_then(|l| l.get(0)).map_or(0.0, |t| t.0))
                .collect();
            let mut parts: Vec<Option<&Part>> = vec![None; n];
            cands[plan.outer]
                .iter()
                .map(|outer| {
                    parts[plan.outer] = Some(outer);
                    let mut sum = 0.0;
                    for (h, rows) in cap_bounds.iter().enumerate().skip(1) {
                        let (Some(rows), Some(c)) = (rows, stage.min_capacitance(spec, h, &parts))
                        else {
                            continue;
                        };
                        let i = rows.partition_point(|r| r.0 < c * (1.0 - 1e-6));
                        let lb = rows.get(i).map_or(f64::INFINITY, |r| r.1);
                        sum += (lb - statics[h]).max(0.0);
                    }
                    sum
                })
                .collect()
        } else {
            Vec::new()
        };
        lists[g] = Some(GroupList::Lazy(Box::new(PairWalk::new(
            spec, stage, g, plan, &cands, extra,
        ))));
    }
    let mut groups: Vec<(&'static [usize], GroupList)> = groups_def
        .iter()
        .zip(lists)
        .map(|(&slots, l)| (slots, l.expect("every group built")))
        .collect();
    let mut rest = vec![0.0; groups.len() + 1];
    for g in (0..groups.len()).rev() {
        let best = groups[g].1.get(0).map_or(f64::INFINITY, |t| t.0);
        rest[g] = rest[g + 1] + best;
    }
    let mut dfs = Dfs {
        req,
        cands: &cands,
        groups,
        rest,
        cap_bounds,
        assigned: vec![None; n],
        lines: Vec::new(),
        top: TopN::new(req.top),
        stats: Stats {
            candidates: cands.iter().map(|c| c.len()).collect(),
            ..Stats::default()
        },
        progress,
    };
    if dfs.rest[0].is_finite() {
        dfs.descend(0, 0.0);
    }
    Ok(Outcome {
        stats: dfs.stats,
        builds: dfs.top.into_vec(),
    })
}

impl<'a> Dfs<'a> {
    fn descend(&mut self, g: usize, acc: f64) {
        let spec = self.req.spec;
        let stage = self.req.stage;
        if g == self.groups.len() {
            self.leaf(acc);
            return;
        }
        let slots = self.groups[g].0;
        // What the later groups cost at least, given what earlier groups fixed.
        let rest_after = self.rest[g + 1].max(self.look_ahead(g));
        let total: usize = slots.iter().map(|&s| self.cands[s].len()).product();
        let mut t = 0;
        while let Some((base, idx)) = self.groups[g].1.get(t) {
            t += 1;
            if self.req.max_nodes.is_some_and(|m| self.stats.nodes >= m) {
                self.stats.truncated = true;
                break;
            }
            if acc + base + rest_after >= self.top.bound() {
                break;
            }
            if g == 0 && t % 256 == 0 {
                (self.progress)(Progress {
                    done: t.min(total),
                    total,
                });
            }
            self.stats.nodes += 1;
            if self.stats.nodes_by_group.len() <= g {
                self.stats.nodes_by_group.resize(g + 1, 0);
            }
            self.stats.nodes_by_group[g] += 1;
            let cands = self.cands;
            for (k, &s) in slots.iter().enumerate() {
                self.assigned[s] = Some(&cands[s][idx[k] as usize]);
            }
            if let Some(rows) = &self.cap_bounds[g] {
                // A capacitor smaller than its network needs fails every check that follows.
                let part = self.assigned[slots[0]].expect("assigned");
                let eff = if spec.worst_case() {
                    part.min
                } else {
                    part.value
                };
                if let Some(c) = stage.min_capacitance(spec, g, &self.assigned) {
                    if eff < c * (1.0 - 1e-6) && !rows.is_empty() {
                        self.assigned[slots[0]] = None;
                        continue;
                    }
                }
            }
            let (fits, new_lines) = self.take(slots);
            if fits {
                if let Some(share) = stage.group_partial(spec, g, &self.assigned) {
                    let own: f64 = slots
                        .iter()
                        .filter_map(|&s| self.assigned[s])
                        .map(|p| analysis::slot_points(spec, p))
                        .sum();
                    let score = acc + share + own + spec.goals.bom_lines * new_lines as f64;
                    if score + rest_after < self.top.bound()
                        && score + self.look_ahead(g) < self.top.bound()
                    {
                        self.descend(g + 1, score);
                    }
                }
            }
            self.give_back(slots);
            for &s in slots {
                self.assigned[s] = None;
            }
        }
        if g == 0 {
            (self.progress)(Progress { done: total, total });
        }
    }

    /// Lower bound of the groups after `g` given what is assigned: the static best of each,
    /// raised for a capacitor group to the best candidate large enough for its network.
    fn look_ahead(&self, g: usize) -> f64 {
        let spec = self.req.spec;
        let mut total = 0.0;
        for h in g + 1..self.groups.len() {
            let stat = self.rest[h] - self.rest[h + 1];
            let mut best = stat;
            if let Some(rows) = &self.cap_bounds[h] {
                if let Some(c) = self.req.stage.min_capacitance(spec, h, &self.assigned) {
                    let i = rows.partition_point(|r| r.0 < c * (1.0 - 1e-6));
                    best = best.max(rows.get(i).map_or(f64::INFINITY, |r| r.1));
                }
            }
            total += best;
        }
        total
    }

    /// Count the pieces of `slots` against the stock; returns whether they fit and how many
    /// lines are new to the build.
    fn take(&mut self, slots: &[usize]) -> (bool, usize) {
        let mut fits = true;
        let mut new_lines = 0;
        for &s in slots {
            let part = self.assigned[s].expect("assigned");
            for piece in &part.pieces {
                let key = LineKey::of(part.kind, piece);
                let n = match self.lines.iter().position(|(k, _)| *k == key) {
                    Some(i) => {
                        self.lines[i].1 += 1;
                        self.lines[i].1
                    }
                    None => {
                        new_lines += 1;
                        self.lines.push((key, 1));
                        1
                    }
                };
                if !part.locked {
                    if let Some(limit) = self.req.stock.quantity(key) {
                        if n > limit {
                            fits = false;
                        }
                    }
                }
            }
        }
        (fits, new_lines)
    }

    fn give_back(&mut self, slots: &[usize]) {
        for &s in slots {
            let part = self.assigned[s].expect("assigned");
            for piece in &part.pieces {
                let key = LineKey::of(part.kind, piece);
                if let Some(i) = self.lines.iter().position(|(k, _)| *k == key) {
                    self.lines[i].1 -= 1;
                    if self.lines[i].1 == 0 {
                        self.lines.swap_remove(i);
                    }
                }
            }
        }
    }

    fn leaf(&mut self, acc: f64) {
        let parts: Vec<Part> = self
            .assigned
            .iter()
            .map(|p| p.expect("every slot assigned").clone())
            .collect();
        let build = Build { parts };
        self.stats.evaluated += 1;
        let evaluation =
            analysis::evaluate(self.req.spec, self.req.stage, &build, Some(self.req.stock));
        debug_assert!(
            (evaluation.score - acc).abs() <= 1e-9 * acc.abs().max(1.0),
            "search shares {acc} != objective {}",
            evaluation.score
        );
        if evaluation.pass {
            self.top.offer(Ranked { build, evaluation });
        }
    }
}

/// Which builds are Pareto-optimal over (gain error, part count, cost): no other build is at
/// least as good in all three and better in one. Unknown cost counts as zero.
pub fn pareto(builds: &[Ranked]) -> Vec<bool> {
    let key = |r: &Ranked| {
        let m = &r.evaluation.metrics;
        (m.gain_error, m.part_count as f64, m.cost.unwrap_or(0.0))
    };
    builds
        .iter()
        .map(|a| {
            let ka = key(a);
            !builds.iter().any(|b| {
                let kb = key(b);
                kb.0 <= ka.0
                    && kb.1 <= ka.1
                    && kb.2 <= ka.2
                    && (kb.0 < ka.0 || kb.1 < ka.1 || kb.2 < ka.2)
            })
        })
        .collect()
}

#[cfg(test)]
mod pareto_tests {
    use super::*;
    use crate::spec::Spec;

    #[test]
    fn dominated_builds_are_not_pareto() {
        // Hand example (common practice): a build with more error and more parts than another
        // is dominated; a trade-off (less error, more parts) is not.
        let spec = Spec::from_toml(
            "[stage]\nkind = \"inverting\"\nsupply = 9\ngain = -10\nload = 10000\nband = [20, 20000]\n",
        )
        .unwrap();
        let stage = crate::stage::stage_for(spec.stage);
        let r = |v: f64| Part::single(PartKind::Resistor, crate::build::Piece::plain(v, 0.01));
        let c = |v: f64| Part::single(PartKind::Capacitor, crate::build::Piece::plain(v, 0.1));
        let mk = |rin: f64, rfb: f64, pair: bool| {
            let mut parts = vec![r(rin), r(rfb), r(100e3), r(100e3), c(10e-6), c(10e-6)];
            if pair {
                parts[1] = Part::pair(
                    PartKind::Resistor,
                    crate::build::Arrangement::Series,
                    crate::build::Piece::plain(rfb / 2.0, 0.01),
                    crate::build::Piece::plain(rfb / 2.0, 0.01),
                );
            }
            let build = Build { parts };
            let evaluation = analysis::evaluate(&spec, stage, &build, None);
            Ranked { build, evaluation }
        };
        let builds = vec![
            mk(10e3, 100e3, false),
            mk(10e3, 99e3, true),
            mk(10e3, 98e3, false),
        ];
        assert_eq!(pareto(&builds), vec![true, false, false]);
        let trade = vec![mk(10e3, 98e3, false), mk(10e3, 100e3, true)];
        assert_eq!(pareto(&trade), vec![true, true]);
    }
}
