//! Circuits: one file per circuit, each implementing the equations (`Circuit`), the drawing
//! (`Drawing`) and optionally a hand-tuned search plan (`SearchPlan`); the registry maps a kind
//! to its circuit. The analysis, the search and the reports are generic over these traits; see
//! DEVELOPERS.md, "Adding a circuit".
//!
//! This file only declares, re-exports and registers: the files below depend on each other in
//! one direction (types → plan → common → plans → circuits), never on this one.

pub mod common;
pub mod difference;
pub mod inverting;
pub mod inverting_decoupled;
pub mod layout;
pub mod non_inverting;
pub mod non_inverting_decoupled;
pub mod plan;
pub(crate) mod plans;
pub mod split_supply;
pub mod traits;
pub mod types;

pub use plan::*;
pub use traits::{Circuit, Drawing, SearchPlan};
pub use types::*;

use crate::vocab::StageKind;

/// The circuit of a kind: the registry (one line per circuit).
pub fn circuit_for(kind: StageKind) -> &'static dyn Circuit {
    match kind {
        StageKind::Inverting => &inverting::Inverting,
        StageKind::NonInverting => &non_inverting::NonInverting,
        StageKind::InvertingDc => &split_supply::INVERTING,
        StageKind::InvertingDcCompensated => &split_supply::INVERTING_COMPENSATED,
        StageKind::NonInvertingDc => &split_supply::NON_INVERTING,
        StageKind::NonInvertingDcCompensated => &split_supply::NON_INVERTING_COMPENSATED,
        StageKind::Difference => &difference::Difference,
    }
}

/// The circuit a spec asks for: its stage with its bias network (`[stage] bias`).
pub fn circuit_of(spec: &crate::spec::Spec) -> &'static dyn Circuit {
    use crate::spec::BiasNetwork;
    match (spec.stage, spec.bias) {
        (StageKind::Inverting, BiasNetwork::Decoupled) => &inverting_decoupled::InvertingDecoupled,
        (StageKind::NonInverting, BiasNetwork::Decoupled) => {
            &non_inverting_decoupled::NonInvertingDecoupled
        }
        // The DC-coupled and difference stages have no bias network to decouple (the spec
        // refuses `bias = "decoupled"` there).
        (kind, _) => circuit_for(kind),
    }
}

/// Every circuit, for the tests that hold each to its drawing.
pub fn all() -> [&'static dyn Circuit; 9] {
    [
        &inverting::Inverting,
        &non_inverting::NonInverting,
        &inverting_decoupled::InvertingDecoupled,
        &non_inverting_decoupled::NonInvertingDecoupled,
        &split_supply::INVERTING,
        &split_supply::INVERTING_COMPENSATED,
        &split_supply::NON_INVERTING,
        &split_supply::NON_INVERTING_COMPENSATED,
        &difference::Difference,
    ]
}

/// Index of a slot by name.
pub fn slot_index(stage: &dyn Circuit, name: &str) -> Option<usize> {
    stage.slots().iter().position(|s| s.name == name)
}
