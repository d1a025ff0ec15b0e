//! stockfit — pick buildable parts for single-supply op-amp gain stages, and prove them.
//!
//! Given a requirement (a [`Spec`]: the stage, its supply, gain, band, load, headroom, the
//! op-amp's datasheet figures) and a stock — a standard E-series (IEC 60063) or the user's own
//! inventory with the pieces on hand — stockfit picks the resistors and capacitors of every
//! slot of the stage and proves at worst case that the build meets every requirement. The
//! search is exact over the real stock: every value on hand (and, if allowed, every series or
//! parallel pair) is in reach and no shortcut drops one, so the builds it ranks first are the
//! best the stock allows by the spec's goals, not the nearest a rounding found. The analysis is
//! exact at worst case: every part at each end of its tolerance, the op-amp's bias current,
//! offset current and offset voltage at both signs.
//!
//! The main entry point is [`pick::pick`]: a parsed spec, the stock resolved from its sources
//! ([`pick::resolve_stock`]) and the locked slots ([`pick::resolve_locks`]) in; the ranked
//! builds with every figure (noise, DC budget, optionally Monte Carlo yield) out, or, when
//! nothing passes, a diagnosis of what blocks. [`report`] turns the result into a table, JSON,
//! a SPICE netlist, a plot, a schematic, a BOM or an HTML page. Reports carry the usual
//! cautions and defer to each part's datasheet, local codes and licensed practice.
//!
//! A 5 V microphone preamp from E12 resistors and E6 capacitors (an invented scenario):
//!
//! ```
//! use stockfit::pick::{self, Options};
//!
//! let spec = stockfit::Spec::from_toml(
//!     r#"
//!     [stage]
//!     kind = "non-inverting"
//!     supply = "5 V"
//!     gain = 11
//!     gain_tolerance = "5%"
//!     load = "22k"
//!     band = ["100 Hz", "8 kHz"]
//!     headroom = "0.5 V"
//!     [stock]
//!     resistors = "E12"
//!     capacitors = "E6"
//!     "#,
//! )
//! .unwrap();
//! // Both kinds come from a series, so no inventory file is asked for.
//! let stock = pick::resolve_stock(&spec, None, &mut |path| Err(format!("no file {path}")))
//!     .unwrap();
//! let circuit = stockfit::circuit::circuit_of(&spec);
//! let locks = pick::resolve_locks(&spec, circuit, &stock.stock, &[]).unwrap();
//! let picked = pick::pick(&spec, &stock.stock, &locks, &Options::default(), &mut |_| {}).unwrap();
//!
//! let best = &picked.builds[0];
//! assert!(best.evaluation.pass); // every requirement holds at worst case
//! let gain = best.evaluation.metrics.gain_min;
//! assert!(gain >= 11.0 * 0.95);
//! for (slot, part) in circuit.slots().iter().zip(&best.build.parts) {
//!     println!("{:>9} = {}", slot.name, part.label());
//! }
//! ```
//!
//! Data flows one way: spec + stock → candidates per slot → search → exact analysis → ranked
//! builds → reports. Nothing in this library does I/O: readers take `impl Read` or `&str`, and
//! reports return strings; the binary (`src/main.rs`, `src/cli/`) reads files and prints.
//!
//! The command line's crates (clap, indicatif, anyhow) sit behind the `cli` feature, on by
//! default; a library user depends on stockfit with `default-features = false` and compiles
//! none of them.

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
