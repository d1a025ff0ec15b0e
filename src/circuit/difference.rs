//! The four-resistor difference amplifier on a split supply, DC-coupled.
//!
//! ```text
//!            r_1              r_2
//!   in− ──/\/\/──┬───────/\/\/────┬── out
//!                └──── (−) U1 ────┘
//!   in+ ──/\/\/──┬──── (+)               R_load
//!            r_3 │
//!               r_4
//!                ⏚  (the reference)
//! ```
//! The source is differential: its legs sit at V_cm ± V_d/2 (V_cm = `source_dc`, the
//! common-mode level), each through the source's resistance R_s (`source_resistance`, per
//! leg). With R₁ = R_s + R_1, R₃ = R_s + R_3 and an ideal op-amp (superposition, any op-amp
//! text): V_out = A₂·V₊ − A₁·V₋ with A₁ = R_2/R₁ and A₂ = R_4/(R₃ + R_4)·(1 + R_2/R₁), so the
//! differential gain is A_d = (A₁ + A₂)/2 and the common-mode gain A_cm = A₂ − A₁ =
//! (R_4·R₁ − R_2·R₃)/(R₁·(R₃ + R_4)), zero when the ratios match (R_4/R₃ = R_2/R₁). The
//! common-mode rejection is |A_d/A_cm|; resistor mismatch sets it, and its worst case over
//! tolerances t is about (1 + A_d)/(4t) (the textbook difference-amplifier CMRR from
//! resistor mismatch, from memory; the unit tests compare the exact vertex figure with it).
//! Each input's resistance, the other leg at its DC level: R_1 (to the virtual node) and
//! R_3 + R_4. The op-amp's inputs sit at V_cm·R_4/(R₃ + R_4): the common-mode range is the
//! headroom limits over that ratio. The DC resistances at the two inputs are R₁ ∥ R_2 and
//! R₃ ∥ R_4 — equal when the ratios match, so the stage is bias-compensated by construction.

use super::layout;
use super::traits::{Circuit, Drawing};
use super::types::{CapBias, DcErrors, DcPoint, Network, Node, NoiseCircuit, OpAmp, SlotDef};
use super::types::{NoisePlace, SpiceElement};
use crate::interval::{Iv, Num};
use crate::objective::{Figures, Networks};
use crate::spec::Spec;
use crate::vocab::{PartKind, StageKind};
use num_complex::Complex64;
use std::fmt::Write;

/// The difference amplifier (four slots; see the module docs).
pub struct Difference;

/// Slot index of `r_1`, the − leg's input resistor.
pub const R_1: usize = 0;
/// Slot index of `r_2`, the feedback resistor.
pub const R_2: usize = 1;
/// Slot index of `r_3`, the + leg's input resistor.
pub const R_3: usize = 2;
/// Slot index of `r_4`, the + input's resistor to the reference (ground).
pub const R_4: usize = 3;

const SLOTS: &[SlotDef] = &[
    SlotDef {
        name: "r_1",
        kind: PartKind::Resistor,
        role: "− leg input resistor: gain = r_2 / r_1",
    },
    SlotDef {
        name: "r_2",
        kind: PartKind::Resistor,
        role: "feedback resistor: gain = r_2 / r_1",
    },
    SlotDef {
        name: "r_3",
        kind: PartKind::Resistor,
        role: "+ leg input resistor: r_4 / r_3 matches r_2 / r_1 (CMRR)",
    },
    SlotDef {
        name: "r_4",
        kind: PartKind::Resistor,
        role: "+ input to the reference (ground): r_4 / r_3 matches r_2 / r_1 (CMRR)",
    },
];

/// A_cm = (R_4·R₁ − R_2·R₃)/(R₁·(R₃ + R_4)): rising in R₁ and R_4, falling in R_2 and R₃
/// (each partial derivative has one sign; worked by hand).
fn a_cm<T: Num>(r1: T, r2: T, r3: T, r4: T) -> T {
    T::monotone(
        |[a, b, c, d]| (d * a - b * c) / (a * (c + d)),
        [r1, r2, r3, r4],
        [true, false, false, true],
    )
}

/// A_d = (A₁ + A₂)/2: falling in R₁ and R₃, rising in R_2 and R_4.
fn a_d<T: Num>(r1: T, r2: T, r3: T, r4: T) -> T {
    T::monotone(
        |[a, b, c, d]| (b / a + d / (c + d) * (1.0 + b / a)) / 2.0,
        [r1, r2, r3, r4],
        [false, true, false, true],
    )
}

/// (R₁, R_2, R₃, R_4): the legs with the source's resistance.
fn legs<T: Num>(spec: &Spec, v: &[T]) -> (T, T, T, T) {
    let rs = T::c(spec.source_resistance);
    (rs + v[R_1], v[R_2], rs + v[R_3], v[R_4])
}

/// Noise gain 1 + R_2/R₁.
fn ng<T: Num>(spec: &Spec, v: &[T]) -> T {
    let (r1, r2, _, _) = legs(spec, v);
    T::monotone(|[a, b]| 1.0 + b / a, [r1, r2], [false, true])
}

/// R_p·NG with R_p = R₃ ∥ R_4, the DC resistance at the + input.
fn rp_ng<T: Num>(spec: &Spec, v: &[T]) -> T {
    let (r1, r2, r3, r4) = legs(spec, v);
    T::monotone(
        |[a, b, c, d]| c * d / (c + d) * (1.0 + b / a),
        [r1, r2, r3, r4],
        [false, true, true, true],
    )
}

/// The output's DC error with both legs at 0 V: (V_os − I_b+·R_p)·NG + I_b−·R_2.
fn error_out<T: Num>(spec: &Spec, v: &[T], e: &DcErrors) -> T {
    T::c(e.vos) * ng(spec, v) - T::c(e.ib_plus) * rp_ng(spec, v) + T::c(e.ib_minus) * v[R_2]
}

/// Its largest magnitude over the op-amp's eight sign corners:
/// V_os·NG + I_b·|R_2 − R_p·NG| + (I_os/2)·(R_2 + R_p·NG).
fn error_bound<T: Num>(spec: &Spec, v: &[T]) -> T {
    let a = &spec.amplifier;
    let rpn = rp_ng(spec, v);
    T::c(a.input_offset_voltage) * ng(spec, v)
        + T::c(a.input_bias_current) * (v[R_2] - rpn).abs()
        + T::c(a.input_offset_current / 2.0) * (v[R_2] + rpn)
}

/// Mid-band input-referred noise density of the differential input, V²/Hz, for the `noise`
/// goal (capacitors none, ideal op-amp), with the legs taken as matched (G = R_2/R_1, the
/// inverting leg's gain): the output's 4kT·R_2 + 4kT·R_1·G² + i_n²·R_2² + (4kT·R_p + e_n² +
/// i_n²·R_p²)·(1 + G)², R_p = R_3 ∥ R_4, over G² (the usual superposition of uncorrelated
/// sources, common practice). Rising in R_1, R_3, R_4, falling in R_2.
fn noise_density<T: Num>(spec: &Spec, r1: T, r2: T, r3: T, r4: T) -> T {
    let four_kt = crate::objective::noise::four_kt();
    let (en2, in2) = crate::objective::noise::amplifier_powers(spec);
    T::monotone(
        |[a, b, c, d]| {
            let rp = c * d / (c + d);
            let k = 1.0 + a / b;
            four_kt * a * a / b
                + four_kt * a
                + in2 * a * a
                + (four_kt * rp + en2 + in2 * rp * rp) * k * k
        },
        [r1, r2, r3, r4],
        [true, false, true, true],
    )
}

fn figures<T: Num>(spec: &Spec, v: &[T]) -> Figures<T> {
    let (r1, r2, r3, r4) = legs(spec, v);
    let ad = a_d(r1, r2, r3, r4);
    let acm = a_cm(r1, r2, r3, r4);
    Figures {
        gain: ad,
        input_resistance: T::monotone(
            |[a, c, d]| a.min(c + d),
            [v[R_1], v[R_3], v[R_4]],
            [true, true, true],
        ),
        offset: error_bound(spec, v),
        dc_out: T::c(spec.source_dc) * acm + error_out(spec, v, &DcErrors::centre(spec)),
        dc_error: if spec.worst_case() {
            error_bound(spec, v)
        } else {
            T::c(0.0)
        },
        bias_current: None,
        networks: Networks::new(),
        noise: noise_density(spec, r1, r2, r3, r4),
        cm_ratio: Some((acm / ad).abs()),
        matched_gain: Some(T::monotone(|[a, b]| b / a, [r1, r2], [false, true])),
    }
}

impl Circuit for Difference {
    fn kind(&self) -> StageKind {
        StageKind::Difference
    }

    fn slots(&self) -> &'static [SlotDef] {
        SLOTS
    }

    fn topology(&self) -> &'static str {
        "split-supply difference amplifier, DC-coupled: − leg through r_1, feedback r_2, + leg through r_3 onto r_4 to ground"
    }

    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        let (r1, r2, r3, r4) = legs(spec, v);
        a_d(r1, r2, r3, r4)
    }

    fn noise_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        ng(spec, v)
    }

    fn input_resistance(&self, _spec: &Spec, v: &[f64]) -> f64 {
        v[R_1].min(v[R_3] + v[R_4])
    }

    fn input_resistances(&self, _spec: &Spec, v: &[f64]) -> Option<(f64, f64)> {
        Some((v[R_1], v[R_3] + v[R_4]))
    }

    fn dc_gains(&self, spec: &Spec, v: &[f64]) -> Option<(f64, f64)> {
        let (r1, r2, r3, r4) = legs(spec, v);
        Some((a_d(r1, r2, r3, r4), a_cm(r1, r2, r3, r4)))
    }

    fn matched_pairs(&self) -> &'static [(usize, usize)] {
        &[(R_1, R_3), (R_2, R_4)]
    }

    /// V_out = L·(A₂·V₊ − A₁·V₋) with L = 1/(1 + 1/(aβ)), β = R₁/(R₁ + R_2): the + input
    /// is a plain divider, the rest an inverting stage (feedback theory), so the differential
    /// response is A_d·L.
    /// The differential gain with each resistor's stray capacitance across it
    /// (`common::resistor_z`) and the source's impedance in each leg: A_d = (Z_2/Z₁ + Z_4/(Z₃ +
    /// Z_4)·(1 + Z_2/Z₁))/2, times the loop factor with β = Z₁/(Z₁ + Z_2) (a single-pole
    /// op-amp: the output is (1/β)·V₊ − ((1 − β)/β)·V₋ times Aβ/(1 + Aβ)).
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64 {
        use super::common::{resistor_z, source_z};
        let zs = source_z(spec, f);
        let (z1, z2) = (
            zs + resistor_z(spec, v[R_1], f),
            resistor_z(spec, v[R_2], f),
        );
        let (z3, z4) = (
            zs + resistor_z(spec, v[R_3], f),
            resistor_z(spec, v[R_4], f),
        );
        let one = Complex64::new(1.0, 0.0);
        let a1 = z2 / z1;
        let a2 = z4 / (z3 + z4) * (one + a1);
        let beta = z1 / (z1 + z2);
        (a1 + a2) / 2.0 * opamp.loop_factor(f, beta)
    }

    fn networks(&self, _spec: &Spec, _v: &[f64]) -> Vec<Network> {
        Vec::new()
    }

    /// Both legs at the common-mode level V_cm: V+ = V_cm·R_4/(R₃ + R_4) − I_b+·R_p,
    /// V− = V+ + V_os, and KCL at − gives V_out.
    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint {
        let (r1, r2, r3, r4) = legs(spec, v);
        let vcm = spec.source_dc;
        let v_plus = vcm * r4 / (r3 + r4) - e.ib_plus * (r3 * r4 / (r3 + r4));
        let v_minus = v_plus + e.vos;
        DcPoint {
            v_plus,
            v_minus,
            v_out: v_minus + r2 * (e.ib_minus - (vcm - v_minus) / r1),
            divider_current: 0.0,
        }
    }

    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64 {
        error_bound(spec, v)
    }

    fn output_offset(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> Option<f64> {
        Some(error_out(spec, v, e))
    }

    fn cap_bias(&self, _spec: &Spec, _v: &[f64], _dc: &DcPoint) -> Vec<CapBias> {
        Vec::new()
    }

    /// DC plus sine power (V_dc² + V_peak²/2)/R with the differential input V_d = V_out/A_d
    /// split ±V_d/2 over the legs and V± = k·V_d/2 (k = R_4/(R₃ + R_4)).
    fn resistor_power(
        &self,
        spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)> {
        let (_, _, r3, r4) = legs(spec, v);
        let k = r4 / (r3 + r4);
        let vd = out_peak / self.mid_gain(spec, v).abs();
        let vcm = spec.source_dc;
        let p = |dc: f64, peak: f64, r: f64| (dc * dc + peak * peak / 2.0) / r;
        vec![
            (R_1, p(vcm - dc.v_minus, vd * (1.0 + k) / 2.0, v[R_1])),
            (
                R_2,
                p(dc.v_out - dc.v_minus, out_peak - k * vd / 2.0, v[R_2]),
            ),
            (R_3, p(vcm - dc.v_plus, vd * (1.0 - k) / 2.0, v[R_3])),
            (R_4, p(dc.v_plus, k * vd / 2.0, v[R_4])),
        ]
    }

    /// R_1 = R_3 from `input_resistance_min` (or 10 kΩ), R_2 = R_4 = gain·(R_s + R_1).
    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>> {
        let r1 = spec.input_resistance_min.unwrap_or(10e3);
        let r2 = spec.gain.abs() * (r1 + spec.source_resistance);
        vec![Some(r1), Some(r2), Some(r1), Some(r2)]
    }

    /// Z_f = R_2, Z_s = R₁ (the − leg is AC ground for noise), Z_p = R₃ ∥ R_4.
    fn noise_circuit(&self, spec: &Spec, v: &[f64], _f: f64) -> NoiseCircuit {
        let re = |r: f64| Complex64::new(r, 0.0);
        let (r1, r2, r3, r4) = legs(spec, v);
        let rs = spec.source_resistance;
        let mut resistors = vec![(SLOTS[R_1].name, v[R_1], NoisePlace::Shunt)];
        if rs > 0.0 {
            resistors.push(("source_resistance", rs, NoisePlace::Shunt));
        }
        resistors.push((SLOTS[R_2].name, r2, NoisePlace::Feedback));
        resistors.push((SLOTS[R_3].name, v[R_3], NoisePlace::Plus(re(r3))));
        if rs > 0.0 {
            resistors.push(("source_resistance (+ leg)", rs, NoisePlace::Plus(re(r3))));
        }
        resistors.push((SLOTS[R_4].name, r4, NoisePlace::Plus(re(r4))));
        NoiseCircuit {
            z_f: re(r2),
            z_s: re(r1),
            z_p: re(r3 * r4 / (r3 + r4)),
            h_out: Complex64::new(1.0, 0.0),
            resistors,
        }
    }

    fn figures(&self, spec: &Spec, v: &[f64]) -> Figures<f64> {
        figures(spec, v)
    }

    fn figure_bounds(&self, spec: &Spec, v: &[Iv]) -> Figures<Iv> {
        figures(spec, v)
    }

    fn network_bounds(&self, _spec: &Spec, _v: &[Iv]) -> Networks<Iv> {
        Networks::new()
    }

    fn drawing(&self) -> &dyn Drawing {
        self
    }
}

const ELEMENTS: &[SpiceElement] = &[
    SpiceElement {
        slot: R_1,
        a: Node::Internal("in_n"),
        b: Node::MinusInput,
    },
    SpiceElement {
        slot: R_2,
        a: Node::MinusInput,
        b: Node::AmpOut,
    },
    SpiceElement {
        slot: R_3,
        a: Node::Input,
        b: Node::PlusInput,
    },
    SpiceElement {
        slot: R_4,
        a: Node::PlusInput,
        b: Node::Ground,
    },
];

impl Drawing for Difference {
    fn spice_elements(&self) -> &'static [SpiceElement] {
        ELEMENTS
    }

    fn links(&self) -> &'static [(Node, Node)] {
        &[(Node::AmpOut, Node::Out)]
    }

    /// The differential source: `V_SRC` (AC 1, DC 0) is V_d at `vd`, `V_CM` the common-mode
    /// level at `cm`, and each leg a VCVS V_cm ± V_d/2 (`E_P` at `in`, `E_N` on the − leg),
    /// then R_s in each leg. A deck measures the common-mode gain by moving the AC 1 from
    /// `V_SRC` to `V_CM` (`alter`).
    fn spice_source(&self, spec: &Spec, number: &dyn Fn(f64) -> String) -> Option<String> {
        let mut out = String::new();
        let rs = spec.source_resistance;
        let _ = writeln!(
            out,
            "* source: differential EMF V_SRC at vd (AC 1), common-mode level V_CM at cm;"
        );
        let _ = writeln!(out, "* legs in = cm + vd/2 (E_P) and cm - vd/2 (E_N)");
        let _ = writeln!(out, "V_SRC vd 0 DC 0 AC 1");
        let _ = writeln!(out, "V_CM cm 0 DC {} AC 0", number(spec.source_dc));
        let _ = writeln!(out, "E_P in cm vd 0 0.5");
        if rs > 0.0 {
            let _ = writeln!(out, "E_N in_n_emf cm vd 0 -0.5");
            let _ = writeln!(out, "* source_resistance, each leg");
            let _ = writeln!(out, "R_S in in_rs {}", number(rs));
            let _ = writeln!(out, "R_SN in_n_emf in_n {}", number(rs));
        } else {
            let _ = writeln!(out, "E_N in_n cm vd 0 -0.5");
        }
        Some(out)
    }

    /// The − leg along the top into the − pin (upper), r_2 above the op-amp; the + leg
    /// below through r_3 onto r_4 to ground and up into the + pin.
    fn schematic_layout(&self) -> &'static layout::Layout {
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
        const LAYOUT: Layout = Layout {
            size: (900, 510),
            opamp: U,
            plus_on_top: false,
            source: P(60, 340),
            load: P(780, 220),
            supplies: &[],
            grounds: &[P(400, 440)],
            wires: &[
                &[P(60, 200), P(240, 200)],
                &[P(340, 200), PINS.upper],
                &[P(400, 200), P(400, 90), P(450, 90)],
                &[P(550, 90), P(620, 90), P(620, 220)],
                &[PINS.out, P(780, 220)],
                &[P(60, 340), P(240, 340)],
                &[P(340, 340), P(430, 340), P(430, 240), PINS.lower],
            ],
            dots: &[P(400, 200), P(620, 220), P(400, 340)],
            parts: &[
                placed(R_1, P(240, 200), P(340, 200), Side::Above),
                placed(R_2, P(450, 90), P(550, 90), Side::Above),
                placed(R_3, P(240, 340), P(340, 340), Side::Above),
                placed(R_4, P(400, 340), P(400, 440), Side::Left),
            ],
            minus_source: Some(P(60, 200)),
        };
        &LAYOUT
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec() -> Spec {
        Spec::from_toml(
            "[stage]\nkind = \"difference\"\nsupply = \"±12 V\"\ngain = 10\nload = \"10k\"\n\
             band = [\"1 Hz\", \"1 kHz\"]\n",
        )
        .unwrap()
    }

    #[test]
    fn matched_ratios_reject_the_common_mode_entirely() {
        // R_4/R_3 = R_2/R_1 makes A_cm = 0 and A_d = R_2/R_1 (superposition, any op-amp text).
        let s = spec();
        let (ad, acm) = Difference
            .dc_gains(&s, &[10e3, 100e3, 10e3, 100e3])
            .unwrap();
        assert!((ad - 10.0).abs() < 1e-12);
        assert!(acm.abs() < 1e-15);
        // Worked by hand: R_4 = 101k instead: A₂ = (101/111)·11 = 10.009009…, A₁ = 10, so
        // A_cm = 0.009009… and A_d = 10.004505….
        let (ad, acm) = Difference
            .dc_gains(&s, &[10e3, 100e3, 10e3, 101e3])
            .unwrap();
        assert!((acm - (11.0 * 101.0 / 111.0 - 10.0)).abs() < 1e-12);
        assert!((ad - (10.0 + 11.0 * 101.0 / 111.0) / 2.0).abs() < 1e-12);
    }

    #[test]
    fn worst_case_cmrr_follows_the_handbook_estimate() {
        // Textbook worst case of a difference amplifier from resistor mismatch (from memory):
        // CMRR ≈ (1 + G)/(4t) for four resistors of tolerance t. With G = 10, t = 1 %:
        // 11/0.04 = 275 (48.8 dB). The exact figure over the 16 tolerance corners lies within
        // a few per cent of it (the estimate is first order in t).
        let s = spec();
        let t = 0.01;
        let nominal = [10e3, 100e3, 10e3, 100e3];
        let mut worst = f64::INFINITY;
        for mask in 0..16u32 {
            let v: Vec<f64> = (0..4)
                .map(|i| nominal[i] * if mask >> i & 1 == 1 { 1.0 + t } else { 1.0 - t })
                .collect();
            let (ad, acm) = Difference.dc_gains(&s, &v).unwrap();
            worst = worst.min((ad / acm).abs());
        }
        let handbook = 11.0 / (4.0 * t);
        assert!(
            (worst / handbook - 1.0).abs() < 0.03,
            "{worst} vs {handbook}"
        );
    }

    #[test]
    fn common_mode_gain_is_monotone_as_declared() {
        // The interval figures rest on A_cm's and A_d's signs of slope: check them on a grid.
        let base = [10e3, 47e3, 12e3, 39e3];
        for i in 0..4 {
            let mut up = base;
            up[i] *= 1.01;
            let f = |v: [f64; 4]| (a_cm(v[0], v[1], v[2], v[3]), a_d(v[0], v[1], v[2], v[3]));
            let ((c0, d0), (c1, d1)) = (f(base), f(up));
            let rising_cm = [true, false, false, true][i];
            let rising_d = [false, true, false, true][i];
            assert_eq!(c1 > c0, rising_cm, "A_cm in slot {i}");
            assert_eq!(d1 > d0, rising_d, "A_d in slot {i}");
        }
    }
}
