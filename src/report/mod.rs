//! Reports: the terminal table, JSON, the SPICE netlist, the frequency-response plot, the
//! schematic, the BOM and the one-page HTML report. Each returns a string; the binary writes it.
//!
//! This file only declares and re-exports; what the reports share is in `common.rs`.

pub mod bom;
pub mod common;
pub mod designators;
pub mod html;
pub mod json;
pub mod plot;
pub mod sanitise;
pub mod schematic;
pub mod spice;
pub mod table;

pub use common::{escape, RenderError};
