//! stockfit — pick buildable parts for single-supply op-amp gain stages.
//!
//! Data flows one way: spec + stock → candidates per slot → search → exact analysis → ranked
//! builds → reports. Nothing in this library does I/O: readers take `impl Read` or `&str`, and
//! reports return strings; the binary (`src/main.rs`, `src/cli/`) reads files and prints.

#![warn(missing_docs)]

pub mod analysis;
pub mod build;
pub mod circuit;
pub mod error;
pub mod interval;
pub mod objective;
pub mod pick;
pub mod report;
pub mod search;
pub mod series;
pub mod spec;
pub mod stock;
pub mod value;
pub mod vocab;

pub use build::{Build, Part, Piece};
pub use error::Error;
pub use spec::Spec;
