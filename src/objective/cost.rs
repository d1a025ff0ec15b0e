//! The cost goal: points per unit of currency of the pieces taken from stock, where the
//! inventory gives a `unit_cost`.

use super::term::{Scope, Term};
use crate::build::Piece;
use crate::spec::Spec;
use crate::vocab::{Goal, PartKind};

/// `cost`: points per unit of currency.
pub struct Cost;

impl Term for Cost {
    fn goal(&self) -> Goal {
        Goal::Cost
    }
    fn scope(&self) -> Scope {
        Scope::Part
    }
    /// Locked parts are on the board already and cost nothing; a realisation with a piece of
    /// unknown cost counts no cost at all (as `Part::cost`).
    fn part_points(
        &self,
        spec: &Spec,
        _: PartKind,
        a: &Piece,
        b: Option<&Piece>,
        locked: bool,
    ) -> f64 {
        let cost = if locked {
            0.0
        } else {
            match (a.unit_cost, b.map(|b| b.unit_cost)) {
                (Some(x), None) => x,
                (Some(x), Some(Some(y))) => x + y,
                _ => 0.0,
            }
        };
        spec.goals.weight(Goal::Cost) * cost
    }
}
