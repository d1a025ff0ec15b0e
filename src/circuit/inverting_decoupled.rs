//! Single-supply inverting stage with a decoupled bias: the divider's node, which is the
//! + input, bypassed to ground by `c_bias` (`[stage] bias = "decoupled"`).
//!
//! ```text
//!            c_in     r_in            r_fb
//!   in ──┬──||────/\/\/──┬──────/\/\/────┬── amp_out ──||── out ──┐
//!        │ (source)      └──── (−) U1 ───┘            c_out       R_load
//!   vcc ─ r_bias_hi ─┬──┬─ (+)                                    │
//!           r_bias_lo   c_bias                                    ⏚
//!                   ⏚   ⏚
//! ```
//! The signal path is the inverting stage's (`circuit::inverting`): the + input carries no
//! signal, so the mid-band gain −R_fb/(R_s + R_in), the input resistance R_in and the DC point
//! (c_bias open) are unchanged. What changes is what reaches the + input from the bias
//! network: Z_p = R_bias_hi ∥ R_bias_lo ∥ 1/(jωC_bias), so the divider's noise and the supply
//! ripple are filtered above the bypass corner 1/(2π·R_p·C_bias) (first-order low-pass, any
//! circuit-theory text). Slots 0–5 are the inverting stage's, slot 6 is `c_bias`.

use super::common;
use super::inverting::{self, Inverting, C_IN, C_OUT, R_BIAS_HI, R_BIAS_LO, R_FB, R_IN};
use super::layout;
use super::plan::{Coord, LogModel, WalkPlan};
use super::traits::{Circuit, Drawing, SearchPlan};
use super::types::{
    cap_z, CapBias, DcErrors, DcPoint, Network, NoiseCircuit, NoisePlace, OpAmp, SlotDef,
    SpiceElement,
};
use crate::build::SlotValue;
use crate::interval::{Iv, Num};
use crate::objective::{Figures, NetworkFigure};
use crate::spec::Spec;
use crate::vocab::{PartKind, StageKind};
use num_complex::Complex64;

/// The inverting stage with its bias node bypassed (seven slots; see the module docs).
pub struct InvertingDecoupled;

/// Slot index of `c_bias`, the bias node's bypass capacitor to ground.
pub const C_BIAS: usize = 6;
/// The inverting stage's slot count: its slots come first, in its order.
const BASE: usize = 6;

const C_BIAS_DEF: SlotDef = SlotDef {
    name: "c_bias",
    kind: PartKind::Capacitor,
    role: "bias bypass, + input to ground: filters the divider's noise and the supply ripple",
};

const SLOTS: [SlotDef; 7] = {
    let b = inverting::SLOTS;
    [b[0], b[1], b[2], b[3], b[4], b[5], C_BIAS_DEF]
};

/// The bypass as a network: c_bias against the divider's R_p. Not in the signal path (no
/// share of the band's loss); its corner is checked against the band's low edge
/// (`analysis::ripple`) and, with `corner_low_max`, as every network's.
fn bypass<T: Num>(v: &[T]) -> NetworkFigure<T> {
    NetworkFigure {
        resistance: common::parallel(v[R_BIAS_HI], v[R_BIAS_LO]),
        capacitance: v[C_BIAS],
        plain: false,
        cap_slot: C_BIAS,
        shelf: None,
    }
}

impl Circuit for InvertingDecoupled {
    fn kind(&self) -> StageKind {
        StageKind::Inverting
    }

    fn slots(&self) -> &'static [SlotDef] {
        &SLOTS
    }

    fn topology(&self) -> &'static str {
        "single-supply inverting amplifier: AC-coupled input through r_in, feedback r_fb, + input on a bias divider bypassed by c_bias, AC-coupled output"
    }

    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        Inverting.mid_gain(spec, &v[..BASE])
    }

    fn noise_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        Inverting.noise_gain(spec, &v[..BASE])
    }

    fn input_resistance(&self, spec: &Spec, v: &[f64]) -> f64 {
        Inverting.input_resistance(spec, &v[..BASE])
    }

    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64 {
        Inverting.response(spec, &v[..BASE], opamp, f)
    }

    fn networks(&self, spec: &Spec, v: &[f64]) -> Vec<Network> {
        let mut n = Inverting.networks(spec, &v[..BASE]);
        n.push(Network {
            name: "bias bypass",
            cap_slot: C_BIAS,
            resistance: super::common::parallel(v[R_BIAS_HI], v[R_BIAS_LO]),
            capacitance: v[C_BIAS],
        });
        n
    }

    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint {
        Inverting.dc(spec, &v[..BASE], e)
    }

    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64 {
        Inverting.offset_error(spec, &v[..BASE])
    }

    fn cap_bias(&self, spec: &Spec, v: &[f64], dc: &DcPoint) -> Vec<CapBias> {
        let mut c = Inverting.cap_bias(spec, &v[..BASE], dc);
        c.push(CapBias {
            slot: C_BIAS,
            volts: dc.v_plus,
            a_node: "+ input side",
            b_node: "ground",
        });
        c
    }

    fn resistor_power(
        &self,
        spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)> {
        Inverting.resistor_power(spec, &v[..BASE], dc, out_peak)
    }

    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>> {
        let mut v = Inverting.ideal(spec);
        // The bypass corner a decade below the band's low edge (common practice).
        let rp = match (v[R_BIAS_HI], v[R_BIAS_LO]) {
            (Some(h), Some(l)) => Some(h * l / (h + l)),
            _ => None,
        };
        v.push(rp.map(|r| 1.0 / (2.0 * std::f64::consts::PI * r * spec.band.0 / 10.0)));
        v
    }

    /// The inverting stage's, with c_bias across the + input: Z_p = R_hi ∥ R_lo ∥ Z_cb, and
    /// each divider resistor's noise reaches the + input through its own branch (the
    /// transfer Z_p/R of `analysis::noise` now includes the bypass).
    fn noise_circuit(&self, spec: &Spec, v: &[f64], f: f64) -> NoiseCircuit {
        let mut nc = Inverting.noise_circuit(spec, &v[..BASE], f);
        let one = Complex64::new(1.0, 0.0);
        nc.z_p = one / (one / nc.z_p + one / cap_z(v[C_BIAS], f));
        for r in &mut nc.resistors {
            if r.0 == SLOTS[R_BIAS_HI].name || r.0 == SLOTS[R_BIAS_LO].name {
                r.2 = NoisePlace::Plus(Complex64::new(r.1, 0.0));
            }
        }
        nc
    }

    fn figures(&self, spec: &Spec, v: &[f64]) -> Figures<f64> {
        let mut f = Inverting.figures(spec, &v[..BASE]);
        f.networks.push(bypass(v));
        f
    }

    fn figure_bounds(&self, spec: &Spec, v: &[Iv]) -> Figures<Iv> {
        let mut f = Inverting.figure_bounds(spec, &v[..BASE]);
        f.networks.push(bypass(v));
        f
    }

    fn network_bounds(&self, spec: &Spec, v: &[Iv]) -> crate::objective::Networks<Iv> {
        let mut n = Inverting.network_bounds(spec, &v[..BASE]);
        n.push(bypass(v));
        n
    }

    fn gain_limit(&self, spec: &Spec) -> Option<f64> {
        Inverting.gain_limit(spec)
    }

    fn feedback_load(&self, spec: &Spec, v: &[f64]) -> f64 {
        Inverting.feedback_load(spec, &v[..BASE])
    }

    fn input_signal_per_output(&self, spec: &Spec, v: &[f64]) -> f64 {
        Inverting.input_signal_per_output(spec, &v[..BASE])
    }

    fn off_signal_path(&self) -> &'static [usize] {
        &[C_BIAS]
    }

    fn drawing(&self) -> &dyn Drawing {
        self
    }

    fn plan(&self) -> Option<&dyn SearchPlan> {
        Some(self)
    }
}

/// The inverting stage's plan for its six slots (every requirement it judges is judged the same
/// here, on the same figures, so its relaxations hold), then c_bias alone: the bypass's corner
/// within the band's low edge (`analysis::ripple`) and its rating, at no share of the circuit
/// terms (the figures are the inverting stage's).
impl SearchPlan for InvertingDecoupled {
    fn groups(&self, spec: &Spec) -> Vec<Vec<usize>> {
        let mut g = SearchPlan::groups(&Inverting, spec);
        g.push(vec![C_BIAS]);
        g
    }

    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<SlotValue>]) -> Option<f64> {
        let base = SearchPlan::groups(&Inverting, spec).len();
        if g < base {
            return SearchPlan::group_partial(&Inverting, spec, g, parts);
        }
        let c = parts.get(C_BIAS).and_then(Option::as_ref)?;
        let rp = largest_rp(spec, parts)?;
        // The worst corner 1/(2π·R_p·C) is at least this one (largest R_p, C at its low end).
        let corner = 1.0 / (2.0 * std::f64::consts::PI * rp * common::end(spec, c, false));
        if corner > spec.band.0 * (1.0 + common::SLACK) {
            return None;
        }
        if spec
            .corner_low_max
            .is_some_and(|m| corner > m * (1.0 + common::SLACK))
        {
            return None;
        }
        let (hi, lo) = (
            parts.get(R_BIAS_HI).and_then(Option::as_ref)?,
            parts.get(R_BIAS_LO).and_then(Option::as_ref)?,
        );
        let v_div = spec.supply * lo.value / (hi.value + lo.value);
        common::cap_ok(c, v_div).then_some(0.0)
    }

    fn walk<'s>(
        &'s self,
        spec: &'s Spec,
        g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s> {
        let base = SearchPlan::groups(&Inverting, spec).len();
        if g < base {
            return SearchPlan::walk(&Inverting, spec, g, k, parts);
        }
        // The divider is chosen (an earlier group): c_bias at least what the corner needs.
        let need = largest_rp(spec, parts).map_or(0.0, |rp| {
            1.0 / (2.0 * std::f64::consts::PI * rp * spec.band.0)
        });
        WalkPlan::at_least(Coord::low_end(spec), need)
    }

    fn log_model<'s>(&'s self, spec: &'s Spec) -> LogModel<'s> {
        SearchPlan::log_model(&Inverting, spec)
    }
}

/// R_p at the high ends of the divider's tolerances (≥ every vertex's), once both are chosen.
fn largest_rp(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
    let hi = parts.get(R_BIAS_HI).and_then(Option::as_ref)?;
    let lo = parts.get(R_BIAS_LO).and_then(Option::as_ref)?;
    let (h, l) = (common::end(spec, hi, true), common::end(spec, lo, true));
    Some(h * l / (h + l))
}

impl Drawing for InvertingDecoupled {
    /// The inverting stage's wiring with c_bias from the + input to ground.
    fn spice_elements(&self) -> &'static [SpiceElement] {
        use super::types::{Node::*, SpiceElement as E};
        const ELEMENTS: &[E] = &[
            E {
                slot: R_IN,
                a: Internal("n_in"),
                b: MinusInput,
            },
            E {
                slot: R_FB,
                a: MinusInput,
                b: AmpOut,
            },
            E {
                slot: R_BIAS_HI,
                a: Supply,
                b: PlusInput,
            },
            E {
                slot: R_BIAS_LO,
                a: PlusInput,
                b: Ground,
            },
            E {
                slot: C_IN,
                a: Input,
                b: Internal("n_in"),
            },
            E {
                slot: C_OUT,
                a: AmpOut,
                b: Out,
            },
            E {
                slot: C_BIAS,
                a: PlusInput,
                b: Ground,
            },
        ];
        ELEMENTS
    }

    /// The inverting stage's drawing with c_bias left of r_bias_lo, from the + input's node
    /// to its own ground.
    fn schematic_layout(&self) -> &'static layout::Layout {
        use layout::{Layout, Placed, Side, P};
        const BASE_LAYOUT: &Layout = inverting_layout();
        const PARTS: [Placed; 7] = {
            let b = BASE_LAYOUT.parts;
            [
                b[0],
                b[1],
                b[2],
                b[3],
                b[4],
                b[5],
                Placed {
                    slot: C_BIAS,
                    from: P(200, 370),
                    to: P(200, 470),
                    label: Side::Left,
                    from_side: Some("+ input side"),
                },
            ]
        };
        const WIRES: [&[P]; 9] = {
            let w = BASE_LAYOUT.wires;
            [
                w[0],
                w[1],
                w[2],
                w[3],
                w[4],
                w[5],
                w[6],
                w[7],
                &[P(300, 370), P(200, 370)],
            ]
        };
        const LAYOUT: Layout = Layout {
            parts: &PARTS,
            wires: &WIRES,
            grounds: &[P(300, 470), P(200, 470)],
            ..*BASE_LAYOUT
        };
        &LAYOUT
    }
}

/// The inverting stage's layout, as a constant (`Drawing::schematic_layout` of
/// [`Inverting`], which this drawing extends).
const fn inverting_layout() -> &'static layout::Layout {
    &inverting::LAYOUT
}
