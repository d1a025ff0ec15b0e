//! The library's top-level error: every failure a caller can act on, each with its place.

use crate::spec::SpecErrors;
use crate::stock::inventory::InventoryError;
use thiserror::Error;

#[derive(Debug, Error)]
pub enum Error {
    #[error("{0}")]
    Spec(#[from] SpecErrors),
    #[error("{0}")]
    Inventory(#[from] InventoryError),
    /// A `--lock`, `--set` or `[lock]` entry that names no slot of the stage or has a bad value.
    #[error("{0}")]
    Slot(String),
    /// The stock offers nothing for a slot (empty range, all quantities zero …).
    #[error("{0}")]
    NoCandidates(String),
}
