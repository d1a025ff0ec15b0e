//! The gain-error goal: points per 1 % of nominal gain error, |G − G_t|/|G_t|.

use super::term::{Figures, Scope, Term};
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::Goal;

/// `gain_error`: points per 1 % of nominal gain error.
pub struct GainError;

/// The relative gain error |G − G_t|/|G_t| of a nominal gain.
pub fn error(spec: &Spec, gain: f64) -> f64 {
    (gain - spec.gain).abs() / spec.gain.abs()
}

/// The points of a nominal gain: `gain_error` points per 1 %.
pub fn points(spec: &Spec, gain: f64) -> f64 {
    spec.goals.weight(Goal::GainError) * error(spec, gain) / 0.01
}

impl Term for GainError {
    fn goal(&self) -> Goal {
        Goal::GainError
    }
    fn scope(&self) -> Scope {
        Scope::Circuit
    }
    fn circuit_points(&self, spec: &Spec, f: &Figures<f64>) -> f64 {
        points(spec, f.gain)
    }
    /// The least error is the distance from the target to the gain interval.
    fn circuit_bound(&self, spec: &Spec, f: &Figures<Iv>) -> f64 {
        spec.goals.weight(Goal::GainError) * (f.gain.distance_to(spec.gain) / spec.gain.abs())
            / 0.01
    }
}
