//! One requirement judged on a build (`Check`), which side of its limit passes, and the
//! derating rules the rating checks apply.

use crate::value::Unit;
use serde::Serialize;

/// Derating of a capacitor's voltage: DC stress at most 80 % of the rating (common practice).
pub const CAP_DERATING: f64 = 0.8;
/// Derating of a resistor's power: at most 50 % of the rating (common practice).
pub const RESISTOR_DERATING: f64 = 0.5;

/// Which side of the limit passes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Bound {
    /// value ≥ limit
    Min,
    /// value ≤ limit
    Max,
}

/// One requirement judged on a build.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// Stable identifier (`input_resistance`, `band_low_loss`, `rating_c_in`, …).
    pub name: String,
    /// What it means, for people.
    pub label: String,
    /// The figure judged, in the check's unit.
    pub value: f64,
    /// The requirement's limit, in the same unit.
    pub limit: f64,
    /// Which side of the limit passes.
    pub bound: Bound,
    /// How the value is shown: its unit, where [`Unit::Percent`] marks a gain ratio (names
    /// `gain_…`) or a yes/no check (1 yes, 0 no).
    #[serde(skip)]
    pub unit: Unit,
    /// True when the value is on the passing side of the limit (within 1e-12 relative).
    pub pass: bool,
    /// How far inside the limit (positive) or outside (negative), in the check's unit.
    pub margin: f64,
}

impl Check {
    pub(crate) fn new(
        name: &str,
        label: String,
        value: f64,
        bound: Bound,
        limit: f64,
        unit: Unit,
    ) -> Check {
        let margin = match bound {
            Bound::Min => value - limit,
            Bound::Max => limit - value,
        };
        // NaN (no passband at all) never passes.
        let pass = margin >= -1e-12 * limit.abs().max(1e-30) && !value.is_nan();
        Check {
            name: name.to_string(),
            label,
            value,
            limit,
            bound,
            unit,
            pass,
            margin,
        }
    }
}
