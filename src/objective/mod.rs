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
pub mod gain;
pub mod lines;
pub mod offset;
pub mod part_count;

use crate::build::Piece;
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::{Goal, PartKind};

/// One coupling network as the generic plan sees it: the resistance and capacitance of its
/// corner 1/(2πRC), and whether it is a plain first-order high-pass buffered from the rest
/// (then its loss at a frequency and its corner bound the whole response's from below).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NetworkFigure<T> {
    /// The resistance the capacitor works against.
    pub resistance: T,
    /// The capacitance.
    pub capacitance: T,
    /// A plain buffered first-order high-pass (see above).
    pub plain: bool,
}

/// The scalar figures of a build that the objective's circuit terms and the generic search
/// plan's relaxed requirements read, over plain values (`f64`) or over intervals of values
/// (`Iv`, see [`crate::interval`]). A circuit computes both from one set of equations
/// written over [`crate::interval::Num`], so they agree to the last bit on plain values.
#[derive(Debug, Clone, PartialEq)]
pub struct Figures<T> {
    /// Mid-band (passband) gain from source EMF to load, signed, ideal op-amp.
    pub gain: T,
    /// Resistance the source sees at mid-band.
    pub input_resistance: T,
    /// The nominal output DC error the `offset` goal counts (≥ 0).
    pub offset: T,
    /// The output DC with the op-amp errors at their centre (`DcErrors::centre`, capacitors
    /// open): inside the range the worst case takes over the op-amp's error corners.
    pub dc_out: T,
    /// The current a bias network draws from the supply, where the circuit has one.
    pub bias_current: Option<T>,
    /// The coupling networks, in the order of `Circuit::networks`.
    pub networks: Vec<NetworkFigure<T>>,
}

/// Where a term's points come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    /// Each part on its own (its pieces).
    Part,
    /// The build's distinct stock lines.
    Line,
    /// The circuit's figures ([`Figures`]).
    Circuit,
}

/// One term of the objective (lower is better). Only the methods of its [`Scope`] are asked.
pub trait Term: Sync {
    /// Its goal: the `[goals]` key and weight.
    fn goal(&self) -> Goal;
    /// Where its points come from.
    fn scope(&self) -> Scope;
    /// [`Scope::Part`]: the points of one part made of piece `a` (and `b` for a pair).
    /// Locked parts are on the board already: they cost nothing but still count as pieces.
    fn part_points(
        &self,
        _spec: &Spec,
        _kind: PartKind,
        _a: &Piece,
        _b: Option<&Piece>,
        _locked: bool,
    ) -> f64 {
        0.0
    }
    /// [`Scope::Line`]: the points of a build with `lines` distinct stock lines.
    fn line_points(&self, _spec: &Spec, _lines: usize) -> f64 {
        0.0
    }
    /// [`Scope::Circuit`]: the exact points of a build's figures.
    fn circuit_points(&self, _spec: &Spec, _figures: &Figures<f64>) -> f64 {
        0.0
    }
    /// [`Scope::Circuit`]: a lower bound of [`Term::circuit_points`] over every build whose
    /// figures lie in the intervals.
    fn circuit_bound(&self, _spec: &Spec, _figures: &Figures<Iv>) -> f64 {
        0.0
    }
}

/// The objective: every term, in the order their points are summed.
pub const TERMS: &[&dyn Term] = &[
    &gain::GainError,
    &offset::Offset,
    &part_count::PartCount,
    &lines::BomLines,
    &capacitance::Capacitance,
    &cost::Cost,
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
