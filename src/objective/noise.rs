//! The noise goal: points per dB of the build's mid-band input-referred noise density above
//! the thermal noise of the source's own resistance, so that the ranking chooses an impedance
//! level for a reason (issue 12).
//!
//! The figure (`Figures::noise`) is the noise power density referred to the source EMF at
//! mid-band — capacitors shorted, ideal op-amp — of every resistor's thermal noise and the
//! op-amp's e_n and i_n, each circuit's closed form of the sums in `analysis::noise` (a test
//! there holds them together). In dB above 4kT·R_s it is the spot noise figure of the stage
//! (Friis 1944, "noise factor", any noise text); with an ideal source (R_s = 0) the reference
//! is the thermal noise of [`REFERENCE_RESISTANCE`] instead, and a build quieter than that
//! scores nothing. The points, `w · max(0, 10·log10(e² / 4kT·R_ref))`, rise with the density,
//! so the bound over a box of values is the points at the box's least density.

use super::term::{Figures, Scope, Term};
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::Goal;

/// Boltzmann constant, J/K: exact in the 2019 SI (SI Brochure, 9th edition).
pub const BOLTZMANN: f64 = 1.380649e-23;

/// Temperature of the noise figures, K: 300 K, the round room temperature noise texts use
/// (common practice).
pub const DEFAULT_TEMPERATURE: f64 = 300.0;

/// The resistance whose thermal noise is the reference when the source has none: 1 kΩ,
/// 4.07 nV/√Hz at 300 K, about the voltage noise of a quiet general-purpose op-amp (common
/// practice, from memory).
pub const REFERENCE_RESISTANCE: f64 = 1e3;

/// 4kT at the noise figures' temperature, V²/(Hz·Ω) (Johnson–Nyquist).
pub fn four_kt() -> f64 {
    4.0 * BOLTZMANN * DEFAULT_TEMPERATURE
}

/// The op-amp's noise powers (e_n², i_n²), V²/Hz and A²/Hz; 0 for a figure the spec omits.
pub fn amplifier_powers(spec: &Spec) -> (f64, f64) {
    let a = &spec.amplifier;
    (
        a.noise_voltage.unwrap_or(0.0).powi(2),
        a.noise_current.unwrap_or(0.0).powi(2),
    )
}

/// The reference density 4kT·R_ref, V²/Hz: the source resistance's, or
/// [`REFERENCE_RESISTANCE`]'s with an ideal source.
pub fn reference(spec: &Spec) -> f64 {
    let r = if spec.source_resistance > 0.0 {
        spec.source_resistance
    } else {
        REFERENCE_RESISTANCE
    };
    four_kt() * r
}

/// dB of a mid-band input noise power density (V²/Hz) above the reference.
pub fn db_above_reference(spec: &Spec, density: f64) -> f64 {
    10.0 * (density / reference(spec)).log10()
}

/// The points of a mid-band input noise power density (V²/Hz): `noise` points per dB above
/// the reference, none below it.
pub fn points(spec: &Spec, density: f64) -> f64 {
    let w = spec.goals.weight(Goal::Noise);
    if w == 0.0 {
        return 0.0;
    }
    w * db_above_reference(spec, density).max(0.0)
}

/// `noise`: points per dB of mid-band input-referred noise above the source's thermal noise.
pub struct Noise;

impl Term for Noise {
    fn goal(&self) -> Goal {
        Goal::Noise
    }
    fn scope(&self) -> Scope {
        Scope::Circuit
    }
    fn circuit_points(&self, spec: &Spec, f: &Figures<f64>) -> f64 {
        points(spec, f.noise)
    }
    fn circuit_bound(&self, spec: &Spec, f: &Figures<Iv>) -> f64 {
        points(spec, f.noise.lo.max(0.0))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec(extra: &str) -> Spec {
        Spec::from_toml(&format!(
            "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
             band = [\"20 Hz\", \"20 kHz\"]\n{extra}"
        ))
        .unwrap()
    }

    #[test]
    fn points_per_db_above_the_source_resistance() {
        // Twice the source's own noise power is 3.01 dB (10·log10 2): 0.1505 points at the
        // default 0.05 per dB.
        let s = spec("source_resistance = \"2k\"\n");
        let p = points(&s, 2.0 * four_kt() * 2e3);
        assert!((p - 0.05 * 10.0 * 2f64.log10()).abs() < 1e-12, "{p}");
        // The source's noise alone: 0 dB, no points.
        assert!(points(&s, four_kt() * 2e3).abs() < 1e-12);
    }

    #[test]
    fn an_ideal_source_is_measured_against_one_kilohm_and_clamped() {
        let s = spec("");
        assert_eq!(points(&s, four_kt() * 500.0), 0.0);
        let p = points(&s, four_kt() * 10e3);
        assert!((p - 0.5).abs() < 1e-12, "10 dB above 1 kΩ: {p}");
    }

    #[test]
    fn zero_weight_scores_nothing() {
        let s = spec("[goals]\nnoise = 0\n");
        assert_eq!(points(&s, 1.0), 0.0);
    }

    fn figures<T: Copy>(x: T, noise: T) -> Figures<T> {
        Figures {
            gain: x,
            input_resistance: x,
            offset: x,
            dc_out: x,
            dc_error: x,
            bias_current: None,
            networks: Default::default(),
            noise,
            cm_ratio: None,
            matched_gain: None,
        }
    }

    #[test]
    fn the_bound_is_the_points_at_the_least_density() {
        let s = spec("");
        let (lo, hi) = (four_kt() * 5e3, four_kt() * 50e3);
        let bound = Noise.circuit_bound(&s, &figures(Iv::point(1.0), Iv::new(lo, hi)));
        assert!((bound - Noise.circuit_points(&s, &figures(1.0, lo))).abs() < 1e-12);
        assert!(bound <= Noise.circuit_points(&s, &figures(1.0, hi)));
    }
}
