//! Stages: one module per circuit behind one trait, and the registry that maps a kind to it.
//!
//! A stage knows its slots, its equations (gain, response, DC point, capacitor bias) and how its
//! search decomposes into groups of coupled slots. The analysis and the search are generic over
//! this trait; see DEVELOPERS.md, "Adding a stage".

pub mod inverting;
pub mod layout;
pub mod non_inverting;

use crate::build::Part;
use crate::spec::{Spec, StageKind};
use crate::stock::inventory::PartKind;
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

    /// Search plan: groups of coupled slots, decided in this order. Every slot is in one group.
    fn groups(&self) -> &'static [Group];
    /// Context-free part of group `g`'s objective (its slots only), `None` when the group's
    /// own slots already break a requirement. A lower bound of `partial`.
    fn group_base(&self, spec: &Spec, g: usize, parts: &[Option<&Part>]) -> Option<f64>;
    /// Group `g`'s share of the objective once it and every earlier group are assigned, `None`
    /// when a requirement is surely broken. Must never reject a build the exact analysis
    /// accepts (a relaxation), and the shares must add up to the objective's stage terms.
    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<&Part>]) -> Option<f64>;

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

    /// For a one-capacitor group whose requirements only get easier with more capacitance: the
    /// least capacitance its part must keep at the low end of its tolerance (nominal in
    /// nominal mode), given the parts assigned so far; `None` while unknown. The search uses
    /// it as a look-ahead bound, so it must never exceed what the exact analysis needs.
    fn min_capacitance(&self, _spec: &Spec, _g: usize, _parts: &[Option<&Part>]) -> Option<f64> {
        None
    }

    /// For a two-slot group, how to enumerate it lazily instead of as a full product (the
    /// search then visits pairs near the target first). `None`: full product.
    fn pair_plan<'s>(&self, _spec: &'s Spec, _g: usize) -> Option<PairPlan<'s>> {
        None
    }
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

/// The inner value an outer part wants (see [`PairPlan`]).
pub type TargetFn<'s> = Box<dyn Fn(&Part) -> Option<f64> + 's>;
/// Lower bound for an inner value next to an outer part (see [`PairPlan`]).
pub type BoundFn<'s> = Box<dyn Fn(&Part, f64) -> Option<f64> + 's>;

/// Lazy enumeration of a two-slot group: for each `outer` candidate the `inner` value it wants,
/// and a lower bound of the group's stage share that grows as the inner value moves away from
/// that target on either side.
pub struct PairPlan<'s> {
    pub outer: usize,
    pub inner: usize,
    /// The inner value the outer part wants; `None` when the outer part alone is infeasible.
    pub target: TargetFn<'s>,
    /// Lower bound of `group_base` minus the slot points, for an inner value: nondecreasing
    /// moving away from the target on each side; `None` when this value and every value
    /// farther out on that side are infeasible.
    pub bound: BoundFn<'s>,
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
pub(crate) mod common {
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
    pub fn end(spec: &Spec, part: &Part, high: bool) -> f64 {
        if spec.worst_case() {
            part.at(high)
        } else {
            part.value
        }
    }

    /// Divider output extremes over the divider's tolerances, ignoring op-amp errors (which
    /// widen the range symmetrically, so leaving them out is the optimistic side).
    pub fn divider_range(spec: &Spec, hi: &Part, lo: &Part) -> (f64, f64) {
        let vmin =
            spec.supply * end(spec, lo, false) / (end(spec, hi, true) + end(spec, lo, false));
        let vmax = spec.supply * end(spec, lo, true) / (end(spec, hi, false) + end(spec, lo, true));
        (vmin, vmax)
    }

    /// Relaxed `bias_current_max`: the nominal divider current (the worst case is higher).
    pub fn divider_current_ok(spec: &Spec, hi: &Part, lo: &Part) -> bool {
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
    pub fn cap_ok(part: &Part, volts: f64) -> bool {
        match part.voltage_rating() {
            Some(rating) => volts.abs() <= rating * 0.8 * (1.0 + SLACK),
            None => true,
        }
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

/// Lazy plans shared by the single-supply stages.
pub(crate) mod plans {
    use super::common::{self, SLACK};
    use super::PairPlan;
    use crate::spec::Spec;

    /// The bias divider: walk `lo` outward from the value that puts the divider exactly on the
    /// bias target, V_s·R_lo/(R_hi + R_lo) = V_t. The bound is the ratio part of the offset
    /// goal, monotone in R_lo on each side; past a nominal divider voltage that already leaves
    /// too little swing, every farther value fails too (worst case ≤ nominal). With
    /// `rp_min`, values below the target whose nominal R_hi ∥ R_lo is too small end that side
    /// (R_p grows with R_lo).
    pub fn divider<'s>(spec: &'s Spec, hi: usize, lo: usize, rp_min: Option<f64>) -> PairPlan<'s> {
        let k = spec.bias_target() / spec.supply;
        let target = move |r_hi: f64| r_hi * k / (1.0 - k);
        PairPlan {
            outer: hi,
            inner: lo,
            target: Box::new(move |p| Some(target(p.value))),
            bound: Box::new(move |p, r_lo| {
                let v_div = spec.supply * r_lo / (p.value + r_lo);
                if spec.output_peak.is_some()
                    && !common::swing_ok(spec, common::swing(spec, v_div, v_div), 1.0)
                {
                    return None;
                }
                if let Some(min) = rp_min {
                    if r_lo < target(p.value)
                        && common::parallel(p.value, r_lo) < min * (1.0 - SLACK)
                    {
                        return None;
                    }
                }
                if let Some(max) = spec.bias_current_max {
                    // The divider current grows as R_lo falls: below the target, once it is
                    // too much it stays too much.
                    if r_lo < target(p.value)
                        && spec.supply / (p.value + r_lo) > max * (1.0 + SLACK)
                    {
                        return None;
                    }
                }
                // divider_error = |V_s·x − V_t| + (I_os/2)·R_hi·x with x = R_lo/(R_hi + R_lo):
                // linear in x on each side of the target, so it grows outward on both sides
                // whenever (I_os/2)·R_hi < V_s; otherwise the ratio part alone is the bound.
                let ios_half = spec.amplifier.input_offset_current / 2.0;
                let err = if ios_half * p.value < spec.supply {
                    common::divider_error(spec, p.value, r_lo)
                } else {
                    (v_div - spec.bias_target()).abs()
                };
                Some(common::offset_points(spec, err))
            }),
        }
    }

    /// A gain pair whose nominal |gain| is `inner / (offset + outer) + plus` (inverting:
    /// R_fb/(R_s + R_in); non-inverting: 1 + R_fb/R_g): walk `inner` outward from the value
    /// that gives the target gain. The bound is the gain goal itself (monotone in the inner
    /// value on each side); past the tolerance window at nominal, every farther value fails.
    pub fn gain<'s>(
        spec: &'s Spec,
        outer: usize,
        inner: usize,
        offset: f64,
        plus: f64,
        outer_ok: impl Fn(&crate::build::Part) -> bool + 's,
    ) -> PairPlan<'s> {
        let g = spec.gain.abs();
        PairPlan {
            outer,
            inner,
            target: Box::new(move |p| {
                outer_ok(p).then(|| (g - plus).max(0.0) * (offset + p.value))
            }),
            bound: Box::new(move |p, v| {
                let gain = plus + v / (offset + p.value);
                if let Some(t) = spec.gain_tolerance {
                    if gain < g * (1.0 - t) * (1.0 - SLACK) || gain > g * (1.0 + t) * (1.0 + SLACK)
                    {
                        return None;
                    }
                }
                Some(common::gain_points(spec, gain.copysign(spec.gain)))
            }),
        }
    }
}
