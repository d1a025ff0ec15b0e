//! Frequency response: loss at a frequency and the exact −3 dB corners of the whole stage.
//!
//! The corners are found on the full transfer function (every coupling network and the
//! op-amp's single pole together), not one pole at a time: bisection in log frequency on
//! |H(f)| = |H_mid|/√2, where H_mid is the ideal mid-band gain.

use crate::spec::Spec;
use crate::stage::{OpAmp, Stage};

/// Loss in dB at `f` against the ideal mid-band gain.
pub fn loss_db(stage: &dyn Stage, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> f64 {
    let reference = stage.mid_gain(spec, v).abs();
    20.0 * (reference / stage.response(spec, v, opamp, f).norm()).log10()
}

/// Geometric centre of the band, where the response is taken to be in its passband.
fn centre(spec: &Spec) -> f64 {
    (spec.band.0 * spec.band.1).sqrt()
}

/// 3.0103 dB = 20·log10(√2): the half-power point.
const HALF_POWER_DB: f64 = 10.0 * std::f64::consts::LOG10_2;

/// Bisection in log f for the −3 dB crossing between `lo` (below) and `hi` (passband side when
/// `rising`). 48 halvings of 24 decades leave 2e-13 decades: far below 1 ppm.
fn bisect(
    stage: &dyn Stage,
    spec: &Spec,
    v: &[f64],
    opamp: &OpAmp,
    mut lo: f64,
    mut hi: f64,
    rising: bool,
) -> f64 {
    for _ in 0..48 {
        let mid = (lo * hi).sqrt();
        let inside = loss_db(stage, spec, v, opamp, mid) < HALF_POWER_DB;
        if inside == rising {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    (lo * hi).sqrt()
}

/// The −3 dB low corner, `None` when the band's centre is itself 3 dB down (no passband).
pub fn low_corner(stage: &dyn Stage, spec: &Spec, v: &[f64], opamp: &OpAmp) -> Option<f64> {
    let c = centre(spec);
    if loss_db(stage, spec, v, opamp, c) >= HALF_POWER_DB {
        return None;
    }
    let floor = c * 1e-12;
    if loss_db(stage, spec, v, opamp, floor) < HALF_POWER_DB {
        return Some(0.0);
    }
    Some(bisect(stage, spec, v, opamp, floor, c, true))
}

/// The −3 dB high corner, `None` when the response stays up (ideal op-amp).
pub fn high_corner(stage: &dyn Stage, spec: &Spec, v: &[f64], opamp: &OpAmp) -> Option<f64> {
    let c = centre(spec);
    if loss_db(stage, spec, v, opamp, c) >= HALF_POWER_DB {
        return None;
    }
    let ceiling = c * 1e12;
    if loss_db(stage, spec, v, opamp, ceiling) < HALF_POWER_DB {
        return None;
    }
    Some(bisect(stage, spec, v, opamp, c, ceiling, false))
}
