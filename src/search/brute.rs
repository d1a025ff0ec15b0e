//! Brute force: every combination of every slot's candidates, each judged by the exact
//! analysis. The truth the fast search is tested against, on small stocks only.

use super::{slot_candidates, Outcome, Ranked, Request, SearchError, Stats, TopN};
use crate::analysis;
use crate::build::Build;

/// All builds, best `top` kept. Exponential in the slot count: for tests and benchmarks.
pub fn brute_force(req: &Request) -> Result<Outcome, SearchError> {
    let cands = slot_candidates(req)?;
    let mut top = TopN::new(req.top);
    let mut idx = vec![0usize; cands.len()];
    let mut evaluated = 0;
    'all: loop {
        let build = Build {
            parts: idx.iter().zip(&cands).map(|(&i, c)| c[i].clone()).collect(),
        };
        let evaluation = analysis::evaluate(req.spec, req.stage, &build, Some(req.stock));
        evaluated += 1;
        if evaluation.pass {
            top.offer(Ranked { build, evaluation });
        }
        for k in 0..idx.len() {
            idx[k] += 1;
            if idx[k] < cands[k].len() {
                continue 'all;
            }
            idx[k] = 0;
        }
        break;
    }
    Ok(Outcome {
        builds: top.into_vec(),
        stats: Stats {
            candidates: cands.iter().map(|c| c.len()).collect(),
            nodes: evaluated,
            nodes_by_group: Vec::new(),
            truncated: false,
            evaluated,
        },
    })
}
