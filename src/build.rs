//! A build: the part chosen for each slot of a stage, down to the physical pieces.
//!
//! A slot is realised by one piece, or two pieces in series or in parallel. A realisation knows
//! its nominal value and the exact extremes its pieces' tolerances allow, so that the worst-case
//! analysis can put every part "at the end of its tolerance that hurts".

use crate::value::{self, Unit};
use crate::vocab::PartKind;
use serde::Serialize;

/// One physical component: a value with its tolerance, and where it comes from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Piece {
    /// SI base units (Ω or F).
    pub value: f64,
    /// Symmetric tolerance as a fraction (0.01 = 1 %).
    pub tolerance: f64,
    /// 1-based data row of the inventory CSV, or `None` for a series value or a locked part.
    pub line: Option<usize>,
    /// Capacitor voltage rating, where the inventory gives one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub voltage: Option<f64>,
    /// Resistor power rating, where the inventory gives one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub power: Option<f64>,
    /// Polarised capacitor (an electrolytic or tantalum): must see a positive DC voltage.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub polarized: bool,
    /// Capacitor dielectric as the inventory writes it (`C0G`, `X7R`, …), where given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dielectric: Option<String>,
    /// Price of one piece in the inventory's currency, where given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit_cost: Option<f64>,
}

impl Piece {
    /// A plain piece with nothing known but value and tolerance (a series value or a lock).
    pub fn plain(value: f64, tolerance: f64) -> Piece {
        Piece {
            value,
            tolerance,
            line: None,
            voltage: None,
            power: None,
            polarized: false,
            dielectric: None,
            unit_cost: None,
        }
    }

    /// Lowest value inside the tolerance: value · (1 − tolerance).
    pub fn min(&self) -> f64 {
        self.value * (1.0 - self.tolerance)
    }

    /// Highest value inside the tolerance: value · (1 + tolerance).
    pub fn max(&self) -> f64 {
        self.value * (1.0 + self.tolerance)
    }
}

/// How the pieces of a slot are connected.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Arrangement {
    /// One piece.
    Single,
    /// Two pieces in series.
    Series,
    /// Two pieces in parallel.
    Parallel,
}

/// The realisation of one slot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Part {
    /// Resistor or capacitor.
    #[serde(skip)]
    pub kind: PartKind,
    /// How the pieces are connected.
    pub arrangement: Arrangement,
    /// Nominal value in SI base units.
    pub value: f64,
    /// Lowest and highest value the pieces' tolerances allow.
    #[serde(skip)]
    pub min: f64,
    /// Highest value the pieces' tolerances allow (see `min`).
    #[serde(skip)]
    pub max: f64,
    /// The physical pieces: one, or two for a series or parallel pair.
    pub pieces: Vec<Piece>,
    /// Fixed by the user (`--lock`, `[lock]`, `--set`): already on the board, not taken from stock.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub locked: bool,
}

/// Voltage a realisation can stand. Parallel pieces each see the full voltage; series
/// capacitors share it inversely to their capacitance (C1·V1 = C2·V2), so each piece's rating
/// limits the total to rating_i · (C1 + C2) / C_other. `None` when a piece has no rating.
pub fn voltage_rating(
    kind: PartKind,
    arrangement: Arrangement,
    a: &Piece,
    b: Option<&Piece>,
) -> Option<f64> {
    let ra = a.voltage?;
    let Some(b) = b else {
        return Some(ra);
    };
    let rb = b.voltage?;
    match (arrangement, kind) {
        (Arrangement::Series, PartKind::Capacitor) => {
            let total = a.value + b.value;
            Some((ra * total / b.value).min(rb * total / a.value))
        }
        _ => Some(ra.min(rb)),
    }
}

/// What the stage's equations see of a part: nominal value, the extremes its tolerances allow,
/// and (capacitors) the voltage it can stand. Small and `Copy`, so the search can hand the
/// stage its candidates without building a [`Part`] for each.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SlotValue {
    /// Nominal value in SI base units (Ω or F).
    pub value: f64,
    /// Lowest value the tolerances allow.
    pub min: f64,
    /// Highest value the tolerances allow.
    pub max: f64,
    /// Capacitor voltage rating, `None` when unknown (or a resistor).
    pub rating: Option<f64>,
}

impl SlotValue {
    /// The value at one end of the tolerance band.
    pub fn at(&self, high: bool) -> f64 {
        if high {
            self.max
        } else {
            self.min
        }
    }
}

/// Series and parallel combination of two values of one kind. Resistors add in series;
/// capacitors add in parallel (circuit theory, common practice).
pub fn combine(kind: PartKind, arrangement: Arrangement, a: f64, b: f64) -> f64 {
    let sum = matches!(
        (kind, arrangement),
        (PartKind::Resistor, Arrangement::Series) | (PartKind::Capacitor, Arrangement::Parallel)
    );
    if sum {
        a + b
    } else {
        a * b / (a + b)
    }
}

impl Part {
    /// One piece alone; extremes from its tolerance.
    pub fn single(kind: PartKind, piece: Piece) -> Part {
        Part {
            kind,
            arrangement: Arrangement::Single,
            value: piece.value,
            min: piece.min(),
            max: piece.max(),
            pieces: vec![piece],
            locked: false,
        }
    }

    /// Two pieces in series or parallel. Both combinations are increasing in each piece, so the
    /// extremes come from both pieces at the same end of their tolerance.
    pub fn pair(kind: PartKind, arrangement: Arrangement, a: Piece, b: Piece) -> Part {
        let value = combine(kind, arrangement, a.value, b.value);
        let min = combine(kind, arrangement, a.min(), b.min());
        let max = combine(kind, arrangement, a.max(), b.max());
        Part {
            kind,
            arrangement,
            value,
            min,
            max,
            pieces: vec![a, b],
            locked: false,
        }
    }

    /// A value fixed by the user; not from stock.
    pub fn locked(kind: PartKind, value: f64, tolerance: f64) -> Part {
        let mut part = Part::single(kind, Piece::plain(value, tolerance));
        part.locked = true;
        part
    }

    /// The unit of its values: Ω or F.
    pub fn unit(&self) -> Unit {
        match self.kind {
            PartKind::Resistor => Unit::Ohm,
            PartKind::Capacitor => Unit::Farad,
        }
    }

    /// The value at one end of the tolerance band.
    pub fn at(&self, high: bool) -> f64 {
        if high {
            self.max
        } else {
            self.min
        }
    }

    /// Worst relative deviation from nominal (for display).
    pub fn tolerance(&self) -> f64 {
        ((self.max - self.value) / self.value).max((self.value - self.min) / self.value)
    }

    /// Number of physical pieces (1 or 2).
    pub fn piece_count(&self) -> usize {
        self.pieces.len()
    }

    /// Cost of the pieces; `None` when any piece has no known cost. Locked parts are on the
    /// board already and cost nothing.
    pub fn cost(&self) -> Option<f64> {
        if self.locked {
            return Some(0.0);
        }
        self.pieces.iter().map(|p| p.unit_cost).sum()
    }

    /// True when any piece is polarised.
    pub fn polarized(&self) -> bool {
        self.pieces.iter().any(|p| p.polarized)
    }

    /// Voltage the realisation can stand (see [`voltage_rating`]).
    pub fn voltage_rating(&self) -> Option<f64> {
        voltage_rating(
            self.kind,
            self.arrangement,
            &self.pieces[0],
            self.pieces.get(1),
        )
    }

    /// What the stage's equations see of this part.
    pub fn slot_value(&self) -> SlotValue {
        SlotValue {
            value: self.value,
            min: self.min,
            max: self.max,
            rating: if self.kind == PartKind::Capacitor {
                self.voltage_rating()
            } else {
                None
            },
        }
    }

    /// Human label: `47 kΩ`, `10 kΩ + 2.2 kΩ`, `100 kΩ ∥ 220 kΩ`.
    pub fn label(&self) -> String {
        let unit = self.unit();
        let names: Vec<String> = self
            .pieces
            .iter()
            .map(|p| value::format(p.value, unit))
            .collect();
        match self.arrangement {
            Arrangement::Single => names.join(""),
            Arrangement::Series => names.join(" + "),
            Arrangement::Parallel => names.join(" ∥ "),
        }
    }
}

/// The parts of one build, in the stage's slot order.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Build {
    /// One part per slot, in the stage's slot order.
    pub parts: Vec<Part>,
}

impl Build {
    /// Nominal value of each part, in slot order (SI base units).
    pub fn values(&self) -> Vec<f64> {
        self.parts.iter().map(|p| p.value).collect()
    }

    /// Number of physical pieces over all parts.
    pub fn piece_count(&self) -> usize {
        self.parts.iter().map(Part::piece_count).sum()
    }

    /// Distinct lines to stock: inventory rows, or distinct (kind, value, tolerance) where the
    /// piece comes from a series or a lock.
    pub fn bom_lines(&self) -> usize {
        let mut keys: Vec<LineKey> = self
            .parts
            .iter()
            .flat_map(|part| part.pieces.iter().map(move |p| LineKey::of(part.kind, p)))
            .collect();
        keys.sort_unstable();
        keys.dedup();
        keys.len()
    }

    /// Cost of every piece (locked parts count 0); `None` when any piece's cost is unknown.
    pub fn cost(&self) -> Option<f64> {
        self.parts.iter().map(Part::cost).sum()
    }
}

/// Identity of a stock line, for counting distinct lines and quantities.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum LineKey {
    /// An inventory line: kind and row (as in [`Piece::line`]).
    Row(PartKind, usize),
    /// A series value or lock: value in steps of 1 µΩ (resistors) or 1 aF
    /// (capacitors) and tolerance in ppm.
    Value(PartKind, i64, i64),
}

impl LineKey {
    /// The stock line a piece is taken from.
    pub fn of(kind: PartKind, piece: &Piece) -> LineKey {
        match piece.line {
            Some(row) => LineKey::Row(kind, row),
            None => LineKey::Value(
                kind,
                (piece.value / quantum(kind)).round() as i64,
                (piece.tolerance * 1e6).round() as i64,
            ),
        }
    }
}

/// Fixed-point step of a value key: 1 µΩ up to 9 TΩ, 1 aF up to 9 F, exact for every
/// IEC 60063 decimal in those ranges and inside i64.
fn quantum(kind: PartKind) -> f64 {
    match kind {
        PartKind::Resistor => 1e-6,
        PartKind::Capacitor => 1e-18,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn series_and_parallel_values() {
        // Circuit theory, common practice: R in series add, C in parallel add.
        let r = |v| Piece::plain(v, 0.01);
        let s = Part::pair(PartKind::Resistor, Arrangement::Series, r(10e3), r(2.2e3));
        assert_relative_eq!(s.value, 12.2e3);
        assert_relative_eq!(s.min, 12.2e3 * 0.99);
        let p = Part::pair(PartKind::Resistor, Arrangement::Parallel, r(10e3), r(10e3));
        assert_relative_eq!(p.value, 5e3);
        assert_relative_eq!(p.max, 5e3 * 1.01);
        let c = |v| Piece::plain(v, 0.1);
        let cs = Part::pair(PartKind::Capacitor, Arrangement::Series, c(1e-6), c(1e-6));
        assert_relative_eq!(cs.value, 0.5e-6);
        let cp = Part::pair(
            PartKind::Capacitor,
            Arrangement::Parallel,
            c(1e-6),
            c(2.2e-6),
        );
        assert_relative_eq!(cp.value, 3.2e-6);
    }

    #[test]
    fn series_capacitor_rating_shares_voltage() {
        // Two equal capacitors in series split the voltage equally (Q = CV), common practice.
        let mut a = Piece::plain(10e-6, 0.2);
        a.voltage = Some(16.0);
        let b = a.clone();
        let part = Part::pair(PartKind::Capacitor, Arrangement::Series, a, b);
        assert_relative_eq!(part.voltage_rating().unwrap(), 32.0);
    }

    #[test]
    fn large_capacitors_are_distinct_lines() {
        // 10 µF and 22 µF are two values to stock, not one (regression: the key overflowed).
        let c = |v| Part::single(PartKind::Capacitor, Piece::plain(v, 0.2));
        let build = Build {
            parts: vec![c(10e-6), c(22e-6), c(10e-6), c(1e-3)],
        };
        assert_eq!(build.bom_lines(), 3);
    }

    #[test]
    fn line_counting() {
        let r = |v| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let build = Build {
            parts: vec![r(10e3), r(10e3), r(4.7e3)],
        };
        assert_eq!(build.bom_lines(), 2);
        assert_eq!(build.piece_count(), 3);
    }
}
