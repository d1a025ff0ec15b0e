//! The exact search: the stock's candidates per slot → a depth-first branch and bound over
//! the plan's groups (`dfs.rs`, with the circuit's hand-tuned plan or the generic one) or a
//! MILP (`milp.rs`) → the top N builds, each re-checked by the exact analysis; the diagnosis
//! when none passes; brute force, the reference the tests hold both engines to.
//!
//! This file only declares, re-exports and dispatches to the engines; the files depend on
//! each other one way (request, table → walk → generic → dfs → brute, milp → diagnose).

pub mod brute;
mod dfs;
pub mod diagnose;
pub mod generic;
pub mod milp;
pub mod request;
pub mod table;
pub mod walk;

pub use dfs::{search, with_tables_kept};
pub use request::*;

/// Run the exact search with the chosen engine.
pub fn run(
    req: &Request,
    engine: Engine,
    progress: &mut dyn FnMut(Progress),
) -> Result<Outcome, SearchError> {
    match engine {
        Engine::Walk => search(req, progress),
        Engine::Milp => milp::search(req, progress),
    }
}
