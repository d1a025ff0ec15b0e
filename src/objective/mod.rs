//! The ranking objective as a list of terms, one file per goal.
//!
//! Every term says where its points come from ([`Scope`]): each part (pieces, capacitance,
//! cost), the build's stock lines, or the circuit's figures (gain error, offset). A term gives
//! its exact points and, for circuit terms, a lower bound over intervals of the values still
//! open; the search's part points, the generic plan's bounds, the leaf check, the MILP
//! objective and the analysis's score all read [`TERMS`], so they cannot drift apart. The
//! linear models of the circuit terms for the MILP engine come with each circuit's hand-tuned
//! plan (`SearchPlan::log_model`), since they are written on the circuit's own equations.
//!
//! Adding a goal: a file here implementing [`Term`], its line in [`TERMS`], and its key in
//! `vocab::Goal` (DEVELOPERS.md, "Adding a goal").

pub mod capacitance;
pub mod cost;
pub mod divider_current;
pub mod gain;
pub mod lines;
pub mod noise;
pub mod offset;
pub mod part_count;
pub mod term;

pub use term::{Figures, NetworkFigure, Networks, Scope, Term};

use crate::build::Piece;
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::{Goal, PartKind};

/// The objective: every term, in the order their points are summed.
pub const TERMS: &[&dyn Term] = &[
    &gain::GainError,
    &offset::Offset,
    &part_count::PartCount,
    &lines::BomLines,
    &capacitance::Capacitance,
    &cost::Cost,
    &noise::Noise,
    &divider_current::DividerCurrent,
];

fn of_scope(scope: Scope) -> impl Iterator<Item = &'static dyn Term> {
    TERMS.iter().copied().filter(move |t| t.scope() == scope)
}

/// The points of one part, summed over the part terms (the search scores every realisation
/// with this one function, so its figures agree with the score to the last bit).
pub fn part_points(spec: &Spec, kind: PartKind, a: &Piece, b: Option<&Piece>, locked: bool) -> f64 {
    of_scope(Scope::Part).fold(0.0, |acc, t| acc + t.part_points(spec, kind, a, b, locked))
}

/// The points of `lines` distinct stock lines.
pub fn line_points(spec: &Spec, lines: usize) -> f64 {
    of_scope(Scope::Line).fold(0.0, |acc, t| acc + t.line_points(spec, lines))
}

/// The points one more stock line adds (the line terms are linear in the count).
pub fn line_weight(spec: &Spec) -> f64 {
    line_points(spec, 1)
}

/// The exact points of the circuit terms.
pub fn circuit_points(spec: &Spec, figures: &Figures<f64>) -> f64 {
    of_scope(Scope::Circuit).fold(0.0, |acc, t| acc + t.circuit_points(spec, figures))
}

/// A lower bound of the circuit terms over intervals of figures.
pub fn circuit_bound(spec: &Spec, figures: &Figures<Iv>) -> f64 {
    of_scope(Scope::Circuit).fold(0.0, |acc, t| acc + t.circuit_bound(spec, figures))
}

/// Whether a term of this goal has any weight (a zero-weight term adds nothing anywhere).
pub fn weighs(spec: &Spec, goal: Goal) -> bool {
    spec.goals.weight(goal) != 0.0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_goal_has_exactly_one_term() {
        for goal in Goal::ALL {
            assert_eq!(
                TERMS.iter().filter(|t| t.goal() == goal).count(),
                1,
                "{goal:?}"
            );
        }
        assert_eq!(TERMS.len(), Goal::ALL.len());
    }
}
