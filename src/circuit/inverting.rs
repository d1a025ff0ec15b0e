//! Single-supply inverting stage.
//!
//! ```text
//!                         +------[r_fb]------+
//!                         |                  |
//!  in o--||--[r_in]-------+-----|- \         |
//!       c_in                    |   >--------+-- amp_out --||-- out o--[load]-- gnd
//!  vcc o--[r_bias_hi]--+--------|+ /  U1                   c_out
//!                      |
//!                 [r_bias_lo]
//!                      |
//!                     gnd
//! ```
//! Mid-band gain −R_fb/(R_s + R_in); the input resistance is R_in (virtual ground). At DC c_in is
//! open, so the amplifier follows its + input: the output sits on the divider's voltage, and
//! bias-current compensation asks R_bias_hi ∥ R_bias_lo = R_fb (the DC resistance at −).

use super::common::{self, end, SLACK};
use super::plan::{Coord, Group, LogModel, LogRow, SlotSum, WalkPlan};
use super::plans::{self, DividerContext, GainForm};
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

/// The single-supply inverting stage (six slots; see the module docs).
pub struct Inverting;

/// Slot index of `r_in`, the input resistor.
pub const R_IN: usize = 0;
/// Slot index of `r_fb`, the feedback resistor.
pub const R_FB: usize = 1;
/// Slot index of `r_bias_hi`, the bias divider's resistor from the supply to the + input.
pub const R_BIAS_HI: usize = 2;
/// Slot index of `r_bias_lo`, the bias divider's resistor from the + input to ground.
pub const R_BIAS_LO: usize = 3;
/// Slot index of `c_in`, the input coupling capacitor.
pub const C_IN: usize = 4;
/// Slot index of `c_out`, the output coupling capacitor.
pub const C_OUT: usize = 5;

pub(crate) const SLOTS: &[SlotDef] = &[
    SlotDef {
        name: "r_in",
        kind: PartKind::Resistor,
        role: "input resistor: sets the input resistance and, with r_fb, the gain",
    },
    SlotDef {
        name: "r_fb",
        kind: PartKind::Resistor,
        role: "feedback resistor: gain = −r_fb / (source resistance + r_in)",
    },
    SlotDef {
        name: "r_bias_hi",
        kind: PartKind::Resistor,
        role: "bias divider, supply to + input: sets the DC level of the + input and the output",
    },
    SlotDef {
        name: "r_bias_lo",
        kind: PartKind::Resistor,
        role: "bias divider, + input to ground (bias currents balance when r_bias_hi ∥ r_bias_lo = r_fb)",
    },
    SlotDef {
        name: "c_in",
        kind: PartKind::Capacitor,
        role: "input coupling capacitor (corner with source resistance + r_in)",
    },
    SlotDef {
        name: "c_out",
        kind: PartKind::Capacitor,
        role: "output coupling capacitor (corner with the load)",
    },
];

const GROUPS: &[Group] = &[&[R_IN, R_FB], &[R_BIAS_HI, R_BIAS_LO], &[C_IN], &[C_OUT]];

fn get(parts: &[Option<SlotValue>], i: usize) -> Option<&SlotValue> {
    parts.get(i).and_then(Option::as_ref)
}

/// Mid-band gain −R_fb/(R_s + R_in) (inverting amplifier, any op-amp text).
fn gain<T: Num>(spec: &Spec, v: &[T]) -> T {
    -v[R_FB] / (T::c(spec.source_resistance) + v[R_IN])
}

/// The figures of [`Circuit::figures`], over plain values or intervals.
fn figures<T: Num>(spec: &Spec, v: &[T]) -> Figures<T> {
    let (hi, lo, fb) = (v[R_BIAS_HI], v[R_BIAS_LO], v[R_FB]);
    Figures {
        gain: gain(spec, v),
        input_resistance: v[R_IN],
        offset: common::offset_error(spec, hi, lo, fb),
        dc_out: common::dc_out(spec, hi, lo, fb, &DcErrors::centre(spec)),
        dc_error: common::dc_error(spec, hi, lo, fb),
        bias_current: Some(common::divider_current(spec.supply, hi, lo)),
        networks: networks(spec, v),
        cm_ratio: None,
        matched_gain: None,
        noise: noise_density(spec, v[R_IN], fb, hi, lo),
    }
}

/// Mid-band input-referred noise power density, V²/Hz (capacitors shorted, ideal op-amp): the
/// output sum of `analysis::noise` (R_fb as is, R_s + R_in times the gain, the divider, e_n
/// and i_n at + times the noise gain, i_n at − through R_fb) over the gain² R_fb²/R_i²,
/// R_i = R_s + R_in, k = 1 + R_i/R_fb:
///   e² = 4kT·R_i + 4kT·R_i²/R_fb + (4kT·R_p + e_n² + i_n²·R_p²)·k² + i_n²·R_i².
/// Rising in R_in and in each divider resistor (R_p = R_hi ∥ R_lo), falling in R_fb.
/// `with_divider` false: the divider's share left out (the bound with R_p = 0 the search uses before
/// the divider is chosen).
fn noise_density_parts<T: Num>(spec: &Spec, r_in: T, fb: T, hi: T, lo: T, with_divider: bool) -> T {
    let rs = spec.source_resistance;
    let four_kt = crate::objective::noise::four_kt();
    let (en2, in2) = crate::objective::noise::amplifier_powers(spec);
    T::monotone(
        |[r_in, fb, hi, lo]| {
            let ri = rs + r_in;
            let k = 1.0 + ri / fb;
            let rp = if with_divider {
                hi * lo / (hi + lo)
            } else {
                0.0
            };
            four_kt * ri
                + four_kt * ri * ri / fb
                + (four_kt * rp + en2 + in2 * rp * rp) * k * k
                + in2 * ri * ri
        },
        [r_in, fb, hi, lo],
        [true, false, true, true],
    )
}

/// The whole mid-band input noise density ([`noise_density_parts`] with the divider).
fn noise_density<T: Num>(spec: &Spec, r_in: T, fb: T, hi: T, lo: T) -> T {
    noise_density_parts(spec, r_in, fb, hi, lo, true)
}

/// The coupling networks of [`figures`]: c_in with the source and r_in, c_out with the load.
fn networks<T: Num>(spec: &Spec, v: &[T]) -> Networks<T> {
    let plain = |resistance, capacitance, cap_slot| NetworkFigure {
        resistance,
        capacitance,
        plain: true,
        cap_slot,
        shelf: None,
    };
    smallvec::smallvec![
        plain(
            T::c(spec.source_resistance) + v[R_IN],
            common::with_source_capacitance(spec, v[C_IN]),
            C_IN,
        ),
        plain(T::c(spec.load), v[C_OUT], C_OUT),
    ]
}

impl Inverting {
    /// Worst-case gain magnitude range of the gain pair: |G| = R_fb / (R_s + R_in).
    fn gain_range(spec: &Spec, r_in: &SlotValue, r_fb: &SlotValue) -> (f64, f64) {
        let rs = spec.source_resistance;
        (
            end(spec, r_fb, false) / (rs + end(spec, r_in, true)),
            end(spec, r_fb, true) / (rs + end(spec, r_in, false)),
        )
    }

    fn input_network_ok(spec: &Spec, r_in: &SlotValue, c_in: &SlotValue) -> Option<f64> {
        let r = spec.source_resistance + end(spec, r_in, false);
        let c = end(spec, c_in, false);
        let corner = 1.0 / (2.0 * std::f64::consts::PI * r * c);
        let loss = common::high_pass_loss_db(r, c, spec.band.0);
        common::plain_network_ok(spec, corner, loss).then_some(loss)
    }

    fn output_network_ok(spec: &Spec, c_out: &SlotValue) -> Option<f64> {
        let c = end(spec, c_out, false);
        let corner = 1.0 / (2.0 * std::f64::consts::PI * spec.load * c);
        let loss = common::high_pass_loss_db(spec.load, c, spec.band.0);
        common::plain_network_ok(spec, corner, loss).then_some(loss)
    }
}

impl Circuit for Inverting {
    fn kind(&self) -> StageKind {
        StageKind::Inverting
    }

    fn slots(&self) -> &'static [SlotDef] {
        SLOTS
    }

    fn topology(&self) -> &'static str {
        "single-supply inverting amplifier: AC-coupled input through r_in, feedback r_fb, + input on a bias divider, AC-coupled output"
    }

    fn dc_from_resistors(&self) -> bool {
        true
    }

    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        gain(spec, v)
    }

    fn noise_gain(&self, spec: &Spec, v: &[f64]) -> f64 {
        1.0 + v[R_FB] / (spec.source_resistance + v[R_IN])
    }

    fn input_resistance(&self, _spec: &Spec, v: &[f64]) -> f64 {
        v[R_IN]
    }

    /// V_out/V_s = −(Z_f/Z_i) · 1/(1 + 1/(aβ)) · H_out with Z_i = R_s + R_in + 1/(jωC_in),
    /// β = Z_i/(Z_i + Z_f) (inverting amplifier with finite gain, any op-amp text).
    /// Each resistor carries the spec's stray capacitance across it (`common::resistor_z`),
    /// and Z_i the source's own capacitance in series (`common::source_z`).
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64 {
        let zi = common::source_z(spec, f)
            + common::resistor_z(spec, v[R_IN], f)
            + super::types::cap_z(v[C_IN], f);
        let zf = common::resistor_z(spec, v[R_FB], f);
        let beta = zi / (zi + zf);
        let h_amp = -(zf / zi) * opamp.loop_factor(f, beta);
        h_amp * common::high_pass(spec.load, v[C_OUT], f)
    }

    fn networks(&self, spec: &Spec, v: &[f64]) -> Vec<Network> {
        vec![
            Network {
                name: "input",
                cap_slot: C_IN,
                resistance: spec.source_resistance + v[R_IN],
                capacitance: common::with_source_capacitance(spec, v[C_IN]),
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
        // No DC flows through r_in (c_in blocks it), so the r_in side of c_in sits at V−.
        vec![
            CapBias {
                slot: C_IN,
                volts: dc.v_minus - spec.source_dc,
                a_node: "r_in side",
                b_node: "source side",
            },
            CapBias {
                slot: C_OUT,
                volts: dc.v_out,
                a_node: "op-amp side",
                b_node: "load side",
            },
        ]
    }

    /// The − input is a virtual ground: the output drives r_fb alone, and the inputs carry no
    /// signal (feedback theory, ideal op-amp).
    fn feedback_load(&self, _spec: &Spec, v: &[f64]) -> f64 {
        v[R_FB]
    }

    fn input_signal_per_output(&self, _spec: &Spec, _v: &[f64]) -> f64 {
        0.0
    }

    fn resistor_power(
        &self,
        spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)> {
        let i = dc.divider_current;
        let gain = self.mid_gain(spec, v).abs();
        // Sine power: V_peak² / (2R); the feedback resistor carries the output swing, the input
        // resistor the input swing (virtual ground), the divider its DC current.
        vec![
            (R_IN, (out_peak / gain).powi(2) / (2.0 * v[R_IN])),
            (R_FB, out_peak.powi(2) / (2.0 * v[R_FB])),
            (R_BIAS_HI, i * i * v[R_BIAS_HI]),
            (R_BIAS_LO, i * i * v[R_BIAS_LO]),
        ]
    }

    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>> {
        let r_in = spec.input_resistance_min.unwrap_or(10e3);
        let r_fb = spec.gain.abs() * (r_in + spec.source_resistance);
        let k = spec.bias_target() / spec.supply;
        // Compensation: R_hi ∥ R_lo = R_fb with R_lo/(R_hi + R_lo) = k.
        let (hi, lo) = (r_fb / k, r_fb / (1.0 - k));
        let fc = common::common_corner_target(spec, 2);
        let c = |r: f64| fc.map(|fc| 1.0 / (2.0 * std::f64::consts::PI * r * fc));
        vec![
            Some(r_in),
            Some(r_fb),
            Some(hi),
            Some(lo),
            c(r_in + spec.source_resistance),
            c(spec.load),
        ]
    }

    fn noise_circuit(&self, spec: &Spec, v: &[f64], f: f64) -> super::types::NoiseCircuit {
        use super::types::NoisePlace as Place;
        let name = |slot: usize| SLOTS[slot].name;
        let rs = spec.source_resistance;
        let mut resistors = Vec::new();
        // − input: R_fb to the output; R_in, c_in and the source's resistance to the
        // source (AC ground for noise). + input: the divider (the supply is AC ground).
        // Each resistor with its stray capacitance: an impedance Z whose noise is 4kT·Re Z
        // (`common::resistor_noise_r`).
        let (hi, lo) = (v[R_BIAS_HI], v[R_BIAS_LO]);
        let z = |r: f64| common::resistor_z(spec, r, f);
        let noise_r = |r: f64| common::resistor_noise_r(spec, r, f);
        resistors.push((name(R_IN), noise_r(v[R_IN]), Place::Shunt));
        if rs > 0.0 {
            resistors.push(("source_resistance", rs, Place::Shunt));
        }
        resistors.push((name(R_FB), noise_r(v[R_FB]), Place::Feedback));
        resistors.push((name(R_BIAS_HI), noise_r(hi), Place::Plus(z(hi))));
        resistors.push((name(R_BIAS_LO), noise_r(lo), Place::Plus(z(lo))));
        let one = Complex64::new(1.0, 0.0);
        super::types::NoiseCircuit {
            z_f: z(v[R_FB]),
            z_s: common::source_z(spec, f) + z(v[R_IN]) + super::types::cap_z(v[C_IN], f),
            z_p: one / (one / z(hi) + one / z(lo)),
            h_out: common::high_pass(spec.load, v[C_OUT], f),
            resistors,
        }
    }

    /// At every vertex the noise gain is 1 + |G| and, with Z_i = R(1 − jx) (R = R_s + R_in,
    /// x = 1/(2πf·R·C_in)), the response is −R_f/(Z_i(1 + 1/a) + R_f/a)·H_out with
    /// |H_out| ≤ 1 (inverting amplifier with a finite gain, feedback theory). So the loss at
    /// the band's top against the ideal gain R_f/R is at least 20·log10|(1 − jx)(1 + 1/a) +
    /// (NG − 1)/a|, over x from 0 to the input network's largest corner over the band's top
    /// (`network_corner_max`, which every passing build keeps).
    fn gain_limit(&self, spec: &Spec) -> Option<f64> {
        let (eps, u) = common::inverse_gain_parts(spec, spec.band.1)?;
        let kappa = common::network_corner_max(spec) / spec.band.1;
        let x = Iv::new(0.0, kappa.min(1e12));
        let (r_lo, r_hi) = spec.stock.resistor_range;
        let r_min =
            spec.source_resistance + 0.5 * r_lo.max(spec.input_resistance_min.unwrap_or(0.0));
        let ng_top = 1.0 + 2.0 * r_hi / r_min;
        let lb = move |ng: Iv| {
            let c = |v: f64| Iv::point(v);
            let one_jx = Cx::new(c(1.0), -x);
            let inv_a = Cx::new(c(eps), c(u));
            let z = one_jx * (Cx::real(c(1.0)) + inv_a) + Cx::real(ng - c(1.0)) * inv_a;
            common::db_lb(z)
        };
        common::noise_gain_max(spec, ng_top, &lb).map(|ng| (ng - 1.0).max(0.0))
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

impl Drawing for Inverting {
    /// The drawing above: source → c_in → r_in → − input, r_fb from − to the output, the
    /// divider on +, c_out to the load.
    fn spice_elements(&self) -> &'static [super::types::SpiceElement] {
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
        ];
        ELEMENTS
    }

    /// The drawing of the module docs: the input chain along the top, r_fb above the op-amp,
    /// the divider below on the + input, c_out to the load on the right.
    fn schematic_layout(&self) -> &'static super::layout::Layout {
        &LAYOUT
    }
}

impl SearchPlan for Inverting {
    fn groups(&self, _spec: &Spec) -> Vec<Vec<usize>> {
        GROUPS.iter().map(|g| g.to_vec()).collect()
    }

    fn walk<'s>(
        &'s self,
        spec: &'s Spec,
        g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s> {
        let form = GainForm {
            att: 1.0,
            plus: 0.0,
            offset: spec.source_resistance,
        };
        // The input resistance is r_in itself: a nominal value below the minimum fails at
        // any tolerance.
        let floor = spec.input_resistance_min.map_or(0.0, |m| m * (1.0 - SLACK));
        match (g, k) {
            (0, 0) => match get(parts, R_FB) {
                Some(fb) => plans::gain_other_given_fb(spec, form, fb.value, floor, None),
                None => plans::gain_other_first(spec, form, floor, None),
            },
            (0, _) => match get(parts, R_IN) {
                Some(r_in) => {
                    // The noise share of the pair falls with r_fb: its least over the walk's
                    // window is at the window's top (every r_fb above it fails the gain).
                    let plan = plans::gain_fb(spec, form, r_in.value, None);
                    let top = plan.window.1;
                    let floor = if top.is_finite() {
                        let d = noise_density_parts(spec, r_in.value, top, 1.0, 1.0, false);
                        crate::objective::noise::points(spec, d) * (1.0 - 1e-9)
                    } else {
                        0.0
                    };
                    plan.plus(floor)
                }
                None => WalkPlan::free(),
            },
            (1, k) => {
                let ctx = DividerContext {
                    r_fb: get(parts, R_FB).map(|p| p.value),
                    rp_min: None,
                    gain: match (get(parts, R_IN), get(parts, R_FB)) {
                        (Some(i), Some(f)) => f.value / (spec.source_resistance + i.value),
                        _ => 0.0,
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
                // r_bias_lo with r_bias_hi and the gain pair chosen: the divider's noise share
                // rises with it, its current's falls (each ≥ 0 on the other side).
                match (k, get(parts, R_BIAS_HI), get(parts, R_IN), get(parts, R_FB)) {
                    (1, Some(hi), Some(r_in), Some(r_fb)) => {
                        let (hi, r_in, r_fb) = (hi.value, r_in.value, r_fb.value);
                        let part = noise_density_parts(spec, r_in, r_fb, 1.0, 1.0, false);
                        let noise = move |lo: f64| {
                            // A walk's far end may be read at ∞: R_p is then r_bias_hi.
                            let whole = noise_density(spec, r_in, r_fb, hi, lo.min(1e30));
                            let d = crate::objective::noise::points(spec, whole)
                                - crate::objective::noise::points(spec, part);
                            d.max(0.0) * (1.0 - 1e-9)
                        };
                        let current = move |lo: f64| {
                            crate::objective::divider_current::points(
                                spec,
                                common::divider_current(spec.supply, hi, lo),
                            ) * (1.0 - 1e-9)
                        };
                        plan.plus_sides(noise, current)
                    }
                    // r_bias_hi = h with the gain pair chosen, r_bias_lo open: every passing
                    // divider has its nominal ratio x = R_lo/(R_hi + R_lo) inside the swing's
                    // window [x_lo, x_hi] (`plans::ratio_window`, the least worst-case gain's
                    // swing), so R_p = h·x ≥ h·x_lo (the noise share rises with R_p, so with
                    // h) and R_hi + R_lo = h/(1 − x) ≤ h/(1 − x_hi) (the current's share
                    // falls with the sum, so with h).
                    (0, None, Some(r_in), Some(r_fb)) if get(parts, R_BIAS_LO).is_none() => {
                        let (r_in, r_fb) = (r_in.value, r_fb.value);
                        let (x_lo, x_hi) =
                            plans::ratio_window(spec, plans::swing_needed(spec, ctx.gain));
                        let (x_lo, x_hi) = (x_lo.max(0.0), x_hi.min(1.0));
                        if !(x_lo <= x_hi && x_hi < 1.0) {
                            return plan;
                        }
                        let part = noise_density_parts(spec, r_in, r_fb, 1.0, 1.0, false);
                        let noise = move |h: f64| {
                            let rp = (h * x_lo).min(1e30);
                            // R_hi = R_lo = 2·R_p gives that R_p.
                            let whole = noise_density(spec, r_in, r_fb, 2.0 * rp, 2.0 * rp);
                            let d = crate::objective::noise::points(spec, whole)
                                - crate::objective::noise::points(spec, part);
                            d.max(0.0) * (1.0 - 1e-9)
                        };
                        let current = move |h: f64| {
                            let sum = h / (1.0 - x_hi);
                            crate::objective::divider_current::points(
                                spec,
                                common::divider_current(spec.supply, sum, 0.0),
                            ) * (1.0 - 1e-9)
                        };
                        plan.plus_sides(noise, current)
                    }
                    _ => plan,
                }
            }
            (2, _) => {
                // Before r_in is chosen, the largest r_in the gain window lets an r_fb inside
                // the resistor range serve needs the least capacitance.
                let r = match get(parts, R_IN) {
                    Some(r) => end(spec, r, false),
                    None => plans::largest_other(spec, form),
                };
                let need = common::needed_capacitance(spec, spec.source_resistance + r, true);
                WalkPlan::at_least(Coord::low_end(spec), need.unwrap_or(0.0))
            }
            _ => {
                // The loss budget left once c_in's network has taken its share.
                let spent = match (get(parts, R_IN), get(parts, C_IN)) {
                    (Some(r), Some(c)) => Self::input_network_ok(spec, r, c).unwrap_or(0.0),
                    _ => 0.0,
                };
                let need = common::needed_capacitance_after(spec, spec.load, spent);
                WalkPlan::at_least(Coord::low_end(spec), need.unwrap_or(0.0))
            }
        }
    }

    /// ln|G| = ln R_fb − ln(R_s + R_in): the gain window (worst-case ends, as `group_partial`
    /// reads them) and the gain error; r_in's floor; each coupling network's corner; the
    /// divider's ratio window and offset (`plans::divider_log`).
    fn log_model<'s>(&'s self, spec: &'s Spec) -> LogModel<'s> {
        let rs = spec.source_resistance;
        let g = spec.gain.abs();
        let mut m = LogModel::default();
        let ln_gain = |high: bool| {
            SlotSum::default()
                .with(R_FB, move |p| end(spec, p, high).ln())
                .with(R_IN, move |p| -(rs + end(spec, p, !high)).ln())
        };
        if let Some(t) = spec.gain_tolerance {
            plans::gain_window_log(
                ln_gain,
                Some((g * (1.0 - t) * (1.0 - SLACK)).ln()),
                Some((g * (1.0 + t) * (1.0 + SLACK)).ln()),
                &mut m,
            );
        }
        // How far below the target ln|G| can be in a build that passes: the window's floor,
        // or what the resistor range allows.
        let (r_lo, r_hi) = spec.stock.resistor_range;
        let u_max = match spec.gain_tolerance {
            Some(t) => -((1.0 - t) * (1.0 - SLACK)).ln(),
            None => (g * (rs + r_hi) / r_lo).ln().max(0.0),
        };
        let nominal = SlotSum::default()
            .with(R_FB, |p| p.value.ln())
            .with(R_IN, move |p| -(rs + p.value).ln());
        m.terms.push(super::plan::relative_error_term(
            "gain",
            nominal,
            g,
            spec.goals.weight(crate::vocab::Goal::GainError) / 0.01,
            u_max,
        ));
        if let Some(min) = spec.input_resistance_min {
            m.rows.push(LogRow {
                name: "input_resistance",
                sum: SlotSum::default().with(R_IN, move |p| end(spec, p, false).ln()),
                at_least: true,
                limit: (min * (1.0 - SLACK)).ln(),
            });
        }
        plans::network_log(spec, "corner_c_in", C_IN, Some(R_IN), rs, true, &mut m);
        plans::network_log(spec, "corner_c_out", C_OUT, None, spec.load, true, &mut m);
        let gain_floor = spec
            .gain_tolerance
            .map_or(0.0, |t| g * (1.0 - t) * (1.0 - SLACK));
        plans::divider_log(spec, R_BIAS_HI, R_BIAS_LO, R_FB, gain_floor, &mut m);
        m
    }

    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<SlotValue>]) -> Option<f64> {
        match g {
            0 => {
                let (r_in, r_fb) = (get(parts, R_IN)?, get(parts, R_FB)?);
                if let Some(min) = spec.input_resistance_min {
                    if end(spec, r_in, false) < min * (1.0 - SLACK) {
                        return None;
                    }
                }
                let (lo, hi) = Self::gain_range(spec, r_in, r_fb);
                if !common::gain_window_ok(spec, lo, hi) {
                    return None;
                }
                // The noise goal's share so far: the density without the divider (R_p = 0),
                // a lower bound of the whole; the divider's group adds the rest.
                let noise = noise_density_parts(spec, r_in.value, r_fb.value, 1.0, 1.0, false);
                Some(
                    crate::objective::gain::points(
                        spec,
                        -r_fb.value / (spec.source_resistance + r_in.value),
                    ) + crate::objective::noise::points(spec, noise),
                )
            }
            1 => {
                let (r_in, r_fb) = (get(parts, R_IN)?, get(parts, R_FB)?);
                let (hi, lo) = (get(parts, R_BIAS_HI)?, get(parts, R_BIAS_LO)?);
                if !common::divider_current_ok(spec, hi, lo) {
                    return None;
                }
                let (vmin, vmax) = common::divider_range(spec, hi, lo);
                let (_, g_max) = Self::gain_range(spec, r_in, r_fb);
                if !common::swing_ok(spec, common::swing(spec, vmin, vmax), g_max) {
                    return None;
                }
                let err = common::offset_error(spec, hi.value, lo.value, r_fb.value);
                let part = noise_density_parts(spec, r_in.value, r_fb.value, 1.0, 1.0, false);
                let whole = noise_density(spec, r_in.value, r_fb.value, hi.value, lo.value);
                let noise = crate::objective::noise::points(spec, whole)
                    - crate::objective::noise::points(spec, part);
                let current = common::divider_current(spec.supply, hi.value, lo.value);
                Some(
                    crate::objective::offset::points(spec, err)
                        + noise.max(0.0)
                        + crate::objective::divider_current::points(spec, current),
                )
            }
            2 => {
                let (r_in, c_in) = (get(parts, R_IN)?, get(parts, C_IN)?);
                Self::input_network_ok(spec, r_in, c_in)?;
                let v_div = spec.supply * get(parts, R_BIAS_LO)?.value
                    / (get(parts, R_BIAS_HI)?.value + get(parts, R_BIAS_LO)?.value);
                common::cap_ok(c_in, v_div - spec.source_dc).then_some(0.0)
            }
            3 => {
                let (r_in, c_in, c_out) =
                    (get(parts, R_IN)?, get(parts, C_IN)?, get(parts, C_OUT)?);
                let out_loss = Self::output_network_ok(spec, c_out)?;
                let in_loss = Self::input_network_ok(spec, r_in, c_in)?;
                // The two networks are buffered by the op-amp: their losses add (in dB).
                if !common::losses_ok(spec, in_loss + out_loss) {
                    return None;
                }
                let v_div = spec.supply * get(parts, R_BIAS_LO)?.value
                    / (get(parts, R_BIAS_HI)?.value + get(parts, R_BIAS_LO)?.value);
                common::cap_ok(c_out, v_div).then_some(0.0)
            }
            _ => Some(0.0),
        }
    }
}

use super::layout::{opamp_pins, Layout, Placed, Side, P};
const U: P = P(460, 200);
const PINS: super::layout::OpAmpPins = opamp_pins(U);
/// The drawing (`Drawing::schematic_layout`), shared with the decoupled variant.
pub(crate) const LAYOUT: Layout = Layout {
    size: (900, 510),
    opamp: U,
    plus_on_top: false,
    source: P(60, 200),
    load: P(780, 220),
    supplies: &[P(300, 270)],
    grounds: &[P(300, 470)],
    wires: &[
        &[P(60, 200), P(90, 200)],
        &[P(190, 200), P(240, 200)],
        &[P(340, 200), PINS.upper],
        &[P(400, 200), P(400, 90), P(450, 90)],
        &[P(550, 90), P(620, 90), P(620, 220)],
        &[PINS.out, P(640, 220)],
        &[P(740, 220), P(780, 220)],
        &[PINS.lower, P(430, 240), P(430, 370), P(300, 370)],
    ],
    dots: &[P(400, 200), P(620, 220), P(300, 370)],
    parts: &[
        Placed {
            slot: R_IN,
            from: P(240, 200),
            to: P(340, 200),
            label: Side::Above,
            from_side: None,
        },
        Placed {
            slot: R_FB,
            from: P(450, 90),
            to: P(550, 90),
            label: Side::Above,
            from_side: None,
        },
        Placed {
            slot: R_BIAS_HI,
            from: P(300, 270),
            to: P(300, 370),
            label: Side::Left,
            from_side: None,
        },
        Placed {
            slot: R_BIAS_LO,
            from: P(300, 370),
            to: P(300, 470),
            label: Side::Left,
            from_side: None,
        },
        Placed {
            slot: C_IN,
            from: P(90, 200),
            to: P(190, 200),
            label: Side::Above,
            from_side: Some("source side"),
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
