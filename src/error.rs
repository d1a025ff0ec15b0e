//! The library's error: the union of everything a caller can act on, each with its place —
//! the spec (key and line), an inventory (file line and column), a slot given on the command
//! line, the search (an empty slot, a stock too large), an output that cannot be drawn, and
//! an inventory edit that cannot be made.

use crate::report::RenderError;
use crate::search::SearchError;
use crate::spec::SpecErrors;
use crate::stock::edit::EditError;
use crate::stock::inventory::InventoryError;
use thiserror::Error;

/// Every failure of the library, by where it comes from.
#[derive(Debug, Error)]
pub enum Error {
    /// The spec: every problem with its key and line.
    #[error(transparent)]
    Spec(#[from] SpecErrors),
    /// An inventory CSV: every bad cell with its line and column.
    #[error(transparent)]
    Inventory(#[from] InventoryError),
    /// A `--lock` or `--set` entry that names no slot of the circuit or has a bad value.
    #[error(transparent)]
    Slot(#[from] SlotError),
    /// The search: a slot without candidates, a stock too large, the MILP solver.
    #[error(transparent)]
    Search(#[from] SearchError),
    /// An output (plot, BOM, HTML) that cannot be drawn.
    #[error(transparent)]
    Render(#[from] RenderError),
    /// An inventory edit (`take`) that cannot be made.
    #[error(transparent)]
    Edit(#[from] EditError),
}

/// Why a slot entry of the command line cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SlotError {
    /// The circuit has no slot of that name.
    #[error(
        "{flag} {slot}=…: the {circuit} stage has no slot `{slot}`; {hint}its slots are {slots}"
    )]
    Unknown {
        /// `--lock` or `--set`.
        flag: &'static str,
        /// The name given.
        slot: String,
        /// The circuit's kind name.
        circuit: &'static str,
        /// "did you mean `r_in`? " or nothing.
        hint: String,
        /// Every slot, comma-separated.
        slots: String,
    },
    /// The value does not parse as a part of the slot's kind.
    #[error("{flag} {slot}={text}: {why}")]
    Value {
        /// `--lock` or `--set`.
        flag: &'static str,
        /// The slot.
        slot: String,
        /// The value as written.
        text: String,
        /// What is wrong with it.
        why: String,
    },
    /// The same slot given twice on one command line.
    #[error("{flag} {slot}=… is given twice ({first} and {second}); give each slot once")]
    Twice {
        /// `--lock` or `--set`.
        flag: &'static str,
        /// The slot.
        slot: String,
        /// The first value.
        first: String,
        /// The second value.
        second: String,
    },
    /// `check` needs every slot.
    #[error("check needs every slot: add --set for {missing} (or use `pick --lock` to have the rest chosen)")]
    Missing {
        /// The slots without a value, comma-separated.
        missing: String,
    },
}
