//! Brute force: every combination of every slot's candidates, each judged by the exact
//! analysis. The truth the fast search is tested against, on small stocks only.

use super::request::{slot_candidates, Outcome, Ranked, Request, SearchError, Stats, TopN};
use crate::analysis;
use crate::build::{Build, Part};
use std::convert::Infallible;
use std::sync::Arc;

/// All builds, best `top` kept. Exponential in the slot count: for tests and benchmarks.
pub fn brute_force(req: &Request) -> Result<Outcome, SearchError> {
    let cands = slot_candidates(req)?;
    let mut top = TopN::distinct_in(req.top, req.distinct);
    let mut evaluated = 0;
    let Ok(()) = each_build(&cands, |build| -> Result<(), Infallible> {
        let evaluation = analysis::evaluate(req.spec, req.stage, &build, Some(req.stock));
        evaluated += 1;
        if evaluation.pass {
            top.offer(Ranked { build, evaluation });
        }
        Ok(())
    });
    Ok(Outcome {
        builds: top.into_vec(),
        stats: Stats {
            candidates: cands.iter().map(|c| c.len()).collect(),
            nodes: evaluated,
            nodes_by_group: Vec::new(),
            nodes_by_level: Vec::new(),
            root_bound: 0.0,
            truncated: false,
            stopped: false,
            gain_max: None,
            quick_rejects: Default::default(),
            full_rejects: Default::default(),
            evaluated,
            joint_bounds: Default::default(),
            dc_screens: (0, 0),
        },
    })
}

/// Call `f` on every build of one candidate per slot (each slot's candidates in turn, the
/// first slot fastest), stopping at its first error.
pub fn each_build<E>(
    cands: &[Arc<Vec<Part>>],
    mut f: impl FnMut(Build) -> Result<(), E>,
) -> Result<(), E> {
    let mut idx = vec![0usize; cands.len()];
    'all: loop {
        f(Build {
            parts: idx.iter().zip(cands).map(|(&i, c)| c[i].clone()).collect(),
        })?;
        for k in 0..idx.len() {
            idx[k] += 1;
            if idx[k] < cands[k].len() {
                continue 'all;
            }
            idx[k] = 0;
        }
        return Ok(());
    }
}
