//! Exact analysis of one build: frequency response, DC point and offsets, worst case, the
//! checks, and the score the search ranks by (the objective's terms).
//!
//! Worst case follows the usual extreme-value rule: every part is put at each end of its
//! tolerance (all 2^n corners of the tolerance box) and each figure takes its worst corner;
//! the op-amp's bias current, offset current and offset voltage take both signs.

use super::check::{Bound, Check, RESISTOR_DERATING};
use super::{budget, noise, response, yield_mc};
use crate::build::{Build, Part};
use crate::circuit::{common, Circuit, DcErrors, OpAmp};
use crate::spec::Spec;
use crate::stock::Stock;
use crate::value::Unit;
use crate::vocab::PartKind;
use serde::Serialize;

/// One coupling network's corner, nominal and worst.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NetworkReport {
    /// The network's name (`"input"`, `"gain leg"`, `"output"`).
    pub name: String,
    /// Name of its capacitor's slot.
    pub cap_slot: String,
    /// Nominal resistance the capacitor works against, Ω.
    pub resistance: f64,
    /// Nominal corner 1/(2πRC), Hz (first-order high-pass, any circuit-theory text).
    pub corner_hz: f64,
    /// Highest corner over the tolerance corners, Hz.
    pub corner_worst_hz: f64,
}

/// DC across one capacitor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CapReport {
    /// Name of the capacitor's slot.
    pub slot: String,
    /// Nominal DC across it, V: V(a) − V(b) of the ends the circuit names (`CapBias`).
    pub volts: f64,
    /// Lowest DC across it over the resistor tolerances and op-amp error signs, V.
    pub volts_min: f64,
    /// Highest DC across it over the same corners, V.
    pub volts_max: f64,
    /// Node the + lead goes to (for a polarised part), by the nominal bias.
    pub positive_side: String,
    /// Node the − lead goes to.
    pub negative_side: String,
    /// True when any of its pieces is polarised.
    pub polarized: bool,
    /// Voltage the realisation can stand, V; `None` when a piece has no rating.
    pub rating: Option<f64>,
    /// Smallest rating the rule allows: |V|max / 0.8, and under the default rule at least the
    /// rail the capacitor can see (`analysis::rating`).
    pub rating_needed: f64,
}

/// Power in one resistor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PowerReport {
    /// Name of the resistor's slot.
    pub slot: String,
    /// Power dissipated at the nominal DC point with a sine of the required output peak (or,
    /// without one, the worst-case swing), W.
    pub watts: f64,
    /// Power the realisation can take, W (the weakest piece by its share); `None` when a piece
    /// has no rating.
    pub rating: Option<f64>,
}

/// Two slots a difference stage wants alike, and whether the build takes them from one
/// stock line (one batch, common practice for matched ratios).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairReport {
    /// The two slots' names.
    pub slots: [String; 2],
    /// The inventory's data row both are single pieces from, when they are (`None`: two
    /// lines, a series value or a two-piece realisation).
    pub line: Option<usize>,
}

/// The figures of a stage with two inputs (the difference amplifier), nominal unless the
/// name says otherwise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DifferenceReport {
    /// Resistance of the − input, the + input at its DC level, Ω.
    pub input_resistance_minus: f64,
    /// Resistance of the + input, Ω.
    pub input_resistance_plus: f64,
    /// Lowest − input resistance over the tolerance corners, Ω.
    pub input_resistance_minus_worst: f64,
    /// Lowest + input resistance over the tolerance corners, Ω.
    pub input_resistance_plus_worst: f64,
    /// Common-mode gain A_cm at DC, V/V (signed; 0 when the ratios match exactly).
    pub common_mode_gain: f64,
    /// Largest |A_cm| over the tolerance corners, V/V.
    pub common_mode_gain_worst: f64,
    /// Common-mode rejection |A_d/A_cm| at DC, dB; `None` (JSON null) when A_cm is 0.
    pub cmrr_db: Option<f64>,
    /// Lowest common-mode rejection over the tolerance corners, dB; `None` when A_cm is 0
    /// at every corner.
    pub cmrr_worst_db: Option<f64>,
    /// Lowest common-mode input level that keeps the op-amp's inputs inside the headroom
    /// limits at every corner, V.
    pub common_mode_min_v: f64,
    /// Highest such level, V.
    pub common_mode_max_v: f64,
    /// The slot pairs whose values should match, and whether they come from one line.
    pub pairs: Vec<PairReport>,
}

/// The figures of one build. Nominal unless the name says otherwise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Metrics {
    /// Mid-band gain from the source EMF to the load with an ideal op-amp, V/V (signed).
    pub gain: f64,
    /// |gain − target| / |target|.
    pub gain_error: f64,
    /// Worst-case range of the mid-band gain (signed).
    pub gain_min: f64,
    /// Highest of the worst-case range (signed), V/V.
    pub gain_max: f64,
    /// Input resistance the source sees at mid-band, Ω.
    pub input_resistance: f64,
    /// Lowest input resistance over the tolerance corners, Ω.
    pub input_resistance_worst: f64,
    /// Exact −3 dB low corner of the whole response.
    pub low_corner_hz: Option<f64>,
    /// Highest low corner over the tolerance corners, Hz; `None` when some corner has no passband.
    pub low_corner_worst_hz: Option<f64>,
    /// Loss at the band's low edge against the ideal mid-band gain, dB.
    pub band_low_loss_db: f64,
    /// Highest loss at the band's low edge over the tolerance corners, dB.
    pub band_low_loss_worst_db: f64,
    /// Exact −3 dB high corner (finite GBW), `None` with an ideal amplifier.
    pub high_corner_hz: Option<f64>,
    /// Lowest high corner over the tolerance corners, Hz.
    pub high_corner_worst_hz: Option<f64>,
    /// GBW / noise gain, the single-pole estimate.
    pub high_corner_estimate_hz: Option<f64>,
    /// Loss at the band's high edge against the ideal mid-band gain, dB.
    pub band_high_loss_db: f64,
    /// Highest loss at the band's high edge over the tolerance corners, dB.
    pub band_high_loss_worst_db: f64,
    /// Noise gain 1/β at mid-band, V/V (sets the bandwidth with a finite GBW).
    pub noise_gain: f64,
    /// Nominal DC output: divider and nominal bias current, no offset voltage.
    pub output_dc_v: f64,
    /// Lowest DC output over the resistor tolerances and op-amp error signs, V.
    pub output_dc_min_v: f64,
    /// Highest DC output over the same corners, V.
    pub output_dc_max_v: f64,
    /// Nominal output DC error the `offset` goal counts.
    pub offset_error_v: f64,
    /// Worst-case output peak the headroom allows around the bias point.
    pub swing_peak_v: f64,
    /// Worst-case input peak: swing / |gain|max.
    pub input_range_peak_v: f64,
    /// Nominal current down the bias divider, A.
    pub divider_current_a: f64,
    /// Highest divider current over the tolerance corners.
    pub divider_current_worst_a: f64,
    /// Number of physical pieces.
    pub part_count: usize,
    /// Distinct stock lines the build takes from (see [`Build::bom_lines`]).
    pub bom_lines: usize,
    /// Cost of the pieces, in the inventory's currency; `None` when a cost is unknown.
    pub cost: Option<f64>,
    /// Each coupling network's corner.
    pub networks: Vec<NetworkReport>,
    /// Largest |output DC error| of a DC-coupled stage over the resistor tolerances and the
    /// op-amp error signs, the source at 0 V (Ib, Ios and Vos through the stage), V.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub output_offset_worst_v: Option<f64>,
    /// The two-input figures of a difference stage.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub difference: Option<DifferenceReport>,
    /// Highest input-referred noise over the band across the tolerance corners, V rms (once
    /// one is over the limit, the highest found so far); only with `input_noise_max` (the
    /// band integral at every vertex is too slow otherwise).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub input_noise_worst_v: Option<f64>,
    /// Highest output current at the peak (load and feedback network), A; only with
    /// `output_current_max` (`analysis::amplifier`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub output_current_peak_a: Option<f64>,
    /// Lowest and highest voltage at either input, V; only with `input_common_mode`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub input_voltage_range_v: Option<(f64, f64)>,
    /// Supply ripple at the load, V rms (nominal); only with `supply_ripple`
    /// (`analysis::ripple`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ripple_out_v: Option<f64>,
    /// Highest supply ripple at the load over the tolerance corners, V rms.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ripple_out_worst_v: Option<f64>,
}

/// Everything known about one build.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Evaluation {
    /// The build's figures.
    pub metrics: Metrics,
    /// Every requirement judged, pass or fail.
    pub checks: Vec<Check>,
    /// DC across each capacitor.
    pub caps: Vec<CapReport>,
    /// Power in each resistor.
    pub power: Vec<PowerReport>,
    /// The ranking objective (lower is better).
    pub score: f64,
    /// True when every check passes.
    pub pass: bool,
    /// Monte Carlo yield, for the builds that are reported (see [`complete`]).
    #[serde(rename = "yield", skip_serializing_if = "Option::is_none")]
    pub yield_report: Option<yield_mc::YieldReport>,
    /// Output noise over the band, for the builds that are reported (see [`complete`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub noise: Option<noise::NoiseReport>,
    /// Output DC error by cause, for the builds that are reported (see [`complete`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dc_budget: Option<budget::DcBudget>,
}

/// Add what is too slow for every candidate but wanted for a reported build: noise over the
/// band, the output DC budget by cause, and (with options) the Monte Carlo yield.
pub fn complete(
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    evaluation: &mut Evaluation,
    yield_options: Option<&yield_mc::YieldOptions>,
) {
    let inputs = noise::NoiseInputs::of(spec);
    evaluation.noise = Some(noise::noise(&inputs, stage, spec, &build.values()));
    evaluation.dc_budget = Some(budget::dc_budget(spec, stage, build));
    evaluation.yield_report = yield_options
        .filter(|o| o.samples > 0)
        .map(|o| yield_mc::monte_carlo(spec, stage, build, o));
}

/// Generic per-slot share of the objective: pieces, capacitance and cost.
pub fn slot_points(spec: &Spec, part: &Part) -> f64 {
    pieces_points(
        spec,
        part.kind,
        &part.pieces[0],
        part.pieces.get(1),
        part.locked,
    )
}

/// [`slot_points`] of a realisation given by its pieces (one, or two), so that the search can
/// score a realisation without building its [`Part`]: the objective's part terms
/// (`objective::part_points`), one function for both, so the figures agree to the last bit.
pub fn pieces_points(
    spec: &Spec,
    kind: PartKind,
    a: &crate::build::Piece,
    b: Option<&crate::build::Piece>,
    locked: bool,
) -> f64 {
    crate::objective::part_points(spec, kind, a, b, locked)
}

/// The ranking objective of a build (README, "Goals"): every term of `objective::TERMS`.
pub fn score(spec: &Spec, stage: &dyn Circuit, build: &Build) -> f64 {
    let v = build.values();
    crate::objective::circuit_points(spec, &stage.figures(spec, &v))
        + build
            .parts
            .iter()
            .map(|p| slot_points(spec, p))
            .sum::<f64>()
        + crate::objective::line_points(spec, build.bom_lines())
}

fn fold_range(it: impl Iterator<Item = f64>) -> (f64, f64) {
    it.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
        (lo.min(x), hi.max(x))
    })
}

/// True when a cheap look at a build already shows a check that fails — the gain window, the
/// input resistance, the swing around the DC range, the divider current, the slew rate, the
/// corners of the coupling networks and the losses at the band's edges — so that the search
/// need not run the whole analysis (the corners by bisection at every vertex) on it.
///
/// Never true for a build [`evaluate`] passes: each test is the check's own figure at one
/// vertex, with a margin well above the check's 10⁻¹² tolerance; a band edge more than 3 dB
/// down puts that vertex's corner past the edge (`response::low_corner` guards it). The
/// search uses it, brute force does not, and `tests/exact.rs` holds them to the same builds.
pub fn quick_fail(spec: &Spec, stage: &dyn Circuit, build: &Build) -> bool {
    quick_failure(spec, stage, build).is_some()
}

/// The checks of [`quick_failure`] that read resistors only — the gain window and the input
/// resistance at every vertex of the resistors, the slew rate, the swing around the DC range,
/// the divider current — for a circuit whose mid-band gain, input resistance and DC point
/// read no capacitor (`Circuit::dc_from_resistors`): `parts` may then hold any capacitor
/// (the search puts placeholders in the slots still open). The name of the first failing,
/// as `quick_failure` would give it for every completion of these resistors.
pub fn dc_failure(spec: &Spec, stage: &dyn Circuit, parts: &[&Part]) -> Option<&'static str> {
    debug_assert!(stage.dc_from_resistors());
    let resistors = common::vertices_where(spec, parts, |p| p.kind == PartKind::Resistor);
    resistor_failure(spec, stage, &resistors, &resistors)
}

/// The checks of [`quick_failure`] before the coupling networks: the gain window and the input
/// resistance at each of `vertices`, the slew rate at their highest |gain|, the swing around the
/// DC range over `dc_vertices` (the resistors' corners) and the op-amp's error signs, and the
/// divider current. One function for [`quick_failure`] (every part's corners) and
/// [`dc_failure`] (the resistors' alone), so the two never judge differently.
fn resistor_failure(
    spec: &Spec,
    stage: &dyn Circuit,
    vertices: &[Vec<f64>],
    dc_vertices: &[Vec<f64>],
) -> Option<&'static str> {
    const REL: f64 = 1e-9;
    // The gain window and the input resistance, at every vertex.
    let mut gain_max: f64 = 0.0;
    for x in vertices {
        let g = stage.mid_gain(spec, x).abs();
        gain_max = gain_max.max(g);
        if let Some(t) = spec.gain_tolerance {
            let target = spec.gain.abs();
            if g < target * (1.0 - t) * (1.0 - REL) || g > target * (1.0 + t) * (1.0 + REL) {
                return Some("gain");
            }
        }
        if let Some(min) = spec.input_resistance_min {
            if stage.input_resistance(spec, x) < min * (1.0 - REL) {
                return Some("input_resistance");
            }
        }
    }
    // At the worst-case highest |gain| (the vertices' largest), as `checks` judges it.
    if let (Some(sr), Some(peak)) = (spec.amplifier.slew_rate, spec.output_peak_at(gain_max)) {
        if sr / (2.0 * std::f64::consts::PI * peak) < spec.band.1 * (1.0 - REL) {
            return Some("slew_rate");
        }
    }
    // The swing around the DC range, as `evaluate` finds it.
    let error_corners = if spec.worst_case() {
        DcErrors::corners(spec)
    } else {
        vec![DcErrors::nominal(spec)]
    };
    let (mut dc_min, mut dc_max, mut current) = (f64::INFINITY, f64::NEG_INFINITY, 0.0f64);
    for x in dc_vertices {
        for e in &error_corners {
            let p = stage.dc(spec, x, e);
            dc_min = dc_min.min(p.v_out);
            dc_max = dc_max.max(p.v_out);
            current = current.max(p.divider_current);
        }
    }
    let swing = common::swing(spec, dc_min, dc_max);
    let short = |value: f64, limit: f64| value < limit - REL * limit.abs().max(1e-12);
    let fails_swing = match (spec.output_peak, spec.input_peak) {
        (_, Some(inp)) => short(swing / gain_max, inp),
        (Some(out), None) => short(swing, out),
        (None, None) => short(swing, 0.0),
    };
    if fails_swing {
        return Some("swing");
    }
    if spec
        .bias_current_max
        .is_some_and(|max| current > max * (1.0 + REL))
    {
        return Some("divider_current");
    }
    None
}

/// The name of the check [`quick_fail`] finds failing (`None`: none of its checks fails).
pub fn quick_failure(spec: &Spec, stage: &dyn Circuit, build: &Build) -> Option<&'static str> {
    const REL: f64 = 1e-9;
    const HALF_POWER: f64 = common::THREE_DB + 1e-6;
    let parts: Vec<&Part> = build.parts.iter().collect();
    let vertices = common::vertices(spec, &parts);
    let (f_lo, f_hi) = spec.band;
    let dc_vertices = common::vertices_where(spec, &parts, |p| p.kind == PartKind::Resistor);
    if let Some(check) = resistor_failure(spec, stage, &vertices, &dc_vertices) {
        return Some(check);
    }
    // Coupling-network corners (each network's own 1/(2πRC)) and the band edges' losses.
    let opamp = OpAmp::of(spec);
    let default_rule = spec.band_loss_max.is_none() && spec.corner_low_max.is_none();
    for x in &vertices {
        if let Some(max) = spec.corner_low_max {
            if stage
                .networks(spec, x)
                .iter()
                .any(|n| n.corner() > max * (1.0 + REL))
            {
                return Some("corner");
            }
        }
        let low = response::loss_db(stage, spec, x, &opamp, f_lo);
        match spec.band_loss_max {
            Some(max) if low > max * (1.0 + REL) + 1e-12 => return Some("band_low_loss"),
            None if default_rule && low > HALF_POWER => return Some("low_corner"),
            _ => {}
        }
        if opamp.gbw.is_some() {
            let high = response::loss_db(stage, spec, x, &opamp, f_hi);
            match spec.band_loss_max {
                Some(max) if high > max * (1.0 + REL) + 1e-12 => return Some("band_high_loss"),
                None if high > HALF_POWER => return Some("high_corner"),
                _ => {}
            }
        }
    }
    None
}

/// Analyse a build exactly. `stock`, when given, adds the quantity check.
pub fn evaluate(
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    stock: Option<&Stock>,
) -> Evaluation {
    evaluate_with(spec, stage, build, stock, true)
}

/// [`evaluate`] without the −3 dB corners (found by bisection at every vertex, for the
/// reports): the same checks, passes and score — every check's verdict reads the losses at the
/// band's edges, not the corners — for the search to judge a complete build by. Its metrics
/// hold no corners, so a reported build is evaluated again in full.
pub fn judge(spec: &Spec, stage: &dyn Circuit, build: &Build, stock: Option<&Stock>) -> Evaluation {
    evaluate_with(spec, stage, build, stock, false)
}

fn evaluate_with(
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    stock: Option<&Stock>,
    corners: bool,
) -> Evaluation {
    let slots = stage.slots();
    let parts: Vec<&Part> = build.parts.iter().collect();
    let v = build.values();
    let opamp = OpAmp::of(spec);
    let vertices = common::vertices(spec, &parts);
    let (f_lo, f_hi) = spec.band;

    // Frequency-domain figures at nominal and over every corner.
    let gain = stage.mid_gain(spec, &v);
    let (gain_min, gain_max) = fold_range(vertices.iter().map(|x| stage.mid_gain(spec, x)));
    let gain_mag_max = gain_min.abs().max(gain_max.abs());
    let rin = stage.input_resistance(spec, &v);
    let rin_worst = vertices
        .iter()
        .map(|x| stage.input_resistance(spec, x))
        .fold(f64::INFINITY, f64::min);
    let (low, high, low_worst, high_worst) = if corners {
        let low = response::low_corner(stage, spec, &v, &opamp);
        let high = response::high_corner(stage, spec, &v, &opamp);
        let low_worst = response::worst_low_corner(stage, spec, &vertices, &opamp, low);
        let high_worst = if opamp.gbw.is_some() {
            response::worst_high_corner(stage, spec, &vertices, &opamp, high)
        } else {
            None
        };
        (low, high, low_worst, high_worst)
    } else {
        (None, None, None, None)
    };
    let loss_at = |x: &[f64], f: f64| response::loss_db(stage, spec, x, &opamp, f);
    // A passband at all: the band's centre less than 3 dB down at every vertex (where a low
    // corner exists to be checked).
    let centre = (f_lo * f_hi).sqrt();
    let passband = vertices
        .iter()
        .all(|x| loss_at(x, centre) < common::THREE_DB);
    let low_loss = loss_at(&v, f_lo);
    let low_loss_worst = vertices
        .iter()
        .map(|x| loss_at(x, f_lo))
        .fold(f64::NEG_INFINITY, f64::max);
    let high_loss = loss_at(&v, f_hi);
    let high_loss_worst = vertices
        .iter()
        .map(|x| loss_at(x, f_hi))
        .fold(f64::NEG_INFINITY, f64::max);
    let noise_gain = stage.noise_gain(spec, &v);

    let networks: Vec<NetworkReport> = stage
        .networks(spec, &v)
        .iter()
        .enumerate()
        .map(|(i, n)| NetworkReport {
            name: n.name.to_string(),
            cap_slot: slots[n.cap_slot].name.to_string(),
            resistance: n.resistance,
            corner_hz: n.corner(),
            corner_worst_hz: vertices
                .iter()
                .map(|x| stage.networks(spec, x)[i].corner())
                .fold(f64::NEG_INFINITY, f64::max),
        })
        .collect();

    // DC: nominal, and every tolerance corner with every sign of the op-amp errors.
    let nominal_errors = DcErrors::nominal(spec);
    let dc = stage.dc(spec, &v, &nominal_errors);
    let error_corners = if spec.worst_case() {
        DcErrors::corners(spec)
    } else {
        vec![nominal_errors]
    };
    // Capacitors are open at DC: only the resistors' tolerances move the DC point.
    let dc_vertices = common::vertices_where(spec, &parts, |p| p.kind == PartKind::Resistor);
    let dc_points: Vec<_> = dc_vertices
        .iter()
        .flat_map(|x| error_corners.iter().map(move |e| (x, stage.dc(spec, x, e))))
        .collect();
    let (dc_min, dc_max) = fold_range(dc_points.iter().map(|(_, p)| p.v_out));
    let swing = common::swing(spec, dc_min, dc_max);
    let input_range = swing / gain_mag_max;
    let output_offset_worst = stage.output_offset(spec, &v, &nominal_errors).map(|_| {
        dc_vertices
            .iter()
            .flat_map(|x| {
                error_corners
                    .iter()
                    .map(move |e| stage.output_offset(spec, x, e).unwrap_or(0.0).abs())
            })
            .fold(0.0, f64::max)
    });
    let difference = difference_report(spec, stage, build, &dc_vertices);

    // Capacitor DC, nominal and over the corners.
    let nominal_bias = stage.cap_bias(spec, &v, &dc);
    let caps: Vec<CapReport> = nominal_bias
        .iter()
        .enumerate()
        .map(|(i, b)| {
            let (lo, hi) = fold_range(
                dc_points
                    .iter()
                    .map(|(x, p)| stage.cap_bias(spec, x, p)[i].volts),
            );
            let part = &build.parts[b.slot];
            let (pos, neg) = if b.volts >= 0.0 {
                (b.a_node, b.b_node)
            } else {
                (b.b_node, b.a_node)
            };
            CapReport {
                slot: slots[b.slot].name.to_string(),
                volts: b.volts,
                volts_min: lo,
                volts_max: hi,
                positive_side: pos.to_string(),
                negative_side: neg.to_string(),
                polarized: part.polarized(),
                rating: part.voltage_rating(),
                rating_needed: super::rating::rating_needed(
                    spec,
                    stage,
                    b.slot,
                    lo.abs().max(hi.abs()),
                ),
            }
        })
        .collect();

    let ripple = super::ripple::figures(spec, stage, &v, &vertices);
    let (output_current, input_voltage_range) = {
        let points: Vec<(&Vec<f64>, crate::circuit::DcPoint)> =
            dc_points.iter().map(|(x, p)| (*x, *p)).collect();
        super::amplifier::worst(spec, stage, &points, gain_mag_max, swing)
    };
    let out_peak = spec.required_output_peak().unwrap_or(swing.max(0.0));
    let power: Vec<PowerReport> = stage
        .resistor_power(spec, &v, &dc, out_peak)
        .into_iter()
        .map(|(slot, watts)| PowerReport {
            slot: slots[slot].name.to_string(),
            watts,
            rating: power_rating(&build.parts[slot]),
        })
        .collect();

    let metrics = Metrics {
        gain,
        gain_error: crate::objective::gain::error(spec, gain),
        gain_min,
        gain_max,
        input_resistance: rin,
        input_resistance_worst: rin_worst,
        low_corner_hz: low,
        low_corner_worst_hz: low_worst,
        band_low_loss_db: low_loss,
        band_low_loss_worst_db: low_loss_worst,
        high_corner_hz: high,
        high_corner_worst_hz: high_worst,
        high_corner_estimate_hz: spec.amplifier.gbw.map(|g| g / noise_gain),
        band_high_loss_db: high_loss,
        band_high_loss_worst_db: high_loss_worst,
        noise_gain,
        output_dc_v: dc.v_out,
        output_dc_min_v: dc_min,
        output_dc_max_v: dc_max,
        offset_error_v: stage.offset_error(spec, &v),
        swing_peak_v: swing,
        input_range_peak_v: input_range,
        divider_current_a: dc.divider_current,
        divider_current_worst_a: dc_points
            .iter()
            .map(|(_, p)| p.divider_current)
            .fold(0.0, f64::max),
        part_count: build.piece_count(),
        bom_lines: build.bom_lines(),
        cost: build.cost(),
        networks,
        output_offset_worst_v: output_offset_worst,
        difference,
        input_noise_worst_v: spec
            .input_noise_max
            .map(|max| worst_input_noise(spec, stage, &v, &vertices, max)),
        output_current_peak_a: output_current,
        input_voltage_range_v: input_voltage_range,
        ripple_out_v: ripple.0,
        ripple_out_worst_v: ripple.1,
    };
    let mut checks = checks(spec, &metrics, &caps, &power, stock.map(|s| s.fits(&parts)));
    checks.extend(super::rating::dielectric_checks(spec, stage, build));
    let corners: Vec<super::ripple::NetworkCorner> = metrics
        .networks
        .iter()
        .map(|n| (n.name.as_str(), n.cap_slot.as_str(), n.corner_worst_hz))
        .collect();
    checks.extend(super::ripple::checks(
        spec,
        stage,
        metrics.ripple_out_worst_v,
        &corners,
    ));
    checks.extend(super::amplifier::checks(
        spec,
        metrics.output_current_peak_a,
        metrics.input_voltage_range_v,
    ));
    // The corner checks' verdicts: the band's edge at most 3 dB down at every vertex (the
    // corner lies past the edge exactly then, `response::low_corner` guards it), so that the
    // verdict needs no corner and `judge` gives the same as `evaluate`.
    let edge_ok = |loss: f64| loss <= common::THREE_DB * (1.0 + 1e-12);
    for c in checks.iter_mut() {
        match c.name.as_str() {
            "low_corner" => c.pass = passband && edge_ok(metrics.band_low_loss_worst_db),
            "high_corner" => c.pass = edge_ok(metrics.band_high_loss_worst_db),
            _ => {}
        }
    }
    let pass = checks.iter().all(|c| c.pass);
    Evaluation {
        score: score(spec, stage, build),
        metrics,
        checks,
        caps,
        power,
        pass,
        yield_report: None,
        noise: None,
        dc_budget: None,
    }
}

/// The two-input figures at nominal and over the resistor corners `vertices`: the gains
/// from `Circuit::dc_gains`, each corner's rejection |A_d/A_cm| (the extreme-value rule of
/// the whole analysis), and the common-mode range: the op-amp's inputs sit at V_cm·k with k
/// the + input's divider ratio A₂/(1 + R_2/R₁) (module docs of `circuit::difference`), taken
/// inside the output's headroom limits (the input range an op-amp's datasheet gives is
/// usually no wider: common practice).
fn difference_report(
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    vertices: &[Vec<f64>],
) -> Option<DifferenceReport> {
    let v = build.values();
    let (_, acm) = stage.dc_gains(spec, &v)?;
    let (rin_m, rin_p) = stage.input_resistances(spec, &v)?;
    let db = |ad: f64, acm: f64| (acm != 0.0).then(|| 20.0 * (ad / acm).abs().log10());
    let (mut worst_ratio, mut acm_worst) = (f64::INFINITY, 0.0f64);
    let (mut rm_worst, mut rp_worst, mut k_max) = (f64::INFINITY, f64::INFINITY, 0.0f64);
    for x in vertices {
        if let Some((ad, cm)) = stage.dc_gains(spec, x) {
            acm_worst = acm_worst.max(cm.abs());
            if cm != 0.0 {
                worst_ratio = worst_ratio.min((ad / cm).abs());
            }
            // V+ = V_cm·k at an ideal op-amp: k = (A_d + A_cm/2)/(1 + A₁) with A₁ the
            // inverting gain, which is A_d − A_cm/2.
            let a1 = ad - cm / 2.0;
            k_max = k_max.max((ad + cm / 2.0) / (1.0 + a1));
        }
        if let Some((m, p)) = stage.input_resistances(spec, x) {
            rm_worst = rm_worst.min(m);
            rp_worst = rp_worst.min(p);
        }
    }
    let (ad, _) = stage.dc_gains(spec, &v)?;
    let (lo, hi) = spec.output_limits();
    let pairs = stage
        .matched_pairs()
        .iter()
        .map(|&(a, b)| {
            let (pa, pb) = (&build.parts[a], &build.parts[b]);
            let one = |p: &Part| match p.pieces.as_slice() {
                [piece] => piece.line,
                _ => None,
            };
            let slots = stage.slots();
            PairReport {
                slots: [slots[a].name.to_string(), slots[b].name.to_string()],
                line: match (one(pa), one(pb)) {
                    (Some(x), Some(y)) if x == y => Some(x),
                    _ => None,
                },
            }
        })
        .collect();
    Some(DifferenceReport {
        input_resistance_minus: rin_m,
        input_resistance_plus: rin_p,
        input_resistance_minus_worst: rm_worst,
        input_resistance_plus_worst: rp_worst,
        common_mode_gain: acm,
        common_mode_gain_worst: acm_worst,
        cmrr_db: db(ad, acm),
        cmrr_worst_db: worst_ratio.is_finite().then(|| 20.0 * worst_ratio.log10()),
        common_mode_min_v: lo / k_max,
        common_mode_max_v: hi / k_max,
        pairs,
    })
}

/// Input-referred noise over the band (output rms over the band ÷ |mid-band gain|,
/// `analysis::noise`) at the nominal values and every tolerance vertex, the highest. Noise is
/// not monotone in a capacitor, so every vertex is computed; once the nominal build or a
/// vertex is over `max` the rest cannot change the verdict, and that figure is returned.
fn worst_input_noise(
    spec: &Spec,
    stage: &dyn Circuit,
    v: &[f64],
    vertices: &[Vec<f64>],
    max: f64,
) -> f64 {
    let inputs = noise::NoiseInputs::of(spec);
    let mut worst = noise::noise(&inputs, stage, spec, v).input_rms_v;
    for x in vertices {
        if worst > max {
            break;
        }
        worst = worst.max(noise::noise(&inputs, stage, spec, x).input_rms_v);
    }
    worst
}

/// Power rating of a realisation: the weakest piece scaled by its share (series pieces carry
/// the same current, P_i = P·R_i/R; parallel pieces the same voltage, P_i = P·R/R_i).
fn power_rating(part: &Part) -> Option<f64> {
    let ratings: Option<Vec<f64>> = part.pieces.iter().map(|p| p.power).collect();
    let ratings = ratings?;
    let share = |r: f64| match part.arrangement {
        crate::build::Arrangement::Single => 1.0,
        crate::build::Arrangement::Series => r / part.value,
        crate::build::Arrangement::Parallel => part.value / r,
    };
    part.pieces
        .iter()
        .zip(ratings)
        .map(|(p, rating)| rating / share(p.value))
        .reduce(f64::min)
}

fn checks(
    spec: &Spec,
    m: &Metrics,
    caps: &[CapReport],
    power: &[PowerReport],
    fits: Option<bool>,
) -> Vec<Check> {
    let worst = if spec.worst_case() {
        "worst-case"
    } else {
        "nominal"
    };
    let mut out = Vec::new();
    if let Some(min) = spec.input_resistance_min {
        out.push(Check::new(
            "input_resistance",
            format!("{worst} input resistance"),
            m.input_resistance_worst,
            Bound::Min,
            min,
            Unit::Ohm,
        ));
    }
    if let Some(t) = spec.gain_tolerance {
        let target = spec.gain.abs();
        let (lo, hi) = (
            m.gain_min.abs().min(m.gain_max.abs()),
            m.gain_min.abs().max(m.gain_max.abs()),
        );
        // A window the spec did not ask for says where it comes from.
        let default = if spec.gain_tolerance_default {
            format!(" (default ±{})", crate::value::format(t, Unit::Percent))
        } else {
            String::new()
        };
        out.push(Check::new(
            "gain_low",
            format!("{worst} lowest |gain|{default}"),
            lo,
            Bound::Min,
            target * (1.0 - t),
            Unit::Percent,
        ));
        out.push(Check::new(
            "gain_high",
            format!("{worst} highest |gain|{default}"),
            hi,
            Bound::Max,
            target * (1.0 + t),
            Unit::Percent,
        ));
    }
    if let Some(max) = spec.corner_low_max {
        for n in &m.networks {
            out.push(Check::new(
                &format!("corner_{}", n.cap_slot),
                format!("{worst} corner of the {} network ({})", n.name, n.cap_slot),
                n.corner_worst_hz,
                Bound::Max,
                max,
                Unit::Hertz,
            ));
        }
    }
    if let Some(max) = spec.band_loss_max {
        out.push(Check::new(
            "band_low_loss",
            format!("{worst} loss at the band's low edge"),
            m.band_low_loss_worst_db,
            Bound::Max,
            max,
            Unit::Decibel,
        ));
        if spec.amplifier.gbw.is_some() {
            out.push(Check::new(
                "band_high_loss",
                format!("{worst} loss at the band's high edge (GBW)"),
                m.band_high_loss_worst_db,
                Bound::Max,
                max,
                Unit::Decibel,
            ));
        }
    } else if spec.amplifier.gbw.is_some() {
        // Without a loss budget the band must at least lie inside the −3 dB corners.
        out.push(Check::new(
            "high_corner",
            format!("{worst} high corner"),
            m.high_corner_worst_hz.unwrap_or(f64::INFINITY),
            Bound::Min,
            spec.band.1,
            Unit::Hertz,
        ));
    }
    if spec.band_loss_max.is_none() && spec.corner_low_max.is_none() {
        out.push(Check::new(
            "low_corner",
            format!("{worst} low corner"),
            m.low_corner_worst_hz.unwrap_or(f64::NAN),
            Bound::Max,
            spec.band.0,
            Unit::Hertz,
        ));
    }
    match (spec.output_peak, spec.input_peak) {
        (_, Some(inp)) => out.push(Check::new(
            "input_range",
            format!("{worst} input peak before clipping"),
            m.input_range_peak_v,
            Bound::Min,
            inp,
            Unit::Volt,
        )),
        (Some(outp), None) => out.push(Check::new(
            "output_swing",
            format!("{worst} output peak before clipping"),
            m.swing_peak_v,
            Bound::Min,
            outp,
            Unit::Volt,
        )),
        (None, None) => out.push(Check::new(
            "output_swing",
            format!("{worst} output peak before clipping"),
            m.swing_peak_v,
            Bound::Min,
            0.0,
            Unit::Volt,
        )),
    }
    let gain_mag_max = m.gain_min.abs().max(m.gain_max.abs());
    if let (Some(sr), Some(peak)) = (spec.amplifier.slew_rate, spec.output_peak_at(gain_mag_max)) {
        // Full-power bandwidth SR / (2π V_peak) must reach the band's top (any op-amp text),
        // with V_peak the required input peak at the worst-case highest |gain|.
        out.push(Check::new(
            "slew_rate",
            "full-power bandwidth at the required peak".into(),
            sr / (2.0 * std::f64::consts::PI * peak),
            Bound::Min,
            spec.band.1,
            Unit::Hertz,
        ));
    }
    for c in caps {
        if let Some(rating) = c.rating {
            out.push(Check::new(
                &format!("rating_{}", c.slot),
                super::rating::rating_label(spec, &c.slot, worst),
                rating,
                Bound::Min,
                c.rating_needed,
                Unit::Volt,
            ));
        }
        if c.polarized {
            // A polarised part needs one sign of DC across it at every corner.
            let least = if c.volts >= 0.0 {
                c.volts_min
            } else {
                -c.volts_max
            };
            out.push(Check::new(
                &format!("polarity_{}", c.slot),
                format!("{} forward bias, + to {}", c.slot, c.positive_side),
                least,
                Bound::Min,
                0.0,
                Unit::Volt,
            ));
        }
    }
    for p in power {
        if let Some(rating) = p.rating {
            out.push(Check::new(
                &format!("power_{}", p.slot),
                format!(
                    "{} power (≤ {:.0} % of its rating)",
                    p.slot,
                    100.0 * RESISTOR_DERATING
                ),
                p.watts,
                Bound::Max,
                rating * RESISTOR_DERATING,
                Unit::Watt,
            ));
        }
    }
    if let (Some(max), Some(offset)) = (spec.output_offset_max, m.output_offset_worst_v) {
        out.push(Check::new(
            "output_offset_max",
            format!("{worst} output DC error, source at 0 V"),
            offset,
            Bound::Max,
            max,
            Unit::Volt,
        ));
    }
    if let Some(d) = &m.difference {
        if let Some(min) = spec.cmrr_min {
            out.push(Check::new(
                "cmrr_min",
                format!("{worst} common-mode rejection at DC"),
                d.cmrr_worst_db.unwrap_or(f64::INFINITY),
                Bound::Min,
                min,
                Unit::Decibel,
            ));
        }
        // The source's common-mode level with half the differential peak on either side.
        let half = spec
            .required_output_peak()
            .map_or(0.0, |p| p / spec.gain.abs() / 2.0);
        out.push(Check::new(
            "common_mode_high",
            format!("{worst} top of the common-mode range"),
            d.common_mode_max_v,
            Bound::Min,
            spec.source_dc + half,
            Unit::Volt,
        ));
        out.push(Check::new(
            "common_mode_low",
            format!("{worst} bottom of the common-mode range"),
            d.common_mode_min_v,
            Bound::Max,
            spec.source_dc - half,
            Unit::Volt,
        ));
    }
    if let Some(max) = spec.bias_current_max {
        out.push(Check::new(
            "divider_current",
            format!("{worst} bias divider current"),
            m.divider_current_worst_a,
            Bound::Max,
            max,
            Unit::Ampere,
        ));
    }
    if let (Some(max), Some(noise_worst)) = (spec.input_noise_max, m.input_noise_worst_v) {
        out.push(Check::new(
            "input_noise",
            format!("{worst} input-referred noise over the band"),
            noise_worst,
            Bound::Max,
            max,
            Unit::Volt,
        ));
    }
    if let Some(fits) = fits {
        out.push(Check::new(
            "quantity",
            "pieces on hand for every line".into(),
            if fits { 1.0 } else { 0.0 },
            Bound::Min,
            1.0,
            Unit::Percent,
        ));
    }
    out
}

#[cfg(test)]
mod divider_current_tests {
    use super::*;
    use crate::build::Piece;

    #[test]
    fn divider_current_is_checked_against_its_limit() {
        // Ohm's law (common practice): 9 V across 10 k + 10 k draws 450 µA; across
        // 1 M + 1 M, 4.5 µA. With 1 % parts the worst case is 9 V / (2 · 9.9 kΩ).
        let spec = Spec::from_toml(
            "[stage]\nkind = \"inverting\"\nsupply = 9\ngain = -10\nload = 10000\nband = [20, 20000]\nbias_current_max = \"100 uA\"\n",
        )
        .unwrap();
        let stage = crate::circuit::circuit_for(spec.stage);
        let r = |v: f64| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let c = |v: f64| Part::single(PartKind::Capacitor, Piece::plain(v, 0.1));
        let judge = |div: f64| {
            let build = Build {
                parts: vec![r(10e3), r(100e3), r(div), r(div), c(10e-6), c(10e-6)],
            };
            let e = evaluate(&spec, stage, &build, None);
            let check = e
                .checks
                .iter()
                .find(|c| c.name == "divider_current")
                .cloned()
                .unwrap();
            (e.metrics.divider_current_worst_a, check.pass)
        };
        let (i, pass) = judge(10e3);
        assert!((i - 9.0 / 19.8e3).abs() < 1e-12);
        assert!(!pass);
        assert!(judge(1e6).1);
    }
}
