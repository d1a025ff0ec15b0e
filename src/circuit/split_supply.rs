//! Split-supply, DC-coupled inverting and non-inverting stages (no divider, no coupling
//! capacitors), each with or without a bias-compensation resistor `r_comp`.
//!
//! ```text
//!   inverting:                                  non-inverting:
//!            r_in            r_fb                          r_comp
//!   in ──/\/\/──┬──────/\/\/────┬── out      in ──/\/\/────── (+) U1 ──┬── out
//!               └──── (−) U1 ───┘                          ┌── (−)    │
//!   ⏚ ── r_comp ────── (+)          R_load    ⏚ ── r_g ────┴── r_fb ───┘   R_load
//! ```
//! Rails V− < 0 < V+; the output's DC is the signal's own, centred on ground, and the load
//! sits from the output to ground. Mid-band gain −R_fb/(R_s + R_in) (inverting) or
//! 1 + R_fb/R_g (non-inverting), noise gain NG = 1 + R_fb/R₁ with R₁ = R_s + R_in or R_g; the
//! input resistance is R_in (virtual ground) or the op-amp's own input (infinite here).
//!
//! DC (KCL at each input, any op-amp text): with R₊ the DC resistance from the + input to
//! the source or ground (r_comp, plus R_s for the non-inverting stage),
//! V_out = (V_os − I_b+·R₊)·NG + I_b−·R_fb + the source's DC times the gain. The output DC
//! error (source at 0 V) is at worst V_os·NG + I_b·|R_fb − R₊·NG| + (I_os/2)·(R_fb + R₊·NG);
//! compensation asks R₊ = R_fb/NG = R₁ ∥ R_fb, which cancels the bias term and leaves the
//! offset current's ("bias current compensation", any op-amp text).

use super::traits::{Circuit, Drawing};
use super::types::{CapBias, DcErrors, DcPoint, Network, Node, NoiseCircuit, OpAmp, SlotDef};
use super::types::{NoisePlace, SpiceElement};
use crate::interval::{Iv, Num};
use crate::objective::{Figures, Networks};
use crate::spec::Spec;
use crate::vocab::{PartKind, StageKind};
use num_complex::Complex64;

/// A split-supply DC-coupled stage: inverting or not, with `r_comp` or without.
pub struct DcStage {
    inverting: bool,
    compensated: bool,
}

/// The inverting stage, + input straight to ground.
pub static INVERTING: DcStage = DcStage {
    inverting: true,
    compensated: false,
};
/// The inverting stage with `r_comp` from the + input to ground.
pub static INVERTING_COMPENSATED: DcStage = DcStage {
    inverting: true,
    compensated: true,
};
/// The non-inverting stage, the source straight on the + input.
pub static NON_INVERTING: DcStage = DcStage {
    inverting: false,
    compensated: false,
};
/// The non-inverting stage with `r_comp` in series with the + input.
pub static NON_INVERTING_COMPENSATED: DcStage = DcStage {
    inverting: false,
    compensated: true,
};

/// Slot index of the gain leg: `r_in` (inverting) or `r_g` (non-inverting).
pub const R_LEG: usize = 0;
/// Slot index of `r_fb`, the feedback resistor.
pub const R_FB: usize = 1;
/// Slot index of `r_comp`, the bias-compensation resistor (compensated stages only).
pub const R_COMP: usize = 2;

const R_IN_DEF: SlotDef = SlotDef {
    name: "r_in",
    kind: PartKind::Resistor,
    role: "input resistor: sets the input resistance and, with r_fb, the gain",
};
const R_FB_INV: SlotDef = SlotDef {
    name: "r_fb",
    kind: PartKind::Resistor,
    role: "feedback resistor: gain = −r_fb / r_in",
};
const R_G_DEF: SlotDef = SlotDef {
    name: "r_g",
    kind: PartKind::Resistor,
    role: "gain resistor, − input to ground: gain = 1 + r_fb / r_g",
};
const R_FB_NON: SlotDef = SlotDef {
    name: "r_fb",
    kind: PartKind::Resistor,
    role: "feedback resistor: gain = 1 + r_fb / r_g",
};
const R_COMP_INV: SlotDef = SlotDef {
    name: "r_comp",
    kind: PartKind::Resistor,
    role: "bias compensation, + input to ground (ideal r_in ∥ r_fb)",
};
const R_COMP_NON: SlotDef = SlotDef {
    name: "r_comp",
    kind: PartKind::Resistor,
    role: "bias compensation in series with the + input (ideal r_g ∥ r_fb less the source's resistance)",
};

const SLOTS_INV: &[SlotDef] = &[R_IN_DEF, R_FB_INV];
const SLOTS_INV_COMP: &[SlotDef] = &[R_IN_DEF, R_FB_INV, R_COMP_INV];
const SLOTS_NON: &[SlotDef] = &[R_G_DEF, R_FB_NON];
const SLOTS_NON_COMP: &[SlotDef] = &[R_G_DEF, R_FB_NON, R_COMP_NON];

impl DcStage {
    /// R₁: the resistance of the gain leg, R_s + R_in or R_g.
    fn r1<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        if self.inverting {
            T::c(spec.source_resistance) + v[R_LEG]
        } else {
            v[R_LEG]
        }
    }

    /// R₊: the DC resistance from the + input to the source (at 0 V for the error) or ground.
    fn r_plus<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        let comp = if self.compensated {
            v[R_COMP]
        } else {
            T::c(0.0)
        };
        if self.inverting {
            comp
        } else {
            comp + T::c(spec.source_resistance)
        }
    }

    /// Mid-band gain, ideal op-amp: −R_fb/R₁ or 1 + R_fb/R₁.
    fn gain<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        let r1 = self.r1(spec, v);
        if self.inverting {
            T::monotone(|[f, a]| -f / a, [v[R_FB], r1], [false, true])
        } else {
            T::monotone(|[f, a]| 1.0 + f / a, [v[R_FB], r1], [true, false])
        }
    }

    /// Noise gain 1 + R_fb/R₁ (rising in R_fb, falling in R₁).
    fn ng<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        T::monotone(
            |[f, a]| 1.0 + f / a,
            [v[R_FB], self.r1(spec, v)],
            [true, false],
        )
    }

    /// R₊·NG = R₊·(1 + R_fb/R₁): rising in R₊ and R_fb, falling in R₁.
    fn rp_ng<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        T::monotone(
            |[p, f, a]| p * (1.0 + f / a),
            [self.r_plus(spec, v), v[R_FB], self.r1(spec, v)],
            [true, true, false],
        )
    }

    /// The output DC error with the source at 0 V and the op-amp errors `e`:
    /// (V_os − I_b+·R₊)·NG + I_b−·R_fb.
    fn error_out<T: Num>(&self, spec: &Spec, v: &[T], e: &DcErrors) -> T {
        T::c(e.vos) * self.ng(spec, v) - T::c(e.ib_plus) * self.rp_ng(spec, v)
            + T::c(e.ib_minus) * v[R_FB]
    }

    /// The output DC's half range over the op-amp's error signs (0 in nominal mode):
    /// V_os·NG + I_b·|R_fb − R₊·NG| + (I_os/2)·(R_fb + R₊·NG).
    fn error_spread<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        if !spec.worst_case() {
            return T::c(0.0);
        }
        self.error_bound(spec, v)
    }

    /// V_os·NG + I_b·|R_fb − R₊·NG| + (I_os/2)·(R_fb + R₊·NG): the largest |error| over the
    /// eight sign corners of the op-amp errors at these values.
    fn error_bound<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        let a = &spec.amplifier;
        let rpn = self.rp_ng(spec, v);
        T::c(a.input_offset_voltage) * self.ng(spec, v)
            + T::c(a.input_bias_current) * (v[R_FB] - rpn).abs()
            + T::c(a.input_offset_current / 2.0) * (v[R_FB] + rpn)
    }

    /// The output DC the source's own DC makes: its level times the DC gain.
    fn signal_dc<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        T::c(spec.source_dc) * self.gain(spec, v)
    }

    /// Mid-band input-referred noise density, V²/Hz, for the `noise` goal (ideal op-amp,
    /// uncorrelated sources summed in power: common practice). Inverting, R_i = R_s + R_in,
    /// k = 1 + R_i/R_fb: 4kT·R_i + 4kT·R_i²/R_fb + (4kT·R₊ + e_n² + i_n²·R₊²)·k² + i_n²·R_i²
    /// (rising in R_in and R₊, falling in R_fb). Non-inverting, R_∥ = R_fb ∥ R_g (the
    /// feedback pair's noise over the gain): 4kT·R₊ + i_n²·R₊² + e_n² + 4kT·R_∥ + i_n²·R_∥²
    /// (rising in every resistor).
    fn noise_density<T: Num>(&self, spec: &Spec, v: &[T]) -> T {
        let four_kt = crate::objective::noise::four_kt();
        let (en2, in2) = crate::objective::noise::amplifier_powers(spec);
        let (r1, rp) = (self.r1(spec, v), self.r_plus(spec, v));
        if self.inverting {
            T::monotone(
                |[ri, fb, p]| {
                    let k = 1.0 + ri / fb;
                    four_kt * ri
                        + four_kt * ri * ri / fb
                        + (four_kt * p + en2 + in2 * p * p) * k * k
                        + in2 * ri * ri
                },
                [r1, v[R_FB], rp],
                [true, false, true],
            )
        } else {
            T::monotone(
                |[g, fb, p]| {
                    let par = g * fb / (g + fb);
                    four_kt * p + in2 * p * p + en2 + four_kt * par + in2 * par * par
                },
                [r1, v[R_FB], rp],
                [true, true, true],
            )
        }
    }

    fn figures<T: Num>(&self, spec: &Spec, v: &[T]) -> Figures<T> {
        let centre = DcErrors::centre(spec);
        Figures {
            gain: self.gain(spec, v),
            input_resistance: if self.inverting {
                v[R_LEG]
            } else {
                T::c(f64::INFINITY)
            },
            offset: self.error_bound(spec, v),
            dc_out: self.signal_dc(spec, v) + self.error_out(spec, v, &centre),
            dc_error: self.error_spread(spec, v),
            bias_current: None,
            networks: Networks::new(),
            noise: self.noise_density(spec, v),
            cm_ratio: None,
            matched_gain: None,
        }
    }
}

impl Circuit for DcStage {
    fn kind(&self) -> StageKind {
        match (self.inverting, self.compensated) {
            (true, false) => StageKind::InvertingDc,
            (true, true) => StageKind::InvertingDcCompensated,
            (false, false) => StageKind::NonInvertingDc,
            (false, true) => StageKind::NonInvertingDcCompensated,
        }
    }

    fn slots(&self) -> &'static [SlotDef] {
        match (self.inverting, self.compensated) {
            (true, false) => SLOTS_INV,
            (true, true) => SLOTS_INV_COMP,
            (false, false) => SLOTS_NON,
            (false, true) => SLOTS_NON_COMP,
        }
    }

    fn topology(&self) -> &'static str {
        match (self.inverting, self.compensated) {
            (true, false) => "split-supply inverting amplifier, DC-coupled: input through r_in, feedback r_fb, + input to ground",
            (true, true) => "split-supply inverting amplifier, DC-coupled: input through r_in, feedback r_fb, + input to ground through r_comp",
            (false, false) => "split-supply non-inverting amplifier, DC-coupled: source on the + input, feedback r_fb, gain leg r_g to ground",
            (false, true) => "split-supply non-inverting amplifier, DC-coupled: source on the + input through r_comp, feedback r_fb, gain leg r_g to ground",
        }
    }

    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        self.gain(spec, v)
    }

    fn noise_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        self.ng(spec, v)
    }

    fn input_resistance(&self, _spec: &Spec, v: &[f64]) -> f64 {
        if self.inverting {
            v[R_LEG]
        } else {
            f64::INFINITY
        }
    }

    /// Inverting: −(R_f/R₁)·L; non-inverting: (1 + R_f/R₁)·L, with L = 1/(1 + 1/(aβ)) and
    /// β = R₁/(R₁ + R_f) (feedback theory, any op-amp text). No coupling networks.
    /// Each resistor with its stray capacitance across it (`common::resistor_z`), the source's
    /// impedance in the inverting leg: H = −Z_f/Z₁ or 1 + Z_f/Z₁ times the loop factor with
    /// β = Z₁/(Z₁ + Z_f) (a single-pole op-amp, any feedback text). r_comp carries no
    /// signal current (the + input draws none), so its stray does not enter.
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64 {
        let leg = super::common::resistor_z(spec, v[R_LEG], f);
        let z1 = if self.inverting {
            super::common::source_z(spec, f) + leg
        } else {
            leg
        };
        let zf = super::common::resistor_z(spec, v[R_FB], f);
        let beta = z1 / (z1 + zf);
        let ideal = if self.inverting {
            -(zf / z1)
        } else {
            Complex64::new(1.0, 0.0) + zf / z1
        };
        ideal * opamp.loop_factor(f, beta)
    }

    fn networks(&self, _spec: &Spec, _v: &[f64]) -> Vec<Network> {
        Vec::new()
    }

    /// KCL at each input: V+ = V_src − I_b+·R₊ (non-inverting) or −I_b+·R₊, V− = V+ + V_os,
    /// and V_out from the current through r_fb.
    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint {
        let rp = self.r_plus(spec, v);
        let (r1, rf) = (self.r1(spec, v), v[R_FB]);
        let vs = spec.source_dc;
        let v_plus = if self.inverting { 0.0 } else { vs } - e.ib_plus * rp;
        let v_minus = v_plus + e.vos;
        let v_out = if self.inverting {
            // (V_s − V−)/R₁ + (V_out − V−)/R_f = I_b−.
            v_minus + rf * (e.ib_minus - (vs - v_minus) / r1)
        } else {
            // (V_out − V−)/R_f = V−/R₁ + I_b−.
            v_minus + rf * (v_minus / r1 + e.ib_minus)
        };
        DcPoint {
            v_plus,
            v_minus,
            v_out,
            divider_current: 0.0,
        }
    }

    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64 {
        self.error_bound(spec, v)
    }

    fn output_offset(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> Option<f64> {
        Some(self.error_out(spec, v, e))
    }

    fn cap_bias(&self, _spec: &Spec, _v: &[f64], _dc: &DcPoint) -> Vec<CapBias> {
        Vec::new()
    }

    /// DC plus sine power (V_dc² + V_peak²/2)/R: the gain leg carries the input swing (the
    /// virtual ground's or the − input's), the feedback resistor the difference to the output.
    fn resistor_power(
        &self,
        spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)> {
        let gain = self.gain(spec, v).abs();
        let p = |dc: f64, peak: f64, r: f64| (dc * dc + peak * peak / 2.0) / r;
        let rf = v[R_FB];
        let mut out = Vec::new();
        if self.inverting {
            let leg_dc = spec.source_dc - dc.v_minus;
            out.push((R_LEG, p(leg_dc, out_peak / gain, v[R_LEG])));
        } else {
            out.push((R_LEG, p(dc.v_minus, out_peak / gain, v[R_LEG])));
        }
        let fb_peak = if self.inverting {
            out_peak
        } else {
            out_peak * (1.0 - 1.0 / gain)
        };
        out.push((R_FB, p(dc.v_out - dc.v_minus, fb_peak, rf)));
        if self.compensated {
            // Only the bias current flows in r_comp.
            let i = spec.amplifier.input_bias_current + spec.amplifier.input_offset_current / 2.0;
            out.push((R_COMP, i * i * v[R_COMP]));
        }
        out
    }

    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>> {
        let rs = spec.source_resistance;
        let g = spec.gain.abs();
        let (leg, fb, comp) = if self.inverting {
            let r_in = spec.input_resistance_min.unwrap_or(10e3);
            let fb = g * (r_in + rs);
            (r_in, fb, Some((r_in + rs) * fb / (r_in + rs + fb)))
        } else {
            let r_g = 10e3;
            let fb = (g - 1.0) * r_g;
            let comp = r_g * fb / (r_g + fb) - rs;
            (r_g, fb, (comp > 0.0).then_some(comp))
        };
        let mut out = vec![Some(leg), (fb > 0.0).then_some(fb)];
        if self.compensated {
            out.push(comp);
        }
        out
    }

    /// Z_f = R_fb, Z_s = R₁ (to the source or ground, both AC ground), Z_p = R₊; no output
    /// coupling.
    fn noise_circuit(&self, spec: &Spec, v: &[f64], _f: f64) -> NoiseCircuit {
        let re = |r: f64| Complex64::new(r, 0.0);
        let rs = spec.source_resistance;
        let rp = self.r_plus(spec, v);
        let slots = self.slots();
        let mut resistors = Vec::new();
        resistors.push((slots[R_LEG].name, v[R_LEG], NoisePlace::Shunt));
        if self.inverting && rs > 0.0 {
            resistors.push(("source_resistance", rs, NoisePlace::Shunt));
        }
        resistors.push((slots[R_FB].name, v[R_FB], NoisePlace::Feedback));
        if !self.inverting && rs > 0.0 {
            resistors.push(("source_resistance", rs, NoisePlace::Plus(re(rp))));
        }
        if self.compensated {
            resistors.push((slots[R_COMP].name, v[R_COMP], NoisePlace::Plus(re(rp))));
        }
        NoiseCircuit {
            z_f: re(v[R_FB]),
            z_s: re(self.r1(spec, v)),
            z_p: re(rp),
            h_out: Complex64::new(1.0, 0.0),
            resistors,
        }
    }

    fn figures(&self, spec: &Spec, v: &[f64]) -> Figures<f64> {
        self.figures(spec, v)
    }

    fn figure_bounds(&self, spec: &Spec, v: &[Iv]) -> Figures<Iv> {
        self.figures(spec, v)
    }

    fn network_bounds(&self, _spec: &Spec, _v: &[Iv]) -> Networks<Iv> {
        Networks::new()
    }

    fn drawing(&self) -> &dyn Drawing {
        self
    }
}

const ELEMENTS_INV: &[SpiceElement] = &[
    SpiceElement {
        slot: R_LEG,
        a: Node::Input,
        b: Node::MinusInput,
    },
    SpiceElement {
        slot: R_FB,
        a: Node::MinusInput,
        b: Node::AmpOut,
    },
];
const ELEMENTS_INV_COMP: &[SpiceElement] = &[
    ELEMENTS_INV[0],
    ELEMENTS_INV[1],
    SpiceElement {
        slot: R_COMP,
        a: Node::PlusInput,
        b: Node::Ground,
    },
];
const ELEMENTS_NON: &[SpiceElement] = &[
    SpiceElement {
        slot: R_LEG,
        a: Node::MinusInput,
        b: Node::Ground,
    },
    SpiceElement {
        slot: R_FB,
        a: Node::MinusInput,
        b: Node::AmpOut,
    },
];
const ELEMENTS_NON_COMP: &[SpiceElement] = &[
    ELEMENTS_NON[0],
    ELEMENTS_NON[1],
    SpiceElement {
        slot: R_COMP,
        a: Node::Input,
        b: Node::PlusInput,
    },
];

// The four drawings: the op-amp at the same place as the single-supply stages', the output
// straight to the load.
use super::layout::{opamp_pins, Layout, OpAmpPins, Placed, Side, P};

const U: P = P(460, 200);
const PINS: OpAmpPins = opamp_pins(U);

const fn placed(slot: usize, from: P, to: P, label: Side) -> Placed {
    Placed {
        slot,
        from,
        to,
        label,
        from_side: None,
    }
}

/// Inverting: the input along the top into the − pin (upper), r_fb above the op-amp,
/// + pin down to ground (through r_comp when compensated).
const INVERTING_LAYOUT: Layout = Layout {
    size: (900, 510),
    opamp: U,
    plus_on_top: false,
    source: P(60, 200),
    load: P(780, 220),
    supplies: &[],
    grounds: &[P(430, 300)],
    wires: &[
        &[P(60, 200), P(240, 200)],
        &[P(340, 200), PINS.upper],
        &[P(400, 200), P(400, 90), P(450, 90)],
        &[P(550, 90), P(620, 90), P(620, 220)],
        &[PINS.out, P(780, 220)],
        &[PINS.lower, P(430, 240), P(430, 300)],
    ],
    dots: &[P(400, 200), P(620, 220)],
    parts: &[
        placed(R_LEG, P(240, 200), P(340, 200), Side::Above),
        placed(R_FB, P(450, 90), P(550, 90), Side::Above),
    ],
    minus_source: None,
};

/// As [`INVERTING_LAYOUT`], r_comp from the + pin down to ground.
const INVERTING_COMPENSATED_LAYOUT: Layout = Layout {
    grounds: &[P(430, 380)],
    wires: &[
        &[P(60, 200), P(240, 200)],
        &[P(340, 200), PINS.upper],
        &[P(400, 200), P(400, 90), P(450, 90)],
        &[P(550, 90), P(620, 90), P(620, 220)],
        &[PINS.out, P(780, 220)],
        &[PINS.lower, P(430, 240), P(430, 280)],
    ],
    parts: &[
        placed(R_LEG, P(240, 200), P(340, 200), Side::Above),
        placed(R_FB, P(450, 90), P(550, 90), Side::Above),
        placed(R_COMP, P(430, 280), P(430, 380), Side::Left),
    ],
    ..INVERTING_LAYOUT
};

/// Non-inverting: the source along the top into the + pin (upper), the − pin down to
/// the gain leg and r_fb below the op-amp back to the output.
const NON_INVERTING_LAYOUT: Layout = Layout {
    size: (900, 510),
    opamp: U,
    plus_on_top: true,
    source: P(60, 200),
    load: P(780, 220),
    supplies: &[],
    grounds: &[P(420, 460)],
    wires: &[
        &[P(60, 200), PINS.upper],
        &[PINS.lower, P(420, 240), P(420, 360)],
        &[P(420, 330), P(450, 330)],
        &[P(550, 330), P(620, 330), P(620, 220)],
        &[PINS.out, P(780, 220)],
    ],
    dots: &[P(420, 330), P(620, 220)],
    parts: &[
        placed(R_LEG, P(420, 360), P(420, 460), Side::Left),
        placed(R_FB, P(450, 330), P(550, 330), Side::Below),
    ],
    minus_source: None,
};

/// As [`NON_INVERTING_LAYOUT`], r_comp in the input line.
const NON_INVERTING_COMPENSATED_LAYOUT: Layout = Layout {
    wires: &[
        &[P(60, 200), P(240, 200)],
        &[P(340, 200), PINS.upper],
        &[PINS.lower, P(420, 240), P(420, 360)],
        &[P(420, 330), P(450, 330)],
        &[P(550, 330), P(620, 330), P(620, 220)],
        &[PINS.out, P(780, 220)],
    ],
    parts: &[
        placed(R_LEG, P(420, 360), P(420, 460), Side::Left),
        placed(R_FB, P(450, 330), P(550, 330), Side::Below),
        placed(R_COMP, P(240, 200), P(340, 200), Side::Above),
    ],
    ..NON_INVERTING_LAYOUT
};

impl Drawing for DcStage {
    fn spice_elements(&self) -> &'static [SpiceElement] {
        match (self.inverting, self.compensated) {
            (true, false) => ELEMENTS_INV,
            (true, true) => ELEMENTS_INV_COMP,
            (false, false) => ELEMENTS_NON,
            (false, true) => ELEMENTS_NON_COMP,
        }
    }

    /// The output is the load's node (no coupling capacitor); without r_comp the + input is
    /// ground (inverting) or the input terminal (non-inverting).
    fn links(&self) -> &'static [(Node, Node)] {
        match (self.inverting, self.compensated) {
            (true, false) => &[(Node::AmpOut, Node::Out), (Node::PlusInput, Node::Ground)],
            (false, false) => &[(Node::AmpOut, Node::Out), (Node::Input, Node::PlusInput)],
            _ => &[(Node::AmpOut, Node::Out)],
        }
    }

    fn schematic_layout(&self) -> &'static Layout {
        match (self.inverting, self.compensated) {
            (true, false) => &INVERTING_LAYOUT,
            (true, true) => &INVERTING_COMPENSATED_LAYOUT,
            (false, false) => &NON_INVERTING_LAYOUT,
            (false, true) => &NON_INVERTING_COMPENSATED_LAYOUT,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec(extra: &str) -> Spec {
        Spec::from_toml(&format!(
            "[stage]\nkind = \"inverting\"\nsupply = \"±15 V\"\ngain = -10\nload = \"10k\"\n\
             band = [\"1 Hz\", \"10 kHz\"]\n{extra}\n[amplifier]\ninput_bias_current = \"100 nA\"\n\
             input_offset_current = \"10 nA\"\ninput_offset_voltage = \"1 mV\"\n"
        ))
        .unwrap()
    }

    #[test]
    fn split_supply_picks_the_dc_coupled_stage_with_compensation_when_it_helps() {
        // I_b = 100 nA > I_os = 10 nA: compensation removes more than it adds (common practice).
        assert_eq!(spec("").stage, StageKind::InvertingDcCompensated);
        assert_eq!(
            spec("bias_compensation = false").stage,
            StageKind::InvertingDc
        );
        let s = spec("");
        assert_eq!((s.supply_low, s.supply), (-15.0, 15.0));
        assert_eq!(s.bias_target(), 0.0);
    }

    #[test]
    fn inverting_offset_by_hand() {
        // R_in = 10k, R_fb = 100k, no r_comp: NG = 11. Worst output error (source at 0 V):
        // V_os·NG + I_b·|R_fb − 0| + (I_os/2)·R_fb = 11 mV + 10 mV + 0.5 mV = 21.5 mV
        // (KCL at each input, any op-amp text, worked by hand).
        let s = spec("bias_compensation = false");
        let c = &INVERTING;
        let v = [10e3, 100e3];
        assert!((c.offset_error(&s, &v) - 21.5e-3).abs() < 1e-12);
        assert!((c.mid_gain(&s, &v) + 10.0).abs() < 1e-12);
        // With r_comp = r_in ∥ r_fb = 9.0909k the bias term cancels: 11 mV + (I_os/2)·2·R_fb
        // = 11 mV + 1 mV.
        let s = spec("");
        let rc = 10e3 * 100e3 / 110e3;
        let err = INVERTING_COMPENSATED.offset_error(&s, &[10e3, 100e3, rc]);
        assert!((err - 12e-3).abs() < 1e-12, "{err}");
    }

    #[test]
    fn dc_point_matches_the_error_formula_at_every_sign_corner() {
        let s = spec("");
        for c in [&INVERTING_COMPENSATED, &NON_INVERTING_COMPENSATED] {
            let v = [4.7e3, 47e3, 3.9e3];
            let worst = DcErrors::corners(&s)
                .iter()
                .map(|e| c.dc(&s, &v, e).v_out.abs())
                .fold(0.0, f64::max);
            // source_dc = 0: the DC point is the error alone, and its largest magnitude over
            // the eight corners is the closed-form bound.
            assert!((worst - c.offset_error(&s, &v)).abs() < 1e-15, "{worst}");
        }
    }
}
