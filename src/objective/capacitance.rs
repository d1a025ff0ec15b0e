//! The capacitance goal: points per decade of capacitance (log10 of C in pF) of each
//! capacitor piece — one decade smaller is one unit cheaper and smaller (common practice).

use super::term::{Scope, Term};
use crate::build::Piece;
use crate::spec::Spec;
use crate::vocab::{Goal, PartKind};

/// `capacitance`: points per decade of capacitance, summed over capacitor pieces.
pub struct Capacitance;

impl Term for Capacitance {
    fn goal(&self) -> Goal {
        Goal::Capacitance
    }
    fn scope(&self) -> Scope {
        Scope::Part
    }
    fn part_points(
        &self,
        spec: &Spec,
        kind: PartKind,
        a: &Piece,
        b: Option<&Piece>,
        _: bool,
    ) -> f64 {
        if kind != PartKind::Capacitor {
            return 0.0;
        }
        let decades = |p: &Piece| (p.value / 1e-12).log10().max(0.0);
        spec.goals.weight(Goal::Capacitance) * (decades(a) + b.map_or(0.0, decades))
    }
}
