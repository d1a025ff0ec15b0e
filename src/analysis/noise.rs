//! Noise: each resistor's thermal noise and the op-amp's input noise carried to the load
//! through the stage's actual impedances, integrated over the band, with a breakdown by source.
//!
//! Models (stated once, here):
//! * Resistors: thermal (Johnson–Nyquist) noise, a voltage of density √(4kTR) in series with
//!   each resistor (Nyquist 1928; any noise text), at T = 300 K unless told otherwise. k is
//!   the Boltzmann constant, 1.380649e-23 J/K, exact by definition in the 2019 SI (SI
//!   Brochure, 9th edition). Excess (current) noise of thick-film parts is left out.
//! * Op-amp: a voltage noise e_n in series with the + input and a current noise i_n into each
//!   input, the two currents uncorrelated (the usual voltage-feedback op-amp noise model, any
//!   op-amp text). Densities are flat: no 1/f corner, which the datasheet figures we read do
//!   not give.
//! * All sources are uncorrelated, so their output powers add.
//! * The load belongs to the next stage and the source's EMF is a clean signal: the load's own
//!   noise is not counted; a source resistance is, as a source of its own.
//!
//! Noise transfers. Both stages are an op-amp whose − input sees a feedback impedance Z_f to
//! its output and a shunt Z_s to AC ground, and whose + input sees Z_p to AC ground. With
//! β = Z_s/(Z_s + Z_f), the loop factor L = 1/(1 + 1/(aβ)) (`OpAmp::loop_factor`) and the
//! output coupling H_out, superposition at each input gives, at the load:
//! * a noise voltage in series with Z_f: e · L · H_out;
//! * a noise voltage in series with Z_s: e · (Z_f/Z_s) · L · H_out;
//! * a noise voltage in series with a branch Z_b from + to AC ground: e · (Z_p/Z_b) · (1/β) · L · H_out;
//! * e_n: e_n · (1/β) · L · H_out;
//! * i_n: i_n · Z_f · L · H_out at −, i_n · Z_p · (1/β) · L · H_out at +.
//!
//! A source resistance sits where the signal enters, so its transfer is the stage's signal
//! response; the tests hold the two together.

use crate::circuit::{Circuit, OpAmp};
use crate::spec::Spec;
use num_complex::Complex64;
use serde::Serialize;

/// The Boltzmann constant and the default temperature live with the noise goal
/// (`objective::noise`), which the circuits' mid-band figure reads too.
pub use crate::objective::noise::{BOLTZMANN, DEFAULT_TEMPERATURE};

/// The op-amp's noise figures and the temperature.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct NoiseInputs {
    /// Input voltage noise density e_n, V/√Hz.
    pub voltage_density: f64,
    /// Input current noise density i_n, A/√Hz (at each input).
    pub current_density: f64,
    /// Kelvin.
    pub temperature: f64,
}

impl NoiseInputs {
    /// The spec's amplifier's e_n and i_n (0 for a figure it omits), at 300 K.
    pub fn of(spec: &Spec) -> NoiseInputs {
        let a = &spec.amplifier;
        NoiseInputs::new(
            a.noise_voltage.unwrap_or(0.0),
            a.noise_current.unwrap_or(0.0),
        )
    }

    /// e_n and i_n at the default 300 K.
    pub fn new(voltage_density: f64, current_density: f64) -> NoiseInputs {
        NoiseInputs {
            voltage_density,
            current_density,
            temperature: DEFAULT_TEMPERATURE,
        }
    }
}

/// Thermal noise voltage density of a resistance, √(4kTR) V/√Hz (Johnson–Nyquist).
pub fn thermal_density(resistance: f64, temperature: f64) -> f64 {
    (4.0 * BOLTZMANN * temperature * resistance).sqrt()
}

/// One source's share of the output noise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceNoise {
    /// A resistor slot's name, `source_resistance`, `en` or `in`.
    pub source: String,
    /// RMS at the load over the band, V.
    pub output_rms_v: f64,
    /// Density at the load at the band's geometric centre, V/√Hz.
    pub output_density_mid: f64,
    /// Fraction of the output noise power.
    pub share: f64,
}

/// Noise of one build over the spec's band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseReport {
    /// Temperature the resistors' thermal noise is figured at, K.
    pub temperature_k: f64,
    /// The band's geometric centre, where the densities are given.
    pub mid_frequency_hz: f64,
    /// RMS at the load over the band, V.
    pub output_rms_v: f64,
    /// Output RMS ÷ |mid-band gain|: the noise referred to the source EMF.
    pub input_rms_v: f64,
    /// Density at the load at the band's geometric centre, V/√Hz.
    pub output_density_mid: f64,
    /// Output density ÷ |response| at the centre.
    pub input_density_mid: f64,
    /// Signal-to-noise ratio of a sine at the required peak, dB, when the spec asks for a
    /// peak: 20·log10((V_peak/√2) / V_noise,rms), see [`snr_db`].
    pub snr_db: Option<f64>,
    /// In the order of [`output_psd`].
    pub by_source: Vec<SourceNoise>,
}

pub use crate::circuit::{NoiseCircuit, NoisePlace as Place};

/// SNR of a sine at the spec's required peak, dB: 20·log10((V_peak/√2) / V_noise,rms).
///
/// A required output peak is measured against the output noise. A required input peak is
/// measured against the input-referred noise: the build's own gain carries both the signal
/// and the noise to the output, so the ratio is the same at any gain the build has, its
/// worst-case highest |gain| included — never the target gain times the input peak, which
/// overstates the SNR of a build whose gain falls short of the target (issue 12, part 8).
pub fn snr_db(spec: &Spec, output_rms: f64, input_rms: f64) -> Option<f64> {
    let (signal, noise) = match (spec.output_peak, spec.input_peak) {
        (Some(out), _) => (out, output_rms),
        (None, Some(inp)) => (inp, input_rms),
        (None, None) => return None,
    };
    (noise > 0.0 && noise.is_finite())
        .then(|| 20.0 * (signal / std::f64::consts::SQRT_2 / noise).log10())
}

fn re(r: f64) -> Complex64 {
    Complex64::new(r, 0.0)
}

/// The stage's noise circuit at `f` (each stage describes its own, see
/// [`Circuit::noise_circuit`]).
fn circuit(stage: &dyn Circuit, spec: &Spec, v: &[f64], f: f64) -> NoiseCircuit {
    stage.noise_circuit(spec, v, f)
}

/// Noise power density at the load (V²/Hz) of each source at `f`: the resistors (in the
/// stage's slot order, with `source_resistance` where there is one), then `en` and `in`.
pub fn output_psd(
    inputs: &NoiseInputs,
    stage: &dyn Circuit,
    spec: &Spec,
    v: &[f64],
    opamp: &OpAmp,
    f: f64,
) -> Vec<(&'static str, f64)> {
    let c = circuit(stage, spec, v, f);
    let beta = c.z_s / (c.z_s + c.z_f);
    let common = (opamp.loop_factor(f, beta) * c.h_out).norm_sqr();
    let noise_gain = (re(1.0) / beta).norm_sqr();
    let four_kt = 4.0 * BOLTZMANN * inputs.temperature;
    let mut out: Vec<(&'static str, f64)> = c
        .resistors
        .iter()
        .map(|&(source, r, place)| {
            let gain = match place {
                Place::Feedback => 1.0,
                Place::Shunt => (c.z_f / c.z_s).norm_sqr(),
                Place::Plus(branch) => (c.z_p / branch).norm_sqr() * noise_gain,
            };
            (source, four_kt * r * gain * common)
        })
        .collect();
    let en = inputs.voltage_density;
    let in_ = inputs.current_density;
    out.push(("en", en * en * noise_gain * common));
    out.push((
        "in",
        in_ * in_ * (c.z_f.norm_sqr() + c.z_p.norm_sqr() * noise_gain) * common,
    ));
    out
}

/// Simpson intervals per decade of the integration grid: the rule's relative error on a flat
/// density (e^u in u = ln f) is h⁴/180, 6e-10 at h = ln(10)/128 (numerical analysis, Simpson's
/// rule error term).
const INTERVALS_PER_DECADE: f64 = 128.0;

/// Frequencies and weights of ∫ g(f) df over [f_lo, f_hi]: Simpson's rule in u = ln f
/// (df = f du), an even number of equal steps in u. Empty for an empty band.
fn grid(f_lo: f64, f_hi: f64) -> Vec<(f64, f64)> {
    if !(f_lo > 0.0 && f_hi > f_lo && f_hi.is_finite()) {
        return Vec::new();
    }
    let span = (f_hi / f_lo).ln();
    let decades = span / std::f64::consts::LN_10;
    let n = 2 * ((decades * INTERVALS_PER_DECADE / 2.0).ceil() as usize).max(1);
    let h = span / n as f64;
    (0..=n)
        .map(|i| {
            let f = f_lo * (h * i as f64).exp();
            let simpson = if i == 0 || i == n {
                1.0
            } else if i % 2 == 1 {
                4.0
            } else {
                2.0
            };
            (f, simpson * h / 3.0 * f)
        })
        .collect()
}

/// ∫ psd(f) df over [f_lo, f_hi] (V² from V²/Hz), on a log grid. Zero for an empty band.
pub fn integrate_band(f_lo: f64, f_hi: f64, mut psd: impl FnMut(f64) -> f64) -> f64 {
    grid(f_lo, f_hi).into_iter().map(|(f, w)| w * psd(f)).sum()
}

/// Noise of a build with slot values `v` over the spec's band, at the load.
pub fn noise(inputs: &NoiseInputs, stage: &dyn Circuit, spec: &Spec, v: &[f64]) -> NoiseReport {
    let opamp = OpAmp::of(spec);
    let (f_lo, f_hi) = spec.band;
    let f_mid = (f_lo * f_hi).sqrt();
    let mid = output_psd(inputs, stage, spec, v, &opamp, f_mid);
    let mut power = vec![0.0; mid.len()];
    for (f, w) in grid(f_lo, f_hi) {
        for (p, (_, psd)) in power
            .iter_mut()
            .zip(output_psd(inputs, stage, spec, v, &opamp, f))
        {
            *p += w * psd;
        }
    }
    let total: f64 = power.iter().sum();
    let output_rms = total.sqrt();
    let density_mid = mid.iter().map(|(_, p)| p).sum::<f64>().sqrt();
    let by_source = mid
        .iter()
        .zip(&power)
        .map(|(&(source, psd), &p)| SourceNoise {
            source: source.to_string(),
            output_rms_v: p.sqrt(),
            output_density_mid: psd.sqrt(),
            share: if total > 0.0 { p / total } else { 0.0 },
        })
        .collect();
    NoiseReport {
        temperature_k: inputs.temperature,
        mid_frequency_hz: f_mid,
        output_rms_v: output_rms,
        input_rms_v: output_rms / stage.mid_gain(spec, v).abs(),
        output_density_mid: density_mid,
        input_density_mid: density_mid / stage.response(spec, v, &opamp, f_mid).norm(),
        snr_db: snr_db(spec, output_rms, output_rms / stage.mid_gain(spec, v).abs()),
        by_source,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::circuit::circuit_for;
    use approx::assert_relative_eq;

    const INVERTING: &str = r#"
[stage]
kind = "inverting"
supply = "9 V"
gain = -1
load = "10k"
band = ["20 Hz", "20 kHz"]
# Ideal resistors: the textbook sums have no stray capacitance.
stray_capacitance = 0
"#;

    fn spec(text: &str) -> Spec {
        Spec::from_toml(text).unwrap()
    }

    fn density(report: &[(&str, f64)]) -> f64 {
        report.iter().map(|(_, p)| p).sum::<f64>().sqrt()
    }

    fn four_kt() -> f64 {
        4.0 * BOLTZMANN * DEFAULT_TEMPERATURE
    }

    #[test]
    fn thermal_noise_of_one_kilohm() {
        // √(4 · 1.380649e-23 J/K · 300 K · 1 kΩ) = 4.0703 nV/√Hz (Johnson–Nyquist with the
        // exact 2019 SI Boltzmann constant; the trade's "4 nV/√Hz per kΩ", common practice).
        let e = thermal_density(1e3, 300.0);
        assert!((e - 4.0703e-9).abs() < 0.0001e-9, "{e}");
    }

    #[test]
    fn flat_density_integrates_to_density_root_bandwidth() {
        // ∫ d² df over [f1, f2] = d²(f2 − f1): the RMS is d·√B (calculus).
        let d = 10e-9;
        let rms = integrate_band(20.0, 20e3, |_| d * d).sqrt();
        assert_relative_eq!(rms, d * (20e3f64 - 20.0).sqrt(), max_relative = 1e-9);
        // And a 1/f density integrates to ln(f2/f1) (calculus): the grid is right in log f.
        let pink = integrate_band(1.0, 1e4, |f| 1.0 / f);
        assert_relative_eq!(pink, 1e4f64.ln(), max_relative = 1e-12);
        assert_eq!(integrate_band(10.0, 10.0, |_| 1.0), 0.0);
    }

    /// Inverting stage: r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out. Coupling capacitors of
    /// 1 F put the corners near 16 µHz: mid-band is flat to 1e-12.
    fn inverting_values(r_in: f64, r_fb: f64, hi: f64, lo: f64) -> Vec<f64> {
        vec![r_in, r_fb, hi, lo, 1.0, 1.0]
    }

    #[test]
    fn noiseless_op_amp_inverting_textbook_density() {
        // Inverting amplifier, noiseless op-amp, mid-band (derivation in the module docs, and
        // the output-noise sum of op-amp noise texts, from memory):
        //   e_out² = 4kT·(R_fb + R_in·G² + R_p·(1 + G)²),  G = R_fb/R_in, R_p = R_hi ∥ R_lo,
        // R_fb's noise at the output as is, R_in's times the gain, the divider's times the
        // noise gain. With R_in = R_fb = R and R_p = R: 4kT·(R + R + 4R) = 4kT·6R.
        let s = spec(INVERTING);
        let stage = circuit_for(s.stage);
        let v = inverting_values(10e3, 10e3, 20e3, 20e3);
        let quiet = NoiseInputs::new(0.0, 0.0);
        let psd = output_psd(&quiet, stage, &s, &v, &OpAmp { gbw: None }, 1e3);
        let want = (four_kt() * 6.0 * 10e3).sqrt();
        assert_relative_eq!(density(&psd), want, max_relative = 1e-9);
        // Per source: R_fb alone is √(4kT·R) at the output.
        let r_fb = psd.iter().find(|(n, _)| *n == "r_fb").unwrap().1.sqrt();
        assert_relative_eq!(r_fb, thermal_density(10e3, 300.0), max_relative = 1e-9);
    }

    #[test]
    fn inverting_with_op_amp_noise_textbook_density() {
        // The full sum (op-amp noise texts, from memory), G = 4.7, NG = 1 + G:
        //   e_out² = 4kT(R_fb + R_in G² + R_p NG²) + e_n² NG² + i_n² (R_fb² + R_p² NG²).
        let s = spec(INVERTING);
        let stage = circuit_for(s.stage);
        let (r_in, r_fb, hi, lo) = (10e3, 47e3, 100e3, 82e3);
        let v = inverting_values(r_in, r_fb, hi, lo);
        let inputs = NoiseInputs::new(12e-9, 0.8e-12);
        let psd = output_psd(&inputs, stage, &s, &v, &OpAmp { gbw: None }, 1e3);
        let g = r_fb / r_in;
        let ng = 1.0 + g;
        let rp = hi * lo / (hi + lo);
        let (en, in_) = (12e-9f64, 0.8e-12f64);
        let want = four_kt() * (r_fb + r_in * g * g + rp * ng * ng)
            + en * en * ng * ng
            + in_ * in_ * (r_fb * r_fb + rp * rp * ng * ng);
        assert_relative_eq!(density(&psd).powi(2), want, max_relative = 1e-9);
    }

    const NON_INVERTING: &str = r#"
[stage]
kind = "non-inverting"
supply = "12 V"
gain = 11
load = "10k"
band = ["20 Hz", "20 kHz"]
stray_capacitance = 0
source_resistance = "600"
output_peak = "3 V"
"#;

    /// c_in, r_bias_hi, r_bias_lo, r_fb, r_g, c_g, c_out; 1 F capacitors (flat mid-band).
    fn non_inverting_values() -> Vec<f64> {
        vec![1.0, 220e3, 220e3, 100e3, 10e3, 1.0, 1.0]
    }

    #[test]
    fn non_inverting_textbook_density() {
        // Non-inverting amplifier at mid-band (op-amp noise texts, from memory), with the
        // divider, the source resistance in parallel at + (c_in shorted):
        //   e_out² = 4kT(R_fb + R_g (R_fb/R_g)² + R_p' NG²) + e_n² NG² + i_n²(R_fb² + R_p'² NG²),
        // NG = 1 + R_fb/R_g, R_p' = R_hi ∥ R_lo ∥ R_s (parallel resistors' noise is that of
        // their parallel value, 4kT·R_p').
        let s = spec(NON_INVERTING);
        let stage = circuit_for(s.stage);
        let v = non_inverting_values();
        let (en, in_) = (5e-9f64, 2e-12f64);
        let inputs = NoiseInputs::new(en, in_);
        let psd = output_psd(&inputs, stage, &s, &v, &OpAmp { gbw: None }, 1e3);
        let (r_fb, r_g) = (100e3f64, 10e3f64);
        let ng = 1.0 + r_fb / r_g;
        let rp = 1.0 / (1.0 / 220e3 + 1.0 / 220e3 + 1.0 / 600.0);
        let want = four_kt() * (r_fb + r_g * (r_fb / r_g).powi(2) + rp * ng * ng)
            + en * en * ng * ng
            + in_ * in_ * (r_fb * r_fb + rp * rp * ng * ng);
        assert_relative_eq!(density(&psd).powi(2), want, max_relative = 1e-9);
    }

    #[test]
    fn source_resistance_noise_follows_the_signal_response() {
        // The source resistance is in series with the EMF, so its noise reaches the load
        // exactly as the signal does: |H(f)|·√(4kTR_s) at every frequency, with real coupling
        // capacitors and a finite GBW. This ties the noise transfers to `Stage::response`.
        let mut inv = spec(INVERTING);
        inv.source_resistance = 1e3;
        let mut non = spec(NON_INVERTING);
        for s in [&mut inv, &mut non] {
            s.amplifier.gbw = Some(1e6);
        }
        let cases = [
            (inv, vec![10e3, 47e3, 100e3, 100e3, 1e-6, 4.7e-6]),
            (non, vec![1e-6, 220e3, 220e3, 100e3, 10e3, 22e-6, 4.7e-6]),
        ];
        for (s, v) in &cases {
            let stage = circuit_for(s.stage);
            let opamp = OpAmp::of(s);
            for f in [0.5, 5.0, 20.0, 1e3, 20e3, 200e3] {
                let psd = output_psd(&NoiseInputs::new(0.0, 0.0), stage, s, v, &opamp, f);
                let src = psd.iter().find(|(n, _)| *n == "source_resistance").unwrap();
                let want = stage.response(s, v, &opamp, f).norm()
                    * thermal_density(s.source_resistance, 300.0);
                assert_relative_eq!(src.1.sqrt(), want, max_relative = 1e-9);
            }
        }
    }

    #[test]
    fn op_amp_voltage_noise_over_the_band() {
        // e_n alone, mid-band flat: e_n·NG at the output, e_n·NG·√B over the band (flat
        // density, calculus), e_n·NG·√B / G at the input.
        let mut s = spec(NON_INVERTING);
        s.source_resistance = 0.0;
        let stage = circuit_for(s.stage);
        let v = non_inverting_values();
        let mut inputs = NoiseInputs::new(10e-9, 0.0);
        // Take the resistors out of the picture by cooling them to 0 K.
        inputs.temperature = 0.0;
        let r = noise(&inputs, stage, &s, &v);
        let b = 20e3f64 - 20.0;
        assert_relative_eq!(r.output_rms_v, 10e-9 * 11.0 * b.sqrt(), max_relative = 1e-8);
        assert_relative_eq!(r.input_rms_v, 10e-9 * b.sqrt(), max_relative = 1e-8);
        assert_relative_eq!(r.output_density_mid, 110e-9, max_relative = 1e-9);
        assert_relative_eq!(r.input_density_mid, 10e-9, max_relative = 1e-9);
        let en = r.by_source.iter().find(|x| x.source == "en").unwrap();
        assert_relative_eq!(en.share, 1.0);
        // 3 V peak: 20·log10(2.1213 V / 155.4 µV) ≈ 82.7 dB.
        let snr = r.snr_db.unwrap();
        assert_relative_eq!(
            snr,
            20.0 * (3.0 / 2f64.sqrt() / r.output_rms_v).log10(),
            max_relative = 1e-12
        );
    }

    #[test]
    fn powers_add_and_shares_sum_to_one() {
        let mut s = spec(NON_INVERTING);
        s.amplifier.gbw = Some(1e6);
        let stage = circuit_for(s.stage);
        let v = vec![1e-6, 220e3, 220e3, 100e3, 10e3, 22e-6, 4.7e-6];
        let r = noise(&NoiseInputs::new(8e-9, 1e-12), stage, &s, &v);
        let sum: f64 = r.by_source.iter().map(|x| x.output_rms_v.powi(2)).sum();
        assert_relative_eq!(sum.sqrt(), r.output_rms_v, max_relative = 1e-12);
        let shares: f64 = r.by_source.iter().map(|x| x.share).sum();
        assert_relative_eq!(shares, 1.0, max_relative = 1e-12);
        let names: Vec<&str> = r.by_source.iter().map(|x| x.source.as_str()).collect();
        assert_eq!(
            names,
            [
                "r_bias_hi",
                "r_bias_lo",
                "source_resistance",
                "r_fb",
                "r_g",
                "en",
                "in"
            ]
        );
    }

    #[test]
    fn the_goals_mid_band_figure_is_this_modules_sum_over_the_gain() {
        // `Figures::noise` (the noise goal's closed forms in each circuit) against the sum of
        // this module's transfers at mid-band (1 F capacitors, ideal op-amp), over |gain|², with
        // and without a source resistance, e_n and i_n on.
        for rs in [0.0, 600.0, 47e3] {
            let mut inv = spec(INVERTING);
            let mut non = spec(NON_INVERTING);
            for s in [&mut inv, &mut non] {
                s.source_resistance = rs;
                s.amplifier.noise_voltage = Some(9e-9);
                s.amplifier.noise_current = Some(0.7e-12);
            }
            let cases = [
                (inv, vec![12e3, 56e3, 150e3, 82e3, 1.0, 1.0]),
                (non, vec![1.0, 330e3, 180e3, 47e3, 4.7e3, 1.0, 1.0]),
            ];
            for (s, v) in &cases {
                let stage = circuit_for(s.stage);
                let inputs = NoiseInputs::new(9e-9, 0.7e-12);
                let psd = output_psd(&inputs, stage, s, v, &OpAmp { gbw: None }, 1e3);
                let want = density(&psd).powi(2) / stage.mid_gain(s, v).powi(2);
                let got = stage.figures(s, v).noise;
                assert_relative_eq!(got, want, max_relative = 1e-9);
            }
        }
    }
}
