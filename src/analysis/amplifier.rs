//! The amplifier as it is: the current its output must deliver and how close its inputs come
//! to the rails.
//!
//! **Output current.** At mid-band the coupling capacitors are shorts, so the output drives the
//! load and the feedback network (`Circuit::feedback_load`: r_fb into the inverting stage's
//! virtual ground, r_fb + r_g in the non-inverting stage) in parallel; at the output's peak
//! V_pk the current is V_pk/R_load + V_pk/R_feedback (Ohm's law). The DC output current is
//! nil: c_out and the input capacitor block it (the bias currents aside). The peak is the
//! required one — `output_peak`, or `input_peak` × the worst-case highest |gain| — or without
//! either the worst-case swing the headroom allows; check `output_current` against
//! `[amplifier] output_current_max`.
//!
//! **Input common mode.** Each input sits at its DC (worst over the tolerance corners and the
//! op-amp's error signs) plus the signal it carries, V_pk × `Circuit::input_signal_per_output`
//! (1/noise gain for the non-inverting stage, nil at a virtual ground); `[amplifier]
//! input_common_mode = [low, high]` says how close to the low and the high rail an input may
//! come: checks `input_common_mode_low` (lowest input voltage ≥ low) and
//! `input_common_mode_high` (highest ≤ supply − high).

use super::check::{Bound, Check};
use crate::circuit::{Circuit, DcPoint};
use crate::spec::Spec;
use crate::value::Unit;

/// The output's peak the checks take: required by the spec, or the swing it allows.
pub fn output_peak(spec: &Spec, gain_mag: f64, swing: f64) -> f64 {
    match (spec.output_peak, spec.input_peak) {
        (_, Some(inp)) => inp * gain_mag,
        (Some(out), None) => out,
        (None, None) => swing.max(0.0),
    }
}

/// Output current at the peak `peak` with slot values `x`, A (module docs).
pub fn output_current(spec: &Spec, stage: &dyn Circuit, x: &[f64], peak: f64) -> f64 {
    peak / spec.load + peak / stage.feedback_load(spec, x)
}

/// Lowest and highest voltage at either input with slot values `x` at DC point `dc`, V.
pub fn input_range(
    spec: &Spec,
    stage: &dyn Circuit,
    x: &[f64],
    dc: &DcPoint,
    peak: f64,
) -> (f64, f64) {
    let s = peak * stage.input_signal_per_output(spec, x).abs();
    (dc.v_plus.min(dc.v_minus) - s, dc.v_plus.max(dc.v_minus) + s)
}

/// The worst case of both figures over the DC corners (`points`: slot values and the DC point
/// there), each only when the spec asks for its check.
pub fn worst(
    spec: &Spec,
    stage: &dyn Circuit,
    points: &[(&Vec<f64>, DcPoint)],
    gain_mag_max: f64,
    swing: f64,
) -> (Option<f64>, Option<(f64, f64)>) {
    let peak = output_peak(spec, gain_mag_max, swing);
    let current = spec.amplifier.output_current_max.map(|_| {
        points
            .iter()
            .map(|(x, _)| output_current(spec, stage, x, peak))
            .fold(0.0, f64::max)
    });
    let range = spec.amplifier.input_common_mode.map(|_| {
        points
            .iter()
            .map(|(x, p)| input_range(spec, stage, x, p, peak))
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), (a, b)| {
                (lo.min(a), hi.max(b))
            })
    });
    (current, range)
}

/// The checks of the figures [`worst`] gives.
pub fn checks(spec: &Spec, current: Option<f64>, range: Option<(f64, f64)>) -> Vec<Check> {
    let worst = if spec.worst_case() {
        "worst-case"
    } else {
        "nominal"
    };
    let mut out = Vec::new();
    if let (Some(i), Some(max)) = (current, spec.amplifier.output_current_max) {
        out.push(Check::new(
            "output_current",
            format!("{worst} output current at the peak"),
            i,
            Bound::Max,
            max,
            Unit::Ampere,
        ));
    }
    if let (Some((lo, hi)), Some((m_lo, m_hi))) = (range, spec.amplifier.input_common_mode) {
        out.push(Check::new(
            "input_common_mode_low",
            format!("{worst} lowest input voltage (common mode)"),
            lo,
            Bound::Min,
            m_lo,
            Unit::Volt,
        ));
        out.push(Check::new(
            "input_common_mode_high",
            format!("{worst} highest input voltage (common mode)"),
            hi,
            Bound::Max,
            spec.supply - m_hi,
            Unit::Volt,
        ));
    }
    out
}

/// True when the amplifier's own limits rule the spec out before any search (the screen of
/// `search::ruled_out`): the load alone draws more than `output_current_max` at the least
/// output peak the spec asks for (the feedback network only adds to it), or the inputs'
/// common-mode window is empty (each input sits somewhere between the rails).
pub fn ruled_out(spec: &Spec) -> bool {
    use crate::circuit::common::SLACK;
    if let Some(max) = spec.amplifier.output_current_max {
        let least_peak = match (spec.output_peak, spec.input_peak) {
            (Some(out), None) => Some(out),
            // The worst-case highest |gain| is at least the window's floor.
            (_, Some(inp)) => spec
                .gain_tolerance
                .map(|t| inp * spec.gain.abs() * (1.0 - t)),
            (None, None) => None,
        };
        if least_peak.is_some_and(|p| p / spec.load > max * (1.0 + SLACK) + SLACK * 1e-9) {
            return true;
        }
    }
    if let Some((lo, hi)) = spec.amplifier.input_common_mode {
        if lo + hi >= spec.supply * (1.0 + SLACK) {
            return true;
        }
    }
    false
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::circuit::circuit_for;

    fn spec(kind: &str, gain: f64, extra: &str) -> Spec {
        Spec::from_toml(&format!(
            "[stage]\nkind = \"{kind}\"\nsupply = 9\ngain = {gain}\nload = 10000\nband = [20, 20000]\noutput_peak = 2\n[amplifier]\n{extra}"
        ))
        .unwrap()
    }

    #[test]
    fn output_current_is_the_load_and_the_feedback_network_at_the_peak() {
        // Ohm's law (common practice). Inverting, slots r_in r_fb r_bias_hi r_bias_lo c_in c_out:
        // 2 V into 10 kΩ and a 100 kΩ r_fb to the virtual ground: 200 µA + 20 µA.
        let s = spec("inverting", -10.0, "output_current_max = \"1 mA\"");
        let stage = circuit_for(s.stage);
        let x = [10e3, 100e3, 100e3, 100e3, 1e-6, 10e-6];
        assert!((output_current(&s, stage, &x, 2.0) - 220e-6).abs() < 1e-12);
        // Non-inverting, c_in r_bias_hi r_bias_lo r_fb r_g c_g c_out: r_fb + r_g = 100 kΩ to
        // ground at mid-band: 200 µA + 20 µA.
        let s = spec("non-inverting", 10.0, "output_current_max = \"1 mA\"");
        let stage = circuit_for(s.stage);
        let x = [1e-6, 200e3, 200e3, 90e3, 10e3, 10e-6, 10e-6];
        assert!((output_current(&s, stage, &x, 2.0) - 220e-6).abs() < 1e-12);
    }

    #[test]
    fn the_inputs_swing_with_the_signal_only_in_the_non_inverting_stage() {
        let s = spec("non-inverting", 10.0, "input_common_mode = \"1.5 V\"");
        let stage = circuit_for(s.stage);
        let x = [1e-6, 200e3, 200e3, 90e3, 10e3, 10e-6, 10e-6];
        let dc = DcPoint {
            v_plus: 4.5,
            v_minus: 4.5,
            v_out: 4.5,
            divider_current: 0.0,
        };
        // 2 V at the output is 2/10 = 0.2 V at each input (noise gain 10).
        let (lo, hi) = input_range(&s, stage, &x, &dc, 2.0);
        assert!((lo - 4.3).abs() < 1e-12 && (hi - 4.7).abs() < 1e-12);
        let s = spec("inverting", -10.0, "input_common_mode = \"1.5 V\"");
        let stage = circuit_for(s.stage);
        let x = [10e3, 100e3, 100e3, 100e3, 1e-6, 10e-6];
        assert_eq!(input_range(&s, stage, &x, &dc, 2.0), (4.5, 4.5));
    }

    #[test]
    fn the_screen_rules_out_what_the_amplifier_alone_cannot_do() {
        // 2 V into 10 kΩ is 200 µA: above a 100 µA output.
        assert!(ruled_out(&spec(
            "inverting",
            -10.0,
            "output_current_max = \"100 uA\""
        )));
        assert!(!ruled_out(&spec(
            "inverting",
            -10.0,
            "output_current_max = \"1 mA\""
        )));
        // 5 V from each rail of a 9 V supply leaves no common-mode window.
        assert!(ruled_out(&spec(
            "inverting",
            -10.0,
            "input_common_mode = \"5 V\""
        )));
        assert!(!ruled_out(&spec(
            "inverting",
            -10.0,
            "input_common_mode = [\"0 V\", \"1.5 V\"]"
        )));
    }
}
