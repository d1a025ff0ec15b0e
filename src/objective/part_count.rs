//! The part-count goal: points per piece (a pair of pieces is two).

use super::term::{Scope, Term};
use crate::build::Piece;
use crate::spec::Spec;
use crate::vocab::{Goal, PartKind};

/// `part_count`: points per piece.
pub struct PartCount;

impl Term for PartCount {
    fn goal(&self) -> Goal {
        Goal::PartCount
    }
    fn scope(&self) -> Scope {
        Scope::Part
    }
    fn part_points(&self, spec: &Spec, _: PartKind, _: &Piece, b: Option<&Piece>, _: bool) -> f64 {
        let n = 1 + usize::from(b.is_some());
        spec.goals.weight(Goal::PartCount) * n as f64
    }
}
