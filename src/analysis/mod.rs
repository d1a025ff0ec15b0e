//! Exact analysis of one build: the figures, the worst case, the checks (`evaluate`), the
//! frequency response and its corners (`response`), noise, the DC budget by cause, and the
//! Monte Carlo yield on the same checks.
//!
//! This file only declares and re-exports; the files depend on each other one way
//! (check, response → noise, budget, rating, amplifier, ripple → yield_mc → evaluate).

pub mod amplifier;
pub mod budget;
pub mod check;
pub mod evaluate;
pub mod noise;
pub mod rating;
pub mod response;
pub mod ripple;
#[cfg(test)]
mod textbook_checks;
pub mod yield_mc;

pub use check::{Bound, Check, CAP_DERATING, RESISTOR_DERATING};
pub use evaluate::*;
