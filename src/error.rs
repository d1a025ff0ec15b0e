//! The library's error: the union of everything a caller can act on, each with its place —
//! the spec (key and line), an inventory (file line and column), a slot given on the command
//! line, the search (an empty slot, a stock too large), an output that cannot be drawn, and
//! an inventory edit that cannot be made.

use crate::pick::SlotError;
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
    #[error("{0}")]
    Spec(#[from] SpecErrors),
    /// An inventory CSV: every bad cell with its line and column.
    #[error("{0}")]
    Inventory(#[from] InventoryError),
    /// A `--lock` or `--set` entry that names no slot of the circuit or has a bad value.
    #[error("{0}")]
    Slot(#[from] SlotError),
    /// The search: a slot without candidates, a stock too large, the MILP solver.
    #[error("{0}")]
    Search(#[from] SearchError),
    /// An output (plot, BOM, HTML) that cannot be drawn.
    #[error("{0}")]
    Render(#[from] RenderError),
    /// An inventory edit (`take`) that cannot be made.
    #[error("{0}")]
    Edit(#[from] EditError),
}
