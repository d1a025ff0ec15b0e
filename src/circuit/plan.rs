//! The vocabulary of search plans: groups of coupled slots, how a slot is walked (`WalkPlan`
//! and its bound rule), the log-linear model for the MILP engine, and helpers to build bounds
//! with one minimum per term.

use super::common;
use crate::build::SlotValue;
use crate::spec::Spec;

/// A search group: slots whose choice is coupled and decided together.
pub type Group = &'static [usize];

/// Which figure of a candidate a walk orders by: its nominal value, or the low end of its
/// tolerance (what a "large enough" requirement needs at worst case).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Coord {
    /// The nominal value.
    Value,
    /// The low end of the tolerance band (`SlotValue::min`).
    Low,
}

impl Coord {
    /// The coordinate that `common::end(spec, _, false)` reads: the low end at worst case,
    /// the nominal value in nominal mode.
    pub fn low_end(spec: &Spec) -> Coord {
        if spec.worst_case() {
            Coord::Low
        } else {
            Coord::Value
        }
    }

    /// This coordinate of a candidate, in Ω or F.
    pub fn of(self, v: &SlotValue) -> f64 {
        match self {
            Coord::Value => v.value,
            Coord::Low => v.min,
        }
    }
}

/// A lower bound of a group's share for one slot's candidate: `bound(v, up)` for a candidate
/// whose coordinate is `v`, met walking up (`true`, v ≥ target) or down from the target.
pub type BoundFn<'s> = Box<dyn Fn(f64, bool) -> Option<f64> + 's>;

/// How the search walks one slot's candidates: outward from `target` in both directions, in
/// order of slot points plus `bound`, lazily (the search never sorts a slot's candidates per
/// node).
///
/// The contract, which `tests/exact.rs` holds the stages to:
/// - `bound(v, up)` never exceeds the group's share (`group_partial`, plus for the first slot
///   of a pair the best the second slot can still do) for any candidate at `v` on that side
///   and any tolerance (so it may only read `v`);
/// - it is nondecreasing as `v` moves away from `target` in the walk's direction;
/// - `None` means this value and every value farther out on that side fail a requirement.
///
/// [`unimodal_sum`] turns a sum of terms each with one minimum into such a bound.
pub struct WalkPlan<'s> {
    /// Which figure of a candidate the walk orders by.
    pub coord: Coord,
    /// Where the walk starts, in the units of `coord` (Ω or F).
    pub target: f64,
    /// Lower bound of the group's share for a candidate (see the contract above).
    pub bound: BoundFn<'s>,
    /// Every candidate whose coordinate is outside `[window.0, window.1]` fails a requirement
    /// (whichever side of the target it is on), so the search can drop it without asking
    /// `bound`; `ANY` when the plan knows no such interval.
    pub window: (f64, f64),
    /// `Some(min)` when the plan is exactly "a coordinate of at least `min`, nothing else
    /// counted" ([`WalkPlan::at_least`]): the search then bounds such slots of one kind
    /// together, with the lines they need.
    pub at_least: Option<f64>,
}

/// The window of a plan that knows none (see [`WalkPlan::window`]).
pub const ANY: (f64, f64) = (f64::NEG_INFINITY, f64::INFINITY);

impl<'s> WalkPlan<'s> {
    /// The plan with its start inside its window: a walk reads outward from the start and
    /// trusts the window on the far side only, so a start outside the window (a target the
    /// requirements rule out, e.g. a gain the amplifier cannot reach) would read the values
    /// between it and the window. An empty window reads nothing. The bound keeps its sides:
    /// every value the walk then meets lies on the same side of the old start as of the new.
    pub fn inside_window(mut self) -> WalkPlan<'s> {
        let (lo, hi) = self.window;
        if lo > hi {
            self.bound = Box::new(|_, _| None);
        } else if self.target < lo {
            self.target = lo;
        } else if self.target > hi {
            self.target = hi;
        }
        self
    }
}

impl<'s> WalkPlan<'s> {
    /// The plan with a share's monotone terms added to its bound: `above(v)`, never
    /// decreasing in v, for the candidates above the start, and `below(v)`, never increasing
    /// in v, below it — each a lower bound of the terms there (the divider's noise rises with
    /// r_bias_lo, its current falls). Read at the start clamped to its side, so the bound
    /// still never decreases moving away from the start (the walk contract).
    pub fn plus_sides(
        self,
        above: impl Fn(f64) -> f64 + 's,
        below: impl Fn(f64) -> f64 + 's,
    ) -> WalkPlan<'s> {
        let inner = self.bound;
        let t = self.target;
        WalkPlan {
            bound: Box::new(move |v, up| {
                inner(v, up).map(|b| b + if up { above(v.max(t)) } else { below(v.min(t)) })
            }),
            ..self
        }
    }

    /// The plan with `floor` added to every bound: a share that also holds a term whose least
    /// value over the window is `floor` (the noise goal's share of the gain pair over the
    /// feedback resistor's window). A constant keeps the bound's shape, so the contract holds.
    pub fn plus(self, floor: f64) -> WalkPlan<'s> {
        if floor <= 0.0 {
            return self;
        }
        let inner = self.bound;
        WalkPlan {
            bound: Box::new(move |v, up| inner(v, up).map(|b| b + floor)),
            ..self
        }
    }
}

impl WalkPlan<'static> {
    /// No preference: every candidate, cheapest first (a walk up from the bottom).
    pub fn free() -> WalkPlan<'static> {
        WalkPlan {
            at_least: None,
            window: ANY,
            coord: Coord::Value,
            target: 0.0,
            bound: Box::new(|_, _| Some(0.0)),
        }
    }

    /// Every candidate whose coordinate is at least `min` (less fails), cheapest first. `min`
    /// is taken `SLACK` lower so that rounding never drops a part the exact check accepts.
    pub fn at_least(coord: Coord, min: f64) -> WalkPlan<'static> {
        let target = if min.is_nan() {
            0.0
        } else {
            min * (1.0 - common::SLACK)
        };
        WalkPlan {
            at_least: Some(target),
            window: ANY,
            coord,
            target,
            bound: Box::new(move |v, up| (up && v >= target).then_some(0.0)),
        }
    }

    /// Every candidate whose coordinate is at most `max`, walked down from there.
    pub fn at_most(coord: Coord, max: f64) -> WalkPlan<'static> {
        let target = max * (1.0 + common::SLACK);
        WalkPlan {
            at_least: None,
            window: ANY,
            coord,
            target,
            bound: Box::new(move |v, up| (!up || v <= target).then_some(0.0)),
        }
    }
}

/// A number per candidate, summed over some slots: Σᵢ fᵢ(part in slot sᵢ). The MILP engine
/// turns it into Σ_c x\[s\]\[c\]·f(c) over its choice variables.
pub type SlotFn<'s> = Box<dyn Fn(&SlotValue) -> f64 + 's>;

/// A sum over slots of a number per candidate (see [`SlotFn`]).
#[derive(Default)]
pub struct SlotSum<'s> {
    /// The terms: a slot index and its number per candidate.
    pub terms: Vec<(usize, SlotFn<'s>)>,
}

impl<'s> SlotSum<'s> {
    /// Add f(part in `slot`).
    pub fn with(mut self, slot: usize, f: impl Fn(&SlotValue) -> f64 + 's) -> Self {
        self.terms.push((slot, Box::new(f)));
        self
    }

    /// The sum for a build's parts by slot.
    pub fn eval(&self, parts: &[SlotValue]) -> f64 {
        self.terms.iter().map(|(s, f)| f(&parts[*s])).sum()
    }
}

/// A requirement as a linear row: `sum ≥ limit` (`at_least`) or `sum ≤ limit`.
pub struct LogRow<'s> {
    /// What it stands for, for messages and tests.
    pub name: &'static str,
    /// The left-hand side.
    pub sum: SlotSum<'s>,
    /// True for `sum ≥ limit`, false for `sum ≤ limit`.
    pub at_least: bool,
    /// The right-hand side.
    pub limit: f64,
}

/// An objective term `above·max(sum − target, 0) + below·max(target − sum, 0)` (points).
pub struct AbsTerm<'s> {
    /// What it stands for, for messages and tests.
    pub name: &'static str,
    /// The quantity measured (a sum of logarithms of slot values).
    pub sum: SlotSum<'s>,
    /// Where the term is zero.
    pub target: f64,
    /// Points per unit of `sum` above `target`.
    pub above: f64,
    /// Points per unit of `sum` below `target`.
    pub below: f64,
}

impl AbsTerm<'_> {
    /// The term's points for a build's parts by slot.
    pub fn eval(&self, parts: &[SlotValue]) -> f64 {
        let d = self.sum.eval(parts) - self.target;
        if d >= 0.0 {
            self.above * d
        } else {
            -self.below * d
        }
    }
}

/// What of a stage is linear in the logarithms of its values (see `SearchPlan::log_model`).
#[derive(Default)]
pub struct LogModel<'s> {
    /// Requirements as linear rows.
    pub rows: Vec<LogRow<'s>>,
    /// Objective terms, each piecewise linear in its sum.
    pub terms: Vec<AbsTerm<'s>>,
    /// Further objective points, linear over the candidates.
    pub points: SlotSum<'s>,
}

/// The objective term for a relative error |q/q_t − 1| (times `scale`, in points per unit)
/// written on ln q: above the target e^u − 1 ≥ u (tangent at 0 of a convex function), below
/// it 1 − e^(−|u|) ≥ κ·|u| for |u| ≤ U with κ = (1 − e^(−U))/U (a chord of a concave
/// function); `u_max` is U, the most ln q can fall short of ln q_t in a build that passes.
pub fn relative_error_term<'s>(
    name: &'static str,
    ln_q: SlotSum<'s>,
    q_target: f64,
    scale: f64,
    u_max: f64,
) -> AbsTerm<'s> {
    let kappa = if u_max > 1e-12 {
        (1.0 - (-u_max).exp()) / u_max
    } else {
        1.0
    };
    AbsTerm {
        name,
        sum: ln_q,
        target: q_target.ln(),
        above: scale * (1.0 - 1e-9),
        below: scale * kappa * (1.0 - 1e-9),
    }
}

/// A term of a walk bound: a function with a single minimum at `mode` (nonincreasing below
/// it, nondecreasing above). `mode` may be ±∞ for a monotone term.
pub struct Term<'a> {
    /// Where the term is least.
    pub mode: f64,
    /// The term as a function of the walked coordinate.
    pub f: &'a dyn Fn(f64) -> f64,
}

/// A lower bound of Σ fᵢ(v) that is nondecreasing along a walk: going up, each term is read
/// at max(v, modeᵢ), going down at min(v, modeᵢ). Each read is the least the term can still
/// take at `v` or farther out, so the sum never exceeds the true one and only grows as the
/// walk moves on, whatever the target.
pub fn unimodal_sum(terms: &[Term], v: f64, up: bool) -> f64 {
    terms
        .iter()
        .map(|t| {
            let at = if up { v.max(t.mode) } else { v.min(t.mode) };
            (t.f)(at)
        })
        .sum()
}

/// The least of a·|x − x₁| + b·|x − x₂| over x is min(a, b)·|x₁ − x₂| (a piecewise-linear
/// function takes its minimum at a breakpoint): the bound of two V-shaped costs pulling one
/// value towards two places.
pub fn two_v_floor(a: f64, x1: f64, b: f64, x2: f64) -> f64 {
    a.min(b) * (x1 - x2).abs()
}
