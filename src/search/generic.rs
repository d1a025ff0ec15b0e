//! The generic search plan: exact for any circuit from its equations alone.
//!
//! All slots form one group, resistors first, each walked outward from the value where a
//! point bound is least. The bound of a candidate at `v`, met walking up, covers every value
//! from `v` to the top of its slot's range (walking down: from the bottom to `v`): the
//! circuit's figures are evaluated over intervals (`Circuit::figure_bounds`) — the walked
//! slot on that interval, the slots already chosen at their values, the slots still open over
//! their whole range — and the objective's circuit terms give a lower bound of their points
//! (`objective::circuit_bound`); a relaxed requirement that fails over the whole box fails
//! for every value farther out too. As `v` moves away from the start the interval shrinks, and
//! interval arithmetic never widens a result for narrower operands, so the bound only grows:
//! the walk rule (`circuit::WalkPlan`) holds by construction.
//!
//! Requirements are relaxed on a box widened to the tolerance ends (at worst case): the exact
//! check fails at some tolerance corner whenever it fails on every point of that box, since
//! every corner lies in it. The box checks are the gain window, the least input resistance,
//! each coupling network's corner and loss, the output swing around the DC point, the bias
//! network's current and the slew rate; the rest (ratings, polarity, power, GBW) are judged
//! on complete builds only, which keeps the plan exact and only makes it visit more.
//! `tests/exact.rs` compares it with brute force on every circuit.

use crate::build::SlotValue;
use crate::circuit::common::{self, SLACK};
use crate::circuit::{Circuit, Coord, SearchPlan, WalkPlan, ANY};
use crate::interval::Iv;
use crate::objective::{self, Figures};
use crate::spec::Spec;
use crate::vocab::PartKind;
use std::f64::consts::PI;

/// What a slot may still be: the range of its candidates' nominal values, the range of their
/// tolerance ends, and the widest relative tolerance below and above the nominal value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SlotRange {
    /// Least and greatest nominal value.
    pub nominal: (f64, f64),
    /// Least low end and greatest high end.
    pub ends: (f64, f64),
    /// The largest 1 − min/value over the candidates.
    pub below: f64,
    /// The largest max/value − 1 over the candidates.
    pub above: f64,
}

impl SlotRange {
    /// A range holding every realisation of a table, from its nominal values and its pieces'
    /// widest tolerance: a pair's relative deviation is at most its pieces' larger one (series
    /// and parallel combinations are weighted means of the pieces' deviations), so the ends
    /// lie within value·(1 ± that tolerance).
    pub fn of_table(table: &super::table::Table) -> Option<SlotRange> {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for r in &table.reals {
            if r.value < lo {
                lo = r.value;
            }
            if r.value > hi {
                hi = r.value;
            }
        }
        if lo > hi {
            return None;
        }
        let tol = table
            .pieces
            .iter()
            .map(|p| p.piece.tolerance)
            .fold(0.0, f64::max);
        Some(SlotRange {
            nominal: (lo, hi),
            ends: (lo * (1.0 - tol), hi * (1.0 + tol)),
            below: tol,
            above: tol,
        })
    }

    /// The part of the range with nominal values in `[low, high]` (a `[range]` entry), `None`
    /// when nothing is left: each candidate's ends stay within its value·(1 ± tolerance).
    pub fn clipped(self, low: f64, high: f64) -> Option<SlotRange> {
        let lo = self.nominal.0.max(low * (1.0 - 1e-9));
        let hi = self.nominal.1.min(high * (1.0 + 1e-9));
        (lo <= hi).then(|| SlotRange {
            nominal: (lo, hi),
            ends: (
                self.ends.0.max(lo * (1.0 - self.below)),
                self.ends.1.min(hi * (1.0 + self.above)),
            ),
            ..self
        })
    }

    /// The range of a list of candidates (`None` when empty).
    pub fn of(values: impl IntoIterator<Item = SlotValue>) -> Option<SlotRange> {
        let mut r: Option<SlotRange> = None;
        for v in values {
            let below = 1.0 - v.min / v.value;
            let above = v.max / v.value - 1.0;
            r = Some(match r {
                None => SlotRange {
                    nominal: (v.value, v.value),
                    ends: (v.min, v.max),
                    below,
                    above,
                },
                Some(r) => SlotRange {
                    nominal: (r.nominal.0.min(v.value), r.nominal.1.max(v.value)),
                    ends: (r.ends.0.min(v.min), r.ends.1.max(v.max)),
                    below: r.below.max(below),
                    above: r.above.max(above),
                },
            });
        }
        r
    }
}

/// The generic plan for one circuit over the given slot ranges (one per slot, in slot order).
pub struct GenericPlan<'a> {
    circuit: &'a dyn Circuit,
    ranges: Vec<SlotRange>,
    order: Vec<usize>,
}

/// Points on each side of a walk's start: at most this many samples of the point bound.
const TARGET_SAMPLES: usize = 12;

impl<'a> GenericPlan<'a> {
    /// The plan; `ranges[i]` must hold every candidate of slot `i` (a locked slot: its part).
    pub fn new(circuit: &'a dyn Circuit, ranges: Vec<SlotRange>) -> GenericPlan<'a> {
        let slots = circuit.slots();
        let mut order: Vec<usize> = (0..slots.len()).collect();
        // Resistors first: the capacitors' requirements ("large enough against the
        // resistance") are decided once their resistors are.
        order.sort_by_key(|&i| (slots[i].kind == PartKind::Capacitor, i));
        GenericPlan {
            circuit,
            ranges,
            order,
        }
    }

    /// The nominal and the widened interval of every slot, with `walked` (slot, nominal
    /// interval, widened interval) in place of its range.
    fn boxes(
        &self,
        spec: &Spec,
        parts: &[Option<SlotValue>],
        walked: Option<(usize, Iv, Iv)>,
    ) -> (Vec<Iv>, Vec<Iv>) {
        let worst = spec.worst_case();
        let n = self.ranges.len();
        let mut nominal = Vec::with_capacity(n);
        let mut wide = Vec::with_capacity(n);
        for i in 0..n {
            let (a, b) = match (walked, parts.get(i).copied().flatten()) {
                (Some((s, a, b)), _) if s == i => (a, b),
                (_, Some(p)) => (
                    Iv::point(p.value),
                    if worst {
                        Iv::new(p.min, p.max)
                    } else {
                        Iv::point(p.value)
                    },
                ),
                _ => {
                    let r = &self.ranges[i];
                    let a = Iv::new(r.nominal.0, r.nominal.1);
                    (
                        a,
                        if worst {
                            Iv::new(r.ends.0, r.ends.1)
                        } else {
                            a
                        },
                    )
                }
            };
            nominal.push(a);
            wide.push(b);
        }
        (nominal, wide)
    }

    /// A lower bound of the circuit terms over the box, `None` when a relaxed requirement
    /// fails on all of it.
    fn judge(&self, spec: &Spec, nominal: &[Iv], wide: &[Iv]) -> Option<f64> {
        if !feasible(spec, &self.circuit.figure_bounds(spec, wide)) {
            return None;
        }
        let mut f = self.circuit.figure_bounds(spec, nominal);
        if let (Some(min), Some(core)) = (spec.cmrr_min, f.matched_gain) {
            // A build that meets cmrr_min has |A_cm| ≤ ρ·A_d at every tolerance corner
            // (ρ = 10^(−dB/20)); A_cm is monotone in each value, so at the nominal values
            // too |A_cm| ≤ ρ·max A_d ≤ ρ·|gain| over the widened box, and the nominal gain
            // A_d = A₁ + A_cm/2 lies within half that of A₁ (`Figures::matched_gain`).
            // Builds that fail are never ranked, so the narrowed gain bounds every build
            // the bound can cut.
            let w = self.circuit.figure_bounds(spec, wide);
            let rho = 10f64.powf(-min / 20.0) * (1.0 + SLACK);
            let half = rho * crate::interval::Num::abs(w.gain).hi / 2.0 * (1.0 + SLACK);
            let (lo, hi) = (f.gain.lo.max(core.lo - half), f.gain.hi.min(core.hi + half));
            if lo > hi {
                return None;
            }
            f.gain = Iv::new(lo, hi);
        }
        Some(objective::circuit_bound(spec, &f) * (1.0 - 1e-9))
    }

    /// The bound of a candidate at `v` of slot `slot`, met walking up (`up`) or down.
    fn bound(
        &self,
        spec: &Spec,
        parts: &[Option<SlotValue>],
        slot: usize,
        v: f64,
        up: bool,
    ) -> Option<f64> {
        let r = &self.ranges[slot];
        let worst = spec.worst_case();
        let (nominal, wide) = if up {
            let a = Iv::new(v, r.nominal.1.max(v));
            let b = if worst {
                Iv::new(v * (1.0 - r.below), r.ends.1.max(v))
            } else {
                a
            };
            (a, b)
        } else {
            let a = Iv::new(r.nominal.0.min(v), v);
            let b = if worst {
                Iv::new(r.ends.0.min(v), v * (1.0 + r.above))
            } else {
                a
            };
            (a, b)
        };
        let (n, w) = self.boxes(spec, parts, Some((slot, nominal, wide)));
        self.judge(spec, &n, &w)
    }

    /// Where to start walking `slot`: the least point bound among log-spaced samples of its
    /// range (any start is exact; a good one saves reads).
    fn target(&self, spec: &Spec, parts: &[Option<SlotValue>], slot: usize) -> f64 {
        let r = &self.ranges[slot];
        let (lo, hi) = r.nominal;
        if !(lo > 0.0 && hi > lo) {
            return lo;
        }
        let mut best = (f64::INFINITY, (lo * hi).sqrt());
        for i in 0..TARGET_SAMPLES {
            let v = lo * (hi / lo).powf(i as f64 / (TARGET_SAMPLES - 1) as f64);
            let wide = if spec.worst_case() {
                Iv::new(v * (1.0 - r.below), v * (1.0 + r.above))
            } else {
                Iv::point(v)
            };
            let (n, w) = self.boxes(spec, parts, Some((slot, Iv::point(v), wide)));
            if let Some(b) = self.judge(spec, &n, &w) {
                if b < best.0 {
                    best = (b, v);
                }
            }
        }
        best.1
    }
}

/// Whether the box of every slot's whole range (its tolerance ends at worst case) passes the
/// relaxed requirements: false proves that no build from these candidates can pass.
pub fn box_feasible(spec: &Spec, circuit: &dyn Circuit, ranges: &[SlotRange]) -> bool {
    let wide: Vec<Iv> = ranges
        .iter()
        .map(|r| {
            if spec.worst_case() {
                Iv::new(r.ends.0, r.ends.1)
            } else {
                Iv::new(r.nominal.0, r.nominal.1)
            }
        })
        .collect();
    feasible(spec, &circuit.figure_bounds(spec, &wide))
}

/// The relaxed requirements on the widened box: false when one surely fails.
pub fn feasible(spec: &Spec, w: &Figures<Iv>) -> bool {
    let s = SLACK;
    if let Some(t) = spec.gain_tolerance {
        let g = spec.gain.abs();
        let mag = crate::interval::Num::abs(w.gain);
        if mag.hi < g * (1.0 - t) * (1.0 - s) || mag.lo > g * (1.0 + t) * (1.0 + s) {
            return false;
        }
    }
    if let Some(max) = spec.derived.gain_max {
        if crate::interval::Num::abs(w.gain).lo > max * (1.0 + s) {
            return false;
        }
    }
    if let Some(min) = spec.input_resistance_min {
        if w.input_resistance.hi < min * (1.0 - s) {
            return false;
        }
    }
    // The DC-coupled stages' output error: their `offset` figure is the largest |error|
    // over the op-amp's sign corners at a point (the key is refused for other stages), so
    // above the limit over the whole box it fails at every tolerance corner.
    if let Some(max) = spec.output_offset_max {
        if w.offset.lo > max * (1.0 + s) {
            return false;
        }
    }
    // Common-mode rejection |A_d/A_cm| ≥ 10^(dB/20): |A_cm/A_d| above the inverse over the
    // whole box fails at every corner.
    if let (Some(min), Some(r)) = (spec.cmrr_min, w.cm_ratio) {
        if r.lo > 10f64.powf(-min / 20.0) * (1.0 + s) {
            return false;
        }
    }
    // Each network's corner 1/(2πRC) is least at the largest R and C; a plain buffered
    // first-order section's corner and loss bound the whole response's from below, and the
    // losses of buffered sections add (the 3 dB budget when only the band edge is asked).
    let mut loss = 0.0;
    for n in &w.networks {
        let corner = 1.0 / (2.0 * PI * n.resistance.hi * n.capacitance.hi);
        if spec
            .corner_low_max
            .is_some_and(|max| corner > max * (1.0 + s))
        {
            return false;
        }
        if n.plain {
            if spec.corner_low_max.is_none()
                && spec.band_loss_max.is_none()
                && corner > spec.band.0 * (1.0 + s)
            {
                return false;
            }
            loss += 10.0 * (1.0 + (corner / spec.band.0).powi(2)).log10();
        }
    }
    if !common::losses_ok(spec, loss) {
        return false;
    }
    // The swing around the DC range: the output DC at every tolerance corner lies in
    // `dc_out`, and min(DC_min − h_low, V_s − h_high − DC_max) is at most its value at one
    // DC level t, largest for t nearest the middle of the allowed range.
    let (a, b) = (w.dc_out.lo, w.dc_out.hi);
    if a.is_finite() && b.is_finite() {
        let (lo, hi) = spec.output_limits();
        // The middle of the output's range (on a single supply the bias target is it).
        let middle = if spec.split() {
            (lo + hi) / 2.0
        } else {
            spec.bias_target()
        };
        let t = middle.clamp(a, b);
        // The op-amp's errors spread the DC range by at least their least over the box.
        let spread = w.dc_error.lo.max(0.0);
        let swing = (t - lo).min(hi - t) - spread;
        let need = if let Some(out) = spec.output_peak {
            out * (1.0 - s) - s
        } else if let Some(inp) = spec.input_peak {
            // The worst-case highest |gain| is at least the least |gain| of the box.
            inp * crate::interval::Num::abs(w.gain).lo * (1.0 - s) - s
        } else {
            -s
        };
        if swing < need {
            return false;
        }
    }
    if let (Some(max), Some(i)) = (spec.bias_current_max, w.bias_current) {
        if i.lo > max * (1.0 + s) {
            return false;
        }
    }
    // Full-power bandwidth SR/(2π·V_peak) at the required peak: for an input peak, at least
    // the least |gain| of the box (the worst-case highest |gain| is never below it).
    let peak = spec.output_peak_at(crate::interval::Num::abs(w.gain).lo);
    if let (Some(sr), Some(peak)) = (spec.amplifier.slew_rate, peak) {
        if sr / (2.0 * PI * peak) < spec.band.1 * (1.0 - s) {
            return false;
        }
    }
    true
}

impl SearchPlan for GenericPlan<'_> {
    fn groups(&self, _spec: &Spec) -> Vec<Vec<usize>> {
        vec![self.order.clone()]
    }

    /// The exact circuit terms, once every slot is known and the relaxed requirements hold
    /// on the build's own tolerance box.
    fn group_partial(&self, spec: &Spec, _g: usize, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (n, w) = self.boxes(spec, parts, None);
        if !feasible(spec, &self.circuit.figure_bounds(spec, &w)) {
            return None;
        }
        let values: Vec<f64> = n.iter().map(|i| i.lo).collect();
        Some(objective::circuit_points(
            spec,
            &self.circuit.figures(spec, &values),
        ))
    }

    fn walk<'s>(
        &'s self,
        spec: &'s Spec,
        _g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s> {
        let slot = self.order[k];
        let parts: Vec<Option<SlotValue>> = parts.to_vec();
        let target = self.target(spec, &parts, slot);
        WalkPlan {
            at_least: None,
            coord: Coord::Value,
            target,
            window: ANY,
            bound: Box::new(move |v, up| self.bound(spec, &parts, slot, v, up)),
        }
    }
}
