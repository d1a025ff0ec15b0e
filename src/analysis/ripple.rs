//! Supply ripple at the output, and the bias bypass's corner.
//!
//! **Ripple.** The supply reaches the stage two ways. Through the bias network: the supply
//! node meets the stage only at `r_bias_hi`, so a ripple v_r on it is a voltage in series with
//! that resistor, and reaches the load as that resistor's noise does (`analysis::noise`):
//! v_r · (Z_p/Z_b) · (1/β) · L · H_out, with the circuit's own Z_b for `r_bias_hi`
//! (`Circuit::noise_circuit`), at `ripple_frequency`. Through the op-amp itself: a PSRR of
//! P dB refers v_r · 10^(−P/20) to the + input, which the stage carries by (1/β) · L · H_out
//! (the usual input-referred PSRR model, any op-amp text). The two phases are not known
//! together (a datasheet gives PSRR as a magnitude), so their magnitudes add — the worst
//! case. The reported figure is rms, as `supply_ripple` is. A circuit without `r_bias_hi`
//! (no bias network on the supply) takes the PSRR path alone.
//!
//! **Bypass.** A capacitor off the signal path (`Circuit::off_signal_path`, a bias bypass)
//! that the circuit lists as a network must bring its worst-case corner 1/(2πRC) down to the
//! band's low edge, so that the divider's noise and the ripple are filtered across the whole
//! band (common practice): check `bypass_<slot>`.

use super::check::{Bound, Check};
use crate::circuit::{Circuit, NoisePlace, OpAmp};
use crate::spec::Spec;
use crate::value::Unit;
use num_complex::Complex64;

/// Ripple at the load for a supply ripple of `v_r` rms, V rms (module docs).
pub fn ripple_out(spec: &Spec, stage: &dyn Circuit, v: &[f64], v_r: f64) -> f64 {
    let (divider, amplifier) = transfers(spec, stage, v);
    let eps = spec.amplifier.psrr.map_or(0.0, |p| 10f64.powf(-p / 20.0));
    v_r * (divider + eps * amplifier)
}

/// |V_load/V_supply| through the bias network, and the + input's gain to the load, at the
/// ripple frequency.
pub fn transfers(spec: &Spec, stage: &dyn Circuit, v: &[f64]) -> (f64, f64) {
    let f = spec.ripple_frequency;
    let nc = stage.noise_circuit(spec, v, f);
    let beta = nc.z_s / (nc.z_s + nc.z_f);
    let plus_gain = OpAmp::of(spec).loop_factor(f, beta) / beta * nc.h_out;
    let divider =
        nc.resistors
            .iter()
            .find(|r| r.0 == "r_bias_hi")
            .map_or(Complex64::new(0.0, 0.0), |r| match r.2 {
                NoisePlace::Plus(z_b) => nc.z_p / z_b * plus_gain,
                // r_bias_hi sits at the + input in every circuit that has one.
                _ => Complex64::new(0.0, 0.0),
            });
    (divider.norm(), plus_gain.norm())
}

/// Nominal and worst-case ripple at the load over the tolerance corners, when the spec gives
/// a supply ripple.
pub fn figures(
    spec: &Spec,
    stage: &dyn Circuit,
    v: &[f64],
    vertices: &[Vec<f64>],
) -> (Option<f64>, Option<f64>) {
    let Some(v_r) = spec.supply_ripple else {
        return (None, None);
    };
    let worst = vertices
        .iter()
        .map(|x| ripple_out(spec, stage, x, v_r))
        .fold(0.0, f64::max);
    (Some(ripple_out(spec, stage, v, v_r)), Some(worst))
}

/// One network as the checks read it: its name, its capacitor's slot name, its worst corner, Hz
/// (`analysis::NetworkReport`'s fields; this file comes before the one that defines it).
pub type NetworkCorner<'a> = (&'a str, &'a str, f64);

/// The checks: `ripple_out` (with `ripple_out_max`) and `bypass_<slot>` for each bypass.
pub fn checks(
    spec: &Spec,
    stage: &dyn Circuit,
    ripple_worst: Option<f64>,
    networks: &[NetworkCorner],
) -> Vec<Check> {
    let worst = if spec.worst_case() {
        "worst-case"
    } else {
        "nominal"
    };
    let mut out = Vec::new();
    if let (Some(r), Some(max)) = (ripple_worst, spec.ripple_out_max) {
        out.push(Check::new(
            "ripple_out",
            format!("{worst} supply ripple at the output (rms)"),
            r,
            Bound::Max,
            max,
            Unit::Volt,
        ));
    }
    for i in bypass_networks(stage, networks) {
        let (_, slot, corner) = networks[i];
        out.push(Check::new(
            &format!("bypass_{slot}"),
            format!("{worst} {slot} bypass corner vs the band"),
            corner,
            Bound::Max,
            spec.band.0,
            Unit::Hertz,
        ));
    }
    out
}

/// Indices of the networks whose capacitor is off the signal path.
pub fn bypass_networks(stage: &dyn Circuit, networks: &[NetworkCorner]) -> Vec<usize> {
    let slots = stage.slots();
    let off = stage.off_signal_path();
    networks
        .iter()
        .enumerate()
        .filter(|(_, n)| off.iter().any(|&s| slots[s].name == n.1))
        .map(|(i, _)| i)
        .collect()
}
