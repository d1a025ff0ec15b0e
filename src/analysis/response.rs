//! Frequency response: loss at a frequency and the exact −3 dB corners of the whole stage.
//!
//! The corners are found on the full transfer function (every coupling network and the
//! op-amp's single pole together), not one pole at a time: bisection in log frequency on
//! |H(f)| = |H_mid|/√2, where H_mid is the ideal mid-band gain.

use crate::circuit::{Circuit, OpAmp};
use crate::spec::Spec;

/// Loss in dB at `f` against the ideal mid-band gain.
pub fn loss_db(stage: &dyn Circuit, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> f64 {
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
/// `rising`). The result is within 1e-10 relative:
/// far below the 1 ppm any check needs.
fn bisect(
    stage: &dyn Circuit,
    spec: &Spec,
    v: &[f64],
    opamp: &OpAmp,
    mut lo: f64,
    mut hi: f64,
    rising: bool,
) -> f64 {
    // Until the bracket is 1e-10 wide (relative): ~35–40 halvings.
    for _ in 0..200 {
        if hi / lo <= 1.0 + 1e-10 {
            break;
        }
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
pub fn low_corner(stage: &dyn Circuit, spec: &Spec, v: &[f64], opamp: &OpAmp) -> Option<f64> {
    let c = centre(spec);
    if loss_db(stage, spec, v, opamp, c) >= HALF_POWER_DB {
        return None;
    }
    let floor = c * 1e-12;
    if loss_db(stage, spec, v, opamp, floor) < HALF_POWER_DB {
        return Some(0.0);
    }
    // A band edge 3 dB down puts the corner at or above it, however the response runs below
    // it: a check on the corner then always agrees with one on the edge's loss, which is what
    // the search's relaxations and quick rejections read (`quick_fail`).
    let edge = spec.band.0;
    if edge < c && loss_db(stage, spec, v, opamp, edge) >= HALF_POWER_DB {
        return Some(bisect(stage, spec, v, opamp, edge, c, true));
    }
    Some(bisect(stage, spec, v, opamp, floor, c, true))
}

/// The −3 dB high corner, `None` when the response stays up (ideal op-amp).
pub fn high_corner(stage: &dyn Circuit, spec: &Spec, v: &[f64], opamp: &OpAmp) -> Option<f64> {
    let c = centre(spec);
    if loss_db(stage, spec, v, opamp, c) >= HALF_POWER_DB {
        return None;
    }
    let ceiling = c * 1e12;
    if loss_db(stage, spec, v, opamp, ceiling) < HALF_POWER_DB {
        return None;
    }
    // As in `low_corner`: a band top 3 dB down puts the corner at or below it.
    let edge = spec.band.1;
    if edge > c && loss_db(stage, spec, v, opamp, edge) >= HALF_POWER_DB {
        return Some(bisect(stage, spec, v, opamp, c, edge, false));
    }
    Some(bisect(stage, spec, v, opamp, c, ceiling, false))
}

/// The low corner of a build whose values are within a factor 4 of the ones that gave
/// `guess` (tolerances below 50 % move an RC corner by less than 4×): bisection in that bracket,
/// falling back to the full search when the bracket does not hold the crossing.
pub fn low_corner_near(
    stage: &dyn Circuit,
    spec: &Spec,
    v: &[f64],
    opamp: &OpAmp,
    guess: Option<f64>,
) -> Option<f64> {
    // A band edge 3 dB down: the guarded full search (see `low_corner`).
    if loss_db(stage, spec, v, opamp, spec.band.0) >= HALF_POWER_DB {
        return low_corner(stage, spec, v, opamp);
    }
    if let Some(g) = guess.filter(|g| *g > 0.0) {
        let (lo, hi) = (g / 4.0, g * 4.0);
        if hi < centre(spec)
            && loss_db(stage, spec, v, opamp, lo) >= HALF_POWER_DB
            && loss_db(stage, spec, v, opamp, hi) < HALF_POWER_DB
        {
            return Some(bisect(stage, spec, v, opamp, lo, hi, true));
        }
    }
    low_corner(stage, spec, v, opamp)
}

/// The high corner near `guess`, as [`low_corner_near`].
pub fn high_corner_near(
    stage: &dyn Circuit,
    spec: &Spec,
    v: &[f64],
    opamp: &OpAmp,
    guess: Option<f64>,
) -> Option<f64> {
    if loss_db(stage, spec, v, opamp, spec.band.1) >= HALF_POWER_DB {
        return high_corner(stage, spec, v, opamp);
    }
    if let Some(g) = guess.filter(|g| *g > 0.0) {
        let (lo, hi) = (g / 4.0, g * 4.0);
        if lo > centre(spec)
            && loss_db(stage, spec, v, opamp, lo) < HALF_POWER_DB
            && loss_db(stage, spec, v, opamp, hi) >= HALF_POWER_DB
        {
            return Some(bisect(stage, spec, v, opamp, lo, hi, false));
        }
    }
    high_corner(stage, spec, v, opamp)
}

/// The highest low corner over `vertices` (`None` when any has no passband). The response is
/// monotone below its passband, so a vertex's corner exceeds the best so far exactly when it
/// is still 3 dB down there: one evaluation per vertex, a bisection only for a new worst.
pub fn worst_low_corner(
    stage: &dyn Circuit,
    spec: &Spec,
    vertices: &[Vec<f64>],
    opamp: &OpAmp,
    guess: Option<f64>,
) -> Option<f64> {
    let mut worst: Option<f64> = None;
    for x in vertices {
        if let Some(w) = worst {
            if loss_db(stage, spec, x, opamp, w) < HALF_POWER_DB {
                continue;
            }
        }
        let c = low_corner_near(stage, spec, x, opamp, worst.or(guess))?;
        worst = Some(worst.map_or(c, |w| w.max(c)));
    }
    worst
}

/// The lowest high corner over `vertices`, as [`worst_low_corner`]; `None` when some vertex
/// has no high corner (ideal amplifier) or no passband.
pub fn worst_high_corner(
    stage: &dyn Circuit,
    spec: &Spec,
    vertices: &[Vec<f64>],
    opamp: &OpAmp,
    guess: Option<f64>,
) -> Option<f64> {
    let mut worst: Option<f64> = None;
    for x in vertices {
        if let Some(w) = worst {
            if loss_db(stage, spec, x, opamp, w) < HALF_POWER_DB {
                continue;
            }
        }
        let c = high_corner_near(stage, spec, x, opamp, worst.or(guess))?;
        worst = Some(worst.map_or(c, |w| w.min(c)));
    }
    worst
}
