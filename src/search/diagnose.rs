//! Why no build meets the spec: which requirement blocks, what the stock reaches for it, and
//! the smallest relaxation that lets a build exist.
//!
//! Each requirement is dropped in turn; when a build then exists, that requirement blocks, and
//! a bisection on its limit finds the tightest value the stock can still meet (feasibility is
//! monotone in each limit). The nearest build — the best one with every requirement dropped,
//! judged against the real spec — shows what else fails.

use super::dfs::search;
use super::request::{ranking_spec, ruled_out, Progress, Ranked, Request, SearchError};
use crate::analysis::{self, Check};
use crate::build::{Build, Part};
use crate::spec::Spec;
use crate::stock::Source;
use crate::value::{format_sig, Unit};
use crate::vocab::Combine;
use crate::vocab::PartKind;

/// One requirement that blocks every build.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Blocker {
    /// Spec key, e.g. `stage.input_resistance_min`.
    pub key: String,
    /// The limit the spec asks for, in `unit`.
    pub limit: f64,
    /// The tightest limit the stock meets (with every other requirement kept).
    pub reachable: f64,
    /// The unit of `limit`, `reachable` and `reached`.
    #[serde(skip)]
    pub unit: Unit,
    /// The best value the stock reaches for this requirement (the build nearest to the limit,
    /// with every other requirement kept), in the requirement's unit, where that is the same
    /// figure the analysis checks (not for gain tolerance, slew rate or GBW).
    pub reached: Option<f64>,
    /// Slots whose part in that build is already the end of the stock's range.
    pub limits: Vec<PartLimit>,
    /// One sentence for people: the limit, what the stock reaches, and a relaxation that works.
    pub message: String,
    /// Further lines for people: which part's range blocks and what it would need.
    pub notes: Vec<String>,
}

/// A slot whose part, in the build that comes closest to a blocking requirement, is already
/// the largest (or smallest) value of its kind the stock offers.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PartLimit {
    /// The slot's name.
    pub slot: String,
    /// Resistor or capacitor.
    pub kind: PartKind,
    /// true: the largest value in stock; false: the smallest.
    pub largest: bool,
    /// That extreme value (ohm or farad).
    pub stock_value: f64,
    /// The value the slot would need for the requirement to pass, the other parts as they
    /// are; `None` when changing this slot does not meet it (alone or with the other slots
    /// at their limit, scaled together).
    pub needed: Option<f64>,
}

/// Why no build meets the spec: the blocking requirements and the nearest build.
#[derive(Debug, Clone)]
pub struct Diagnosis {
    /// Each requirement that, dropped alone, lets a build exist.
    pub blockers: Vec<Blocker>,
    /// True when dropping any single requirement is not enough (every one was tried).
    pub several: bool,
    /// The build that comes closest to meeting the spec, judged against it: the one nearest
    /// a single blocking requirement (it fails that one only), or with no single blocker the
    /// best with every requirement dropped.
    pub nearest: Option<Ranked>,
    /// Requirements the diagnosis had no time left to try (spec keys).
    pub untried: Vec<String>,
}

/// How a requirement is dropped, tightened and loosened.
struct Knob {
    key: &'static str,
    /// The analysis checks (`Check::name`, by prefix) that judge this requirement.
    checks: &'static [&'static str],
    unit: Unit,
    /// true: a larger limit is stricter (minimums); false: a smaller one is.
    larger_is_stricter: bool,
    get: fn(&Spec) -> Option<f64>,
    set: fn(&mut Spec, Option<f64>),
}

// The split-supply stages' own requirements first: each is tried at the cost of one quick
// search, where dropping the gain window (tried next) can take the whole diagnosis's time.
const KNOBS: &[Knob] = &[
    Knob {
        key: "stage.output_offset_max",
        checks: &["output_offset_max"],
        unit: Unit::Volt,
        larger_is_stricter: false,
        get: |s| s.output_offset_max,
        set: |s, v| s.output_offset_max = v,
    },
    Knob {
        key: "stage.cmrr_min",
        checks: &["cmrr_min"],
        unit: Unit::Decibel,
        larger_is_stricter: true,
        get: |s| s.cmrr_min,
        set: |s, v| s.cmrr_min = v,
    },
    Knob {
        key: "stage.input_resistance_min",
        checks: &["input_resistance"],
        unit: Unit::Ohm,
        larger_is_stricter: true,
        get: |s| s.input_resistance_min,
        set: |s, v| s.input_resistance_min = v,
    },
    Knob {
        key: "stage.gain_tolerance",
        checks: &["gain_low", "gain_high"],
        unit: Unit::Percent,
        larger_is_stricter: false,
        get: |s| s.gain_tolerance,
        set: |s, v| s.gain_tolerance = v,
    },
    Knob {
        key: "stage.corner_low_max",
        checks: &["corner_"],
        unit: Unit::Hertz,
        larger_is_stricter: false,
        get: |s| s.corner_low_max,
        set: |s, v| s.corner_low_max = v,
    },
    Knob {
        key: "stage.band_loss_max",
        checks: &["band_low_loss", "band_high_loss"],
        unit: Unit::Decibel,
        larger_is_stricter: false,
        get: |s| s.band_loss_max,
        set: |s, v| s.band_loss_max = v,
    },
    Knob {
        key: "stage.input_peak",
        checks: &["input_range"],
        unit: Unit::Volt,
        larger_is_stricter: true,
        get: |s| s.input_peak,
        set: |s, v| s.input_peak = v,
    },
    Knob {
        key: "stage.output_peak",
        checks: &["output_swing"],
        unit: Unit::Volt,
        larger_is_stricter: true,
        get: |s| s.output_peak,
        set: |s, v| s.output_peak = v,
    },
    Knob {
        key: "stage.input_noise_max",
        checks: &["input_noise"],
        unit: Unit::Volt,
        larger_is_stricter: false,
        get: |s| s.input_noise_max,
        set: |s, v| s.input_noise_max = v,
    },
    Knob {
        key: "stage.ripple_out_max",
        checks: &["ripple_out"],
        unit: Unit::Volt,
        larger_is_stricter: false,
        get: |s| s.ripple_out_max,
        set: |s, v| s.ripple_out_max = v,
    },
    Knob {
        key: "amplifier.slew_rate",
        checks: &["slew_rate"],
        unit: Unit::VoltPerSecond,
        larger_is_stricter: false,
        get: |s| s.amplifier.slew_rate,
        set: |s, v| s.amplifier.slew_rate = v,
    },
    Knob {
        key: "amplifier.output_current_max",
        checks: &["output_current"],
        unit: Unit::Ampere,
        larger_is_stricter: false,
        get: |s| s.amplifier.output_current_max,
        set: |s, v| s.amplifier.output_current_max = v,
    },
    Knob {
        key: "amplifier.gbw",
        checks: &["band_high_loss", "high_corner"],
        unit: Unit::Hertz,
        larger_is_stricter: false,
        get: |s| s.amplifier.gbw,
        set: |s, v| s.amplifier.gbw = v,
    },
];

/// Nodes one diagnostic search may visit: a search that finds nothing has nothing to prune
/// with, so an unbounded one can take long; past the budget "no build found" is taken.
pub const DIAGNOSIS_NODES: u64 = 100_000;

/// Searches one diagnosis may run in all; past it the remaining requirements are not tried.
pub const DIAGNOSIS_SEARCHES: u32 = 60;

thread_local! {
    static SEARCHES_LEFT: std::cell::Cell<u32> = const { std::cell::Cell::new(0) };
}

/// A diagnostic search ran out of its share of time: what it found says nothing.
struct OutOfTime;

/// The best build under `spec`, if any (`Err` when the diagnosis's time ran out first).
fn best_under(
    req: &Request,
    spec: &Spec,
) -> Result<Result<Option<Ranked>, OutOfTime>, SearchError> {
    if SEARCHES_LEFT.with(|n| {
        let left = n.get();
        n.set(left.saturating_sub(1));
        left == 0
    }) || req.stop.now()
    {
        return Ok(Err(OutOfTime));
    }
    let r = Request {
        spec,
        top: 1,
        max_nodes: Some(DIAGNOSIS_NODES),
        stop: req.stop.clone(),
        ..*req
    };
    let outcome = search(&r, &mut |_| {})?;
    if outcome.stats.stopped {
        return Ok(Err(OutOfTime));
    }
    Ok(Ok(outcome.builds.into_iter().next()))
}

/// The blocker for `knob`, whose tightest feasible limit is `good`, met by `closest`.
fn explain(req: &Request, knob: &Knob, limit: f64, good: f64, closest: &Build) -> Blocker {
    let amplifier = knob.key.starts_with("amplifier");
    let name = knob.key.rsplit('.').next().unwrap_or(knob.key);
    let f = |v: f64| format_sig(v, knob.unit, 3);
    // The closest build judged against the real spec.
    let evaluation = analysis::evaluate(req.spec, req.stage, closest, None);
    let judged: Vec<&Check> = knob_checks(knob, &evaluation.checks).collect();
    // Where the check measures the same figure as the limit, its value is what the stock
    // reaches.
    let comparable = !amplifier && knob.key != "stage.gain_tolerance";
    let reached = if comparable {
        judged
            .iter()
            .filter(|c| !c.pass)
            .min_by(|a, b| a.margin.total_cmp(&b.margin))
            .map(|c| c.value)
    } else {
        None
    };
    let limits = if amplifier {
        Vec::new()
    } else {
        part_limits(req, knob, closest)
    };
    // The closest build meets a limit equal to its own figure, so that is the tightest
    // relaxation known, sharper than the bisection's bracket.
    let good = match reached {
        Some(v) if knob.larger_is_stricter => good.max(v),
        Some(v) => good.min(v),
        None => good,
    };

    let relaxation = if amplifier {
        format!("an amplifier with {name} ≥ {}", f(good))
    } else if knob.larger_is_stricter {
        format!("{name} ≤ {}", f(good))
    } else {
        format!("{name} ≥ {}", f(good))
    };
    let message = match reached {
        Some(v) => format!(
            "{} {} cannot be met with this stock: the best build reaches {} (short by {}); a build exists with {relaxation}",
            knob.key,
            f(limit),
            f(v),
            f((v - limit).abs())
        ),
        None => format!(
            "{} {} cannot be met with this stock; a build exists with {relaxation}",
            knob.key,
            f(limit)
        ),
    };
    let notes = limit_notes(req, &limits);
    Blocker {
        key: knob.key.to_string(),
        limit,
        reachable: good,
        unit: knob.unit,
        reached,
        limits,
        message,
        notes,
    }
}

fn knob_checks<'c>(knob: &'c Knob, checks: &'c [Check]) -> impl Iterator<Item = &'c Check> {
    checks
        .iter()
        .filter(|c| knob.checks.iter().any(|p| c.name.starts_with(p)))
}

/// The largest and smallest value the search may use for a kind (pairs included).
fn extremes(req: &Request, kind: PartKind) -> Option<(f64, f64)> {
    let candidates = req.stock.candidates(kind);
    let lo = candidates.first()?.value;
    let hi = candidates.last()?.value;
    Some((lo, hi))
}

fn same(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs())
}

/// Slots of `build` whose part is at an end of the stock's range, and what each would need.
fn part_limits(req: &Request, knob: &Knob, build: &Build) -> Vec<PartLimit> {
    let slots = req.stage.slots();
    let mut limits: Vec<PartLimit> = Vec::new();
    for (i, part) in build.parts.iter().enumerate() {
        if part.locked || i >= slots.len() {
            continue;
        }
        let Some((lo, hi)) = extremes(req, part.kind) else {
            continue;
        };
        for (largest, end) in [(true, hi), (false, lo)] {
            // Only a part whose value, moved past the stock's end, would help this
            // requirement is a limit worth naming.
            if same(part.value, end) && helps(req, knob, build, i, largest) {
                limits.push(PartLimit {
                    slot: slots[i].name.to_string(),
                    kind: part.kind,
                    largest,
                    stock_value: end,
                    needed: None,
                });
            }
        }
    }
    if limits.is_empty() {
        return limits;
    }
    let index = |slot: &str| slots.iter().position(|s| s.name == slot);
    // Each slot alone first; then every slot at the same end, scaled together.
    let mut any = false;
    for l in limits.iter_mut() {
        if let Some(i) = index(&l.slot) {
            let scale = |b: &mut Build, k: f64| rescale(&mut b.parts[i], k);
            if let Some(k) = needed_factor(req, knob, build, l.largest, &scale) {
                l.needed = Some(l.stock_value * k);
                any = true;
            }
        }
    }
    if any {
        // One part alone is enough: name only the parts that are.
        limits.retain(|l| l.needed.is_some());
    } else {
        for largest in [true, false] {
            // Slots of both kinds may need to move together (a corner is set by R·C).
            let mut group: Vec<usize> = limits
                .iter()
                .filter(|l| l.largest == largest)
                .filter_map(|l| index(&l.slot))
                .collect();
            if group.len() < 2 {
                continue;
            }
            let Some(mut k) = group_factor(req, knob, build, largest, &group) else {
                continue;
            };
            // Leave out the slots that do not matter (a feedback pair at the stock's end does
            // nothing for the input resistance), so the note names only the ones that do.
            let mut j = 0;
            while j < group.len() && group.len() > 1 {
                let mut fewer = group.clone();
                fewer.remove(j);
                match group_factor(req, knob, build, largest, &fewer) {
                    Some(k2) if (k2 / k).ln().abs() < 0.01 => {
                        group = fewer;
                        k = k2;
                    }
                    _ => j += 1,
                }
            }
            for l in limits.iter_mut().filter(|l| l.largest == largest) {
                if index(&l.slot).is_some_and(|i| group.contains(&i)) {
                    l.needed = Some(l.stock_value * k);
                }
            }
        }
    }
    limits
}

/// The worst margin of the requirement's checks on `build`, relative to each limit.
fn worst_margin(req: &Request, knob: &Knob, build: &Build) -> Option<f64> {
    let e = analysis::evaluate(req.spec, req.stage, build, None);
    knob_checks(knob, &e.checks)
        .map(|c| c.margin / c.limit.abs().max(1e-30))
        .filter(|m| !m.is_nan())
        .reduce(f64::min)
}

/// Moving slot `i` past the stock's end (×2 or ÷2) improves the requirement's worst margin.
fn helps(req: &Request, knob: &Knob, build: &Build, i: usize, up: bool) -> bool {
    let Some(now) = worst_margin(req, knob, build) else {
        return false;
    };
    let mut moved = build.clone();
    rescale(&mut moved.parts[i], if up { 2.0 } else { 0.5 });
    worst_margin(req, knob, &moved).is_some_and(|m| m > now + 1e-9 * now.abs().max(1e-9))
}

/// Rounds away from the stock's end to two significant digits, so that the value printed
/// is enough: up for a minimum (`≥`), down for a maximum (`≤`).
fn round_sig2(x: f64, up: bool) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return x;
    }
    let scale = 10f64.powf(x.log10().floor() - 1.0);
    // A hair of slack so that 150.000001 µF does not print as 160 µF.
    let q = x / scale;
    let q = if up {
        (q - 1e-9).ceil()
    } else {
        (q + 1e-9).floor()
    };
    q * scale
}

/// [`needed_factor`] with every slot of `group` scaled by the same factor.
fn group_factor(
    req: &Request,
    knob: &Knob,
    build: &Build,
    up: bool,
    group: &[usize],
) -> Option<f64> {
    let scale = |b: &mut Build, k: f64| {
        for &i in group {
            rescale(&mut b.parts[i], k);
        }
    };
    needed_factor(req, knob, build, up, &scale)
}

/// A hypothetical part `k` times the value of `part`, same tolerance.
fn rescale(part: &mut Part, k: f64) {
    *part = Part::locked(part.kind, part.value * k, part.tolerance());
}

/// The smallest factor beyond the stock's end (> 1 when `up`, else < 1) that makes every check
/// of the requirement pass, the rest of the build kept; bisection in log scale, monotone in the
/// part's value for every requirement here (larger R or C: larger input resistance, lower
/// corners, less loss).
fn needed_factor(
    req: &Request,
    knob: &Knob,
    build: &Build,
    up: bool,
    scale: &dyn Fn(&mut Build, f64),
) -> Option<f64> {
    let passes = |k: f64| {
        let mut b = build.clone();
        scale(&mut b, k);
        let e = analysis::evaluate(req.spec, req.stage, &b, None);
        let mut judged = knob_checks(knob, &e.checks).peekable();
        judged.peek().is_some() && judged.all(|c| c.pass)
    };
    let step: f64 = if up { 2.0 } else { 0.5 };
    let (mut bad, mut good) = (1.0, 1.0);
    let mut found = false;
    // Up to 2^24 (seven decades) past the stock's end: beyond that no part exists anyway.
    for _ in 0..24 {
        good *= step;
        if passes(good) {
            found = true;
            break;
        }
        bad = good;
    }
    if !found {
        return None;
    }
    for _ in 0..30 {
        let mid = (bad * good).sqrt();
        if passes(mid) {
            good = mid;
        } else {
            bad = mid;
        }
    }
    Some(good)
}

/// "needs c_in ≥ 150 µF; the largest capacitor in stock is 47 µF".
fn limit_notes(req: &Request, limits: &[PartLimit]) -> Vec<String> {
    let mut notes = Vec::new();
    for (kind, largest) in [
        (PartKind::Resistor, true),
        (PartKind::Resistor, false),
        (PartKind::Capacitor, true),
        (PartKind::Capacitor, false),
    ] {
        let group: Vec<&PartLimit> = limits
            .iter()
            .filter(|l| l.largest == largest && l.kind == kind)
            .collect();
        let Some(first) = group.first() else {
            continue;
        };
        let unit = match first.kind {
            PartKind::Resistor => Unit::Ohm,
            PartKind::Capacitor => Unit::Farad,
        };
        let (end, op) = if largest {
            ("largest", "≥")
        } else {
            ("smallest", "≤")
        };
        let what = stock_words(req, first.kind, end, first.stock_value);
        let needs: Vec<String> = group
            .iter()
            .filter_map(|l| {
                l.needed.map(|n| {
                    let n = round_sig2(n, largest);
                    format!("{} {op} {}", l.slot, format_sig(n, unit, 3))
                })
            })
            .collect();
        let slots: Vec<&str> = group.iter().map(|l| l.slot.as_str()).collect();
        if needs.is_empty() {
            notes.push(format!(
                "{} already at the stock's end: the {what}",
                slots.join(" and "),
            ));
        } else {
            let together = if needs.len() > 1 { " (together)" } else { "" };
            notes.push(format!(
                "needs {}{together}; the {what}",
                needs.join(" and ")
            ));
        }
    }
    notes
}

/// "largest resistor in stock is 1 MΩ", "largest capacitor in E6 within capacitor_range is
/// 1 mF", "largest resistor or pair in stock is 2 MΩ".
fn stock_words(req: &Request, kind: PartKind, end: &str, value: f64) -> String {
    let unit = match kind {
        PartKind::Resistor => Unit::Ohm,
        PartKind::Capacitor => Unit::Farad,
    };
    let pair = if req.stock.combine == Combine::Single {
        ""
    } else {
        " or pair"
    };
    let place = match req.stock.source(kind) {
        Source::Inventory(_) => "in stock".to_string(),
        Source::Series { series, .. } => format!(
            "of {} within {}_range",
            series.name(),
            match kind {
                PartKind::Resistor => "resistor",
                PartKind::Capacitor => "capacitor",
            }
        ),
    };
    format!(
        "{end} {kind}{pair} {place} is {}",
        format_sig(value, unit, 3)
    )
}

/// How long a diagnosis may take in all: a few dozen bounded searches, stopped when the time
/// is spent (the requirements not tried by then are said to be so).
pub const DIAGNOSIS_TIME: std::time::Duration = std::time::Duration::from_millis(300);

/// Explain an infeasible request: a few dozen bounded searches at most, and at most
/// [`DIAGNOSIS_TIME`] (or the request's own stop, when sooner).
pub fn diagnose(
    req: &Request,
    progress: &mut dyn FnMut(Progress),
) -> Result<Diagnosis, SearchError> {
    SEARCHES_LEFT.with(|n| n.set(DIAGNOSIS_SEARCHES));
    let deadline = std::time::Instant::now() + DIAGNOSIS_TIME;
    let stop = super::request::Stop {
        deadline: Some(req.stop.deadline.map_or(deadline, |d| d.min(deadline))),
        interrupt: req.stop.interrupt.clone(),
    };
    let req = &Request { stop, ..*req };
    let mut blockers = Vec::new();
    let mut closest_builds: Vec<Ranked> = Vec::new();
    let mut untried = Vec::new();
    // The requirements the spec alone rules out go first: they are the likely blockers, and
    // their boundary costs a single search.
    let ranking = ranking_spec(req.spec, req.stage);
    let blamed = |knob: &Knob| -> bool {
        if !ruled_out(&ranking) {
            return false;
        }
        let mut relaxed = req.spec.clone();
        (knob.set)(&mut relaxed, None);
        !ruled_out(&ranking_spec(&relaxed, req.stage))
    };
    let mut order: Vec<&Knob> = KNOBS.iter().filter(|k| blamed(k)).collect();
    order.extend(KNOBS.iter().filter(|k| !blamed(k)));
    let total = order.len();
    for (tried, knob) in order.into_iter().enumerate() {
        progress(Progress::Diagnosis {
            tried,
            total,
            key: knob.key,
        });
        let Some(limit) = (knob.get)(req.spec) else {
            continue;
        };
        match try_knob(req, knob, limit)? {
            Err(OutOfTime) => untried.push(knob.key.to_string()),
            Ok(None) => {}
            Ok(Some((blocker, closest))) => {
                blockers.push(blocker);
                closest_builds.push(closest);
            }
        }
    }
    // The nearest build: the one that comes closest to a single blocking requirement (it
    // fails that one only), the one with the fewest and smallest misses among them; with no
    // single blocker, the best with every requirement dropped, judged against the spec.
    let misses = |r: &Ranked| -> (usize, f64) {
        let failing: Vec<&Check> = r.evaluation.checks.iter().filter(|c| !c.pass).collect();
        let size: f64 = failing
            .iter()
            .map(|c| (c.margin / c.limit.abs().max(1e-30)).abs())
            .sum();
        (failing.len(), size)
    };
    let judged: Vec<Ranked> = closest_builds
        .into_iter()
        .map(|r| {
            let evaluation = analysis::evaluate(req.spec, req.stage, &r.build, Some(req.stock));
            Ranked {
                build: r.build,
                evaluation,
            }
        })
        .collect();
    let mut nearest = judged.into_iter().min_by(|a, b| {
        let (ma, mb) = (misses(a), misses(b));
        ma.0.cmp(&mb.0).then(ma.1.total_cmp(&mb.1))
    });
    if nearest.is_none() {
        let mut open = req.spec.clone();
        for knob in KNOBS.iter().filter(|k| !k.key.starts_with("amplifier")) {
            (knob.set)(&mut open, None);
        }
        if let Ok(Some(best)) = best_under(req, &open)? {
            let evaluation = analysis::evaluate(req.spec, req.stage, &best.build, Some(req.stock));
            nearest = Some(Ranked {
                build: best.build,
                evaluation,
            });
        }
    }
    Ok(Diagnosis {
        several: blockers.is_empty() && untried.is_empty(),
        blockers,
        nearest,
        untried,
    })
}

/// Whether `knob` alone blocks: dropped, does a build exist? Then a bisection on its limit
/// finds the tightest value a build still meets, and the build met there.
#[allow(clippy::type_complexity)]
fn try_knob(
    req: &Request,
    knob: &Knob,
    limit: f64,
) -> Result<Result<Option<(Blocker, Ranked)>, OutOfTime>, SearchError> {
    let mut relaxed = req.spec.clone();
    // GBW and slew rate are amplifier figures: "dropping" them means an ideal amplifier,
    // and loosening means a faster one. Requirements are dropped outright.
    (knob.set)(&mut relaxed, None);
    match best_under(req, &relaxed)? {
        Err(e) => return Ok(Err(e)),
        Ok(None) => return Ok(Ok(None)),
        Ok(Some(_)) => {}
    }
    // Bisection in log value between the failing limit and a passing one; the build found at
    // the passing end is the one that comes closest to the limit.
    let (mut bad, mut good) = (limit, limit);
    let step = if knob.larger_is_stricter { 0.5 } else { 2.0 };
    let mut closest = None;
    // Where the spec alone rules builds out (the amplifier's gain limit, the slew rate, the
    // swing), the boundary is found without searching: bisect on the screen, then search once
    // just past it.
    if ruled_out(&ranking_spec(req.spec, req.stage)) {
        let screened = |v: f64, relaxed: &mut Spec| {
            (knob.set)(relaxed, Some(v));
            ruled_out(&ranking_spec(relaxed, req.stage))
        };
        let mut far = limit;
        let mut open = false;
        for _ in 0..40 {
            far *= step;
            if !screened(far, &mut relaxed) {
                open = true;
                break;
            }
            bad = far;
        }
        if open {
            let (mut lo, mut hi) = (bad, far);
            for _ in 0..40 {
                let mid = (lo * hi).sqrt();
                if screened(mid, &mut relaxed) {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            bad = lo;
            good = hi;
            (knob.set)(&mut relaxed, Some(hi));
            match best_under(req, &relaxed)? {
                Err(e) => return Ok(Err(e)),
                Ok(Some(b)) => closest = Some(b),
                Ok(None) => bad = hi,
            }
        }
    }
    if closest.is_none() {
        good = bad;
        for _ in 0..12 {
            good *= step;
            (knob.set)(&mut relaxed, Some(good));
            match best_under(req, &relaxed)? {
                Err(e) => return Ok(Err(e)),
                Ok(Some(b)) => {
                    closest = Some(b);
                    break;
                }
                Ok(None) => bad = good,
            }
        }
    }
    let Some(mut closest) = closest else {
        return Ok(Ok(None));
    };
    // Halvings of a factor-2 bracket, while the time lasts: seven give 0.6 %.
    for _ in 0..7 {
        let mid = (bad * good).sqrt();
        (knob.set)(&mut relaxed, Some(mid));
        match best_under(req, &relaxed)? {
            Ok(Some(b)) => {
                good = mid;
                closest = b;
            }
            Ok(None) => bad = mid,
            // Out of time: the bracket so far is still right, only wider.
            Err(OutOfTime) => break,
        }
    }
    let blocker = explain(req, knob, limit, good, &closest.build);
    Ok(Ok(Some((blocker, closest))))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::circuit;
    use crate::stock::inventory::Inventory;
    use crate::stock::Stock;
    use std::sync::Arc;

    /// A small invented drawer: resistors up to 1 MΩ, capacitors up to 47 µF.
    const DRAWER: &str = "kind,value,tolerance,qty\n\
        r,1k,1%,10\nr,2k2,1%,10\nr,10k,1%,10\nr,22k,1%,10\nr,100k,1%,10\nr,1M,1%,10\n\
        c,100n,10%,5\nc,1u,10%,5\nc,10u,20%,5\nc,47u,20%,5\n";

    fn diagnose_text(spec_text: &str) -> Diagnosis {
        let spec = Spec::from_toml(spec_text).unwrap();
        let inv = Arc::new(Inventory::parse_str(DRAWER).unwrap());
        let stock = Stock::new(
            Source::Inventory(inv.clone()),
            Source::Inventory(inv),
            spec.stock.limits(),
        );
        let stage = circuit::circuit_for(spec.stage);
        let req = Request {
            spec: &spec,
            stage,
            stock: &stock,
            locks: &[],
            top: 1,
            max_nodes: None,
            plan: crate::search::PlanChoice::Best,
            stop: crate::search::Stop::NEVER,
            distinct: &[],
        };
        assert!(
            search(&req, &mut |_| {}).unwrap().builds.is_empty(),
            "infeasible"
        );
        diagnose(&req, &mut |_| {}).unwrap()
    }

    #[test]
    fn input_resistance_blocked_by_the_largest_resistor() {
        let d = diagnose_text(
            "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -1\n\
             input_resistance_min = \"2.2M\"\nload = \"10k\"\nband = [\"20 Hz\", \"20 kHz\"]\n",
        );
        assert!(!d.several);
        let b = &d.blockers[0];
        assert_eq!(b.key, "stage.input_resistance_min");
        // Inverting stage: input resistance = r_in (any op-amp text); the largest stock part is
        // 1 MΩ at 1 %, so the worst case reaches 990 kΩ, and 2.2 MΩ needs r_in ≥ 2.2 M/0.99.
        let reached = b.reached.unwrap();
        assert!((reached - 990e3).abs() < 1.0, "{reached}");
        assert!(b.reachable <= reached * (1.0 + 1e-3) && b.reachable > 980e3);
        assert_eq!(b.limits.len(), 1, "{:?}", b.limits);
        let l = &b.limits[0];
        assert_eq!(
            (l.slot.as_str(), l.largest, l.stock_value),
            ("r_in", true, 1e6)
        );
        let needed = l.needed.unwrap();
        assert!((needed - 2.2e6 / 0.99).abs() < 2.2e6 * 1e-6, "{needed}");
        assert!(b.message.contains("reaches 990 kΩ"), "{}", b.message);
        assert_eq!(
            b.notes,
            ["needs r_in ≥ 2.3 MΩ; the largest resistor in stock is 1 MΩ"]
        );
    }

    #[test]
    fn band_loss_blocked_by_the_largest_capacitor() {
        // 1 kΩ load: the output coupling capacitor with the load sets the low edge.
        let d = diagnose_text(
            "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -1\nload = \"1k\"\n\
             band = [\"10 Hz\", \"20 kHz\"]\nband_loss_max = \"0.1 dB\"\n\
             input_resistance_min = \"1k\"\n",
        );
        let b = d
            .blockers
            .iter()
            .find(|b| b.key == "stage.band_loss_max")
            .unwrap();
        assert!(b.reached.unwrap() > 0.1);
        let c_out = b.limits.iter().find(|l| l.slot == "c_out").unwrap();
        assert!(c_out.largest && (c_out.stock_value - 47e-6).abs() < 1e-12);
        // The needed value passes and 1 % less fails: it is the smallest that does.
        let needed = c_out.needed.unwrap();
        assert!(needed > 47e-6);
        assert!(
            b.notes.iter().any(|n| n.starts_with("needs c_out ≥ ")
                && n.ends_with("the largest capacitor in stock is 47 µF")),
            "{:?}",
            b.notes
        );
        let json = serde_json::to_value(b).unwrap();
        assert_eq!(json["limits"][0]["slot"], "c_out");
        assert!(json["notes"].is_array());
    }

    #[test]
    fn rounding_for_notes_never_understates_the_need() {
        assert_eq!(round_sig2(2.2222e6, true), 2.3e6);
        assert!((round_sig2(1.3e-4, true) - 1.3e-4).abs() < 1e-12);
        assert!((round_sig2(1.3001e-4, true) - 1.4e-4).abs() < 1e-12);
        assert_eq!(round_sig2(2.29e3, false), 2.2e3);
    }
}
