//! The divider-current goal: points per milliamp of the nominal current the bias network
//! draws from the supply (`Figures::bias_current`). It is the noise goal's counterweight: a
//! bias divider on the + input adds its noise times the noise gain, and without a price on
//! its current the quietest divider is the one that heats (common practice: a divider of tens
//! of kilohms, a milliamp at most, on a small supply).

use super::term::{Figures, Scope, Term};
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::Goal;

/// `divider_current`: points per mA of nominal bias-network current.
pub struct DividerCurrent;

/// The points of a bias-network current of `amps`.
pub fn points(spec: &Spec, amps: f64) -> f64 {
    spec.goals.weight(Goal::DividerCurrent) * amps / 1e-3
}

impl Term for DividerCurrent {
    fn goal(&self) -> Goal {
        Goal::DividerCurrent
    }
    fn scope(&self) -> Scope {
        Scope::Circuit
    }
    fn circuit_points(&self, spec: &Spec, f: &Figures<f64>) -> f64 {
        f.bias_current.map_or(0.0, |i| points(spec, i))
    }
    fn circuit_bound(&self, spec: &Spec, f: &Figures<Iv>) -> f64 {
        f.bias_current.map_or(0.0, |i| points(spec, i.lo.max(0.0)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_milliamp_costs_a_tenth_of_a_point_by_default() {
        let s = Spec::from_toml(
            "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
             band = [\"20 Hz\", \"20 kHz\"]\n",
        )
        .unwrap();
        assert!((points(&s, 4.5e-3) - 0.45).abs() < 1e-12);
    }
}
