//! JSON output: the ranked builds with parts, metrics and checks, SI base units as plain
//! numbers. The field names are a public contract (README, "JSON").

use crate::analysis::{CapReport, Check, Metrics, PowerReport};
use crate::build::{Arrangement, Piece};
use crate::circuit::Circuit;
use crate::search::Ranked;
use crate::spec::Spec;
use serde::Serialize;
use std::collections::BTreeMap;

#[derive(Serialize)]
struct PartJson<'a> {
    value: f64,
    label: String,
    arrangement: Arrangement,
    tolerance: f64,
    locked: bool,
    pieces: &'a [Piece],
}

#[derive(Serialize)]
struct BuildJson<'a> {
    rank: usize,
    score: f64,
    /// Pareto-optimal over (gain error, part count, cost) among the ranked builds.
    pareto: bool,
    pass: bool,
    parts: BTreeMap<&'static str, PartJson<'a>>,
    metrics: &'a Metrics,
    checks: &'a [Check],
    capacitors: &'a [CapReport],
    power: &'a [PowerReport],
    #[serde(rename = "yield", skip_serializing_if = "Option::is_none")]
    yield_report: Option<YieldJson>,
    #[serde(skip_serializing_if = "Option::is_none")]
    noise: Option<&'a crate::analysis::noise::NoiseReport>,
    #[serde(skip_serializing_if = "Option::is_none")]
    dc_budget: Option<&'a crate::analysis::budget::DcBudget>,
    /// The build's own cautions (a class-2 ceramic allowed into the signal path), beside the
    /// document's usual ones.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    cautions: Vec<String>,
}

/// Yield with the per-check fractions as an object keyed by check name.
#[derive(Serialize)]
struct YieldJson {
    samples: usize,
    seed: u64,
    distribution: crate::vocab::Distribution,
    overall: f64,
    by_check: BTreeMap<String, f64>,
}

#[derive(Serialize)]
struct Document<'a> {
    stage: &'static str,
    target_gain: f64,
    bias_target_v: f64,
    /// False when the search stopped early (a time limit, an interrupt): the builds are the
    /// best found, not proven the best.
    proven_best: bool,
    builds: Vec<BuildJson<'a>>,
    cautions: &'static [&'static str],
}

/// The builds as a pretty-printed JSON document; `proven`: the search ran to its exact end.
pub fn builds(spec: &Spec, stage: &dyn Circuit, ranked: &[Ranked], proven: bool) -> String {
    let slots = stage.slots();
    let front = crate::search::pareto(ranked);
    let builds = ranked
        .iter()
        .enumerate()
        .map(|(i, r)| BuildJson {
            rank: i + 1,
            score: r.evaluation.score,
            pareto: front[i],
            pass: r.evaluation.pass,
            parts: r
                .build
                .parts
                .iter()
                .enumerate()
                .map(|(k, p)| {
                    (
                        slots[k].name,
                        PartJson {
                            value: p.value,
                            label: p.label(),
                            arrangement: p.arrangement,
                            tolerance: p.tolerance(),
                            locked: p.locked,
                            pieces: &p.pieces,
                        },
                    )
                })
                .collect(),
            metrics: &r.evaluation.metrics,
            checks: &r.evaluation.checks,
            capacitors: &r.evaluation.caps,
            power: &r.evaluation.power,
            yield_report: r.evaluation.yield_report.as_ref().map(|y| YieldJson {
                samples: y.samples,
                seed: y.seed,
                distribution: y.distribution,
                overall: y.overall,
                by_check: y.by_check.iter().cloned().collect(),
            }),
            noise: r.evaluation.noise.as_ref(),
            dc_budget: r.evaluation.dc_budget.as_ref(),
            cautions: crate::analysis::rating::build_cautions(spec, stage, &r.build),
        })
        .collect();
    let doc = Document {
        stage: stage.kind().name(),
        target_gain: spec.gain,
        bias_target_v: spec.bias_target(),
        proven_best: proven,
        builds,
        cautions: crate::report::table::CAUTIONS,
    };
    // Serialising plain structs of numbers and strings cannot fail; NaN becomes null.
    serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}

#[derive(Serialize)]
struct DiagnosisJson<'a> {
    stage: &'static str,
    builds: [(); 0],
    blockers: &'a [crate::search::diagnose::Blocker],
    several_requirements: bool,
    /// Requirements the diagnosis had no time to try.
    untried: &'a [String],
    nearest: Option<serde_json::Value>,
}

/// JSON for a spec no build meets: no builds, the blockers, and the nearest build.
pub fn diagnosis(
    spec: &Spec,
    stage: &dyn Circuit,
    d: &crate::search::diagnose::Diagnosis,
) -> String {
    let nearest = d.nearest.as_ref().and_then(|n| {
        let text = builds(spec, stage, std::slice::from_ref(n), true);
        serde_json::from_str::<serde_json::Value>(&text)
            .ok()
            .and_then(|v| v["builds"].get(0).cloned())
    });
    let doc = DiagnosisJson {
        stage: stage.kind().name(),
        builds: [],
        blockers: &d.blockers,
        several_requirements: d.several,
        untried: &d.untried,
        nearest,
    };
    serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}
