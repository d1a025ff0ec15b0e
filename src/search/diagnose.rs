//! Why no build meets the spec: which requirement blocks, what the stock reaches for it, and
//! the smallest relaxation that lets a build exist.
//!
//! Each requirement is dropped in turn; when a build then exists, that requirement blocks, and
//! a bisection on its limit finds the tightest value the stock can still meet (feasibility is
//! monotone in each limit). The nearest build — the best one with every requirement dropped,
//! judged against the real spec — shows what else fails.

use super::{search, Ranked, Request, SearchError};
use crate::analysis;
use crate::spec::Spec;
use crate::value::{format_sig, Unit};

/// One requirement that blocks every build.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Blocker {
    /// Spec key, e.g. `stage.input_resistance_min`.
    pub key: String,
    pub limit: f64,
    /// The tightest limit the stock meets (with every other requirement kept).
    pub reachable: f64,
    #[serde(skip)]
    pub unit: Unit,
    pub message: String,
}

#[derive(Debug, Clone)]
pub struct Diagnosis {
    pub blockers: Vec<Blocker>,
    /// True when dropping any single requirement is not enough.
    pub several: bool,
    /// The best build with all requirements dropped, judged against the spec.
    pub nearest: Option<Ranked>,
}

/// How a requirement is dropped, tightened and loosened.
struct Knob {
    key: &'static str,
    unit: Unit,
    /// true: a larger limit is stricter (minimums); false: a smaller one is.
    larger_is_stricter: bool,
    get: fn(&Spec) -> Option<f64>,
    set: fn(&mut Spec, Option<f64>),
}

const KNOBS: &[Knob] = &[
    Knob {
        key: "stage.input_resistance_min",
        unit: Unit::Ohm,
        larger_is_stricter: true,
        get: |s| s.input_resistance_min,
        set: |s, v| s.input_resistance_min = v,
    },
    Knob {
        key: "stage.gain_tolerance",
        unit: Unit::Percent,
        larger_is_stricter: false,
        get: |s| s.gain_tolerance,
        set: |s, v| s.gain_tolerance = v,
    },
    Knob {
        key: "stage.corner_low_max",
        unit: Unit::Hertz,
        larger_is_stricter: false,
        get: |s| s.corner_low_max,
        set: |s, v| s.corner_low_max = v,
    },
    Knob {
        key: "stage.band_loss_max",
        unit: Unit::Decibel,
        larger_is_stricter: false,
        get: |s| s.band_loss_max,
        set: |s, v| s.band_loss_max = v,
    },
    Knob {
        key: "stage.input_peak",
        unit: Unit::Volt,
        larger_is_stricter: true,
        get: |s| s.input_peak,
        set: |s, v| s.input_peak = v,
    },
    Knob {
        key: "stage.output_peak",
        unit: Unit::Volt,
        larger_is_stricter: true,
        get: |s| s.output_peak,
        set: |s, v| s.output_peak = v,
    },
    Knob {
        key: "amplifier.slew_rate",
        unit: Unit::VoltPerSecond,
        larger_is_stricter: false,
        get: |s| s.amplifier.slew_rate,
        set: |s, v| s.amplifier.slew_rate = v,
    },
    Knob {
        key: "amplifier.gbw",
        unit: Unit::Hertz,
        larger_is_stricter: false,
        get: |s| s.amplifier.gbw,
        set: |s, v| s.amplifier.gbw = v,
    },
];

fn feasible(req: &Request, spec: &Spec) -> Result<bool, SearchError> {
    let r = Request {
        spec,
        top: 1,
        ..*req
    };
    Ok(!search(&r, &mut |_| {})?.builds.is_empty())
}

/// Explain an infeasible request. Runs a few dozen searches at most.
pub fn diagnose(req: &Request) -> Result<Diagnosis, SearchError> {
    let mut blockers = Vec::new();
    for knob in KNOBS {
        let Some(limit) = (knob.get)(req.spec) else {
            continue;
        };
        let mut relaxed = req.spec.clone();
        // GBW and slew rate are amplifier figures: "dropping" them means an ideal amplifier,
        // and loosening means a faster one. Requirements are dropped outright.
        (knob.set)(&mut relaxed, None);
        if !feasible(req, &relaxed)? {
            continue;
        }
        // Bisection in log value between the failing limit and a passing one.
        let (mut bad, mut good) = (limit, limit);
        let step = if knob.larger_is_stricter { 0.5 } else { 2.0 };
        let mut found = false;
        for _ in 0..40 {
            good *= step;
            (knob.set)(&mut relaxed, Some(good));
            if feasible(req, &relaxed)? {
                found = true;
                break;
            }
            bad = good;
        }
        if !found {
            continue;
        }
        for _ in 0..14 {
            let mid = (bad * good).sqrt();
            (knob.set)(&mut relaxed, Some(mid));
            if feasible(req, &relaxed)? {
                good = mid;
            } else {
                bad = mid;
            }
        }
        let what = if knob.key.starts_with("amplifier") {
            "an amplifier with at least"
        } else if knob.larger_is_stricter {
            "at most"
        } else {
            "at least"
        };
        blockers.push(Blocker {
            key: knob.key.to_string(),
            limit,
            reachable: good,
            unit: knob.unit,
            message: format!(
                "{} = {} cannot be met with this stock; a build exists with {} {}",
                knob.key,
                format_sig(limit, knob.unit, 3),
                what,
                format_sig(good, knob.unit, 3)
            ),
        });
    }
    // The nearest build: every requirement dropped, judged against the spec.
    let mut open = req.spec.clone();
    for knob in KNOBS.iter().filter(|k| !k.key.starts_with("amplifier")) {
        (knob.set)(&mut open, None);
    }
    let r = Request {
        spec: &open,
        top: 1,
        ..*req
    };
    let nearest = search(&r, &mut |_| {})?
        .builds
        .into_iter()
        .next()
        .map(|best| {
            let evaluation = analysis::evaluate(req.spec, req.stage, &best.build, Some(req.stock));
            Ranked {
                build: best.build,
                evaluation,
            }
        });
    Ok(Diagnosis {
        several: blockers.is_empty(),
        blockers,
        nearest,
    })
}
