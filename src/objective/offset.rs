//! The offset goal: points per 100 mV of the nominal output DC error the circuit counts
//! (`Figures::offset`; for the single-supply stages the bias point off its target plus the
//! bias and offset currents through the input resistances, `circuit::common::offset_error`).

use super::term::{Figures, Scope, Term};
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::Goal;

/// `offset`: points per 100 mV of nominal output DC error.
pub struct Offset;

/// The points of an output DC error of `volts`.
pub fn points(spec: &Spec, volts: f64) -> f64 {
    spec.goals.weight(Goal::Offset) * volts / 0.1
}

impl Term for Offset {
    fn goal(&self) -> Goal {
        Goal::Offset
    }
    fn scope(&self) -> Scope {
        Scope::Circuit
    }
    fn circuit_points(&self, spec: &Spec, f: &Figures<f64>) -> f64 {
        points(spec, f.offset)
    }
    fn circuit_bound(&self, spec: &Spec, f: &Figures<Iv>) -> f64 {
        points(spec, f.offset.lo.max(0.0))
    }
}
