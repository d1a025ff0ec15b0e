//! Reference designators (R1…, C1…, U1) of a build's pieces: one numbering for the SPICE
//! netlist, the schematic, the BOM and the HTML report, so that they all name a piece alike.
//!
//! Pieces are numbered per letter in the order of `Drawing::spice_elements` (every slot once, in
//! slot order), piece by piece within a slot: the usual practice of numbering by kind
//! (common practice; IEEE 315 / IEC 81346 letter codes R and C, from memory).

use crate::build::Build;
use crate::circuit::Circuit;
use crate::vocab::PartKind;

/// The op-amp's designator.
pub const OPAMP: &str = "U1";

/// The designators of `build`'s pieces, indexed `[slot][piece]`.
pub fn designators(stage: &dyn Circuit, build: &Build) -> Vec<Vec<String>> {
    let mut out: Vec<Vec<String>> = vec![Vec::new(); build.parts.len()];
    let (mut n_r, mut n_c) = (0usize, 0usize);
    for e in stage.drawing().spice_elements() {
        let Some(part) = build.parts.get(e.slot) else {
            continue;
        };
        out[e.slot] = part
            .pieces
            .iter()
            .map(|_| match part.kind {
                PartKind::Resistor => {
                    n_r += 1;
                    format!("R{n_r}")
                }
                PartKind::Capacitor => {
                    n_c += 1;
                    format!("C{n_c}")
                }
            })
            .collect();
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::build::{Arrangement, Part, Piece};
    use crate::circuit::{circuit_for, inverting};
    use crate::vocab::StageKind;

    #[test]
    fn numbered_by_kind_in_slot_order() {
        let stage = circuit_for(StageKind::Inverting);
        let r = |v| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let c = |v| Part::single(PartKind::Capacitor, Piece::plain(v, 0.1));
        let mut parts = vec![r(10e3), r(47e3), r(100e3), r(100e3), c(1e-6), c(1e-6)];
        parts[inverting::R_FB] = Part::pair(
            PartKind::Resistor,
            Arrangement::Series,
            Piece::plain(39e3, 0.01),
            Piece::plain(8.2e3, 0.01),
        );
        let d = designators(stage, &Build { parts });
        assert_eq!(
            d,
            vec![
                vec!["R1"],
                vec!["R2", "R3"],
                vec!["R4"],
                vec!["R5"],
                vec!["C1"],
                vec!["C2"]
            ]
        );
    }
}
