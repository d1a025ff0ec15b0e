//! Stages: one module per circuit behind one trait, and the registry that maps a kind to it.
//!
//! A stage knows its slots, its equations (gain, response, DC point, capacitor bias) and how its
//! search decomposes into groups of coupled slots. The analysis and the search are generic over
//! this trait; see DEVELOPERS.md, "Adding a stage".

pub mod inverting;
pub mod layout;
pub mod non_inverting;

use crate::build::{Part, SlotValue};
use crate::spec::Spec;
use crate::vocab::PartKind;
use crate::vocab::StageKind;
use num_complex::Complex64;

/// One position in the circuit that a part fills. Names are the public contract (JSON,
/// `--lock`, `--set`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SlotDef {
    pub name: &'static str,
    pub kind: PartKind,
    /// What the part does, for reports.
    pub role: &'static str,
}

/// Op-amp input errors at one corner of the DC worst case. Currents flow into the inputs;
/// `vos` is added to the differential input (the amplifier drives V− to V+ + vos).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DcErrors {
    pub ib_plus: f64,
    pub ib_minus: f64,
    pub vos: f64,
}

impl DcErrors {
    pub const NONE: DcErrors = DcErrors {
        ib_plus: 0.0,
        ib_minus: 0.0,
        vos: 0.0,
    };

    /// Nominal: both inputs draw the datasheet bias current, no offset (the sign of a bias
    /// current depends on the input transistors, so "nominal" takes it as flowing in).
    pub fn nominal(spec: &Spec) -> DcErrors {
        let ib = spec.amplifier.input_bias_current;
        DcErrors {
            ib_plus: ib,
            ib_minus: ib,
            vos: 0.0,
        }
    }

    /// The eight corners of (bias-current sign, offset-current sign, offset-voltage sign):
    /// I_b± = ±I_b ± I_os/2 and ±V_os.
    pub fn corners(spec: &Spec) -> Vec<DcErrors> {
        let a = &spec.amplifier;
        let mut out = Vec::with_capacity(8);
        for sb in [-1.0, 1.0] {
            for so in [-1.0, 1.0] {
                for sv in [-1.0, 1.0] {
                    let ib = sb * a.input_bias_current;
                    let half = so * a.input_offset_current / 2.0;
                    out.push(DcErrors {
                        ib_plus: ib + half,
                        ib_minus: ib - half,
                        vos: sv * a.input_offset_voltage,
                    });
                }
            }
        }
        out
    }
}

/// The DC operating point, capacitors open.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DcPoint {
    pub v_plus: f64,
    pub v_minus: f64,
    pub v_out: f64,
    /// Current down the bias divider.
    pub divider_current: f64,
}

/// A coupling network: a capacitor and the resistance it works against, forming a high-pass
/// corner 1/(2πRC).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Network {
    pub name: &'static str,
    pub cap_slot: usize,
    pub resistance: f64,
    pub capacitance: f64,
}

impl Network {
    /// First-order corner 1/(2πRC) (any circuit-theory text).
    pub fn corner(&self) -> f64 {
        1.0 / (2.0 * std::f64::consts::PI * self.resistance * self.capacitance)
    }
}

/// DC across a capacitor: `volts` is V(`a_node`) − V(`b_node`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CapBias {
    pub slot: usize,
    pub volts: f64,
    pub a_node: &'static str,
    pub b_node: &'static str,
}

/// The op-amp's open-loop gain a(s): single pole, DC gain `A0`, unity-gain frequency GBW.
/// `None` GBW means ideal (infinite gain).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OpAmp {
    pub gbw: Option<f64>,
}

/// DC open-loop gain used with a finite GBW: 10^6 (120 dB), a typical figure (common practice);
/// the same number goes into the SPICE model so both see the same amplifier.
pub const OPEN_LOOP_GAIN: f64 = 1e6;

impl OpAmp {
    pub fn of(spec: &Spec) -> OpAmp {
        OpAmp {
            gbw: spec.amplifier.gbw,
        }
    }

    /// 1/a(jω), zero for an ideal amplifier.
    pub fn inverse_gain(&self, f: f64) -> Complex64 {
        match self.gbw {
            None => Complex64::new(0.0, 0.0),
            Some(gbw) => {
                let pole = gbw / OPEN_LOOP_GAIN;
                Complex64::new(1.0, f / pole) / OPEN_LOOP_GAIN
            }
        }
    }

    /// Closed-loop factor 1/(1 + 1/(aβ)) that turns the ideal gain into the real one
    /// (feedback theory: A_cl = (1/β) · aβ/(1 + aβ)).
    pub fn loop_factor(&self, f: f64, beta: Complex64) -> Complex64 {
        let one = Complex64::new(1.0, 0.0);
        one / (one + self.inverse_gain(f) / beta)
    }
}

/// A search group: slots whose choice is coupled and decided together.
pub type Group = &'static [usize];

/// A node of the stage's SPICE netlist (`report::spice` gives each its name). The fixed
/// nodes are the same in every stage, so a deck written for one netlist runs on any.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Node {
    /// `0`.
    Ground,
    /// `vcc`, the single supply.
    Supply,
    /// The stage's input terminal: the source EMF node `in`, or the far side of the source
    /// resistance when the spec has one.
    Input,
    /// The op-amp's + input pin, `inp`.
    PlusInput,
    /// The op-amp's − input pin, `inn`.
    MinusInput,
    /// The op-amp's output, `amp_out`.
    AmpOut,
    /// The load side of the output coupling, `out` (the load sits from here to ground).
    Out,
    /// A node of the stage's own, named by the stage (lower case, unique in the stage, none
    /// of the fixed names).
    Internal(&'static str),
}

/// Where one slot sits in the circuit: its part goes between nodes `a` and `b`. A two-piece
/// realisation becomes two elements (series: through a middle node; parallel: both across
/// `a`–`b`); the netlist writer does that, numbering and value formatting.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SpiceElement {
    pub slot: usize,
    pub a: Node,
    pub b: Node,
}

/// The circuit behind a stage kind. Every method takes the slot values in the stage's slot
/// order (SI base units); nothing here knows about stock, search or reports.
pub trait Stage: Send + Sync {
    fn kind(&self) -> StageKind;
    fn slots(&self) -> &'static [SlotDef];
    /// One line describing the circuit, for reports.
    fn topology(&self) -> &'static str;

    /// Mid-band gain from source EMF to load with an ideal op-amp (capacitors shorted), V/V.
    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64;
    /// Noise gain 1/β at mid-band, which sets the bandwidth with a finite GBW.
    fn noise_gain(&self, spec: &Spec, v: &[f64]) -> f64;
    /// Resistance the source sees at mid-band.
    fn input_resistance(&self, spec: &Spec, v: &[f64]) -> f64;
    /// Transfer function from source EMF to the load at frequency `f`.
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64;
    /// The coupling networks, in the order reports list them.
    fn networks(&self, spec: &Spec, v: &[f64]) -> Vec<Network>;
    /// Loss in dB of one network at `f` with an ideal op-amp; the networks of our stages
    /// are buffered from each other, so the stage's loss is their sum.
    fn network_loss_db(&self, spec: &Spec, v: &[f64], network: usize, f: f64) -> f64;
    /// DC point with the given op-amp errors (capacitors open, no leakage).
    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint;
    /// The nominal divider output with no bias current.
    fn divider_voltage(&self, spec: &Spec, v: &[f64]) -> f64;
    /// Nominal output DC error bound, V (see `common::offset_error`): what the `offset` goal counts.
    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64;
    /// DC across each capacitor at a DC point.
    fn cap_bias(&self, spec: &Spec, v: &[f64], dc: &DcPoint) -> Vec<CapBias>;
    /// Power in each resistor slot at a DC point carrying a sine of `out_peak` at the output.
    fn resistor_power(
        &self,
        spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)>;
    /// The textbook values before any rounding to stock, where the stage can say.
    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>>;

    /// Search plan: groups of coupled slots, decided in this order (one or two slots each;
    /// in a pair the first slot is walked first). Every slot is in exactly one group. The
    /// order may depend on the spec (a group whose share needs another group's parts comes
    /// after it).
    fn groups(&self, spec: &Spec) -> &'static [Group];
    /// Group `g`'s share of the objective's stage terms once it and every earlier group are
    /// assigned, `None` when a requirement is surely broken. Must never reject a build the
    /// exact analysis accepts (a relaxation), and the shares of all groups must add up to the
    /// objective's stage terms (gain and offset points). `parts` may also hold later slots
    /// that are locked; a group's share must not depend on them.
    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<SlotValue>]) -> Option<f64>;
    /// How the search should walk the `k`-th slot of group `g`, given the parts assigned so
    /// far (earlier groups, earlier slots of this group, and locked slots): around which
    /// value, and a lower bound of the group's share for a candidate (see [`WalkPlan`]).
    fn walk<'s>(
        &self,
        spec: &'s Spec,
        g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s>;

    /// The stage's requirements and objective as far as they are linear in the logarithms
    /// of the slot values, for the MILP engine (`search::milp`): rows that every build the
    /// exact analysis accepts satisfies, and objective terms whose sum never exceeds the
    /// stage terms (gain and offset points) of such a build. The default says nothing, which
    /// is valid and only makes the MILP engine judge more builds.
    fn log_model<'s>(&self, _spec: &'s Spec) -> LogModel<'s> {
        LogModel::default()
    }

    /// The circuit for the SPICE netlist (`report::spice`): between which nodes each slot
    /// sits, every slot once, in slot order. The source, supply, op-amp (its pins are
    /// `PlusInput`, `MinusInput`, `AmpOut`) and load are the same for every stage and are
    /// added by the writer; the stage only wires its slots, so its netlist cannot drift from
    /// its equations without the ngspice test (tests/ngspice.rs) noticing.
    fn spice_elements(&self) -> &'static [SpiceElement];

    /// The schematic (`report::schematic` draws it): where each slot's symbol goes and how the
    /// wires run. A test there checks that its connections are exactly `spice_elements`.
    fn schematic_layout(&self) -> &'static layout::Layout;

    /// The impedances around the op-amp at `f` and where each resistor's noise sits, for the
    /// noise analysis (`analysis::noise`; its module docs give the transfer of each place).
    fn noise_circuit(&self, spec: &Spec, v: &[f64], f: f64) -> NoiseCircuit;
}

/// Where a resistor's noise voltage sits (see `analysis::noise`).
#[derive(Debug, Clone, Copy)]
pub enum NoisePlace {
    /// In series with Z_f.
    Feedback,
    /// In series with Z_s.
    Shunt,
    /// In series with a branch of this impedance from the + input to AC ground.
    Plus(Complex64),
}

/// The impedances around the op-amp at one frequency — Z_f (output to −), Z_s (− to AC
/// ground), Z_p (+ to AC ground) — the output coupling H_out, and the resistors that make
/// noise, by name, value and place.
pub struct NoiseCircuit {
    pub z_f: Complex64,
    pub z_s: Complex64,
    pub z_p: Complex64,
    pub h_out: Complex64,
    pub resistors: Vec<(&'static str, f64, NoisePlace)>,
}

/// A capacitor's impedance 1/(jωC).
pub(crate) fn cap_z(c: f64, f: f64) -> Complex64 {
    Complex64::new(0.0, -1.0 / (2.0 * std::f64::consts::PI * f * c))
}

/// Which figure of a candidate a walk orders by: its nominal value, or the low end of its
/// tolerance (what a "large enough" requirement needs at worst case).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Coord {
    Value,
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
    pub coord: Coord,
    pub target: f64,
    pub bound: BoundFn<'s>,
    /// Every candidate whose coordinate is outside `[window.0, window.1]` fails a requirement
    /// (whichever side of the target it is on), so the search can drop it without asking
    /// `bound`; `ANY` when the plan knows no such interval.
    pub window: (f64, f64),
}

/// The window of a plan that knows none (see [`WalkPlan::window`]).
pub const ANY: (f64, f64) = (f64::NEG_INFINITY, f64::INFINITY);

impl WalkPlan<'static> {
    /// No preference: every candidate, cheapest first (a walk up from the bottom).
    pub fn free() -> WalkPlan<'static> {
        WalkPlan {
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
            window: ANY,
            coord,
            target,
            bound: Box::new(move |v, up| (!up || v <= target).then_some(0.0)),
        }
    }
}

/// A number per candidate, summed over some slots: Σᵢ fᵢ(part in slot sᵢ). The MILP engine
/// turns it into Σ_c x[s][c]·f(c) over its choice variables.
pub type SlotFn<'s> = Box<dyn Fn(&SlotValue) -> f64 + 's>;

/// A sum over slots of a number per candidate (see [`SlotFn`]).
#[derive(Default)]
pub struct SlotSum<'s> {
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
    pub sum: SlotSum<'s>,
    pub at_least: bool,
    pub limit: f64,
}

/// An objective term `above·max(sum − target, 0) + below·max(target − sum, 0)` (points).
pub struct AbsTerm<'s> {
    pub name: &'static str,
    pub sum: SlotSum<'s>,
    pub target: f64,
    pub above: f64,
    pub below: f64,
}

impl AbsTerm<'_> {
    pub fn eval(&self, parts: &[SlotValue]) -> f64 {
        let d = self.sum.eval(parts) - self.target;
        if d >= 0.0 {
            self.above * d
        } else {
            -self.below * d
        }
    }
}

/// What of a stage is linear in the logarithms of its values (see `Stage::log_model`).
#[derive(Default)]
pub struct LogModel<'s> {
    pub rows: Vec<LogRow<'s>>,
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
    pub mode: f64,
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

/// The stage for a kind.
pub fn stage_for(kind: StageKind) -> &'static dyn Stage {
    match kind {
        StageKind::Inverting => &inverting::Inverting,
        StageKind::NonInverting => &non_inverting::NonInverting,
    }
}

/// Index of a slot by name.
pub fn slot_index(stage: &dyn Stage, name: &str) -> Option<usize> {
    stage.slots().iter().position(|s| s.name == name)
}

/// Shared equations of the single-supply stages.
pub mod common {
    use super::*;
    use std::f64::consts::PI;

    pub fn parallel(a: f64, b: f64) -> f64 {
        a * b / (a + b)
    }

    /// First-order high-pass R/(R + 1/(jωC)) (circuit theory).
    pub fn high_pass(r: f64, c: f64, f: f64) -> Complex64 {
        let zc = Complex64::new(0.0, -1.0 / (2.0 * PI * f * c));
        Complex64::new(r, 0.0) / (Complex64::new(r, 0.0) + zc)
    }

    /// Loss of a first-order high-pass at f: 10·log10(1 + (fc/f)²) dB.
    pub fn high_pass_loss_db(r: f64, c: f64, f: f64) -> f64 {
        let fc = 1.0 / (2.0 * PI * r * c);
        10.0 * (1.0 + (fc / f).powi(2)).log10()
    }

    /// DC point of a single-supply stage whose + input sits on a divider and whose − input
    /// sees `r_minus` to the output at DC (capacitors open): V+ = V_div − I_b+·R_p,
    /// V− = V+ + V_os, V_out = V− + I_b−·R_fb (KCL at each input).
    pub fn dc_point(spec: &Spec, r_hi: f64, r_lo: f64, r_fb: f64, e: &DcErrors) -> DcPoint {
        let v_div = spec.supply * r_lo / (r_hi + r_lo);
        let rp = parallel(r_hi, r_lo);
        let v_plus = v_div - e.ib_plus * rp;
        let v_minus = v_plus + e.vos;
        DcPoint {
            v_plus,
            v_minus,
            v_out: v_minus + e.ib_minus * r_fb,
            divider_current: spec.supply / (r_hi + r_lo),
        }
    }

    /// Nominal output DC error bound: |V_div − target| + I_b·|R_fb − R_p| + (I_os/2)·(R_fb + R_p).
    /// With I_b± = I_b ± I_os/2 the bias currents shift the output by
    /// I_b·(R_fb − R_p) − (I_os/2)·(R_fb + R_p); compensation (R_p = R_fb) removes the first
    /// term only, so large resistances still cost through the second (any op-amp text, "bias
    /// current compensation").
    pub fn offset_error(spec: &Spec, r_hi: f64, r_lo: f64, r_fb: f64) -> f64 {
        let rp = parallel(r_hi, r_lo);
        divider_error(spec, r_hi, r_lo)
            + spec.amplifier.input_bias_current * (r_fb - rp).abs()
            + spec.amplifier.input_offset_current / 2.0 * r_fb
    }

    /// The part of `offset_error` the divider alone decides (a lower bound of it).
    pub fn divider_error(spec: &Spec, r_hi: f64, r_lo: f64) -> f64 {
        let v_div = spec.supply * r_lo / (r_hi + r_lo);
        (v_div - spec.bias_target()).abs()
            + spec.amplifier.input_offset_current / 2.0 * parallel(r_hi, r_lo)
    }

    /// Weighted points of the offset term: `offset` points per 100 mV.
    pub fn offset_points(spec: &Spec, error_v: f64) -> f64 {
        spec.goals.offset * error_v / 0.1
    }

    /// Weighted points of the gain term: `gain_error` points per 1 %.
    pub fn gain_points(spec: &Spec, gain: f64) -> f64 {
        spec.goals.gain_error * gain_error(spec, gain) / 0.01
    }

    pub fn gain_error(spec: &Spec, gain: f64) -> f64 {
        (gain - spec.gain).abs() / spec.gain.abs()
    }

    /// Slack for the search's relaxations, so rounding never rejects what the exact analysis
    /// would accept.
    pub const SLACK: f64 = 1e-6;

    /// Worst-case (or nominal) gain range inside the tolerance window, when one is given.
    pub fn gain_window_ok(spec: &Spec, g_lo: f64, g_hi: f64) -> bool {
        match spec.gain_tolerance {
            None => true,
            Some(t) => {
                let target = spec.gain.abs();
                let (lo, hi) = (g_lo.abs().min(g_hi.abs()), g_lo.abs().max(g_hi.abs()));
                lo >= target * (1.0 - t) * (1.0 - SLACK) && hi <= target * (1.0 + t) * (1.0 + SLACK)
            }
        }
    }

    /// The end of a part's tolerance to use: worst case takes the given end, nominal mode the
    /// nominal value.
    pub fn end(spec: &Spec, part: &SlotValue, high: bool) -> f64 {
        if spec.worst_case() {
            part.at(high)
        } else {
            part.value
        }
    }

    /// Divider output extremes over the divider's tolerances, ignoring op-amp errors (which
    /// widen the range symmetrically, so leaving them out is the optimistic side).
    pub fn divider_range(spec: &Spec, hi: &SlotValue, lo: &SlotValue) -> (f64, f64) {
        let vmin =
            spec.supply * end(spec, lo, false) / (end(spec, hi, true) + end(spec, lo, false));
        let vmax = spec.supply * end(spec, lo, true) / (end(spec, hi, false) + end(spec, lo, true));
        (vmin, vmax)
    }

    /// Relaxed `bias_current_max`: the nominal divider current (the worst case is higher).
    pub fn divider_current_ok(spec: &Spec, hi: &SlotValue, lo: &SlotValue) -> bool {
        spec.bias_current_max
            .is_none_or(|max| spec.supply / (hi.value + lo.value) <= max * (1.0 + SLACK))
    }

    /// Output peak the headroom allows around a DC range.
    pub fn swing(spec: &Spec, dc_min: f64, dc_max: f64) -> f64 {
        (dc_min - spec.headroom.0).min(spec.supply - spec.headroom.1 - dc_max)
    }

    /// Relaxed swing requirement: the output swing, or the input range at the highest gain.
    pub fn swing_ok(spec: &Spec, swing: f64, gain_max: f64) -> bool {
        if let Some(out) = spec.output_peak {
            return swing >= out * (1.0 - SLACK) - SLACK;
        }
        if let Some(inp) = spec.input_peak {
            return swing / gain_max.abs() >= inp * (1.0 - SLACK) - SLACK;
        }
        swing > -SLACK
    }

    /// 10·log10(2): the loss at a −3 dB corner (half the power).
    pub const THREE_DB: f64 = 3.010_299_956_639_812;

    /// The loss the stage may take at the band's low edge, summed over its buffered coupling
    /// networks: `band_loss_max`; or with neither it nor `corner_low_max` given, 3 dB (the
    /// whole response's −3 dB corner must then sit at or below the band's low edge); or none.
    pub fn loss_budget(spec: &Spec) -> Option<f64> {
        match (spec.band_loss_max, spec.corner_low_max) {
            (Some(max), _) => Some(max),
            (None, None) => Some(THREE_DB),
            (None, Some(_)) => None,
        }
    }

    /// Whether the summed worst-case losses of the networks fit `loss_budget`.
    pub fn losses_ok(spec: &Spec, total_db: f64) -> bool {
        loss_budget(spec).is_none_or(|max| total_db <= max * (1.0 + SLACK) + SLACK)
    }

    /// Relaxed per-network checks of one coupling network: its worst corner and its own loss
    /// at the band's low edge against the whole budget; with neither limit given, a plain
    /// first-order network's corner at or below the band's low edge (the whole response's
    /// −3 dB corner lies above each section's, and must sit at or below the band's edge).
    pub fn plain_network_ok(spec: &Spec, worst_corner: f64, worst_loss_db: f64) -> bool {
        if spec.corner_low_max.is_none()
            && spec.band_loss_max.is_none()
            && worst_corner > spec.band.0 * (1.0 + SLACK)
        {
            return false;
        }
        network_ok(spec, worst_corner, worst_loss_db)
    }

    /// Relaxed per-network checks of one coupling network: its worst corner and its own loss
    /// at the band's low edge against the whole budget.
    pub fn network_ok(spec: &Spec, worst_corner: f64, worst_loss_db: f64) -> bool {
        if let Some(max) = spec.corner_low_max {
            if worst_corner > max * (1.0 + SLACK) {
                return false;
            }
        }
        if let Some(max) = spec.band_loss_max {
            if worst_loss_db > max * (1.0 + SLACK) + SLACK {
                return false;
            }
        }
        true
    }

    /// Relaxed rating check at the nominal DC point (the exact analysis checks every tolerance
    /// corner and the polarity): DC stress ≤ 80 % of the rating (common-practice derating).
    pub fn cap_ok(part: &SlotValue, volts: f64) -> bool {
        match part.rating {
            Some(rating) => volts.abs() <= rating * 0.8 * (1.0 + SLACK),
            None => true,
        }
    }

    /// The vertices of the tolerance box of slot values (2^n), or just the nominal point.
    pub fn value_vertices(spec: &Spec, parts: &[&SlotValue]) -> Vec<Vec<f64>> {
        let nominal: Vec<f64> = parts.iter().map(|p| p.value).collect();
        if !spec.worst_case() {
            return vec![nominal];
        }
        (0..1usize << parts.len())
            .map(|mask| {
                (0..parts.len())
                    .map(|i| parts[i].at(mask >> i & 1 == 1))
                    .collect()
            })
            .collect()
    }

    /// All vertices of the tolerance box of `parts` (2^n), or just the nominal point.
    pub fn vertices(spec: &Spec, parts: &[&Part]) -> Vec<Vec<f64>> {
        vertices_where(spec, parts, |_| true)
    }

    /// Vertices over the parts `vary` selects, the others at nominal: 2^k points.
    pub fn vertices_where(
        spec: &Spec,
        parts: &[&Part],
        vary: impl Fn(&Part) -> bool,
    ) -> Vec<Vec<f64>> {
        let nominal: Vec<f64> = parts.iter().map(|p| p.value).collect();
        if !spec.worst_case() {
            return vec![nominal];
        }
        let varied: Vec<usize> = (0..parts.len()).filter(|&i| vary(parts[i])).collect();
        (0..1usize << varied.len())
            .map(|mask| {
                let mut v = nominal.clone();
                for (bit, &i) in varied.iter().enumerate() {
                    v[i] = parts[i].at(mask >> bit & 1 == 1);
                }
                v
            })
            .collect()
    }
}

/// Corner each of `n` coupling networks should have so that the spec holds with equal shares:
/// the smaller of `corner_low_max` and the corner that spends 1/n of `band_loss_max` at the
/// band's low edge (first-order loss 10·log10(1 + (fc/f)²) solved for fc). With neither given,
/// a decade below the band (common practice).
pub fn common_corner_target(spec: &Spec, n: usize) -> Option<f64> {
    let f = spec.band.0;
    let from_loss = spec
        .band_loss_max
        .map(|l| f * (10f64.powf(l / (10.0 * n as f64)) - 1.0).sqrt());
    match (spec.corner_low_max, from_loss) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (Some(a), None) => Some(a),
        (None, Some(b)) => Some(b),
        (None, None) => Some(f / 10.0),
    }
}

/// The least capacitance a first-order coupling network against `r` (its low-end value) needs
/// for the spec's corner and band-loss limits, each alone: C ≥ 1/(2π·R·f_c) with f_c the
/// corner limit, or the corner that spends the whole loss budget at the band's low edge,
/// f·√(10^(L/10) − 1) (first-order high-pass). With `loss` false only the corner limit counts.
pub fn needed_capacitance(spec: &Spec, r: f64, loss: bool) -> Option<f64> {
    let mut fc = f64::INFINITY;
    if let Some(max) = spec.corner_low_max {
        fc = fc.min(max);
    }
    if let (true, Some(l)) = (loss, spec.band_loss_max) {
        fc = fc.min(spec.band.0 * (10f64.powf(l / 10.0) - 1.0).sqrt());
    }
    if loss && spec.corner_low_max.is_none() && spec.band_loss_max.is_none() {
        // Then the whole response's −3 dB corner must sit at or below the band's low edge,
        // and a cascade's corner is above each first-order section's own corner.
        fc = fc.min(spec.band.0);
    }
    fc.is_finite()
        .then(|| 1.0 / (2.0 * std::f64::consts::PI * r * fc))
}

/// The least capacitance a first-order coupling network against `r` (its low-end value) may
/// have once other networks, buffered from it, have spent `spent` dB of the loss budget at
/// the band's low edge (`common::loss_budget`): the corner limit and the loss left, each with
/// the search's slack (as `common::network_ok` and the stages' summed-loss checks read them).
/// `Some(∞)` when no loss is left.
pub fn needed_capacitance_after(spec: &Spec, r: f64, spent: f64) -> Option<f64> {
    use common::SLACK;
    let mut fc = f64::INFINITY;
    if let Some(max) = spec.corner_low_max {
        fc = fc.min(max * (1.0 + SLACK));
    }
    if let Some(l) = common::loss_budget(spec) {
        let left = l * (1.0 + SLACK) + SLACK - spent;
        if left <= 0.0 {
            return Some(f64::INFINITY);
        }
        fc = fc.min(spec.band.0 * (10f64.powf(left / 10.0) - 1.0).sqrt());
    }
    Some(1.0 / (2.0 * std::f64::consts::PI * r * fc))
}

/// Walk plans shared by the single-supply stages: the bias divider and the gain pair.
pub(crate) mod plans {
    use super::common::{self, SLACK};
    use super::{two_v_floor, unimodal_sum, Coord, Term, WalkPlan, ANY};
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
    fn ratio_window(spec: &Spec, swing: f64) -> (f64, f64) {
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
        let w = spec.goals.offset / 0.1;
        let a = spec.supply;
        let b = spec.amplifier.input_bias_current;
        let c = spec.amplifier.input_offset_current / 2.0;
        // R_p < R_hi, so R_hi below the least input resistance fails, and so does every
        // smaller value.
        let floor = ctx.rp_min.map_or(0.0, |m| m * (1.0 - SLACK));
        match ctx.r_fb {
            Some(r) => WalkPlan {
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
        let w = spec.goals.offset / 0.1;
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
        match spec.gain_tolerance {
            Some(t) => (g * (1.0 - t) * (1.0 - SLACK), g * (1.0 + t) * (1.0 + SLACK)),
            None => (0.0, f64::INFINITY),
        }
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
        // window (a hair wider, so rounding never drops one the bound would pass).
        let window = (
            form.r_fb_for(g_lo, r_other) * (1.0 - 1e-9),
            form.r_fb_for(g_hi, r_other) * (1.0 + 1e-9),
        );
        let w_off = spec.goals.offset / 0.1;
        let b = spec.amplifier.input_bias_current;
        let c = spec.amplifier.input_offset_current / 2.0;
        // The gain rises with r_fb: past the window on the walk's side, every farther value
        // is out too.
        let outside = move |v: f64, up: bool| {
            let gain = form.gain(v, r_other);
            (up && gain > g_hi) || (!up && gain < g_lo)
        };
        let f_gain =
            move |v: f64| common::gain_points(spec, form.gain(v, r_other).copysign(spec.gain));
        if comp.is_none() {
            // The gain points alone: V-shaped about `mode`, so the clamped read is the gain
            // at max(v, mode) going up, min(v, mode) going down.
            return WalkPlan {
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
            spec.goals.offset / 0.1
                * (spec.amplifier.input_bias_current * (r_fb - p.rp).abs()
                    + spec.amplifier.input_offset_current / 2.0 * r_fb)
        });
        WalkPlan {
            window: ANY,
            coord: Coord::Value,
            target: mode.max(floor),
            bound: Box::new(move |v, up| {
                // The gain falls as the other resistor rises.
                let gain = form.gain(r_fb, v);
                if (up && gain < g_lo) || (!up && (gain > g_hi || v < floor)) {
                    return None;
                }
                let f_gain =
                    |v: f64| common::gain_points(spec, form.gain(r_fb, v).copysign(spec.gain));
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
                let w_gain = spec.goals.gain_error / 0.01;
                let s_off = spec.goals.offset / 0.1 * spec.amplifier.input_bias_current;
                let mode = if d > 0.0 {
                    p.rp / d - form.offset
                } else {
                    f64::INFINITY
                };
                WalkPlan {
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
        m: &mut super::LogModel<'s>,
    ) {
        use super::{AbsTerm, LogRow, SlotSum};
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
        let w = spec.goals.offset / 0.1;
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
        m.points =
            std::mem::take(&mut m.points).with(r_fb, move |p| w * c * p.value * (1.0 - 1e-9));
    }

    /// The nominal gain window's rows, `gain_low` and `gain_high`: `sum(false)` (the parts at
    /// the ends that lower the gain) at least `low`, `sum(true)` at most `high`, each when
    /// given (ln values).
    pub fn gain_window_log<'s>(
        sum: impl Fn(bool) -> super::SlotSum<'s>,
        low: Option<f64>,
        high: Option<f64>,
        m: &mut super::LogModel<'s>,
    ) {
        for (name, at_least, limit) in [("gain_low", true, low), ("gain_high", false, high)] {
            if let Some(limit) = limit {
                m.rows.push(super::LogRow {
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
        m: &mut super::LogModel<'s>,
    ) {
        use super::{LogRow, SlotSum};
        use common::end;
        // C·R ≥ the capacitance needed against 1 Ω.
        let Some(cr) = super::needed_capacitance(spec, 1.0, loss) else {
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
}
