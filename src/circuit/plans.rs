//! Walk plans shared by the single-supply stages: the bias divider and the gain pair.

use super::common::{self, SLACK};
use super::plan::{two_v_floor, unimodal_sum, Coord, Term, WalkPlan, ANY};
use crate::spec::Spec;

/// A bound never above the exact share despite rounding in its own arithmetic.
fn safe(x: f64) -> f64 {
    x * (1.0 - 1e-9)
}

/// The swing the nominal bias point must at least leave, as `common::swing_ok` asks:
/// the required output peak, or the input peak times `gain` (a lower bound of the
/// worst-case highest gain).
pub fn swing_needed(spec: &Spec, gain: f64) -> f64 {
    if let Some(out) = spec.output_peak {
        out * (1.0 - SLACK) - SLACK
    } else if let Some(inp) = spec.input_peak {
        gain.abs() * (inp * (1.0 - SLACK) - SLACK)
    } else {
        -SLACK
    }
}

/// The divider ratio window x = V_div/V_s that leaves `swing` to each rail at nominal.
pub fn ratio_window(spec: &Spec, swing: f64) -> (f64, f64) {
    (
        (spec.headroom.0 + swing) / spec.supply,
        (spec.supply - spec.headroom.1 - swing) / spec.supply,
    )
}

/// What the divider plans know: the compensation target (R_fb, once chosen), the least
/// input resistance the divider must give (non-inverting), and the nominal |gain| (for
/// the swing an input peak needs).
#[derive(Debug, Clone, Copy)]
pub struct DividerContext {
    pub r_fb: Option<f64>,
    pub rp_min: Option<f64>,
    pub gain: f64,
}

/// The first divider resistor `r_bias_hi` with its partner still open. The offset the
/// `offset` goal counts is a·|x − k| + b·|R − R_p| + c·(R + R_p) with x = R_lo/(R_hi + R_lo),
/// R_p = R_hi·x, a = V_s, b = I_b, c = I_os/2, k the bias target's ratio and R = R_fb
/// (`common::offset_error`). For a given R_hi = h the first two terms are
/// a|x − k| + b|R − h·x| ≥ min(b, a/h)·|R − k·h| ([`two_v_floor`] in x), zero at h = R/k
/// and growing on both sides of it; c·R_p ≥ 0 is left out.
pub fn divider_first<'s>(spec: &'s Spec, ctx: DividerContext) -> WalkPlan<'s> {
    let k = spec.bias_target() / spec.supply;
    let w = spec.goals.weight(crate::vocab::Goal::Offset) / 0.1;
    let a = spec.supply;
    let b = spec.amplifier.input_bias_current;
    let c = spec.amplifier.input_offset_current / 2.0;
    // R_p < R_hi, so R_hi below the least input resistance fails, and so does every
    // smaller value.
    let floor = ctx.rp_min.map_or(0.0, |m| m * (1.0 - SLACK));
    match ctx.r_fb {
        Some(r) => WalkPlan {
            at_least: None,
            window: ANY,
            coord: Coord::Value,
            target: (r / k).max(floor),
            bound: Box::new(move |h, up| {
                if !up && h < floor {
                    return None;
                }
                Some(safe(w * (c * r + two_v_floor(b, r, a / h, k * h))))
            }),
        },
        None => WalkPlan {
            at_least: None,
            window: ANY,
            coord: Coord::Value,
            target: spec.stock.resistor_range.1 * (1.0 + 1e-9),
            bound: Box::new(move |h, up| (up || h >= floor).then_some(0.0)),
        },
    }
}

/// The plan of one divider resistor (`walking_hi`: r_bias_hi, else r_bias_lo): the exact
/// share with the other one chosen, or r_bias_hi's bound before it.
pub fn divider_walk<'s>(
    spec: &'s Spec,
    walking_hi: bool,
    parts: &[Option<crate::build::SlotValue>],
    hi: usize,
    lo: usize,
    ctx: DividerContext,
) -> WalkPlan<'s> {
    let other = if walking_hi { lo } else { hi };
    match parts.get(other).copied().flatten() {
        Some(o) => divider_member(spec, o.value, walking_hi, ctx),
        None if walking_hi => divider_first(spec, ctx),
        None => WalkPlan::free(),
    }
}

/// One divider resistor with the other (`other`) fixed: the offset share exactly, as a
/// sum of terms with one minimum each ([`unimodal_sum`]), and the values the relaxed
/// requirements leave (nominal swing, input resistance, divider current), outside of
/// which every farther value fails too. `walking_hi`: the walked slot is `r_bias_hi`.
pub fn divider_member<'s>(
    spec: &'s Spec,
    other: f64,
    walking_hi: bool,
    ctx: DividerContext,
) -> WalkPlan<'s> {
    let k = spec.bias_target() / spec.supply;
    let w = spec.goals.weight(crate::vocab::Goal::Offset) / 0.1;
    let vs = spec.supply;
    let vt = spec.bias_target();
    let b = spec.amplifier.input_bias_current;
    let c = spec.amplifier.input_offset_current / 2.0;
    let o = other;
    // x and R_p of the walked value v; x rises with v when v is r_bias_lo, falls when it
    // is r_bias_hi; R_p rises with v either way.
    let ratio = move |v: f64| {
        if v.is_infinite() {
            if walking_hi {
                0.0
            } else {
                1.0
            }
        } else if walking_hi {
            o / (v + o)
        } else {
            v / (v + o)
        }
    };
    let rp = move |v: f64| {
        if v.is_infinite() {
            o
        } else if v <= 0.0 {
            0.0
        } else {
            v * o / (v + o)
        }
    };
    // The value of v giving ratio x, and giving parallel resistance r (∞ if none).
    let v_of_ratio = move |x: f64| {
        if walking_hi {
            if x <= 0.0 {
                f64::INFINITY
            } else {
                o * (1.0 - x) / x
            }
        } else if x >= 1.0 {
            f64::INFINITY
        } else if x <= 0.0 {
            0.0
        } else {
            o * x / (1.0 - x)
        }
    };
    let v_of_rp = move |r: f64| {
        if r >= o {
            f64::INFINITY
        } else {
            o * r / (o - r)
        }
    };
    // Window of v. The ratio window becomes a window of v (reversed when walking hi).
    let (x_lo, x_hi) = ratio_window(spec, swing_needed(spec, ctx.gain));
    let (mut lower, mut upper) = if walking_hi {
        (v_of_ratio(x_hi), v_of_ratio(x_lo))
    } else {
        (v_of_ratio(x_lo), v_of_ratio(x_hi))
    };
    if x_lo > x_hi {
        // No bias point leaves the swing: nothing passes.
        lower = f64::INFINITY;
        upper = 0.0;
    }
    if let Some(m) = ctx.rp_min {
        lower = lower.max(v_of_rp(m * (1.0 - SLACK)));
    }
    if let Some(max) = spec.bias_current_max {
        lower = lower.max(vs / (max * (1.0 + SLACK)) - o);
    }
    let mode_ratio = v_of_ratio(k);
    let r_fb = ctx.r_fb;
    let mode_comp = r_fb.map_or(f64::INFINITY, v_of_rp);
    let target = mode_ratio.clamp(lower.min(upper), upper.max(lower.min(upper)));
    WalkPlan {
        at_least: None,
        window: ANY,
        coord: Coord::Value,
        target,
        bound: Box::new(move |v, up| {
            if (up && v > upper) || (!up && v < lower) {
                return None;
            }
            let f_ratio = |v: f64| w * (vs * ratio(v) - vt).abs();
            let f_comp = |v: f64| r_fb.map_or(0.0, |r| w * b * (r - rp(v)).abs());
            let f_ios = |v: f64| w * c * (r_fb.unwrap_or(0.0) + rp(v));
            let terms = [
                Term {
                    mode: mode_ratio,
                    f: &f_ratio,
                },
                Term {
                    mode: mode_comp,
                    f: &f_comp,
                },
                Term {
                    mode: 0.0,
                    f: &f_ios,
                },
            ];
            Some(safe(unimodal_sum(&terms, v, up)))
        }),
    }
}

/// A gain pair whose nominal |gain| is att·(plus + r_fb/(offset + r_other)) — inverting:
/// r_fb/(R_s + r_in); non-inverting: att·(1 + r_fb/r_g) with att = R_p/(R_s + R_p).
#[derive(Debug, Clone, Copy)]
pub struct GainForm {
    pub att: f64,
    pub plus: f64,
    pub offset: f64,
}

impl GainForm {
    fn gain(&self, r_fb: f64, r_other: f64) -> f64 {
        self.att * (self.plus + r_fb / (self.offset + r_other))
    }
    /// The r_fb that gives |gain| `g` with this r_other.
    fn r_fb_for(&self, g: f64, r_other: f64) -> f64 {
        (g / self.att - self.plus).max(0.0) * (self.offset + r_other)
    }
    /// The least r_fb (nominal) whose worst-case lowest |gain| can reach `g` when every
    /// resistor is at least `t` from its nominal value: att·(plus + R_fb(1−t)/(offset +
    /// r_other(1+t))) ≥ g. With t = 0, [`GainForm::r_fb_for`].
    fn r_fb_least(&self, g: f64, r_other: f64, t: f64) -> f64 {
        (g / self.att - self.plus).max(0.0) * (self.offset + r_other * (1.0 + t)) / (1.0 - t)
    }
    /// The largest r_fb (nominal) whose worst-case highest |gain| can stay at most `g`:
    /// att·(plus + R_fb(1+t)/(offset + r_other(1−t))) ≤ g (the box's highest gain is at
    /// least that of the point with r_fb at its high end, r_other at its low end and the rest
    /// nominal).
    fn r_fb_most(&self, g: f64, r_other: f64, t: f64) -> f64 {
        (g / self.att - self.plus).max(0.0) * (self.offset + r_other * (1.0 - t)) / (1.0 + t)
    }
    /// The r_other that gives |gain| `g` with this r_fb (∞ when none does).
    fn r_other_for(&self, g: f64, r_fb: f64) -> f64 {
        let d = g / self.att - self.plus;
        if d <= 0.0 {
            f64::INFINITY
        } else {
            r_fb / d - self.offset
        }
    }
}

/// Extra terms the gain pair's share carries when the divider is chosen first
/// (non-inverting with a source resistance): b·|R_fb − R_p| + c·R_fb of the offset, with
/// R_p known.
#[derive(Debug, Clone, Copy)]
pub struct Compensation {
    pub rp: f64,
}

/// The nominal |gain| window of the tolerance, with the search's slack.
fn gain_window(spec: &Spec) -> (f64, f64) {
    let g = spec.gain.abs();
    let (lo, hi) = match spec.gain_tolerance {
        Some(t) => (g * (1.0 - t) * (1.0 - SLACK), g * (1.0 + t) * (1.0 + SLACK)),
        None => (0.0, f64::INFINITY),
    };
    // The nominal |gain| is at most the worst-case highest, which the amplifier bounds.
    let hi = spec
        .derived
        .gain_max
        .map_or(hi, |max| hi.min(max * (1.0 + SLACK)));
    (lo, hi)
}

/// r_fb walked with the other gain resistor fixed: the gain points (and with `comp` the
/// compensation terms) exactly, inside the nominal gain window.
pub fn gain_fb<'s>(
    spec: &'s Spec,
    form: GainForm,
    r_other: f64,
    comp: Option<Compensation>,
) -> WalkPlan<'s> {
    let (g_lo, g_hi) = gain_window(spec);
    let mode = form.r_fb_for(spec.gain.abs(), r_other);
    // The gain rises with r_fb: the window of r_fb values whose gain is inside the
    // window (a hair wider, so rounding never drops one the bound would pass). The window's
    // ends are worst-case limits (the gain tolerance, the amplifier's highest gain): at
    // worst case every resistor's ends lie at least the stock's least tolerance from its
    // nominal value, which narrows the nominal window by that spread on each side (a 5 %
    // stock: about 10 % of gain, a thousand two-part E96 values per r_in).
    let t = if spec.worst_case() {
        spec.derived.resistor_tolerance_min.clamp(0.0, 0.5)
    } else {
        0.0
    };
    let window = (
        form.r_fb_least(g_lo, r_other, t) * (1.0 - 1e-9),
        form.r_fb_most(g_hi, r_other, t) * (1.0 + 1e-9),
    );
    let w_off = spec.goals.weight(crate::vocab::Goal::Offset) / 0.1;
    let b = spec.amplifier.input_bias_current;
    let c = spec.amplifier.input_offset_current / 2.0;
    // The gain rises with r_fb: past the window on the walk's side, every farther value
    // is out too.
    let outside = move |v: f64, up: bool| (up && v > window.1) || (!up && v < window.0);
    let f_gain = move |v: f64| {
        crate::objective::gain::points(spec, form.gain(v, r_other).copysign(spec.gain))
    };
    if comp.is_none() {
        // The gain points alone: V-shaped about `mode`, so the clamped read is the gain
        // at max(v, mode) going up, min(v, mode) going down.
        return WalkPlan {
            at_least: None,
            window,
            coord: Coord::Value,
            target: mode,
            bound: Box::new(move |v, up| {
                if outside(v, up) {
                    return None;
                }
                let at = if up { v.max(mode) } else { v.min(mode) };
                Some(safe(f_gain(at)))
            }),
        };
    }
    WalkPlan {
        at_least: None,
        window,
        coord: Coord::Value,
        target: mode,
        bound: Box::new(move |v, up| {
            if outside(v, up) {
                return None;
            }
            let f_comp = |v: f64| comp.map_or(0.0, |p| w_off * b * (v - p.rp).abs());
            let f_ios = |v: f64| comp.map_or(0.0, |_| w_off * c * v.max(0.0));
            let terms = [
                Term { mode, f: &f_gain },
                Term {
                    mode: comp.map_or(0.0, |p| p.rp),
                    f: &f_comp,
                },
                Term {
                    mode: 0.0,
                    f: &f_ios,
                },
            ];
            Some(safe(unimodal_sum(&terms, v, up)))
        }),
    }
}

/// The other gain resistor (r_in, r_g) walked with r_fb fixed (locked): the gain points
/// exactly, inside the nominal gain window and above `floor` (the least input resistance
/// for r_in); the compensation terms depend on r_fb only and are a constant here.
pub fn gain_other_given_fb<'s>(
    spec: &'s Spec,
    form: GainForm,
    r_fb: f64,
    floor: f64,
    comp: Option<Compensation>,
) -> WalkPlan<'s> {
    let (g_lo, g_hi) = gain_window(spec);
    let mode = form.r_other_for(spec.gain.abs(), r_fb);
    let constant = comp.map_or(0.0, |p| {
        spec.goals.weight(crate::vocab::Goal::Offset) / 0.1
            * (spec.amplifier.input_bias_current * (r_fb - p.rp).abs()
                + spec.amplifier.input_offset_current / 2.0 * r_fb)
    });
    WalkPlan {
        at_least: None,
        window: ANY,
        coord: Coord::Value,
        target: mode.max(floor),
        bound: Box::new(move |v, up| {
            // The gain falls as the other resistor rises.
            let gain = form.gain(r_fb, v);
            if (up && gain < g_lo) || (!up && (gain > g_hi || v < floor)) {
                return None;
            }
            let f_gain = |v: f64| {
                crate::objective::gain::points(spec, form.gain(r_fb, v).copysign(spec.gain))
            };
            let terms = [Term { mode, f: &f_gain }];
            Some(safe(unimodal_sum(&terms, v, up) + constant))
        }),
    }
}

/// The largest value the other gain resistor (r_in, r_g) can take in a build whose
/// nominal gain is inside the window: r_fb at the top of the resistor range.
pub fn largest_other(spec: &Spec, form: GainForm) -> f64 {
    let (g_lo, _) = gain_window(spec);
    let r_max = spec.stock.resistor_range.1 * (1.0 + 1e-9);
    form.r_other_for(g_lo, r_max).min(r_max)
}

/// The other gain resistor walked first, r_fb still open. Without `comp` any value can be
/// matched by some r_fb, so the bound is 0 and the walk runs down from the largest value
/// an r_fb inside the resistor range can still serve (larger values need less coupling
/// capacitance). With `comp` (R_p known) the gain and compensation pull r_fb towards
/// (G/att − plus)·v and R_p: at least min(slopes)·|distance| ([`two_v_floor`]), zero at
/// v = R_p/(G/att − plus) and growing on both sides.
pub fn gain_other_first<'s>(
    spec: &'s Spec,
    form: GainForm,
    floor: f64,
    comp: Option<Compensation>,
) -> WalkPlan<'s> {
    // The largest value an r_fb ≤ r_max can still bring into the window.
    let top = largest_other(spec, form);
    let g = spec.gain.abs();
    match comp {
        None => WalkPlan {
            at_least: None,
            window: ANY,
            coord: Coord::Value,
            target: top.max(floor),
            bound: Box::new(move |v, up| {
                let out = (up && v > top) || (!up && v < floor);
                (!out).then_some(0.0)
            }),
        },
        Some(p) => {
            let d = g / form.att - form.plus;
            let w_gain = spec.goals.weight(crate::vocab::Goal::GainError) / 0.01;
            let s_off = spec.goals.weight(crate::vocab::Goal::Offset) / 0.1
                * spec.amplifier.input_bias_current;
            let mode = if d > 0.0 {
                p.rp / d - form.offset
            } else {
                f64::INFINITY
            };
            WalkPlan {
                at_least: None,
                window: ANY,
                coord: Coord::Value,
                target: mode.clamp(floor.min(top), top.max(floor)),
                bound: Box::new(move |v, up| {
                    if (up && v > top) || (!up && v < floor) {
                        return None;
                    }
                    // d|gain|/dR_fb = att/(offset + v): gain points per ohm of R_fb.
                    let s_gain = w_gain * form.att / (g * (form.offset + v));
                    let want = form.r_fb_for(g, v);
                    Some(safe(two_v_floor(s_gain, want, s_off, p.rp)))
                }),
            }
        }
    }
}

/// The divider's part of a log model: the nominal ratio window the swing leaves (as rows
/// on z = ln(R_lo/R_hi), since x = R_lo/(R_hi + R_lo) is the logistic of z) and the ratio
/// part of the offset, V_s·|x − k| ≥ V_s·s·|z − z_k| with s the least slope x(1 − x) of
/// the logistic inside the window (the mean value theorem), plus I_os/2·R_fb, which the
/// offset the goal counts always holds (`common::offset_error`). `gain` is a lower bound
/// of the worst-case highest |gain| (for the swing an input peak needs).
pub fn divider_log<'s>(
    spec: &'s Spec,
    hi: usize,
    lo: usize,
    r_fb: usize,
    gain: f64,
    m: &mut super::plan::LogModel<'s>,
) {
    use super::plan::{AbsTerm, LogRow, SlotSum};
    let (x_lo, x_hi) = ratio_window(spec, swing_needed(spec, gain));
    let z = || {
        SlotSum::default()
            .with(lo, |p| p.value.ln())
            .with(hi, |p| -p.value.ln())
    };
    let logit = |x: f64| (x / (1.0 - x)).ln();
    if x_lo > 0.0 && x_lo < 1.0 {
        m.rows.push(LogRow {
            name: "divider_ratio_low",
            sum: z(),
            at_least: true,
            limit: logit(x_lo) - SLACK,
        });
    }
    if x_hi > 0.0 && x_hi < 1.0 {
        m.rows.push(LogRow {
            name: "divider_ratio_high",
            sum: z(),
            at_least: false,
            limit: logit(x_hi) + SLACK,
        });
    }
    let k = spec.bias_target() / spec.supply;
    let w = spec.goals.weight(crate::vocab::Goal::Offset) / 0.1;
    if x_lo > 0.0 && x_hi < 1.0 && x_lo <= k && k <= x_hi {
        let slope = (x_lo * (1.0 - x_lo)).min(x_hi * (1.0 - x_hi));
        let weight = w * spec.supply * slope * (1.0 - 1e-9);
        m.terms.push(AbsTerm {
            name: "divider_ratio",
            sum: z(),
            target: logit(k),
            above: weight,
            below: weight,
        });
    }
    let c = spec.amplifier.input_offset_current / 2.0;
    m.points = std::mem::take(&mut m.points).with(r_fb, move |p| w * c * p.value * (1.0 - 1e-9));
}

/// The nominal gain window's rows, `gain_low` and `gain_high`: `sum(false)` (the parts at
/// the ends that lower the gain) at least `low`, `sum(true)` at most `high`, each when
/// given (ln values).
pub fn gain_window_log<'s>(
    sum: impl Fn(bool) -> super::plan::SlotSum<'s>,
    low: Option<f64>,
    high: Option<f64>,
    m: &mut super::plan::LogModel<'s>,
) {
    for (name, at_least, limit) in [("gain_low", true, low), ("gain_high", false, high)] {
        if let Some(limit) = limit {
            m.rows.push(super::plan::LogRow {
                name,
                sum: sum(!at_least),
                at_least,
                limit,
            });
        }
    }
}

/// A coupling network's row: ln C_low + ln(R_s + R_low) ≥ ln(1/(2π·f_c)) for the corner
/// `needed_capacitance` asks of the network alone (`r_slot` the resistor it works against,
/// if a slot; `r_fixed` a fixed resistance in series with it).
pub fn network_log<'s>(
    spec: &'s Spec,
    name: &'static str,
    cap: usize,
    r_slot: Option<usize>,
    r_fixed: f64,
    loss: bool,
    m: &mut super::plan::LogModel<'s>,
) {
    use super::plan::{LogRow, SlotSum};
    use common::end;
    // C·R ≥ the capacitance needed against 1 Ω.
    let Some(cr) = common::needed_capacitance(spec, 1.0, loss) else {
        return;
    };
    let mut sum = SlotSum::default().with(cap, move |p| end(spec, p, false).ln());
    let limit = match r_slot {
        Some(r) => {
            sum = sum.with(r, move |p| (r_fixed + end(spec, p, false)).ln());
            cr.ln()
        }
        None => (cr / r_fixed).ln(),
    };
    m.rows.push(LogRow {
        name,
        sum,
        at_least: true,
        limit: limit - SLACK,
    });
}
