//! Single-supply non-inverting stage with a decoupled bias (`[stage] bias = "decoupled"`): the
//! divider's node bypassed to ground by `c_bias`, and a series resistor `r_bias_in` from it
//! into the + input.
//!
//! ```text
//!          c_in                     (+) U1 ── amp_out ──||── out ── R_load ── ⏚
//!   in ────||────┬───────────────── (+)   │             c_out
//!             r_bias_in                   │
//!   vcc ─ r_bias_hi ─┼─ c_bias ─ ⏚  (−) ──┴── r_fb ── amp_out
//!          r_bias_lo ┘                └── r_g ──||── ⏚
//!                                            c_g
//! ```
//! The bias node n_b sits at the divider's voltage; at mid-band c_bias shorts it, so the
//! source sees r_bias_in alone: the input resistance is R_in, the mid-band gain
//! (1 + R_fb/R_g)·R_in/(R_s + R_in), and the divider's noise and the supply ripple reach
//! the + input only through the low-pass R_p–C_bias (R_p = R_bias_hi ∥ R_bias_lo; corner
//! 1/(2π·R_p·C_bias)) and the divider R_in : (R_s + Z_cin) (any circuit-theory text). At DC
//! c_bias and c_in are open: the + input sits on the divider's voltage less the bias current
//! through R_p + R_in, so compensation asks R_fb = R_p + R_in. Slots 0–6 are the
//! non-inverting stage's, in its order; 7 is `c_bias`, 8 `r_bias_in`.

use super::common;
use super::non_inverting::{self, C_G, C_IN, C_OUT, R_BIAS_HI, R_BIAS_LO, R_FB, R_G};
use super::plan::{Coord, WalkPlan};
use super::plans::{self, DividerContext, GainForm};
use super::traits::{Circuit, Drawing, SearchPlan};
use super::types::{
    cap_z, CapBias, DcErrors, DcPoint, Network, NoiseCircuit, NoisePlace, OpAmp, SlotDef,
    SpiceElement,
};
use crate::build::SlotValue;
use crate::interval::{Iv, Num};
use crate::objective::{Figures, NetworkFigure, Networks};
use crate::spec::Spec;
use crate::vocab::{PartKind, StageKind};
use num_complex::Complex64;
use std::f64::consts::PI;

/// The non-inverting stage with a decoupled bias (nine slots; see the module docs).
pub struct NonInvertingDecoupled;

/// Slot index of `c_bias`, the bias node's bypass capacitor to ground.
pub const C_BIAS: usize = 7;
/// Slot index of `r_bias_in`, the series resistor from the bias node into the + input.
pub const R_BIAS_IN: usize = 8;

const SLOTS: [SlotDef; 9] = {
    let b = non_inverting::SLOTS;
    [
        SlotDef {
            name: "c_in",
            kind: PartKind::Capacitor,
            role: "input coupling capacitor (corner with r_bias_in)",
        },
        SlotDef {
            name: "r_bias_hi",
            kind: PartKind::Resistor,
            role: "bias divider, supply to the bias node",
        },
        SlotDef {
            name: "r_bias_lo",
            kind: PartKind::Resistor,
            role: "bias divider, bias node to ground",
        },
        b[3],
        b[4],
        b[5],
        b[6],
        SlotDef {
            name: "c_bias",
            kind: PartKind::Capacitor,
            role: "bias bypass, bias node to ground: filters the divider's noise and the supply ripple",
        },
        SlotDef {
            name: "r_bias_in",
            kind: PartKind::Resistor,
            role: "series resistor, bias node to + input: the input resistance",
        },
    ]
};

/// The divider's resistors scaled so that their Thevenin resistance is R_p + R_in at the same
/// voltage (R·(1 + R_in/R_p)): the bias current's path to the + input, for the DC formulas of
/// `circuit::common`, which take a divider driving the + input directly.
fn thevenin<T: Num>(hi: T, lo: T, r_in: T) -> (T, T) {
    // hi·(R_p + R_in)/R_p = hi + R_in·(hi + lo)/lo, and likewise for lo.
    (hi + r_in + r_in * hi / lo, lo + r_in + r_in * lo / hi)
}

/// The figures of [`Circuit::figures`], over plain values or intervals.
fn figures<T: Num>(spec: &Spec, v: &[T]) -> Figures<T> {
    let (hi, lo, fb) = (v[R_BIAS_HI], v[R_BIAS_LO], v[R_FB]);
    let r_in = v[R_BIAS_IN];
    let (th_hi, th_lo) = thevenin(hi, lo, r_in);
    Figures {
        gain: gain(spec, v),
        input_resistance: r_in,
        offset: common::offset_error(spec, th_hi, th_lo, fb),
        dc_out: common::dc_out(spec, th_hi, th_lo, fb, &DcErrors::centre(spec)),
        dc_error: common::dc_error(spec, th_hi, th_lo, fb),
        bias_current: Some(common::divider_current(spec.supply, hi, lo)),
        networks: networks(spec, v),
        // At mid-band c_bias grounds the divider node: the + input's shunt is r_bias_in, the
        // plain stage's divider R_p (`non_inverting::noise_density` with R_hi = R_lo = 2·r).
        noise: super::non_inverting::noise_density(
            spec,
            T::c(2.0) * r_in,
            T::c(2.0) * r_in,
            fb,
            v[R_G],
        ),
        cm_ratio: None,
        matched_gain: None,
    }
}

/// Mid-band gain (1 + R_fb/R_g)·R_in/(R_s + R_in): rising in the amplifier's gain and in R_in.
fn gain<T: Num>(spec: &Spec, v: &[T]) -> T {
    let amp = T::c(1.0) + v[R_FB] / v[R_G];
    let rs = spec.source_resistance;
    T::monotone(|[a, r]| a * r / (rs + r), [amp, v[R_BIAS_IN]], [true, true])
}

/// The networks: c_in with the source and r_bias_in (not a plain high-pass: the bias node's
/// impedance rises as c_bias opens), the gain leg, c_out with the load, and the bypass c_bias
/// with R_p (off the signal path).
fn networks<T: Num>(spec: &Spec, v: &[T]) -> Networks<T> {
    let network = |resistance, capacitance, plain, cap_slot, shelf| NetworkFigure {
        resistance,
        capacitance,
        plain,
        cap_slot,
        shelf,
    };
    let ng = T::monotone(|[f, g]| 1.0 + f / g, [v[R_FB], v[R_G]], [true, false]);
    smallvec::smallvec![
        network(
            T::c(spec.source_resistance) + v[R_BIAS_IN],
            v[C_IN],
            false,
            C_IN,
            None
        ),
        network(v[R_G], v[C_G], false, C_G, Some(ng)),
        network(T::c(spec.load), v[C_OUT], true, C_OUT, None),
        network(
            common::parallel(v[R_BIAS_HI], v[R_BIAS_LO]),
            v[C_BIAS],
            false,
            C_BIAS,
            None
        ),
    ]
}

/// The impedance of the bias node to AC ground through the divider and c_bias, Ω.
fn bias_node(v: &[f64], f: f64) -> Complex64 {
    let one = Complex64::new(1.0, 0.0);
    one / (one / v[R_BIAS_HI] + one / v[R_BIAS_LO] + one / cap_z(v[C_BIAS], f))
}

impl Circuit for NonInvertingDecoupled {
    fn kind(&self) -> StageKind {
        StageKind::NonInverting
    }

    fn slots(&self) -> &'static [SlotDef] {
        &SLOTS
    }

    fn topology(&self) -> &'static str {
        "single-supply non-inverting amplifier: AC-coupled input, + input through r_bias_in from a bias divider bypassed by c_bias, feedback r_fb, gain leg r_g + c_g to ground, AC-coupled output"
    }

    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        gain(spec, v)
    }

    fn noise_gain(&self, _spec: &Spec, v: &[f64]) -> f64 {
        1.0 + v[R_FB] / v[R_G]
    }

    fn input_resistance(&self, _spec: &Spec, v: &[f64]) -> f64 {
        v[R_BIAS_IN]
    }

    /// V_out/V_s = H_in · (1/β) · 1/(1 + 1/(aβ)) · H_out with
    /// H_in = Z_in/(Z_in + R_s + 1/(jωC_in)), Z_in = R_in + (R_p ∥ 1/(jωC_bias)), and
    /// β = Z_g/(Z_g + R_fb), Z_g = R_g + 1/(jωC_g) (feedback theory).
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64 {
        let z_in = Complex64::new(v[R_BIAS_IN], 0.0) + bias_node(v, f);
        let h_in = z_in / (z_in + spec.source_resistance + cap_z(v[C_IN], f));
        let zg = Complex64::new(v[R_G], 0.0) + cap_z(v[C_G], f);
        let beta = zg / (zg + v[R_FB]);
        let h_amp = opamp.loop_factor(f, beta) / beta;
        h_in * h_amp * common::high_pass(spec.load, v[C_OUT], f)
    }

    fn networks(&self, spec: &Spec, v: &[f64]) -> Vec<Network> {
        vec![
            Network {
                name: "input",
                cap_slot: C_IN,
                resistance: spec.source_resistance + v[R_BIAS_IN],
                capacitance: v[C_IN],
            },
            Network {
                name: "gain leg",
                cap_slot: C_G,
                resistance: v[R_G],
                capacitance: v[C_G],
            },
            Network {
                name: "output",
                cap_slot: C_OUT,
                resistance: spec.load,
                capacitance: v[C_OUT],
            },
            Network {
                name: "bias bypass",
                cap_slot: C_BIAS,
                resistance: common::parallel(v[R_BIAS_HI], v[R_BIAS_LO]),
                capacitance: v[C_BIAS],
            },
        ]
    }

    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint {
        let (hi, lo) = thevenin(v[R_BIAS_HI], v[R_BIAS_LO], v[R_BIAS_IN]);
        DcPoint {
            divider_current: spec.supply / (v[R_BIAS_HI] + v[R_BIAS_LO]),
            ..common::dc_point(spec, hi, lo, v[R_FB], e)
        }
    }

    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64 {
        let (hi, lo) = thevenin(v[R_BIAS_HI], v[R_BIAS_LO], v[R_BIAS_IN]);
        common::offset_error(spec, hi, lo, v[R_FB])
    }

    fn cap_bias(&self, spec: &Spec, v: &[f64], dc: &DcPoint) -> Vec<CapBias> {
        // The bias current I = (V_div − V+)/(R_p + R_in) drops R_p·I from the divider's voltage
        // to the bias node; no DC flows through r_g (c_g blocks it).
        let (hi, lo, r_in) = (v[R_BIAS_HI], v[R_BIAS_LO], v[R_BIAS_IN]);
        let rp = common::parallel(hi, lo);
        let v_div = spec.supply * lo / (hi + lo);
        let v_b = v_div - (v_div - dc.v_plus) * rp / (rp + r_in);
        vec![
            CapBias {
                slot: C_IN,
                volts: dc.v_plus - spec.source_dc,
                a_node: "+ input side",
                b_node: "source side",
            },
            CapBias {
                slot: C_G,
                volts: dc.v_minus,
                a_node: "r_g side",
                b_node: "ground",
            },
            CapBias {
                slot: C_OUT,
                volts: dc.v_out,
                a_node: "op-amp side",
                b_node: "load side",
            },
            CapBias {
                slot: C_BIAS,
                volts: v_b,
                a_node: "bias node side",
                b_node: "ground",
            },
        ]
    }

    fn resistor_power(
        &self,
        _spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)> {
        let i = dc.divider_current;
        let (rf, rg) = (v[R_FB], v[R_G]);
        // Mid-band the output sine divides across r_fb and r_g, and the + input's share
        // V_pk/NG sits across r_bias_in (the bias node is AC ground): P = V_peak²/(2R).
        let v_fb = out_peak * rf / (rf + rg);
        let v_g = out_peak * rg / (rf + rg);
        let v_in = out_peak * rg / (rf + rg);
        vec![
            (R_BIAS_HI, i * i * v[R_BIAS_HI]),
            (R_BIAS_LO, i * i * v[R_BIAS_LO]),
            (R_FB, v_fb * v_fb / (2.0 * rf)),
            (R_G, v_g * v_g / (2.0 * rg)),
            (R_BIAS_IN, v_in * v_in / (2.0 * v[R_BIAS_IN])),
        ]
    }

    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>> {
        let r_in = spec.input_resistance_min.unwrap_or(100e3);
        // R_p = R_in; compensation R_fb = R_p + R_in; R_g from the gain.
        let rp = r_in;
        let k = spec.bias_target() / spec.supply;
        let (hi, lo) = (rp / k, rp / (1.0 - k));
        let r_fb = rp + r_in;
        let r_g = (spec.gain > 1.0).then(|| r_fb / (spec.gain - 1.0));
        let fc = common::common_corner_target(spec, 3);
        let c = |r: Option<f64>| match (fc, r) {
            (Some(fc), Some(r)) => Some(1.0 / (2.0 * PI * r * fc)),
            _ => None,
        };
        vec![
            c(Some(r_in + spec.source_resistance)),
            Some(hi),
            Some(lo),
            Some(r_fb),
            r_g,
            c(r_g),
            c(Some(spec.load)),
            // The bypass corner a decade below the band's low edge (common practice).
            Some(1.0 / (2.0 * PI * rp * spec.band.0 / 10.0)),
            Some(r_in),
        ]
    }

    /// − input: R_fb to the output, R_g + c_g to ground. + input: the arm R_in + Z_b to AC
    /// ground (Z_b = R_hi ∥ R_lo ∥ Z_cbias, the bias node) in parallel with the input branch
    /// R_s + Z_cin. A divider resistor's noise e reaches the bias node as e·Z_rest/(R + Z_rest)
    /// (Z_rest: the node's other branches) and the + input as that times
    /// Z_branch/(R_in + Z_branch); `analysis::noise` takes a place's transfer as Z_p/Z, so
    /// each is given the Z that makes it so.
    fn noise_circuit(&self, spec: &Spec, v: &[f64], f: f64) -> NoiseCircuit {
        let re = |r: f64| Complex64::new(r, 0.0);
        let one = re(1.0);
        let name = |slot: usize| SLOTS[slot].name;
        let rs = spec.source_resistance;
        let (hi, lo, r_in) = (v[R_BIAS_HI], v[R_BIAS_LO], v[R_BIAS_IN]);
        let branch = re(rs) + cap_z(v[C_IN], f);
        let z_cb = cap_z(v[C_BIAS], f);
        let arm = re(r_in) + bias_node(v, f);
        let z_p = one / (one / arm + one / branch);
        let to_plus = branch / (re(r_in) + branch);
        let via_node = |r: f64, other: f64| {
            let rest = one / (one / other + one / z_cb + one / (re(r_in) + branch));
            let t = rest / (re(r) + rest) * to_plus;
            z_p / t
        };
        let mut resistors = vec![
            (name(R_BIAS_HI), hi, NoisePlace::Plus(via_node(hi, lo))),
            (name(R_BIAS_LO), lo, NoisePlace::Plus(via_node(lo, hi))),
            (name(R_BIAS_IN), r_in, NoisePlace::Plus(arm)),
        ];
        if rs > 0.0 {
            resistors.push(("source_resistance", rs, NoisePlace::Plus(branch)));
        }
        resistors.push((name(R_FB), v[R_FB], NoisePlace::Feedback));
        resistors.push((name(R_G), v[R_G], NoisePlace::Shunt));
        NoiseCircuit {
            z_f: re(v[R_FB]),
            z_s: re(v[R_G]) + cap_z(v[C_G], f),
            z_p,
            h_out: common::high_pass(spec.load, v[C_OUT], f),
            resistors,
        }
    }

    fn figures(&self, spec: &Spec, v: &[f64]) -> Figures<f64> {
        figures(spec, v)
    }

    fn figure_bounds(&self, spec: &Spec, v: &[Iv]) -> Figures<Iv> {
        figures(spec, v)
    }

    fn network_bounds(&self, spec: &Spec, v: &[Iv]) -> Networks<Iv> {
        networks(spec, v)
    }

    /// Mid-band (c_g shorted) the output drives r_fb and r_g in series to ground.
    fn feedback_load(&self, _spec: &Spec, v: &[f64]) -> f64 {
        v[R_FB] + v[R_G]
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

/// The groups: without a source resistance the gain pair (the gain is 1 + R_fb/R_g alone),
/// then the divider with r_bias_in (the offset share needs all three and R_fb); with one,
/// r_bias_in first (it attenuates the gain), then the gain pair and the divider. The
/// capacitors last, one each, the bypass first (it bounds what the input network can give
/// back at the band's low edge, `input_credit_db`).
const GROUPS: &[&[usize]] = &[
    &[R_G, R_FB],
    &[R_BIAS_HI, R_BIAS_LO, R_BIAS_IN],
    &[C_BIAS],
    &[C_G],
    &[C_OUT],
    &[C_IN],
];
const GROUPS_RS: &[&[usize]] = &[
    &[R_BIAS_IN],
    &[R_G, R_FB],
    &[R_BIAS_HI, R_BIAS_LO],
    &[C_BIAS],
    &[C_G],
    &[C_OUT],
    &[C_IN],
];

fn get(parts: &[Option<SlotValue>], i: usize) -> Option<&SlotValue> {
    parts.get(i).and_then(Option::as_ref)
}

impl NonInvertingDecoupled {
    fn static_groups(spec: &Spec) -> &'static [&'static [usize]] {
        if spec.source_resistance > 0.0 {
            GROUPS_RS
        } else {
            GROUPS
        }
    }

    /// R_in/(R_s + R_in) at the nominal r_bias_in (1 without a source resistance).
    fn att(spec: &Spec, parts: &[Option<SlotValue>]) -> f64 {
        let rs = spec.source_resistance;
        match get(parts, R_BIAS_IN) {
            Some(r) if rs > 0.0 => r.value / (rs + r.value),
            _ => 1.0,
        }
    }

    /// The offset share with the divider, r_bias_in and r_fb chosen (nominal values).
    fn offset_points(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (hi, lo, r_in, fb) = (
            get(parts, R_BIAS_HI)?.value,
            get(parts, R_BIAS_LO)?.value,
            get(parts, R_BIAS_IN)?.value,
            get(parts, R_FB)?.value,
        );
        let (th_hi, th_lo) = thevenin(hi, lo, r_in);
        Some(crate::objective::offset::points(
            spec,
            common::offset_error(spec, th_hi, th_lo, fb),
        ))
    }

    /// The most the input network can raise the gain at the band's low edge, dB: |Z_in| is
    /// at most R_in + |Z_b| there, |Z_b| = R_p/√(1 + (ωR_pC_bias)²) (largest at the largest
    /// R_p and the smallest C_bias), and |Z_in + R_s + Z_cin| ≥ R_in + R_s (every real part
    /// is positive), so |H_in|/H_mid ≤ 1 + |Z_b|/R_in: credit for the other networks' loss.
    fn input_credit_db(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (hi, lo, r_in, cb) = (
            get(parts, R_BIAS_HI)?,
            get(parts, R_BIAS_LO)?,
            get(parts, R_BIAS_IN)?,
            get(parts, C_BIAS)?,
        );
        let (h, l) = (common::end(spec, hi, true), common::end(spec, lo, true));
        let rp = h * l / (h + l);
        let x = 2.0 * PI * spec.band.0 * rp * common::end(spec, cb, false);
        let zb = rp / (1.0 + x * x).sqrt();
        Some(20.0 * (1.0 + zb / common::end(spec, r_in, false)).log10() * (1.0 + 1e-9) + 1e-9)
    }

    /// The gain leg's worst loss at the band's low edge over its parts' tolerance corners, dB:
    /// |G_mid/G(f)| with G(f) = 1 + R_fb/(R_g + 1/(jωC_g)) (never below 0: the shelf falls).
    fn gain_leg_loss(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (fb, rg, cg) = (get(parts, R_FB)?, get(parts, R_G)?, get(parts, C_G)?);
        let w = 2.0 * PI * spec.band.0;
        Some(
            common::value_vertices(spec, &[fb, rg, cg])
                .iter()
                .map(|v| {
                    let zg = Complex64::new(v[1], -1.0 / (w * v[2]));
                    let g = Complex64::new(1.0, 0.0) + Complex64::new(v[0], 0.0) / zg;
                    20.0 * ((1.0 + v[0] / v[1]) / g.norm()).log10()
                })
                .fold(f64::NEG_INFINITY, f64::max),
        )
    }
}

/// A plan of exact shares (the gain points with the gain pair, the offset points with the
/// divider and r_bias_in) and relaxed checks, the capacitors at no share: each network's own
/// corner, the output network's loss within the budget plus the most the input network can
/// give back (`input_credit_db`), the bypass's corner within the band, ratings at the nominal
/// DC. `tests/exact_bias.rs` holds it to brute force.
impl SearchPlan for NonInvertingDecoupled {
    fn groups(&self, spec: &Spec) -> Vec<Vec<usize>> {
        Self::static_groups(spec)
            .iter()
            .map(|g| g.to_vec())
            .collect()
    }

    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<SlotValue>]) -> Option<f64> {
        let first = Self::static_groups(spec)[g][0];
        let rs = spec.source_resistance;
        let v_div = || {
            let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
            Some(spec.supply * lo.value / (hi.value + lo.value))
        };
        let corner_ok = |r: f64, c: &SlotValue| {
            let corner = 1.0 / (2.0 * PI * r * common::end(spec, c, false));
            spec.corner_low_max
                .is_none_or(|m| corner <= m * (1.0 + common::SLACK))
        };
        match first {
            R_BIAS_IN => {
                let r = get(parts, R_BIAS_IN)?;
                let ok = spec
                    .input_resistance_min
                    .is_none_or(|m| common::end(spec, r, false) >= m * (1.0 - common::SLACK));
                ok.then_some(0.0)
            }
            R_G => {
                let (fb, rg) = (get(parts, R_FB)?, get(parts, R_G)?);
                let amp_lo = 1.0 + common::end(spec, fb, false) / common::end(spec, rg, true);
                let amp_hi = 1.0 + common::end(spec, fb, true) / common::end(spec, rg, false);
                let (a_lo, a_hi) = match get(parts, R_BIAS_IN) {
                    Some(r) if rs > 0.0 => {
                        let (l, h) = (common::end(spec, r, false), common::end(spec, r, true));
                        (l / (rs + l), h / (rs + h))
                    }
                    _ => (1.0, 1.0),
                };
                if !common::gain_window_ok(spec, amp_lo * a_lo, amp_hi * a_hi) {
                    return None;
                }
                let gain = (1.0 + fb.value / rg.value) * Self::att(spec, parts);
                Some(crate::objective::gain::points(spec, gain))
            }
            R_BIAS_HI => {
                let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
                if !common::divider_current_ok(spec, hi, lo) {
                    return None;
                }
                let (fb, rg) = (get(parts, R_FB)?, get(parts, R_G)?);
                // At most the worst-case highest gain: the amplifier's highest with r_bias_in
                // at the low end of its tolerance (the attenuation rises with it).
                let att_lo = match get(parts, R_BIAS_IN) {
                    Some(r) if rs > 0.0 => {
                        let l = common::end(spec, r, false);
                        l / (rs + l)
                    }
                    _ => 1.0,
                };
                let g_hi =
                    (1.0 + common::end(spec, fb, true) / common::end(spec, rg, false)) * att_lo;
                let (vmin, vmax) = common::divider_range(spec, hi, lo);
                if !common::swing_ok(spec, common::swing(spec, vmin, vmax), g_hi) {
                    return None;
                }
                // The noise and divider-current goals, exact here (the gain pair and r_bias_in
                // are chosen before the divider): the circuit terms of `figures` sum to the
                // groups' shares.
                let r_in = get(parts, R_BIAS_IN)?.value;
                let noise = super::non_inverting::noise_density(
                    spec,
                    2.0 * r_in,
                    2.0 * r_in,
                    fb.value,
                    rg.value,
                );
                let current = common::divider_current(spec.supply, hi.value, lo.value);
                Self::offset_points(spec, parts).map(|o| {
                    o + crate::objective::noise::points(spec, noise)
                        + crate::objective::divider_current::points(spec, current)
                })
            }
            C_IN => {
                let (c, r_in) = (get(parts, C_IN)?, get(parts, R_BIAS_IN)?);
                if !corner_ok(rs + common::end(spec, r_in, true), c) {
                    return None;
                }
                common::cap_ok(c, v_div()? - spec.source_dc).then_some(0.0)
            }
            C_G => {
                let (c, rg) = (get(parts, C_G)?, get(parts, R_G)?);
                if !corner_ok(common::end(spec, rg, true), c) {
                    return None;
                }
                if let Some(budget) = common::loss_budget(spec) {
                    let credit = Self::input_credit_db(spec, parts)?;
                    let loss = Self::gain_leg_loss(spec, parts)?;
                    if loss > budget * (1.0 + common::SLACK) + common::SLACK + credit {
                        return None;
                    }
                }
                common::cap_ok(c, v_div()?).then_some(0.0)
            }
            C_OUT => {
                let c = get(parts, C_OUT)?;
                if !corner_ok(spec.load, c) {
                    return None;
                }
                if let Some(budget) = common::loss_budget(spec) {
                    let loss = common::high_pass_loss_db(
                        spec.load,
                        common::end(spec, c, false),
                        spec.band.0,
                    );
                    // Buffered sections: the losses add (dB), the gain leg's never below 0.
                    let credit = Self::input_credit_db(spec, parts)?;
                    let g_loss = Self::gain_leg_loss(spec, parts)?.max(0.0);
                    if loss + g_loss > budget * (1.0 + common::SLACK) + common::SLACK + credit {
                        return None;
                    }
                }
                common::cap_ok(c, v_div()?).then_some(0.0)
            }
            _ => {
                let c = get(parts, C_BIAS)?;
                let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
                let (h, l) = (common::end(spec, hi, true), common::end(spec, lo, true));
                let rp = h * l / (h + l);
                let corner = 1.0 / (2.0 * PI * rp * common::end(spec, c, false));
                if corner > spec.band.0 * (1.0 + common::SLACK) || !corner_ok(rp, c) {
                    return None;
                }
                common::cap_ok(c, v_div()?).then_some(0.0)
            }
        }
    }

    fn walk<'s>(
        &'s self,
        spec: &'s Spec,
        g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s> {
        let slot = Self::static_groups(spec)[g][k];
        let form = GainForm {
            att: Self::att(spec, parts),
            plus: 1.0,
            offset: 0.0,
        };
        match slot {
            R_BIAS_IN => match (
                get(parts, R_BIAS_HI),
                get(parts, R_BIAS_LO),
                get(parts, R_FB),
            ) {
                // In the divider's group: the offset share exactly, as a function of R_in it is
                // |V_div − t| + c·(R_p + R_in) + b·|R_fb − R_p − R_in| + c·R_fb, convex with its
                // least at R_in = R_fb − R_p when b > c (else at the smallest R_in).
                (Some(hi), Some(lo), Some(fb)) if spec.source_resistance == 0.0 => {
                    let (hi, lo, fb) = (hi.value, lo.value, fb.value);
                    let rp = hi * lo / (hi + lo);
                    let b = spec.amplifier.input_bias_current;
                    let c = spec.amplifier.input_offset_current / 2.0;
                    let target = if b > c && fb > rp { fb - rp } else { 0.0 };
                    let floor = spec
                        .input_resistance_min
                        .map_or(0.0, |m| m * (1.0 - common::SLACK));
                    let target = target.max(floor);
                    WalkPlan {
                        at_least: None,
                        window: super::plan::ANY,
                        coord: Coord::Value,
                        target,
                        bound: Box::new(move |r_in: f64, up: bool| {
                            // Below the input resistance floor the low end of the tolerance
                            // (at most the nominal value) fails, and so does every smaller one.
                            if !up && r_in < floor {
                                return None;
                            }
                            let (th_hi, th_lo) = thevenin(hi, lo, r_in);
                            Some(crate::objective::offset::points(
                                spec,
                                common::offset_error(spec, th_hi, th_lo, fb),
                            ))
                        }),
                    }
                }
                _ => match spec.input_resistance_min {
                    Some(m) => WalkPlan::at_least(Coord::low_end(spec), m),
                    None => WalkPlan::free(),
                },
            },
            R_G => match get(parts, R_FB) {
                Some(fb) => plans::gain_other_given_fb(spec, form, fb.value, 0.0, None),
                None => plans::gain_other_first(spec, form, 0.0, None),
            },
            R_FB => match get(parts, R_G) {
                Some(rg) => plans::gain_fb(spec, form, rg.value, None),
                None => WalkPlan::free(),
            },
            R_BIAS_HI | R_BIAS_LO => {
                let gain = match (get(parts, R_FB), get(parts, R_G)) {
                    (Some(f), Some(g)) => (1.0 + f.value / g.value) * form.att,
                    _ => 0.0,
                };
                let ctx = DividerContext {
                    r_fb: None,
                    rp_min: None,
                    gain,
                };
                plans::divider_walk(spec, slot == R_BIAS_HI, parts, R_BIAS_HI, R_BIAS_LO, ctx)
            }
            C_BIAS => {
                let need = match (get(parts, R_BIAS_HI), get(parts, R_BIAS_LO)) {
                    (Some(hi), Some(lo)) => {
                        let (h, l) = (common::end(spec, hi, true), common::end(spec, lo, true));
                        1.0 / (2.0 * PI * (h * l / (h + l)) * spec.band.0)
                    }
                    _ => 0.0,
                };
                WalkPlan::at_least(Coord::low_end(spec), need)
            }
            C_OUT => {
                let spent = match (
                    Self::input_credit_db(spec, parts),
                    Self::gain_leg_loss(spec, parts),
                ) {
                    (Some(credit), Some(g)) => Some(g.max(0.0) - credit),
                    _ => None,
                };
                let need = spent
                    .and_then(|s| common::needed_capacitance_after(spec, spec.load, s))
                    .unwrap_or(0.0);
                WalkPlan::at_least(Coord::low_end(spec), need)
            }
            _ => WalkPlan::at_least(Coord::low_end(spec), 0.0),
        }
    }
}

impl Drawing for NonInvertingDecoupled {
    /// The drawing above: c_in from the source to +, r_bias_in from + to the bias node n_b,
    /// where the divider and c_bias meet; the amplifier's side as in the non-inverting stage.
    fn spice_elements(&self) -> &'static [SpiceElement] {
        use super::types::{Node::*, SpiceElement as E};
        const ELEMENTS: &[E] = &[
            E {
                slot: C_IN,
                a: Input,
                b: PlusInput,
            },
            E {
                slot: R_BIAS_HI,
                a: Supply,
                b: Internal("n_b"),
            },
            E {
                slot: R_BIAS_LO,
                a: Internal("n_b"),
                b: Ground,
            },
            E {
                slot: R_FB,
                a: MinusInput,
                b: AmpOut,
            },
            E {
                slot: R_G,
                a: MinusInput,
                b: Internal("n_g"),
            },
            E {
                slot: C_G,
                a: Internal("n_g"),
                b: Ground,
            },
            E {
                slot: C_OUT,
                a: AmpOut,
                b: Out,
            },
            E {
                slot: C_BIAS,
                a: Internal("n_b"),
                b: Ground,
            },
            E {
                slot: R_BIAS_IN,
                a: PlusInput,
                b: Internal("n_b"),
            },
        ];
        ELEMENTS
    }

    /// The input along the top to +, r_bias_in down to the bias node with r_bias_hi from the
    /// supply on its left, c_bias below it and r_bias_lo on its right; the gain leg under the
    /// − input and c_out to the load on the right.
    fn schematic_layout(&self) -> &'static super::layout::Layout {
        use super::layout::{opamp_pins, Layout, Placed, Side, P};
        const U: P = P(600, 200);
        const PINS: super::layout::OpAmpPins = opamp_pins(U);
        const LAYOUT: Layout = Layout {
            size: (1040, 580),
            opamp: U,
            plus_on_top: true,
            source: P(60, 200),
            load: P(920, 220),
            supplies: &[P(200, 300)],
            grounds: &[P(300, 400), P(400, 400), P(570, 530)],
            wires: &[
                &[P(60, 200), P(90, 200)],
                &[P(190, 200), PINS.upper],
                &[P(300, 300), P(400, 300)],
                &[PINS.lower, P(570, 240), P(570, 330), P(610, 330)],
                &[P(710, 330), P(760, 330), P(760, 220)],
                &[PINS.out, P(780, 220)],
                &[P(880, 220), P(920, 220)],
            ],
            dots: &[P(300, 200), P(300, 300), P(570, 330), P(760, 220)],
            parts: &[
                Placed {
                    slot: C_IN,
                    from: P(90, 200),
                    to: P(190, 200),
                    label: Side::Above,
                    from_side: Some("source side"),
                },
                Placed {
                    slot: R_BIAS_HI,
                    from: P(200, 300),
                    to: P(300, 300),
                    label: Side::Above,
                    from_side: None,
                },
                Placed {
                    slot: R_BIAS_LO,
                    from: P(400, 300),
                    to: P(400, 400),
                    label: Side::Right,
                    from_side: None,
                },
                Placed {
                    slot: R_FB,
                    from: P(610, 330),
                    to: P(710, 330),
                    label: Side::Below,
                    from_side: None,
                },
                Placed {
                    slot: R_G,
                    from: P(570, 330),
                    to: P(570, 430),
                    label: Side::Left,
                    from_side: None,
                },
                Placed {
                    slot: C_G,
                    from: P(570, 430),
                    to: P(570, 530),
                    label: Side::Left,
                    from_side: Some("r_g side"),
                },
                Placed {
                    slot: C_OUT,
                    from: P(780, 220),
                    to: P(880, 220),
                    label: Side::Above,
                    from_side: Some("op-amp side"),
                },
                Placed {
                    slot: C_BIAS,
                    from: P(300, 300),
                    to: P(300, 400),
                    label: Side::Left,
                    from_side: Some("bias node side"),
                },
                Placed {
                    slot: R_BIAS_IN,
                    from: P(300, 200),
                    to: P(300, 300),
                    label: Side::Right,
                    from_side: None,
                },
            ],
            minus_source: None,
        };
        &LAYOUT
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn spec() -> Spec {
        Spec::from_toml(
            "[stage]\nkind = \"non-inverting\"\nsupply = 9\ngain = 11\nload = 10000\nband = [20, 20000]\nbias = \"decoupled\"\n[amplifier]\ninput_bias_current = \"100 nA\"\n",
        )
        .unwrap()
    }

    /// c_in 1 µF, r_bias_hi = r_bias_lo = 100 kΩ, r_fb 100 kΩ, r_g 10 kΩ, c_g 10 µF,
    /// c_out 10 µF, c_bias 10 µF, r_bias_in 47 kΩ.
    const V: [f64; 9] = [1e-6, 100e3, 100e3, 100e3, 10e3, 10e-6, 10e-6, 10e-6, 47e3];

    #[test]
    fn mid_band_and_dc_by_hand() {
        // Hand derivation (voltage divider, Ohm's law): gain 1 + 100k/10k = 11, input
        // resistance r_bias_in = 47 kΩ; at DC V_div = 4.5 V, and 100 nA into + drops
        // 100 nA · (50 k + 47 k) = 9.7 mV; the bias node sits 100 nA · 50 kΩ = 5 mV low.
        let s = spec();
        let c = NonInvertingDecoupled;
        assert_relative_eq!(c.mid_gain(&s, &V), 11.0, max_relative = 1e-12);
        assert_eq!(c.input_resistance(&s, &V), 47e3);
        let dc = c.dc(&s, &V, &DcErrors::nominal(&s));
        assert_relative_eq!(dc.v_plus, 4.5 - 9.7e-3, max_relative = 1e-12);
        assert_relative_eq!(dc.divider_current, 9.0 / 200e3, max_relative = 1e-12);
        let b = c.cap_bias(&s, &V, &dc);
        assert_relative_eq!(b[3].volts, 4.5 - 5e-3, max_relative = 1e-12);
        // Mid-band (1 kHz) the response is close to the mid-band gain.
        let h = c.response(&s, &V, &OpAmp { gbw: None }, 1e3);
        assert_relative_eq!(h.norm(), 11.0, max_relative = 1e-3);
        // The figures agree with the methods.
        let f = c.figures(&s, &V);
        assert_eq!(f.gain, c.mid_gain(&s, &V));
        assert_eq!(f.offset, c.offset_error(&s, &V));
    }

    #[test]
    fn the_divider_noise_is_filtered_by_the_bypass() {
        // At 1 kHz c_bias (10 µF) is 15.9 Ω against R_p = 50 kΩ: the divider's noise reaches
        // the bias node attenuated about 3000×, and then the + input through R_in : Z_cin.
        let s = spec();
        let c = NonInvertingDecoupled;
        let nc = c.noise_circuit(&s, &V, 1e3);
        let t = |name: &str| {
            let (_, _, place) = nc.resistors.iter().find(|r| r.0 == name).unwrap();
            match place {
                NoisePlace::Plus(z) => (nc.z_p / z).norm(),
                _ => unreachable!(),
            }
        };
        let z_cb = 1.0 / (2.0 * PI * 1e3 * 10e-6);
        assert!(t("r_bias_hi") < 1.2 * z_cb / 100e3, "{}", t("r_bias_hi"));
        // r_bias_in's own noise reaches + as a divider of its arm against the input branch,
        // which the source (0 Ω, AC ground) closes through c_in: |Z_cin/(Z_arm + Z_cin)|.
        let z_cin = cap_z(1e-6, 1e3);
        let arm = Complex64::new(47e3, 0.0) + bias_node(&V, 1e3);
        assert_relative_eq!(
            t("r_bias_in"),
            (z_cin / (arm + z_cin)).norm(),
            max_relative = 1e-9
        );
    }
}
