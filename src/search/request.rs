//! What a search is asked and what it answers: the request (spec, circuit, stock, locks, how
//! many builds, which plan), the ranked builds and the search's statistics, its errors, the
//! engines, the candidates of every slot, the best-N list with its tie rule, and the Pareto
//! front of a ranking.

use crate::analysis::Evaluation;
use crate::build::{Build, Part};
use crate::circuit::{Circuit, SearchPlan};
use crate::spec::{SlotLimit, Spec};
use crate::stock::Stock;
use crate::vocab::PartKind;
use std::collections::HashMap;
use std::sync::Arc;

/// One ranked build.
#[derive(Debug, Clone)]
pub struct Ranked {
    /// The parts, in the circuit's slot order.
    pub build: Build,
    /// Its exact analysis and score.
    pub evaluation: Evaluation,
}

/// Search progress, for a bar in the binary.
#[derive(Debug, Clone, Copy)]
pub enum Progress {
    /// The walk search: the slot at the top of the tree (index into the stage's slots), its
    /// candidates read so far, and how many it has.
    Walk {
        /// Index of the slot at the top of the tree.
        slot: usize,
        /// Its candidates read so far.
        done: usize,
        /// Its candidates in all.
        total: usize,
    },
    /// The walk search, now and then whatever level it is at: nodes visited, builds judged
    /// and the N-th best score so far (∞ until N builds), so a deep search still moves.
    Nodes {
        /// Search nodes visited so far.
        nodes: u64,
        /// Complete builds judged so far.
        judged: u64,
        /// The N-th best score found, ∞ until N builds are found.
        best: f64,
    },
    /// The diagnosis after a search that found nothing: requirements tried so far, of how
    /// many, and the key of the one being tried.
    Diagnosis {
        /// Requirements tried so far.
        tried: usize,
        /// Requirements to try.
        total: usize,
        /// The spec key of the requirement being tried now.
        key: &'static str,
    },
    /// After the search: the figures of the builds found (noise, DC budget, yield) completed
    /// so far, of how many.
    Figures {
        /// Builds whose figures are complete.
        done: usize,
        /// Builds to complete.
        total: usize,
    },
    /// The MILP engine: models solved so far, and the N-th best score found (∞ until N).
    Milp {
        /// Models solved so far.
        solved: usize,
        /// The N-th best score found, ∞ until N builds are found.
        best: f64,
    },
}

/// What a search did.
#[derive(Debug, Clone, Default)]
pub struct Stats {
    /// Candidates per slot, in slot order (1 for a locked slot).
    pub candidates: Vec<usize>,
    /// Search nodes visited (the walk engine) or MILP models solved (the MILP engine).
    pub nodes: u64,
    /// True when the search stopped before it was complete (`max_nodes`, the MILP engine's
    /// cap on solves, or its [`Stop`]): its builds are the best found, not proven the best.
    pub truncated: bool,
    /// True when the [`Stop`] (a time limit or an interrupt) ended it.
    pub stopped: bool,
    /// Nodes per group, to see where a search spends its time.
    pub nodes_by_group: Vec<u64>,
    /// Nodes per level (slot of the plan's order).
    pub nodes_by_level: Vec<u64>,
    /// The lower bound of every build's score at the root of the last search pass.
    pub root_bound: f64,
    /// Complete builds rejected by a cheap check before the full analysis, by check.
    pub quick_rejects: std::collections::BTreeMap<&'static str, u64>,
    /// Complete builds the full analysis failed, by the family of the first failing check.
    pub full_rejects: std::collections::BTreeMap<&'static str, u64>,
    /// The highest worst-case |gain| the search derived from the amplifier (`Derived`).
    pub gain_max: Option<f64>,
    /// Complete builds judged by the exact analysis.
    pub evaluated: u64,
    /// The joint bounds of the open slots (the lines of "large enough" slots, the shared
    /// loss budget): how often each ran and how often it raised the bound.
    pub joint_bounds: [(u64, u64); 2],
    /// The DC checks judged once a build's resistors are chosen (`analysis::dc_failure`):
    /// how often, and how often they cut the capacitors' subtree.
    pub dc_screens: (u64, u64),
}

/// What a search answers: the best builds, best first, and what it did.
#[derive(Debug, Clone)]
pub struct Outcome {
    /// The best builds that pass, best (lowest score) first; empty when none passes.
    pub builds: Vec<Ranked>,
    /// What the search did.
    pub stats: Stats,
}

/// Why a search could not run.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum SearchError {
    /// A slot has no candidate in the stock's range.
    #[error(
        "the stock has no {kind} for slot `{slot}` within {range}; widen the range or add stock"
    )]
    NoCandidates {
        /// The slot's name.
        slot: String,
        /// Its part kind, in words.
        kind: String,
        /// The allowed range, as printed.
        range: String,
    },
    /// Pairs of every two lines would make more realisations than the search takes.
    #[error(
        "combine = \"{combine}\" makes more than {limit} {kind} realisations from the \
         stock's {lines} {kind} lines (every two of them paired), more than the search takes; \
         use combine = \"single\", narrow the {kind} range, or a stock with fewer lines"
    )]
    TooManyRealisations {
        /// The part kind, in words.
        kind: String,
        /// Lines of that kind in the stock.
        lines: usize,
        /// The spec's `combine` setting.
        combine: String,
        /// Most realisations per kind the search takes.
        limit: usize,
    },
    #[error("the MILP model would have {choices} choice variables, more than the MILP engine takes ({limit}); use `--engine walk`, narrow the ranges, or lock a slot")]
    /// The MILP model would be larger than the MILP engine takes.
    ModelTooLarge {
        /// Choice variables the model would have.
        choices: usize,
        /// Most choice variables the engine takes.
        limit: usize,
    },
    /// The MILP solver returned an error.
    #[error("the MILP solver failed: {0}; `--engine walk` does not use it")]
    Solver(String),
}

/// Which exact search finds the top N: the walk search of this module (the default, fast at
/// any stock size) or the MILP engine (`milp`, good_lp with microlp), which must agree.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Engine {
    /// The walk search (branch and bound over the plan's groups).
    #[default]
    Walk,
    /// The MILP engine (good_lp with microlp), every answer re-checked by the exact analysis.
    Milp,
}

impl Engine {
    /// Both engines.
    pub const ALL: [Engine; 2] = [Engine::Walk, Engine::Milp];

    /// The engine's name on the command line (`"walk"`, `"milp"`).
    pub fn name(self) -> &'static str {
        match self {
            Engine::Walk => "walk",
            Engine::Milp => "milp",
        }
    }

    /// Reads an engine name, case-insensitive and trimmed; `None` if unknown.
    pub fn parse(s: &str) -> Option<Engine> {
        Engine::ALL
            .into_iter()
            .find(|e| e.name().eq_ignore_ascii_case(s.trim()))
    }
}

/// A request: what to search and how many builds to keep.
pub struct Request<'a> {
    /// The requirement.
    pub spec: &'a Spec,
    /// The circuit of the spec's stage.
    pub stage: &'a dyn Circuit,
    /// What may be taken.
    pub stock: &'a Stock,
    /// Parts fixed by the user, by slot index.
    pub locks: &'a [(usize, Part)],
    /// How many builds to keep (at least 1).
    pub top: usize,
    /// Stop after this many search nodes (the result is then not proven); `None`: no limit.
    pub max_nodes: Option<u64>,
    /// Which search plan the walk engine follows.
    pub plan: PlanChoice,
    /// When to give up before the search is complete (never by default).
    pub stop: Stop,
    /// Slots (indices) in which every two ranked builds must differ (`--distinct`): of the
    /// builds that share those slots' values only the best is ranked. Empty: none.
    pub distinct: &'a [usize],
}

/// When a search stops before it is proven complete: a deadline, an interrupt (Ctrl-C sets
/// the flag), or neither — then the search runs to its exact end.
#[derive(Debug, Clone, Default)]
pub struct Stop {
    /// Stop at this instant.
    pub deadline: Option<std::time::Instant>,
    /// Stop once this flag is set.
    pub interrupt: Option<Arc<std::sync::atomic::AtomicBool>>,
}

impl Stop {
    /// Never stop.
    pub const NEVER: Stop = Stop {
        deadline: None,
        interrupt: None,
    };

    /// True when the search must stop now.
    pub fn now(&self) -> bool {
        self.interrupt
            .as_ref()
            .is_some_and(|f| f.load(std::sync::atomic::Ordering::Relaxed))
            || self
                .deadline
                .is_some_and(|d| std::time::Instant::now() >= d)
    }

    /// True when it may stop at all (a deadline or an interrupt flag is set).
    pub fn armed(&self) -> bool {
        self.deadline.is_some() || self.interrupt.is_some()
    }
}

/// Which search plan the walk engine follows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PlanChoice {
    /// The circuit's own hand-tuned plan where it has one, else the generic plan.
    #[default]
    Best,
    /// The generic plan (`generic.rs`), which needs only the circuit's equations.
    Generic,
}

impl Request<'_> {
    /// The circuit's own plan when this request may use it.
    pub fn own_plan(&self) -> Option<&dyn SearchPlan> {
        match self.plan {
            // The hand-tuned plans' input-network relaxations take the source as a resistance;
            // with a source capacitance the generic plan (the circuit's own equations) searches.
            PlanChoice::Best if self.spec.source_capacitance.is_some() => None,
            PlanChoice::Best => self.stage.plan(),
            PlanChoice::Generic => None,
        }
    }
}

/// The spec's `[range]` entry of every slot, in slot order (`None`: the stock's range alone).
pub fn slot_limits<'s>(spec: &'s Spec, stage: &dyn Circuit) -> Vec<Option<&'s SlotLimit>> {
    stage
        .slots()
        .iter()
        .map(|d| spec.slot_limit(d.name))
        .collect()
}

/// The candidates of every slot: the stock's realisations (one shared list per kind, or the
/// slot's own when a `[range]` entry narrows it), or the locked part alone.
pub fn slot_candidates(req: &Request) -> Result<Vec<Arc<Vec<Part>>>, SearchError> {
    let mut by_kind: HashMap<PartKind, Arc<Vec<Part>>> = HashMap::new();
    let limits = slot_limits(req.spec, req.stage);
    req.stage
        .slots()
        .iter()
        .enumerate()
        .map(|(i, slot)| {
            if let Some((_, part)) = req.locks.iter().find(|(s, _)| *s == i) {
                return Ok(Arc::new(vec![part.clone()]));
            }
            if !by_kind.contains_key(&slot.kind) {
                too_many(req, slot.kind)?;
            }
            let mut parts = by_kind
                .entry(slot.kind)
                .or_insert_with(|| Arc::new(req.stock.candidates(slot.kind)))
                .clone();
            if let Some(limit) = limits[i] {
                parts = Arc::new(
                    parts
                        .iter()
                        .filter(|p| limit.admits(p.value))
                        .cloned()
                        .collect(),
                );
            }
            if parts.is_empty() {
                return Err(no_candidates(req, i));
            }
            Ok(parts)
        })
        .collect()
}

pub(crate) fn parts_unit(kind: PartKind) -> crate::value::Unit {
    match kind {
        PartKind::Resistor => crate::value::Unit::Ohm,
        PartKind::Capacitor => crate::value::Unit::Farad,
    }
}

/// The best `top` builds, kept sorted; builds that look identical (same values, tolerances and
/// arrangement per slot, e.g. two inventory lines of one value, or two slots of one value
/// that swap their tolerances) count once, the better kept. With `distinct` slots, builds
/// that share those slots' values count once.
///
/// Exact for what it ranks: the result is the best build of each key, the best `top` of
/// those. A build the search prunes at [`TopN::bound`] cannot be one: a new key must beat the
/// N-th held build, a held key its own build, which is no worse than the N-th; and builds
/// held only get better, so the bound never rises (tests/exact.rs holds it to brute force).
pub(crate) struct TopN {
    cap: usize,
    distinct: Vec<usize>,
    items: Vec<(Order, Vec<u64>, Ranked)>,
}

/// Scores closer than this count as equal and go to the tie-break (10⁻¹⁰ points: far below
/// anything a goal weighs, far above the rounding of a sum of a few dozen terms).
pub const TIE: f64 = 1e-10;

/// The weight of the default goals added to every goal's own, so that builds whose score
/// is equal under the spec's weights (a zero weight makes many equal) are ranked by the
/// default weights: fewer pieces and lines, smaller capacitors, less cost and offset, a
/// smaller gain error. 10⁻⁶ of a default weight moves a ranking only between scores within
/// about 10⁻⁵ points of each other.
pub const TIE_BREAK: f64 = 1e-6;

/// Where a build ranks: its score to [`TIE`], then the summed tolerance of its parts (tighter
/// first), then what its parts look like (values, tolerances, arrangements in slot order), then
/// the inventory rows they come from — a total order, so the ranking never depends on how
/// many builds are asked for, or on the engine.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
struct Order {
    score: i64,
    spread: i64,
    look: Vec<u64>,
    rows: Vec<usize>,
}

fn quantum(x: f64) -> i64 {
    (x / TIE).round().clamp(i64::MIN as f64, i64::MAX as f64) as i64
}

fn order_of(ranked: &Ranked, look: Vec<u64>) -> Order {
    let spread: f64 = ranked.build.parts.iter().map(Part::tolerance).sum();
    Order {
        score: quantum(ranked.evaluation.score),
        spread: quantum(spread),
        look,
        rows: ranked
            .build
            .parts
            .iter()
            .flat_map(|p| p.pieces.iter().map(|q| q.line.unwrap_or(0)))
            .collect(),
    }
}

impl TopN {
    /// Room for `cap` builds (at least one), which differ in the values of the `distinct`
    /// slots when any are given.
    pub fn distinct_in(cap: usize, distinct: &[usize]) -> TopN {
        TopN {
            cap: cap.max(1),
            distinct: distinct.to_vec(),
            items: Vec::new(),
        }
    }

    /// The score a build must not exceed to enter (beyond it by more than [`TIE`], it
    /// cannot): the N-th best's, or ∞ until N are held.
    pub fn bound(&self) -> f64 {
        if self.items.len() < self.cap {
            f64::INFINITY
        } else {
            self.items
                .last()
                .map_or(f64::INFINITY, |i| i.2.evaluation.score + TIE)
        }
    }

    /// True when `cap` builds are held.
    pub fn full(&self) -> bool {
        self.items.len() >= self.cap
    }

    /// Offer a passing build; builds that look identical (same values, tolerances and
    /// arrangements per slot, e.g. two inventory lines of one value) count once, the one
    /// ranked first kept.
    pub fn offer(&mut self, ranked: Ranked) {
        let order = order_of(&ranked, look_key(&ranked.build));
        let look = if self.distinct.is_empty() {
            same_look_key(&ranked.build)
        } else {
            values_key(&ranked.build, &self.distinct)
        };
        if let Some(pos) = self.items.iter().position(|i| i.1 == look) {
            if self.items[pos].0 <= order {
                return;
            }
            self.items.remove(pos);
        }
        if self.items.len() >= self.cap && self.items.last().is_some_and(|l| l.0 <= order) {
            return;
        }
        let at = self.items.partition_point(|i| i.0 < order);
        self.items.insert(at, (order, look, ranked));
        self.items.truncate(self.cap);
    }

    pub fn into_vec(self) -> Vec<Ranked> {
        self.items.into_iter().map(|i| i.2).collect()
    }
}

/// The spec a search ranks with: the spec's goal weights plus [`TIE_BREAK`] times the default
/// ones (see there), and what the search derives from it (`Derived`). The analysis reads
/// neither, so every figure is the spec's own; only the scores differ, and [`primary_scores`]
/// puts the spec's back.
pub fn ranking_spec(spec: &Spec, stage: &dyn Circuit) -> Spec {
    let mut r = spec.clone();
    for goal in crate::vocab::Goal::ALL {
        // Not the noise and divider-current goals: their shares are not in the divider's
        // walk bounds, so as tie-breakers they would make a spec that weighs neither read
        // every divider a gain pair allows (a gain-only spec took 60× as long).
        let tie = match goal {
            crate::vocab::Goal::Noise | crate::vocab::Goal::DividerCurrent => 0.0,
            _ => TIE_BREAK * goal.default_weight(),
        };
        r.goals.set(goal, spec.goals.weight(goal) + tie);
    }
    r.derived = crate::spec::Derived {
        gain_max: stage.gain_limit(spec),
        resistor_tolerance_min: spec.derived.resistor_tolerance_min,
    };
    r
}

/// True when the spec alone (with what [`ranking_spec`] derives) rules out every build, so no
/// search is needed: the gain window above the highest |gain| the amplifier allows at the
/// band's top; a slew rate too low for the required peak at the band's top (full-power
/// bandwidth SR/(2π·V_peak)); or a required swing larger than the room the supply and
/// headroom leave around any DC point, less the op-amp's offset voltage (the output's DC
/// range at worst case spans at least ±V_os around its centre).
pub fn ruled_out(spec: &Spec) -> bool {
    use crate::circuit::common::SLACK;
    if let (Some(t), Some(max)) = (spec.gain_tolerance, spec.derived.gain_max) {
        if spec.gain.abs() * (1.0 - t) * (1.0 - SLACK) > max * (1.0 + SLACK) {
            return true;
        }
    }
    // The output peak at the least worst-case highest |gain| a build can have: the window's
    // floor (without a window, any gain may pass, so an input peak rules nothing out).
    let peak = match (spec.output_peak, spec.input_peak, spec.gain_tolerance) {
        (Some(out), _, _) => Some(out),
        (None, Some(inp), Some(t)) => Some(inp * spec.gain.abs() * (1.0 - t)),
        _ => None,
    };
    if let (Some(sr), Some(peak)) = (spec.amplifier.slew_rate, peak) {
        if sr / (2.0 * std::f64::consts::PI * peak) < spec.band.1 * (1.0 - SLACK) {
            return true;
        }
    }
    // A DC-coupled stage's worst output error is at least V_os times its noise gain, which is
    // 1 + |gain| (inverting), the gain (non-inverting) or above 1 (difference), the gain at
    // least the window's floor (`split_supply.rs`, `difference.rs`).
    if let (Some(max), true) = (spec.output_offset_max, spec.worst_case()) {
        let floor = spec
            .gain_tolerance
            .map_or(0.0, |t| spec.gain.abs() * (1.0 - t));
        let ng = match spec.stage {
            k if k.inverting() => 1.0 + floor,
            crate::vocab::StageKind::Difference => 1.0,
            _ => floor.max(1.0),
        };
        if spec.amplifier.input_offset_voltage * ng > max * (1.0 + SLACK) {
            return true;
        }
    }
    let room = (spec.supply - spec.supply_low - spec.headroom.0 - spec.headroom.1) / 2.0
        - if spec.worst_case() {
            spec.amplifier.input_offset_voltage
        } else {
            0.0
        };
    let need = match (spec.output_peak, spec.input_peak) {
        (Some(out), None) => Some(out),
        // The worst-case highest |gain| is at least the window's floor.
        (_, Some(inp)) => spec
            .gain_tolerance
            .map(|t| inp * spec.gain.abs() * (1.0 - t)),
        (None, None) => Some(0.0),
    };
    need.is_some_and(|n| room < n * (1.0 - SLACK) - SLACK)
        || crate::analysis::amplifier::ruled_out(spec)
}

/// The scores of ranked builds under the spec's own weights (their order is kept: it is the
/// ranking spec's).
pub fn primary_scores(spec: &Spec, stage: &dyn Circuit, builds: &mut [Ranked]) {
    for r in builds {
        r.evaluation.score = crate::analysis::score(spec, stage, &r.build);
    }
}

/// What a person sees of a build: arrangement, value and tolerance of every piece.
/// What a build looks like up to which of two slots of one value (one kind, arrangement and
/// piece values) gets which tolerance: the slots' values in slot order, then, per group of
/// such slots, their tolerances sorted. Two builds that differ only by swapping two parts of
/// one value between slots are one alternative, not two (issue 12, part 8).
fn same_look_key(build: &Build) -> Vec<u64> {
    let shape = |p: &Part| -> Vec<u64> {
        let mut k = vec![p.kind as u64, p.arrangement as u64];
        k.extend(p.pieces.iter().map(|q| q.value.to_bits()));
        k
    };
    let shapes: Vec<Vec<u64>> = build.parts.iter().map(shape).collect();
    let mut key: Vec<u64> = shapes.iter().flatten().copied().collect();
    let mut seen = vec![false; shapes.len()];
    for i in 0..shapes.len() {
        if seen[i] {
            continue;
        }
        let mut tols: Vec<Vec<u64>> = Vec::new();
        for j in i..shapes.len() {
            if !seen[j] && shapes[j] == shapes[i] {
                seen[j] = true;
                let p = &build.parts[j];
                tols.push(p.pieces.iter().map(|q| q.tolerance.to_bits()).collect());
            }
        }
        tols.sort_unstable();
        key.push(u64::MAX);
        key.extend(tols.into_iter().flatten());
    }
    key
}

/// The values (arrangement and piece values) of the `slots`, for `--distinct`.
fn values_key(build: &Build, slots: &[usize]) -> Vec<u64> {
    let mut key = Vec::new();
    for &i in slots {
        if let Some(p) = build.parts.get(i) {
            key.push(p.arrangement as u64);
            key.extend(p.pieces.iter().map(|q| q.value.to_bits()));
            key.push(u64::MAX);
        }
    }
    key
}

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

pub(crate) fn kind_index(kind: PartKind) -> usize {
    match kind {
        PartKind::Resistor => 0,
        PartKind::Capacitor => 1,
    }
}

/// The error for a stock that makes more realisations of `kind` than a table takes.
pub(crate) fn too_many(req: &Request, kind: PartKind) -> Result<(), SearchError> {
    let limit = super::table::MAX_REALISATIONS;
    match super::table::more_realisations_than(req.stock, kind, limit) {
        None => Ok(()),
        Some(_) => Err(SearchError::TooManyRealisations {
            kind: format!("{kind:?}").to_lowercase(),
            lines: req.stock.pieces(kind).len(),
            combine: format!("{:?}", req.stock.combine).to_lowercase(),
            limit,
        }),
    }
}

pub(crate) fn no_candidates(req: &Request, slot: usize) -> SearchError {
    let def = req.stage.slots()[slot];
    let (mut lo, mut hi) = req.stock.range(def.kind);
    if let Some(limit) = req.spec.slot_limit(def.name) {
        (lo, hi) = (lo.max(limit.low), hi.min(limit.high));
    }
    let unit = parts_unit(def.kind);
    SearchError::NoCandidates {
        slot: def.name.to_string(),
        kind: format!("{:?}", def.kind).to_lowercase(),
        range: format!(
            "{} … {}",
            crate::value::format(lo, unit),
            crate::value::format(hi, unit)
        ),
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
        let stage = crate::circuit::circuit_for(spec.stage);
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
            let evaluation = crate::analysis::evaluate(&spec, stage, &build, None);
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
