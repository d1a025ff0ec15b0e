//! Single-supply non-inverting stage.
//!
//! ```text
//!  vcc o--[r_bias_hi]--+
//!                      |
//!  in o------||--------+-----------|+ \
//!           c_in       |           |   >--+-- amp_out --||-- out o--[load]-- gnd
//!                [r_bias_lo]  +----|- /   |              c_out
//!                      |      |     U1    |
//!                     gnd     +--[r_fb]---+
//!                             |
//!                           [r_g]
//!                             |
//!                            === c_g
//!                             |
//!                            gnd
//! ```
//! Mid-band gain (1 + R_fb/R_g)·R_p/(R_s + R_p), R_p = R_bias_hi ∥ R_bias_lo being the input
//! resistance. c_g makes the DC gain 1, so the output sits on the divider's voltage; the DC
//! resistance at − is R_fb, so compensation asks R_p = R_fb.

use super::common::{self, end, needed_capacitance, needed_capacitance_after, SLACK};
use super::plan::{Coord, Group, LogModel, LogRow, SlotSum, WalkPlan};
use super::plans::{self, Compensation, DividerContext, GainForm};
use super::traits::{Circuit, Drawing, SearchPlan};
use super::types::{CapBias, DcErrors, DcPoint, Network, OpAmp, SlotDef};
use crate::build::SlotValue;
use crate::interval::{Cx, Iv, Num};
use crate::objective::Figures;
use crate::objective::{NetworkFigure, Networks};
use crate::spec::Spec;
use crate::vocab::PartKind;
use crate::vocab::StageKind;
use num_complex::Complex64;
use std::f64::consts::PI;

/// The single-supply non-inverting stage (seven slots; see the module docs).
pub struct NonInverting;

/// Slot index of `c_in`, the input coupling capacitor.
pub const C_IN: usize = 0;
/// Slot index of `r_bias_hi`, the bias divider's resistor from the supply to the + input.
pub const R_BIAS_HI: usize = 1;
/// Slot index of `r_bias_lo`, the bias divider's resistor from the + input to ground.
pub const R_BIAS_LO: usize = 2;
/// Slot index of `r_fb`, the feedback resistor.
pub const R_FB: usize = 3;
/// Slot index of `r_g`, the gain resistor (− input to ground through `c_g`).
pub const R_G: usize = 4;
/// Slot index of `c_g`, the gain-leg capacitor.
pub const C_G: usize = 5;
/// Slot index of `c_out`, the output coupling capacitor.
pub const C_OUT: usize = 6;

pub(crate) const SLOTS: &[SlotDef] = &[
    SlotDef {
        name: "c_in",
        kind: PartKind::Capacitor,
        role: "input coupling capacitor (corner with source resistance + the bias divider)",
    },
    SlotDef {
        name: "r_bias_hi",
        kind: PartKind::Resistor,
        role: "bias divider, supply to + input (with r_bias_lo: the input resistance)",
    },
    SlotDef {
        name: "r_bias_lo",
        kind: PartKind::Resistor,
        role: "bias divider, + input to ground",
    },
    SlotDef {
        name: "r_fb",
        kind: PartKind::Resistor,
        role: "feedback resistor: gain = 1 + r_fb / r_g",
    },
    SlotDef {
        name: "r_g",
        kind: PartKind::Resistor,
        role: "gain resistor, − input to ground through c_g",
    },
    SlotDef {
        name: "c_g",
        kind: PartKind::Capacitor,
        role: "gain-leg capacitor: DC gain of 1 (corner with r_g)",
    },
    SlotDef {
        name: "c_out",
        kind: PartKind::Capacitor,
        role: "output coupling capacitor (corner with the load)",
    },
];

/// The gain pair first (r_g walked before r_fb), then the divider, whose compensation
/// target is R_fb.
const GROUPS: &[Group] = &[
    &[R_G, R_FB],
    &[R_BIAS_HI, R_BIAS_LO],
    &[C_IN],
    &[C_G],
    &[C_OUT],
];

/// With a source resistance the divider attenuates the gain: the divider first, then the
/// gain pair with the whole gain known.
const GROUPS_DIVIDER_FIRST: &[Group] = &[
    &[R_BIAS_HI, R_BIAS_LO],
    &[R_G, R_FB],
    &[C_IN],
    &[C_G],
    &[C_OUT],
];

/// What a search group is, whichever order the spec gives.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Which {
    Gain,
    Divider,
    CapIn,
    CapG,
    CapOut,
}

fn get(parts: &[Option<SlotValue>], i: usize) -> Option<&SlotValue> {
    parts.get(i).and_then(Option::as_ref)
}

/// Loss of the gain leg: G(f) = 1 + R_fb/(R_g + 1/(jωC_g)) against G_mid = 1 + R_fb/R_g.
fn gain_leg_loss_db(r_fb: f64, r_g: f64, c_g: f64, f: f64) -> f64 {
    let zg = Complex64::new(r_g, -1.0 / (2.0 * PI * f * c_g));
    let g = Complex64::new(1.0, 0.0) + Complex64::new(r_fb, 0.0) / zg;
    20.0 * ((1.0 + r_fb / r_g) / g.norm()).log10()
}

/// Mid-band gain (1 + R_fb/R_g)·R_p/(R_s + R_p) (non-inverting amplifier behind the divider's
/// attenuation of the source resistance): rising in the amplifier gain and in R_p.
fn gain<T: Num>(spec: &Spec, v: &[T]) -> T {
    let rp = common::parallel(v[R_BIAS_HI], v[R_BIAS_LO]);
    let amp = T::c(1.0) + v[R_FB] / v[R_G];
    let rs = spec.source_resistance;
    T::monotone(|[a, rp]| a * rp / (rs + rp), [amp, rp], [true, true])
}

/// The figures of [`Circuit::figures`], over plain values or intervals. The gain leg is not a
/// plain high-pass (its zero eases the loss), so only its corner counts for the generic plan.
fn figures<T: Num>(spec: &Spec, v: &[T]) -> Figures<T> {
    let (hi, lo, fb) = (v[R_BIAS_HI], v[R_BIAS_LO], v[R_FB]);
    let rp = common::parallel(hi, lo);
    Figures {
        gain: gain(spec, v),
        input_resistance: rp,
        offset: common::offset_error(spec, hi, lo, fb),
        dc_out: common::dc_out(spec, hi, lo, fb, &DcErrors::centre(spec)),
        dc_error: common::dc_error(spec, hi, lo, fb),
        bias_current: Some(common::divider_current(spec.supply, hi, lo)),
        networks: networks(spec, v),
        cm_ratio: None,
        matched_gain: None,
        noise: noise_density(spec, hi, lo, fb, v[R_G]),
    }
}

/// Mid-band input-referred noise power density, V²/Hz (capacitors shorted, ideal op-amp).
/// With Z_p = R_s ∥ R_p at +, NG = 1 + R_fb/R_g and the gain NG·R_p/(R_s + R_p), the output
/// sum of `analysis::noise` over the gain² is, with a = R_fb ∥ R_g and k = 1 + R_s/R_p:
///   e² = (4kT·a + i_n²·a²)·k² + 4kT·R_s·k + e_n²·k² + i_n²·R_s²
/// (R_fb and R_g together are the noise of their parallel value at the input; Z_p·k = R_s).
/// Rising in R_fb and R_g, falling in each divider resistor; without a source resistance
/// k = 1 and the divider drops out (the source shorts the + input at mid-band).
pub(crate) fn noise_density<T: Num>(spec: &Spec, hi: T, lo: T, fb: T, g: T) -> T {
    let rs = spec.source_resistance;
    let four_kt = crate::objective::noise::four_kt();
    let (en2, in2) = crate::objective::noise::amplifier_powers(spec);
    T::monotone(
        |[hi, lo, fb, g]| {
            let a = fb * g / (fb + g);
            let k = if rs > 0.0 {
                1.0 + rs * (hi + lo) / (hi * lo)
            } else {
                1.0
            };
            (four_kt * a + in2 * a * a) * k * k + four_kt * rs * k + en2 * k * k + in2 * rs * rs
        },
        [hi, lo, fb, g],
        [false, false, true, true],
    )
}

/// The coupling networks of [`figures`]: c_in with the source and the divider, the gain leg
/// (c_g with r_g, a shelf of ratio 1 + R_fb/R_g — rising in R_fb, falling in R_g), c_out with
/// the load.
fn networks<T: Num>(spec: &Spec, v: &[T]) -> Networks<T> {
    let rp = common::parallel(v[R_BIAS_HI], v[R_BIAS_LO]);
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
            T::c(spec.source_resistance) + rp,
            common::with_source_capacitance(spec, v[C_IN]),
            true,
            C_IN,
            None,
        ),
        network(v[R_G], v[C_G], false, C_G, Some(ng)),
        network(T::c(spec.load), v[C_OUT], true, C_OUT, None),
    ]
}

impl NonInverting {
    /// The groups in the order the spec asks (see [`GROUPS_DIVIDER_FIRST`]).
    fn static_groups(spec: &Spec) -> &'static [Group] {
        if spec.source_resistance > 0.0 {
            GROUPS_DIVIDER_FIRST
        } else {
            GROUPS
        }
    }

    fn rp(hi: f64, lo: f64) -> f64 {
        common::parallel(hi, lo)
    }

    /// Worst-case gain range; with a source resistance the divider attenuates too.
    fn gain_range(
        spec: &Spec,
        r_fb: &SlotValue,
        r_g: &SlotValue,
        div: Option<(&SlotValue, &SlotValue)>,
    ) -> (f64, f64) {
        let amp_lo = 1.0 + end(spec, r_fb, false) / end(spec, r_g, true);
        let amp_hi = 1.0 + end(spec, r_fb, true) / end(spec, r_g, false);
        let rs = spec.source_resistance;
        match div {
            Some((hi, lo)) if rs > 0.0 => {
                let rp_lo = Self::rp(end(spec, hi, false), end(spec, lo, false));
                let rp_hi = Self::rp(end(spec, hi, true), end(spec, lo, true));
                (amp_lo * rp_lo / (rs + rp_lo), amp_hi * rp_hi / (rs + rp_hi))
            }
            _ => (amp_lo, amp_hi),
        }
    }

    fn input_network_loss(
        spec: &Spec,
        hi: &SlotValue,
        lo: &SlotValue,
        c_in: &SlotValue,
    ) -> Option<f64> {
        let r = spec.source_resistance + Self::rp(end(spec, hi, false), end(spec, lo, false));
        let c = end(spec, c_in, false);
        let corner = 1.0 / (2.0 * PI * r * c);
        let loss = common::high_pass_loss_db(r, c, spec.band.0);
        common::plain_network_ok(spec, corner, loss).then_some(loss)
    }

    /// The gain leg's worst loss over its three parts' tolerance corners.
    fn gain_network_loss(
        spec: &Spec,
        r_fb: &SlotValue,
        r_g: &SlotValue,
        c_g: &SlotValue,
    ) -> Option<f64> {
        let corner = 1.0 / (2.0 * PI * end(spec, r_g, false) * end(spec, c_g, false));
        let loss = common::value_vertices(spec, &[r_fb, r_g, c_g])
            .iter()
            .map(|v| gain_leg_loss_db(v[0], v[1], v[2], spec.band.0))
            .fold(f64::NEG_INFINITY, f64::max);
        // Its own loss within the whole budget (3 dB when the band edge is the requirement).
        if !common::losses_ok(spec, loss) {
            return None;
        }
        common::network_ok(spec, corner, loss).then_some(loss)
    }

    fn output_network_loss(spec: &Spec, c_out: &SlotValue) -> Option<f64> {
        let c = end(spec, c_out, false);
        let corner = 1.0 / (2.0 * PI * spec.load * c);
        let loss = common::high_pass_loss_db(spec.load, c, spec.band.0);
        common::plain_network_ok(spec, corner, loss).then_some(loss)
    }

    fn nominal_divider(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
        Some(spec.supply * lo.value / (hi.value + lo.value))
    }

    fn which(spec: &Spec, g: usize) -> Which {
        match Self::static_groups(spec)[g][0] {
            R_G | R_FB => Which::Gain,
            R_BIAS_HI | R_BIAS_LO => Which::Divider,
            C_IN => Which::CapIn,
            C_G => Which::CapG,
            _ => Which::CapOut,
        }
    }

    /// The least the worst-case highest gain can be in a build that passes: the floor of the
    /// gain window (0 without a tolerance), for the swing an input peak needs before the gain
    /// pair is chosen.
    fn gain_floor(spec: &Spec) -> f64 {
        spec.gain_tolerance
            .map_or(0.0, |t| spec.gain.abs() * (1.0 - t) * (1.0 - SLACK))
    }

    /// The input network's worst loss once the divider and c_in are chosen (`None` when it
    /// already fails, or while a part is missing).
    fn in_loss(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
        Self::input_network_loss(spec, hi, lo, get(parts, C_IN)?)
    }

    /// The gain leg's worst loss once r_fb, r_g and c_g are chosen.
    fn g_loss(spec: &Spec, parts: &[Option<SlotValue>]) -> Option<f64> {
        let (r_fb, r_g) = (get(parts, R_FB)?, get(parts, R_G)?);
        Self::gain_network_loss(spec, r_fb, r_g, get(parts, C_G)?)
    }

    /// The least c_g (at the low end of its tolerance) that the gain leg needs with `spent` dB
    /// of the loss budget taken by the input network. The leg is not a plain high-pass (its
    /// zero eases the loss). With x = 1/(ωC), |G|² = ((R_g+R_fb)² + x²)/(R_g² + x²); loss ≤ L
    /// (q = 10^(L/10)) solves to x² ≤ A·B·(q−1)/(A − q·B) with A = (R_g+R_fb)², B = R_g², at
    /// nominal R_fb, R_g (one vertex of the worst case, so a relaxation). `r_fb` is R_fb's
    /// nominal value, or a lower bound of it: the need grows with A, so with R_fb.
    fn gain_leg_need(spec: &Spec, r_fb: f64, r_g: &SlotValue, spent: f64) -> Option<f64> {
        let by_corner = needed_capacitance(spec, end(spec, r_g, false), false);
        let by_loss = common::loss_budget(spec).map(|max| {
            let left = max * (1.0 + SLACK) + SLACK - spent;
            if left <= 0.0 {
                return f64::INFINITY;
            }
            let q = 10f64.powf(left / 10.0);
            let (a, b) = ((r_g.value + r_fb).powi(2), r_g.value.powi(2));
            if a <= q * b {
                return 0.0;
            }
            let x_max = (a * b * (q - 1.0) / (a - q * b)).sqrt();
            1.0 / (2.0 * PI * spec.band.0 * x_max)
        });
        match (by_corner, by_loss) {
            (Some(a), Some(b)) => Some(a.max(b)),
            (a, b) => a.or(b),
        }
    }
}

impl Circuit for NonInverting {
    fn kind(&self) -> StageKind {
        StageKind::NonInverting
    }

    fn slots(&self) -> &'static [SlotDef] {
        SLOTS
    }

    fn topology(&self) -> &'static str {
        "single-supply non-inverting amplifier: AC-coupled input onto the bias divider, feedback r_fb, gain leg r_g + c_g to ground, AC-coupled output"
    }

    fn dc_from_resistors(&self) -> bool {
        true
    }

    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        gain(spec, v)
    }

    fn noise_gain(&self, _spec: &Spec, v: &[f64]) -> f64 {
        1.0 + v[R_FB] / v[R_G]
    }

    fn input_resistance(&self, _spec: &Spec, v: &[f64]) -> f64 {
        Self::rp(v[R_BIAS_HI], v[R_BIAS_LO])
    }

    /// V_out/V_s = H_in · (1/β) · 1/(1 + 1/(aβ)) · H_out, with H_in = R_p/(R_p + R_s + 1/(jωC_in))
    /// and β = Z_g/(Z_g + R_fb), Z_g = R_g + 1/(jωC_g) (feedback theory).
    /// Each resistor carries the spec's stray capacitance across it (`common::resistor_z`),
    /// and the source its own capacitance in series (`common::source_z`).
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64 {
        let z = |r: f64| common::resistor_z(spec, r, f);
        let one = Complex64::new(1.0, 0.0);
        let zp = one / (one / z(v[R_BIAS_HI]) + one / z(v[R_BIAS_LO]));
        let h_in = zp / (zp + common::source_z(spec, f) + super::types::cap_z(v[C_IN], f));
        let zg = z(v[R_G]) + super::types::cap_z(v[C_G], f);
        let beta = zg / (zg + z(v[R_FB]));
        let h_amp = opamp.loop_factor(f, beta) / beta;
        h_in * h_amp * common::high_pass(spec.load, v[C_OUT], f)
    }

    fn networks(&self, spec: &Spec, v: &[f64]) -> Vec<Network> {
        vec![
            Network {
                name: "input",
                cap_slot: C_IN,
                resistance: spec.source_resistance + Self::rp(v[R_BIAS_HI], v[R_BIAS_LO]),
                capacitance: common::with_source_capacitance(spec, v[C_IN]),
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
        ]
    }

    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint {
        common::dc_point(spec, v[R_BIAS_HI], v[R_BIAS_LO], v[R_FB], e)
    }

    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64 {
        common::offset_error(spec, v[R_BIAS_HI], v[R_BIAS_LO], v[R_FB])
    }

    fn cap_bias(&self, spec: &Spec, _v: &[f64], dc: &DcPoint) -> Vec<CapBias> {
        // No DC flows through r_g (c_g blocks it), so c_g sits between V− and ground.
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
        ]
    }

    /// Mid-band (c_g shorted) the output drives r_fb and r_g in series to ground.
    fn feedback_load(&self, _spec: &Spec, v: &[f64]) -> f64 {
        v[R_FB] + v[R_G]
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
        // Mid-band the output sine divides across r_fb and r_g (c_g shorted): P = V_peak²/(2R).
        let v_fb = out_peak * rf / (rf + rg);
        let v_g = out_peak * rg / (rf + rg);
        vec![
            (R_BIAS_HI, i * i * v[R_BIAS_HI]),
            (R_BIAS_LO, i * i * v[R_BIAS_LO]),
            (R_FB, v_fb * v_fb / (2.0 * rf)),
            (R_G, v_g * v_g / (2.0 * rg)),
        ]
    }

    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>> {
        let rp = spec.input_resistance_min.unwrap_or(100e3);
        let k = spec.bias_target() / spec.supply;
        let (hi, lo) = (rp / k, rp / (1.0 - k));
        // Compensation: R_fb = R_p; then R_g from the gain (infinite for a follower).
        let r_fb = rp;
        let r_g = (spec.gain > 1.0).then(|| r_fb / (spec.gain - 1.0));
        let fc = common::common_corner_target(spec, 3);
        let c = |r: Option<f64>| match (fc, r) {
            (Some(fc), Some(r)) => Some(1.0 / (2.0 * PI * r * fc)),
            _ => None,
        };
        vec![
            c(Some(rp + spec.source_resistance)),
            Some(hi),
            Some(lo),
            Some(r_fb),
            r_g,
            c(r_g),
            c(Some(spec.load)),
        ]
    }

    fn noise_circuit(&self, spec: &Spec, v: &[f64], f: f64) -> super::types::NoiseCircuit {
        use super::types::NoisePlace as Place;
        let re = |r: f64| Complex64::new(r, 0.0);
        let name = |slot: usize| SLOTS[slot].name;
        let rs = spec.source_resistance;
        let mut resistors = Vec::new();
        // − input: R_fb to the output, R_g + c_g to ground. + input: the divider in
        // parallel with the input branch (c_in and the source's resistance).
        // Each resistor with its stray capacitance: an impedance Z whose noise is 4kT·Re Z
        // (`common::resistor_noise_r`); the source branch with its own capacitance.
        let (hi, lo) = (v[R_BIAS_HI], v[R_BIAS_LO]);
        let z = |r: f64| common::resistor_z(spec, r, f);
        let noise_r = |r: f64| common::resistor_noise_r(spec, r, f);
        let branch = common::source_z(spec, f) + super::types::cap_z(v[C_IN], f);
        let one = re(1.0);
        let z_p = one / (one / z(hi) + one / z(lo) + one / branch);
        resistors.push((name(R_BIAS_HI), noise_r(hi), Place::Plus(z(hi))));
        resistors.push((name(R_BIAS_LO), noise_r(lo), Place::Plus(z(lo))));
        if rs > 0.0 {
            resistors.push(("source_resistance", rs, Place::Plus(branch)));
        }
        resistors.push((name(R_FB), noise_r(v[R_FB]), Place::Feedback));
        resistors.push((name(R_G), noise_r(v[R_G]), Place::Shunt));
        super::types::NoiseCircuit {
            z_f: z(v[R_FB]),
            z_s: z(v[R_G]) + super::types::cap_z(v[C_G], f),
            z_p,
            h_out: common::high_pass(spec.load, v[C_OUT], f),
            resistors,
        }
    }

    /// At every vertex H = H_in·H_amp·H_out with |H_in| at most the divider's attenuation,
    /// |H_out| ≤ 1 and H_amp = 1/(β + 1/a), β = Z_g/(Z_g + R_f), Z_g = R_g(1 − jx),
    /// x = 1/(2πf·R_g·C_g) (feedback theory). So the loss at the band's top against the ideal
    /// gain att·NG is at least 20·log10|NG·(1 − jx)/(NG − jx) + NG/a|, over x from 0 to what
    /// the gain leg's own requirements leave: its corner within `corner_low_max`, and its loss
    /// at the band's low edge, 10·log10(NG²(1 + x_l²)/(NG² + x_l²)) with x_l = x·f_hi/f_lo,
    /// within the loss budget (it rises with x_l, so x_l² ≤ NG²(q − 1)/(NG² − q),
    /// q = 10^(L/10), falling with NG). |G| ≤ NG at every vertex.
    fn gain_limit(&self, spec: &Spec) -> Option<f64> {
        let (eps, u) = common::inverse_gain_parts(spec, spec.band.1)?;
        let (f_lo, f_hi) = spec.band;
        let by_corner = spec.corner_low_max.map(|m| m * (1.0 + SLACK) / f_hi);
        let budget = common::loss_budget(spec).map(|l| l * (1.0 + SLACK) + SLACK);
        let kappa = move |ng_lo: f64| -> f64 {
            let by_loss = budget.and_then(|l| {
                let q = 10f64.powf(l / 10.0);
                let n2 = ng_lo * ng_lo;
                (n2 > q).then(|| (n2 * (q - 1.0) / (n2 - q)).sqrt() * (1.0 + SLACK) * f_lo / f_hi)
            });
            let k = match (by_corner, by_loss) {
                (Some(a), Some(b)) => a.min(b),
                (a, b) => a.or(b).unwrap_or(f64::INFINITY),
            };
            k.min(1e12)
        };
        let (r_lo, r_hi) = spec.stock.resistor_range;
        let ng_top = 1.0 + 4.0 * r_hi / r_lo;
        let lb = move |ng: Iv| {
            let c = |v: f64| Iv::point(v);
            let x = Iv::new(0.0, kappa(ng.lo));
            let n = Cx::real(ng);
            let beta_ng = n * Cx::new(c(1.0), -x) / Cx::new(ng, -x);
            let z = beta_ng + n * Cx::new(c(eps), c(u));
            common::db_lb(z)
        };
        common::noise_gain_max(spec, ng_top, &lb)
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

    fn drawing(&self) -> &dyn Drawing {
        self
    }

    fn plan(&self) -> Option<&dyn SearchPlan> {
        Some(self)
    }
}

impl Drawing for NonInverting {
    /// The drawing above: c_in from the source to + with the divider, r_fb from the output
    /// to −, r_g and c_g from − to ground, c_out to the load.
    fn spice_elements(&self) -> &'static [super::types::SpiceElement] {
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
                b: PlusInput,
            },
            E {
                slot: R_BIAS_LO,
                a: PlusInput,
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
        ];
        ELEMENTS
    }

    /// The drawing of the module docs: the input onto the divider at the + input, r_fb below
    /// the op-amp with the gain leg r_g + c_g under the − input, c_out to the load on the right.
    fn schematic_layout(&self) -> &'static super::layout::Layout {
        use super::layout::{opamp_pins, Layout, Placed, Side, P};
        const U: P = P(460, 200);
        const PINS: super::layout::OpAmpPins = opamp_pins(U);
        const LAYOUT: Layout = Layout {
            size: (900, 580),
            opamp: U,
            plus_on_top: true,
            source: P(60, 200),
            load: P(780, 220),
            supplies: &[P(280, 100)],
            grounds: &[P(280, 300), P(430, 530)],
            wires: &[
                &[P(60, 200), P(90, 200)],
                &[P(190, 200), PINS.upper],
                &[PINS.lower, P(430, 240), P(430, 330), P(470, 330)],
                &[P(570, 330), P(620, 330), P(620, 220)],
                &[PINS.out, P(640, 220)],
                &[P(740, 220), P(780, 220)],
            ],
            dots: &[P(280, 200), P(430, 330), P(620, 220)],
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
                    from: P(280, 100),
                    to: P(280, 200),
                    label: Side::Right,
                    from_side: None,
                },
                Placed {
                    slot: R_BIAS_LO,
                    from: P(280, 200),
                    to: P(280, 300),
                    label: Side::Right,
                    from_side: None,
                },
                Placed {
                    slot: R_FB,
                    from: P(470, 330),
                    to: P(570, 330),
                    label: Side::Below,
                    from_side: None,
                },
                Placed {
                    slot: R_G,
                    from: P(430, 330),
                    to: P(430, 430),
                    label: Side::Left,
                    from_side: None,
                },
                Placed {
                    slot: C_G,
                    from: P(430, 430),
                    to: P(430, 530),
                    label: Side::Left,
                    from_side: Some("r_g side"),
                },
                Placed {
                    slot: C_OUT,
                    from: P(640, 220),
                    to: P(740, 220),
                    label: Side::Above,
                    from_side: Some("op-amp side"),
                },
            ],
            minus_source: None,
        };
        &LAYOUT
    }
}

impl SearchPlan for NonInverting {
    fn groups(&self, spec: &Spec) -> Vec<Vec<usize>> {
        Self::static_groups(spec)
            .iter()
            .map(|g| g.to_vec())
            .collect()
    }

    fn walk<'s>(
        &'s self,
        spec: &'s Spec,
        g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s> {
        let rs = spec.source_resistance;
        let divider = match (get(parts, R_BIAS_HI), get(parts, R_BIAS_LO)) {
            (Some(hi), Some(lo)) => Some((*hi, *lo)),
            _ => None,
        };
        match Self::which(spec, g) {
            Which::Gain => {
                // With a source resistance the divider is chosen first and attenuates the gain;
                // the compensation terms of the offset then belong to this group.
                let (att, comp) = match divider {
                    Some((hi, lo)) if rs > 0.0 => {
                        let rp = Self::rp(hi.value, lo.value);
                        (rp / (rs + rp), Some(Compensation { rp }))
                    }
                    _ => (1.0, None),
                };
                let form = GainForm {
                    att,
                    plus: 1.0,
                    offset: 0.0,
                };
                if k == 0 {
                    match get(parts, R_FB) {
                        Some(fb) => plans::gain_other_given_fb(spec, form, fb.value, 0.0, comp),
                        None => plans::gain_other_first(spec, form, 0.0, comp),
                    }
                } else {
                    match get(parts, R_G) {
                        Some(r_g) => {
                            // The noise share (the whole noise: without a source resistance
                            // the pair alone makes it, with one the divider is chosen) rises
                            // with r_fb: its least over the walk's window is at the bottom.
                            let plan = plans::gain_fb(spec, form, r_g.value, comp);
                            let (hi, lo) = match divider {
                                Some((hi, lo)) if rs > 0.0 => (hi.value, lo.value),
                                _ if rs > 0.0 => (f64::INFINITY, f64::INFINITY),
                                _ => (1.0, 1.0),
                            };
                            let bottom = plan.window.0;
                            let floor = if bottom > 0.0 && bottom.is_finite() && hi.is_finite() {
                                let d = noise_density(spec, hi, lo, bottom, r_g.value);
                                crate::objective::noise::points(spec, d) * (1.0 - 1e-9)
                            } else {
                                0.0
                            };
                            plan.plus(floor)
                        }
                        None => WalkPlan::free(),
                    }
                }
            }
            Which::Divider => {
                let amp = match (get(parts, R_FB), get(parts, R_G)) {
                    (Some(f), Some(g)) if rs == 0.0 => Some((f.value, g.value)),
                    _ => None,
                };
                let ctx = DividerContext {
                    r_fb: amp.map(|a| a.0),
                    rp_min: spec.input_resistance_min,
                    gain: match amp {
                        Some((f, g)) => 1.0 + f / g,
                        None => Self::gain_floor(spec),
                    },
                };
                let walked = if k == 0 { R_BIAS_HI } else { R_BIAS_LO };
                let plan = plans::divider_walk(
                    spec,
                    walked == R_BIAS_HI,
                    parts,
                    R_BIAS_HI,
                    R_BIAS_LO,
                    ctx,
                );
                // r_bias_lo with r_bias_hi chosen: the divider current's share falls with it.
                match (k, get(parts, R_BIAS_HI)) {
                    (1, Some(hi)) => {
                        let hi = hi.value;
                        let current = move |lo: f64| {
                            crate::objective::divider_current::points(
                                spec,
                                common::divider_current(spec.supply, hi, lo),
                            ) * (1.0 - 1e-9)
                        };
                        plan.plus_sides(|_| 0.0, current)
                    }
                    _ => plan,
                }
            }
            Which::CapIn => {
                // Before the divider is chosen: R_p is at most half the largest resistor.
                let r = match divider {
                    Some((hi, lo)) => Self::rp(end(spec, &hi, false), end(spec, &lo, false)),
                    None => spec.stock.resistor_range.1 * (1.0 + 1e-9) / 2.0,
                };
                let need = needed_capacitance_after(spec, rs + r, 0.0);
                WalkPlan::at_least(Coord::low_end(spec), need.unwrap_or(0.0))
            }
            Which::CapG => {
                let spent = Self::in_loss(spec, parts).unwrap_or(0.0);
                let need = match (get(parts, R_FB), get(parts, R_G)) {
                    (Some(f), Some(g)) => Self::gain_leg_need(spec, f.value, g, spent),
                    // r_g chosen, r_fb open: the gain window's floor bounds R_fb's nominal
                    // value from below (the worst-case lowest gain is under the nominal one,
                    // and a divider's attenuation only lowers it further, so
                    // 1 + R_fb/R_g ≥ floor), and the need grows with R_fb.
                    (None, Some(g)) => {
                        let rho = (Self::gain_floor(spec) - 1.0).max(0.0);
                        Self::gain_leg_need(spec, rho * g.value, g, spent)
                    }
                    // Before the gain pair: the corner limit against the largest r_g.
                    _ => {
                        let form = GainForm {
                            att: 1.0,
                            plus: 1.0,
                            offset: 0.0,
                        };
                        needed_capacitance(spec, plans::largest_other(spec, form), false)
                    }
                };
                WalkPlan::at_least(Coord::low_end(spec), need.unwrap_or(0.0))
            }
            Which::CapOut => {
                let spent = Self::in_loss(spec, parts).unwrap_or(0.0)
                    + Self::g_loss(spec, parts).unwrap_or(0.0);
                let need = needed_capacitance_after(spec, spec.load, spent);
                WalkPlan::at_least(Coord::low_end(spec), need.unwrap_or(0.0))
            }
        }
    }

    /// With the source resistance zero the gain is 1 + ρ, ρ = R_fb/R_g: ln ρ carries the gain
    /// window and the gain error (|G − G_t|/G_t = (ρ_t/G_t)·|ρ/ρ_t − 1|). With a source
    /// resistance the divider's attenuation enters, and only the floor of ρ is a row (the
    /// amplifier's own gain is at least the stage's). The input resistance R_p = R_hi ∥ R_lo
    /// is below each divider resistor; the gain leg's corner and the output network's;
    /// the divider's ratio window and offset (`plans::divider_log`).
    fn log_model<'s>(&'s self, spec: &'s Spec) -> LogModel<'s> {
        let rs = spec.source_resistance;
        let g = spec.gain.abs();
        let mut m = LogModel::default();
        let ln_ratio = |high: bool| {
            SlotSum::default()
                .with(R_FB, move |p| end(spec, p, high).ln())
                .with(R_G, move |p| -end(spec, p, !high).ln())
        };
        if let Some(t) = spec.gain_tolerance {
            let floor = g * (1.0 - t) * (1.0 - SLACK) - 1.0;
            let top = g * (1.0 + t) * (1.0 + SLACK) - 1.0;
            plans::gain_window_log(
                ln_ratio,
                (floor > 0.0).then(|| floor.ln()),
                (rs == 0.0 && top > 0.0).then(|| top.ln()),
                &mut m,
            );
        }
        // ln ρ at the nominal values, for the gain error terms.
        let ln_rho = || {
            SlotSum::default()
                .with(R_FB, |p| p.value.ln())
                .with(R_G, |p| -p.value.ln())
        };
        if rs > 0.0 && g > 1.0 {
            // The divider attenuates by att = R_p/(R_s + R_p) < 1, so G ≤ 1 + ρ: a ρ below
            // G_t − 1 misses the target by at least G_t − (1 + ρ). And with an input
            // resistance floor att ≥ R_min/(R_s + R_min), so a ρ above G_t/att_min − 1
            // overshoots by at least (1 + ρ)·att_min − G_t. Each is a one-sided relative
            // error term on ln ρ (`relative_error_term`).
            let (r_lo, r_hi) = spec.stock.resistor_range;
            let w = spec.goals.weight(crate::vocab::Goal::GainError) / 0.01;
            let rho = g - 1.0;
            let u_max = (rho * r_hi / r_lo).ln().max(0.0);
            let mut below =
                super::plan::relative_error_term("gain_below", ln_rho(), rho, w * rho / g, u_max);
            below.above = 0.0;
            m.terms.push(below);
            if let Some(min) = spec.input_resistance_min {
                let att = min / (rs + min);
                let rho2 = g / att - 1.0;
                if rho2 > 0.0 {
                    let mut above = super::plan::relative_error_term(
                        "gain_above",
                        ln_rho(),
                        rho2,
                        w * att * rho2 / g,
                        0.0,
                    );
                    above.below = 0.0;
                    m.terms.push(above);
                }
            }
        }
        if rs == 0.0 && g > 1.0 {
            let rho = g - 1.0;
            let (r_lo, r_hi) = spec.stock.resistor_range;
            let floor = spec
                .gain_tolerance
                .map(|t| g * (1.0 - t) * (1.0 - SLACK) - 1.0)
                .filter(|&f| f > 0.0);
            let u_max = match floor {
                Some(f) => (rho / f).ln(),
                None => (rho * r_hi / r_lo).ln().max(0.0),
            };
            m.terms.push(super::plan::relative_error_term(
                "gain",
                ln_rho(),
                rho,
                spec.goals.weight(crate::vocab::Goal::GainError) / 0.01 * rho / g,
                u_max,
            ));
        }
        if let Some(min) = spec.input_resistance_min {
            for (name, slot) in [
                ("input_resistance_hi", R_BIAS_HI),
                ("input_resistance_lo", R_BIAS_LO),
            ] {
                m.rows.push(LogRow {
                    name,
                    sum: SlotSum::default().with(slot, move |p| end(spec, p, false).ln()),
                    at_least: true,
                    limit: (min * (1.0 - SLACK)).ln(),
                });
            }
        }
        // The input network works against R_s + R_p, and R_p is below each divider resistor:
        // a capacitor too small against R_s + R_hi (or R_lo) is too small against R_s + R_p.
        plans::network_log(
            spec,
            "corner_c_in_hi",
            C_IN,
            Some(R_BIAS_HI),
            rs,
            true,
            &mut m,
        );
        plans::network_log(
            spec,
            "corner_c_in_lo",
            C_IN,
            Some(R_BIAS_LO),
            rs,
            true,
            &mut m,
        );
        plans::network_log(spec, "corner_c_g", C_G, Some(R_G), 0.0, false, &mut m);
        plans::network_log(spec, "corner_c_out", C_OUT, None, spec.load, true, &mut m);
        plans::divider_log(
            spec,
            R_BIAS_HI,
            R_BIAS_LO,
            R_FB,
            Self::gain_floor(spec),
            &mut m,
        );
        m
    }

    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<SlotValue>]) -> Option<f64> {
        let rs = spec.source_resistance;
        match Self::which(spec, g) {
            Which::Gain => {
                let (r_fb, r_g) = (get(parts, R_FB)?, get(parts, R_G)?);
                if rs == 0.0 {
                    // Decided first: the amplifier's gain alone is the stage's gain.
                    let (lo, hi) = Self::gain_range(spec, r_fb, r_g, None);
                    if !common::gain_window_ok(spec, lo, hi) {
                        return None;
                    }
                    // Without a source resistance the noise needs the gain pair alone.
                    let noise = noise_density(spec, 1.0, 1.0, r_fb.value, r_g.value);
                    return Some(
                        crate::objective::gain::points(spec, 1.0 + r_fb.value / r_g.value)
                            + crate::objective::noise::points(spec, noise),
                    );
                }
                // Decided after the divider: the whole gain, the swing at the highest gain,
                // and the offset terms that need R_fb.
                let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
                let (g_lo, g_hi) = Self::gain_range(spec, r_fb, r_g, Some((hi, lo)));
                if !common::gain_window_ok(spec, g_lo, g_hi) {
                    return None;
                }
                let (vmin, vmax) = common::divider_range(spec, hi, lo);
                if !common::swing_ok(spec, common::swing(spec, vmin, vmax), g_hi) {
                    return None;
                }
                let rp = Self::rp(hi.value, lo.value);
                let gain = (1.0 + r_fb.value / r_g.value) * rp / (rs + rp);
                let comp = spec.amplifier.input_bias_current * (r_fb.value - rp).abs()
                    + spec.amplifier.input_offset_current / 2.0 * r_fb.value;
                let noise = noise_density(spec, hi.value, lo.value, r_fb.value, r_g.value);
                Some(
                    crate::objective::gain::points(spec, gain)
                        + crate::objective::offset::points(spec, comp)
                        + crate::objective::noise::points(spec, noise),
                )
            }
            Which::Divider => {
                let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
                if !common::divider_current_ok(spec, hi, lo) {
                    return None;
                }
                if let Some(min) = spec.input_resistance_min {
                    let rp = Self::rp(end(spec, hi, false), end(spec, lo, false));
                    if rp < min * (1.0 - SLACK) {
                        return None;
                    }
                }
                let (vmin, vmax) = common::divider_range(spec, hi, lo);
                let swing = common::swing(spec, vmin, vmax);
                let current = crate::objective::divider_current::points(
                    spec,
                    common::divider_current(spec.supply, hi.value, lo.value),
                );
                if rs > 0.0 {
                    // Decided first: the gain is not known yet, only its window's floor.
                    if !common::swing_ok(spec, swing, Self::gain_floor(spec)) {
                        return None;
                    }
                    let err = common::divider_error(spec, hi.value, lo.value);
                    return Some(crate::objective::offset::points(spec, err) + current);
                }
                let (r_fb, r_g) = (get(parts, R_FB)?, get(parts, R_G)?);
                let (_, g_hi) = Self::gain_range(spec, r_fb, r_g, Some((hi, lo)));
                if !common::swing_ok(spec, swing, g_hi) {
                    return None;
                }
                let err = common::offset_error(spec, hi.value, lo.value, r_fb.value);
                Some(crate::objective::offset::points(spec, err) + current)
            }
            Which::CapIn => {
                let c_in = get(parts, C_IN)?;
                Self::in_loss(spec, parts)?;
                let v_div = Self::nominal_divider(spec, parts)?;
                common::cap_ok(c_in, v_div - spec.source_dc).then_some(0.0)
            }
            Which::CapG => {
                let c_g = get(parts, C_G)?;
                // Buffered networks: losses in dB add.
                if !common::losses_ok(
                    spec,
                    Self::in_loss(spec, parts)? + Self::g_loss(spec, parts)?,
                ) {
                    return None;
                }
                let v_div = Self::nominal_divider(spec, parts)?;
                common::cap_ok(c_g, v_div).then_some(0.0)
            }
            Which::CapOut => {
                let c_out = get(parts, C_OUT)?;
                let total = Self::in_loss(spec, parts)?
                    + Self::g_loss(spec, parts)?
                    + Self::output_network_loss(spec, c_out)?;
                // Buffered networks: losses in dB add.
                if !common::losses_ok(spec, total) {
                    return None;
                }
                let v_div = Self::nominal_divider(spec, parts)?;
                common::cap_ok(c_out, v_div).then_some(0.0)
            }
        }
    }
}
