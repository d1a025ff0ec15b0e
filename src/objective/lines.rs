//! The stock-line goal: points per distinct line (an inventory row, or a series value) the
//! build takes parts from — fewer reels and drawers to fetch (common practice).

use super::term::{Scope, Term};
use crate::spec::Spec;
use crate::vocab::Goal;

/// `bom_lines`: points per distinct stock line.
pub struct BomLines;

impl Term for BomLines {
    fn goal(&self) -> Goal {
        Goal::BomLines
    }
    fn scope(&self) -> Scope {
        Scope::Line
    }
    fn line_points(&self, spec: &Spec, lines: usize) -> f64 {
        spec.goals.weight(Goal::BomLines) * lines as f64
    }
}
