//! Identical inventory lines pooled: rows that offer the same piece — same kind, value,
//! tolerance, ratings, polarity, dielectric and unit cost, everything the search and the
//! analysis read of a line — are one line to the search with their quantities added, and
//! pieces taken from a pool come off its rows in file order.
//!
//! Why: a stock list often holds one value on several rows (two reels, a bag not yet sorted,
//! the same part bought twice). As separate lines each row is another candidate, and every
//! combination of them another build that differs only in where the pieces come from; an
//! inventory with each value on many rows multiplied the search (10,000 such lines: 21 M
//! nodes, 6.8 s) for no better build. As a pool the search sees each distinct piece once, and
//! the row a piece physically comes from is decided when it is taken (`pick::takings`) or
//! listed (the BOM).

use super::inventory::{Inventory, Line};
use crate::vocab::PartKind;
use std::collections::HashMap;

/// What makes two lines the same piece: every field of a line but its row, its place in the
/// file, its quantity and the free text the analysis never reads (location, note). Floats
/// compare by their bits: the loader parses each cell exactly, so equal values are equal bits.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
struct Key {
    kind: PartKind,
    value: u64,
    tolerance: u64,
    voltage: Option<u64>,
    power: Option<u64>,
    polarized: bool,
    dielectric: Option<String>,
    unit_cost: Option<u64>,
}

impl Key {
    fn of(line: &Line) -> Key {
        Key {
            kind: line.kind,
            value: line.value.to_bits(),
            tolerance: line.tolerance.to_bits(),
            voltage: line.voltage.map(f64::to_bits),
            power: line.power.map(f64::to_bits),
            polarized: line.polarized,
            dielectric: line.dielectric.clone(),
            unit_cost: line.unit_cost.map(f64::to_bits),
        }
    }
}

/// The pools of one inventory. A pool is named by its representative row: its first row in
/// file order that has pieces on hand (its first row when none has), the row its pieces carry
/// to the search and the reports (`Piece::line`).
#[derive(Debug, Clone, Default)]
pub struct Pools {
    /// By data row − 1: the representative row of the row's pool.
    representative: Vec<usize>,
    /// By data row − 1: the pieces on hand in the row's pool, summed (saturating).
    total: Vec<u32>,
    /// By data row − 1: the row's own quantity.
    own: Vec<u32>,
    /// The rows of each pool of more than one row, in file order, by representative.
    rows: HashMap<usize, Vec<usize>>,
}

impl Pools {
    /// The pools of `inventory` (lines of both kinds; the kind is part of what must match).
    pub fn new(inventory: &Inventory) -> Pools {
        let n = inventory.lines.len();
        let mut first: HashMap<Key, usize> = HashMap::new();
        let mut members: Vec<Vec<usize>> = Vec::new();
        for line in &inventory.lines {
            let next = members.len();
            let g = *first.entry(Key::of(line)).or_insert(next);
            if g == next {
                members.push(Vec::new());
            }
            members[g].push(line.row);
        }
        let own: Vec<u32> = inventory.lines.iter().map(|l| l.qty).collect();
        let qty = |row: usize| own.get(row - 1).copied().unwrap_or(0);
        let mut representative = vec![0usize; n];
        let mut total = vec![0u32; n];
        let mut rows = HashMap::new();
        for group in members {
            let rep = group
                .iter()
                .copied()
                .find(|&r| qty(r) > 0)
                .unwrap_or(group[0]);
            let sum = group.iter().fold(0u32, |s, &r| s.saturating_add(qty(r)));
            for &r in &group {
                representative[r - 1] = rep;
                total[r - 1] = sum;
            }
            if group.len() > 1 {
                rows.insert(rep, group);
            }
        }
        Pools {
            representative,
            total,
            own,
            rows,
        }
    }

    /// The representative row of `row`'s pool (`row` itself for a line of its own); `row`
    /// when the inventory has no such row.
    pub fn representative(&self, row: usize) -> usize {
        self.representative
            .get(row.wrapping_sub(1))
            .copied()
            .unwrap_or(row)
    }

    /// Pieces on hand in `row`'s pool, 0 for a row the inventory does not have.
    pub fn total(&self, row: usize) -> u32 {
        self.total.get(row.wrapping_sub(1)).copied().unwrap_or(0)
    }

    /// The rows of `row`'s pool in file order.
    pub fn rows(&self, row: usize) -> Vec<usize> {
        let rep = self.representative(row);
        self.rows.get(&rep).cloned().unwrap_or_else(|| vec![rep])
    }

    /// Where `n` pieces of `row`'s pool come from: its rows in file order, each giving what it
    /// has, as `(row, pieces)` with pieces > 0. A shortfall (more asked than the pool holds)
    /// is put on the last row, so that the deduction refuses it with that row named.
    pub fn draw(&self, row: usize, n: u32) -> Vec<(usize, u32)> {
        let mut left = n;
        let mut out = Vec::new();
        let rows = self.rows(row);
        for &r in &rows {
            if left == 0 {
                break;
            }
            let take = left.min(self.own.get(r.wrapping_sub(1)).copied().unwrap_or(0));
            if take > 0 {
                out.push((r, take));
                left -= take;
            }
        }
        if left > 0 {
            let last = *rows.last().unwrap_or(&row);
            match out.last_mut() {
                Some((r, k)) if *r == last => *k += left,
                _ => out.push((last, left)),
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn identical_rows_pool_and_draw_in_file_order() {
        let inv = Inventory::parse_str(
            "kind,value,tolerance,qty,location\n\
             r,10k,1%,0,A\nr,10000,1%,2,B\nr,10k,5%,3,C\nc,10n,1%,4,D\nr,10k,1%,5,E\n",
        )
        .unwrap();
        let p = Pools::new(&inv);
        // Rows 1, 2 and 5 are one piece (10 kΩ 1 %, however written; location is free
        // text); row 3 differs in tolerance, row 4 in kind. Row 1 has none on hand, so the
        // pool is named by row 2.
        assert_eq!(p.rows(5), vec![1, 2, 5]);
        assert_eq!(
            (
                p.representative(1),
                p.representative(5),
                p.representative(3)
            ),
            (2, 2, 3)
        );
        assert_eq!((p.total(1), p.total(3), p.total(4)), (7, 3, 4));
        assert_eq!(p.draw(2, 1), vec![(2, 1)]);
        assert_eq!(p.draw(2, 4), vec![(2, 2), (5, 2)]);
        // More than the pool holds: the rest on the last row, for the edit to refuse.
        assert_eq!(p.draw(2, 9), vec![(2, 2), (5, 7)]);
        assert_eq!(p.draw(3, 1), vec![(3, 1)]);
        assert_eq!(p.total(99), 0);
    }
}
