//! The parts source: a standard series or an inventory, and the realisations of a slot.
//!
//! A series offers every value in a range, in unlimited pieces at one tolerance; an inventory
//! offers its lines with their quantities, identical lines pooled into one ([`pool`]). Either
//! way a slot's candidates are realisations: one piece, or (with `combine`) two pieces in
//! series or in parallel.

pub mod dielectric;
pub mod edit;
pub mod inventory;
pub mod pool;
pub mod sha256;

use crate::build::{Arrangement, LineKey, Part, Piece};
use crate::series::Series;
use crate::vocab::Combine;
use crate::vocab::PartKind;
use inventory::{Inventory, Line};
use pool::Pools;
use std::collections::HashMap;
use std::sync::Arc;

/// Where the parts of one kind come from.
#[derive(Debug, Clone)]
pub enum Source {
    /// Every value of an IEC 60063 series in the allowed range, in unlimited pieces.
    Series {
        /// The series (E3 … E192).
        series: Series,
        /// Tolerance of every piece, as a fraction (0.01 = 1 %).
        tolerance: f64,
    },
    /// An inventory: its lines, each with a quantity on hand.
    Inventory(Arc<Inventory>),
}

impl Source {
    /// Short description for reports: `"E24 at 1 %"` or `"inventory (12 lines)"`.
    pub fn describe(&self) -> String {
        match self {
            Source::Series { series, tolerance } => format!(
                "{} at {}",
                series.name(),
                crate::value::format(*tolerance, crate::value::Unit::Percent)
            ),
            Source::Inventory(inv) => format!("inventory ({} lines)", inv.lines.len()),
        }
    }
}

/// What a stock offers of its sources: the value range of each kind and how a slot may be
/// realised (the spec's `[stock]` limits).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    /// Lowest and highest resistor value allowed, Ω.
    pub resistor_range: (f64, f64),
    /// Lowest and highest capacitor value allowed, F.
    pub capacitor_range: (f64, f64),
    /// How a slot may be realised (one piece, or a series or parallel pair).
    pub combine: Combine,
}

/// The stock a search draws from.
#[derive(Debug, Clone)]
pub struct Stock {
    /// Where resistors come from.
    pub resistors: Source,
    /// Where capacitors come from.
    pub capacitors: Source,
    /// Lowest and highest resistor value allowed, Ω (pairs included).
    pub resistor_range: (f64, f64),
    /// Lowest and highest capacitor value allowed, F (pairs included).
    pub capacitor_range: (f64, f64),
    /// How a slot may be realised (one piece, or a series or parallel pair).
    pub combine: Combine,
    /// The pools of identical lines of each kind's inventory ([`pool`]): resistors,
    /// capacitors; `None` for a series.
    pools: [Option<Arc<Pools>>; 2],
}

fn piece_of(line: &Line) -> Piece {
    Piece {
        value: line.value,
        tolerance: line.tolerance,
        line: Some(line.row),
        voltage: line.voltage,
        power: line.power,
        polarized: line.polarized,
        dielectric: line.dielectric.clone(),
        unit_cost: line.unit_cost,
    }
}

impl Stock {
    /// A stock from one source per kind and the spec's limits; pools each inventory's
    /// identical lines (once when both kinds come from one inventory).
    pub fn new(resistors: Source, capacitors: Source, spec: Limits) -> Stock {
        let pools_of = |s: &Source| match s {
            Source::Inventory(inv) => Some(Arc::new(Pools::new(inv))),
            Source::Series { .. } => None,
        };
        let r = pools_of(&resistors);
        let c = match (&resistors, &capacitors) {
            (Source::Inventory(a), Source::Inventory(b)) if Arc::ptr_eq(a, b) => r.clone(),
            _ => pools_of(&capacitors),
        };
        Stock {
            resistors,
            capacitors,
            resistor_range: spec.resistor_range,
            capacitor_range: spec.capacitor_range,
            combine: spec.combine,
            pools: [r, c],
        }
    }

    /// The pools of identical lines of this kind's inventory; `None` for a series.
    pub fn pools(&self, kind: PartKind) -> Option<&Pools> {
        self.pools[usize::from(kind == PartKind::Capacitor)].as_deref()
    }

    /// Where the parts of this kind come from.
    pub fn source(&self, kind: PartKind) -> &Source {
        match kind {
            PartKind::Resistor => &self.resistors,
            PartKind::Capacitor => &self.capacitors,
        }
    }

    /// Lowest and highest value allowed for this kind, in Ω or F.
    pub fn range(&self, kind: PartKind) -> (f64, f64) {
        match kind {
            PartKind::Resistor => self.resistor_range,
            PartKind::Capacitor => self.capacitor_range,
        }
    }

    /// Pieces on hand of a line — for an inventory row, of the pool it belongs to; `None`
    /// means unlimited (a series value).
    pub fn quantity(&self, key: LineKey) -> Option<u32> {
        match key {
            LineKey::Row(kind, row) => Some(self.pools(kind).map_or(0, |p| p.total(row))),
            LineKey::Value(..) => None,
        }
    }

    /// Single pieces of one kind within the range, ascending by value: one per pool of
    /// identical inventory lines, carrying the pool's representative row ([`pool`]). Lines
    /// with nothing on hand are left out.
    pub fn pieces(&self, kind: PartKind) -> Vec<Piece> {
        let (lo, hi) = self.range(kind);
        let eps = 1e-9;
        let mut pieces: Vec<Piece> = match self.source(kind) {
            Source::Series { series, tolerance } => series
                .values_in(lo, hi)
                .into_iter()
                .map(|v| Piece::plain(v, *tolerance))
                .collect(),
            Source::Inventory(inv) => {
                let pools = self.pools(kind);
                let offered = |l: &Line| {
                    pools.map_or(l.qty > 0, |p| {
                        p.representative(l.row) == l.row && p.total(l.row) > 0
                    })
                };
                inv.lines
                    .iter()
                    .filter(|l| l.kind == kind && offered(l))
                    .filter(|l| l.value >= lo * (1.0 - eps) && l.value <= hi * (1.0 + eps))
                    .map(piece_of)
                    .collect()
            }
        };
        pieces.sort_by(|a, b| a.value.total_cmp(&b.value));
        pieces
    }

    /// Every realisation of a slot of this kind the `combine` setting allows, ascending by value.
    /// A pair of pieces from one inventory line needs two on hand.
    pub fn candidates(&self, kind: PartKind) -> Vec<Part> {
        let pieces = self.pieces(kind);
        let mut parts: Vec<Part> = pieces
            .iter()
            .map(|p| Part::single(kind, p.clone()))
            .collect();
        let arrangements: &[Arrangement] = match self.combine {
            Combine::Single => &[],
            Combine::Series => &[Arrangement::Series],
            Combine::Parallel => &[Arrangement::Parallel],
            Combine::Both => &[Arrangement::Series, Arrangement::Parallel],
        };
        let (lo, hi) = self.range(kind);
        for &arrangement in arrangements {
            for (i, a) in pieces.iter().enumerate() {
                for b in &pieces[i..] {
                    if a.line.is_some() && a.line == b.line {
                        let on_hand = self.quantity(LineKey::of(kind, a)).unwrap_or(u32::MAX);
                        if on_hand < 2 {
                            continue;
                        }
                    }
                    let part = Part::pair(kind, arrangement, a.clone(), b.clone());
                    // The combination is a slot value like any other: keep it inside the range.
                    if part.value >= lo * (1.0 - 1e-9) && part.value <= hi * (1.0 + 1e-9) {
                        parts.push(part);
                    }
                }
            }
        }
        parts.sort_by(|a, b| a.value.total_cmp(&b.value));
        parts
    }

    /// The tolerance a lock gets when it gives none: the series tolerance, or for an inventory
    /// the widest tolerance of that kind in it (the cautious choice).
    pub fn default_tolerance(&self, kind: PartKind) -> f64 {
        match self.source(kind) {
            Source::Series { tolerance, .. } => *tolerance,
            Source::Inventory(inv) => inv
                .lines
                .iter()
                .filter(|l| l.kind == kind)
                .map(|l| l.tolerance)
                .fold(0.0, f64::max),
        }
    }

    /// The inventory piece of a given value (and tolerance, when given), so that a part named
    /// by value carries its line's ratings; among several lines the widest tolerance is taken
    /// (the cautious choice). The piece carries its pool's representative row, as the
    /// search's pieces do. `None` for a series or when no line matches.
    pub fn find_piece(&self, kind: PartKind, value: f64, tolerance: Option<f64>) -> Option<Piece> {
        let Source::Inventory(inv) = self.source(kind) else {
            return None;
        };
        let line = inv
            .lines
            .iter()
            .filter(|l| l.kind == kind && (l.value - value).abs() <= 1e-9 * value.abs())
            .filter(|l| tolerance.is_none_or(|t| (l.tolerance - t).abs() <= 1e-12))
            .max_by(|a, b| a.tolerance.total_cmp(&b.tolerance).then(b.row.cmp(&a.row)))?;
        let rep = self
            .pools(kind)
            .map_or(line.row, |p| p.representative(line.row));
        inv.lines.get(rep - 1).map(piece_of)
    }

    /// True when the pieces of all parts together fit the quantities on hand.
    pub fn fits(&self, parts: &[&Part]) -> bool {
        let mut used: HashMap<LineKey, u32> = HashMap::new();
        for part in parts.iter().filter(|p| !p.locked) {
            for piece in &part.pieces {
                let key = LineKey::of(part.kind, piece);
                if let Some(limit) = self.quantity(key) {
                    let n = used.entry(key).or_insert(0);
                    *n += 1;
                    if *n > limit {
                        return false;
                    }
                }
            }
        }
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stock_spec(combine: Combine) -> Limits {
        Limits {
            resistor_range: (1e3, 10e3),
            capacitor_range: (1e-9, 1e-3),
            combine,
        }
    }

    fn e12() -> Source {
        Source::Series {
            series: Series::E12,
            tolerance: 0.01,
        }
    }

    #[test]
    fn series_candidates_cover_the_range() {
        let stock = Stock::new(e12(), e12(), stock_spec(Combine::Single));
        let c = stock.candidates(PartKind::Resistor);
        // IEC 60063 E12 over one decade inclusive of both ends: 12 + 1 values.
        assert_eq!(c.len(), 13);
        assert_eq!(c[0].value, 1e3);
        assert_eq!(c[12].value, 10e3);
    }

    #[test]
    fn pairs_stay_in_range_and_count() {
        let stock = Stock::new(e12(), e12(), stock_spec(Combine::Series));
        let c = stock.candidates(PartKind::Resistor);
        // Series pairs of 1k…10k that stay ≤ 10k: checked by brute force here.
        let vals = Series::E12.values_in(1e3, 10e3);
        let mut n = vals.len();
        for i in 0..vals.len() {
            for j in i..vals.len() {
                if vals[i] + vals[j] <= 10e3 * (1.0 + 1e-9) {
                    n += 1;
                }
            }
        }
        assert_eq!(c.len(), n);
        assert!(c.windows(2).all(|w| w[0].value <= w[1].value));
    }

    #[test]
    fn inventory_quantities_are_enforced() {
        let csv = "kind,value,tolerance,qty\nresistor,10k,1%,1\nresistor,4k7,1%,0\n";
        let inv = Arc::new(Inventory::parse_str(csv).unwrap());
        let spec = stock_spec(Combine::Series);
        let stock = Stock::new(Source::Inventory(inv.clone()), e12(), spec);
        let c = stock.candidates(PartKind::Resistor);
        // 4k7 has none on hand; 10k + 10k needs two of a one-piece line.
        assert_eq!(c.len(), 1);
        let part = &c[0];
        assert!(stock.fits(&[part]));
        assert!(!stock.fits(&[part, part]));
    }

    #[test]
    fn identical_rows_are_one_pooled_candidate() {
        // Three rows of one 10 kΩ piece each (row 2 written another way, row 3 in another
        // drawer) are one line of three pieces: one single candidate and one series pair.
        let csv = "kind,value,tolerance,qty,location
resistor,10k,1%,1,A
                   r,10000,1%,1,B
r,4k7,1%,0,C
r,10k,1%,1,D
";
        let inv = Arc::new(Inventory::parse_str(csv).unwrap());
        let stock = Stock::new(
            Source::Inventory(inv.clone()),
            e12(),
            stock_spec(Combine::Series),
        );
        let c = stock.candidates(PartKind::Resistor);
        assert_eq!(c.len(), 1, "{c:?}");
        assert_eq!(c[0].pieces[0].line, Some(1));
        assert_eq!(stock.quantity(LineKey::Row(PartKind::Resistor, 4)), Some(3));
        let part = &c[0];
        assert!(stock.fits(&[part, part, part]));
        assert!(!stock.fits(&[part, part, part, part]));
        let found = stock.find_piece(PartKind::Resistor, 10e3, None).unwrap();
        assert_eq!(found.line, Some(1));
    }
}
