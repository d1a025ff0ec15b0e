//! What a term of the objective is (`Term`, with its `Scope`) and the figures circuit terms
//! read (`Figures`, over plain values or intervals).

use crate::build::Piece;
use crate::interval::Iv;
use crate::spec::Spec;
use crate::vocab::{Goal, PartKind};

/// A circuit's coupling networks (a few; kept inline, no allocation per figure).
pub type Networks<T> = smallvec::SmallVec<[NetworkFigure<T>; 4]>;

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
    /// The slot of its capacitor.
    pub cap_slot: usize,
    /// For a shelving network that is not plain (a gain leg: gain NG at mid-band, 1 at DC),
    /// its mid-band-to-DC gain ratio NG: its loss is 10·log10(NG²(1 + x²)/(NG² + x²)),
    /// x = 1/(2πfRC). `None` otherwise.
    pub shelf: Option<T>,
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
    /// How far the op-amp's errors can move the output DC either way at worst case (0 in
    /// nominal mode): the output's DC range at every tolerance corner spans `dc_out ± dc_error`.
    pub dc_error: T,
    /// The current a bias network draws from the supply, where the circuit has one.
    pub bias_current: Option<T>,
    /// The coupling networks, in the order of `Circuit::networks`.
    pub networks: Networks<T>,
    /// |A_cm/A_d|, the inverse of the common-mode rejection at DC, for a stage with two
    /// inputs (`cmrr_min` reads it); `None` for one input.
    pub cm_ratio: Option<T>,
    /// For a two-input stage, the gain its common-mode rejection ties `gain` to: A₁, the
    /// inverting leg's gain, with A_d = A₁ + A_cm/2 (`circuit::difference`). The generic plan
    /// narrows the gain of every build that meets `cmrr_min` with it. `None` otherwise.
    pub matched_gain: Option<T>,
    /// Mid-band input-referred noise power density, V²/Hz: the resistors' thermal noise and
    /// the op-amp's e_n and i_n referred to the source EMF, capacitors shorted, ideal
    /// op-amp (what the `noise` goal counts, `objective::noise`).
    pub noise: T,
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
