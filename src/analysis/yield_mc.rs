//! Monte Carlo yield: the share of real builds that meet each requirement when every piece takes
//! a random value inside its tolerance and the op-amp a random set of input errors.
//!
//! The worst case (`analysis::evaluate`) asks whether *every* build inside the tolerance box
//! works; the yield says how many do when it does not. Each sample is one real build, judged
//! the way the nominal analysis judges a build: the same requirements, under the same names
//! as `analysis::evaluate`'s checks, on that sample's values.
//!
//! Models (stated once, here):
//! * Pieces: each physical piece is drawn independently. `Uniform` spreads it evenly over
//!   ±tolerance; `Normal` takes the tolerance as 3σ and redraws anything beyond ±tolerance
//!   (truncation), so that no sample leaves the datasheet band (common practice: a part
//!   outside its marked tolerance fails incoming inspection). A two-piece part combines its
//!   two drawn pieces the way `Part::pair` does (resistors add in series, capacitors in parallel).
//! * Op-amp: datasheet error figures are maxima, not distributions, so each sample takes the
//!   bias current at its full magnitude with a random sign (both inputs alike, as the input
//!   transistors share one type), the offset current uniform in ±I_os and the offset voltage
//!   uniform in ±V_os. Uniform within the maxima is a cautious common-practice model: real
//!   parts cluster nearer zero, so this model understates the yield rather than overstating it.
//!   The op-amp draws are uniform whatever `Distribution` the pieces use.
//!
//! Speed: the response is monotone below and above the passband, so "corner ≤ limit" is decided
//! by one loss evaluation at the limit ("loss there ≤ 3.0103 dB"), not a bisection per sample.

use super::check::{Bound, CAP_DERATING, RESISTOR_DERATING};
use super::response;
use crate::build::{Arrangement, Build, Part, Piece};
use crate::circuit::{common, Circuit, DcErrors, OpAmp};
use crate::spec::Spec;
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use rand_distr::StandardNormal;
use serde::Serialize;

pub use crate::vocab::Distribution;

/// What to sample.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct YieldOptions {
    /// Number of simulated builds; 0 is taken as 1 (never a division by zero).
    pub samples: usize,
    /// Seed of the generator: the same seed gives the same report.
    pub seed: u64,
    /// How each piece's value spreads inside its tolerance.
    pub distribution: Distribution,
}

/// Default sample count: 10 000 gives a standard error of at most 0.5 % on a fraction
/// (√(0.25/10 000)), enough to tell 95 % from 99 %.
pub const DEFAULT_SAMPLES: usize = 10_000;

impl Default for YieldOptions {
    fn default() -> YieldOptions {
        YieldOptions {
            samples: DEFAULT_SAMPLES,
            seed: 1,
            distribution: Distribution::Uniform,
        }
    }
}

/// Fractions (0..1) of the sampled builds that pass.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct YieldReport {
    /// Number of simulated builds.
    pub samples: usize,
    /// Seed of the generator.
    pub seed: u64,
    /// How each piece's value was drawn.
    pub distribution: Distribution,
    /// Builds that pass every check.
    pub overall: f64,
    /// Per check, in `analysis::evaluate`'s order and under its names (all but `quantity`,
    /// which depends on the stock, not on the sample).
    pub by_check: Vec<(String, f64)>,
}

impl YieldReport {
    /// Standard error of a fraction p from n samples, √(p(1 − p)/n) (binomial proportion).
    pub fn standard_error(&self, p: f64) -> f64 {
        (p * (1.0 - p) / self.samples.max(1) as f64).sqrt()
    }

    /// The yield of one check by name.
    pub fn check(&self, name: &str) -> Option<f64> {
        self.by_check
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, y)| *y)
    }
}

/// The value of a part built from drawn pieces (one value per piece, in `part.pieces` order),
/// combined exactly as `Part::pair` combines nominal pieces.
pub fn part_value(part: &Part, pieces: &[f64]) -> f64 {
    match (part.arrangement, pieces) {
        (Arrangement::Single, [a, ..]) => *a,
        (Arrangement::Series | Arrangement::Parallel, [a, b, ..]) => {
            Part::pair(
                part.kind,
                part.arrangement,
                Piece::plain(*a, 0.0),
                Piece::plain(*b, 0.0),
            )
            .value
        }
        // A part without its pieces drawn keeps its nominal value.
        _ => part.value,
    }
}

/// 3.0103 dB = 20·log10(√2), the half-power point (as `response`).
const HALF_POWER_DB: f64 = 10.0 * std::f64::consts::LOG10_2;

/// The pass rule of `analysis::Check`: within 1e-12 (relative) of the limit, and not NaN.
fn passes(value: f64, bound: Bound, limit: f64) -> bool {
    let margin = match bound {
        Bound::Min => value - limit,
        Bound::Max => limit - value,
    };
    margin >= -1e-12 * limit.abs().max(1e-30) && !value.is_nan()
}

/// Power rating of a realisation, as `analysis::evaluate` takes it: the weakest piece scaled by
/// its share (series pieces carry the same current, P_i = P·R_i/R; parallel pieces the same
/// voltage, P_i = P·R/R_i). Nominal shares, as the rating is judged against nominal stress.
fn power_rating(part: &Part) -> Option<f64> {
    let ratings: Option<Vec<f64>> = part.pieces.iter().map(|p| p.power).collect();
    let share = |r: f64| match part.arrangement {
        Arrangement::Single => 1.0,
        Arrangement::Series => r / part.value,
        Arrangement::Parallel => part.value / r,
    };
    part.pieces
        .iter()
        .zip(ratings?)
        .map(|(p, rating)| rating / share(p.value))
        .reduce(f64::min)
}

/// One requirement, set up once from the spec and the nominal build, judged per sample.
#[derive(Debug, Clone, Copy)]
enum Judge {
    InputResistance(f64),
    GainLow(f64),
    GainHigh(f64),
    /// Network index and the corner limit.
    Corner(usize, f64),
    BandLowLoss(f64),
    BandHighLoss(f64),
    /// The −3 dB high corner at or above the band's top.
    HighCorner,
    /// The −3 dB low corner at or below the band's bottom (and a passband at all).
    LowCorner,
    InputRange(f64),
    OutputSwing(f64),
    /// Does not depend on the parts: pass or fail for every sample.
    Fixed(bool),
    /// Slew rate and required input peak: the full-power bandwidth at the sample's |gain|.
    SlewRate(f64, f64),
    /// Index into `cap_bias` and the rating.
    Rating(usize, f64),
    /// Index into `cap_bias` and whether the nominal DC across it is ≥ 0.
    Polarity(usize, bool),
    /// Slot of the resistor and its power limit (50 % of the rating).
    Power(usize, f64),
    /// Most |output DC error| of a DC-coupled stage, source at 0 V.
    OutputOffset(f64),
    /// Least common-mode rejection, dB.
    Cmrr(f64),
    /// The common-mode input range's top at or above this level, V.
    CommonModeHigh(f64),
    /// Its bottom at or below this level, V.
    CommonModeLow(f64),
    /// The most input-referred noise over the band, V rms.
    InputNoise(f64),
    /// The output current's limit (`analysis::amplifier`).
    OutputCurrent(f64),
    /// The lowest input voltage's limit.
    InputLow(f64),
    /// The highest input voltage's limit.
    InputHigh(f64),
    /// The ripple's limit at the load, and the supply ripple (`analysis::ripple`).
    Ripple(f64, f64),
}

/// The judges in `analysis::checks` order, with their check names.
fn judges(spec: &Spec, stage: &dyn Circuit, build: &Build) -> Vec<(String, Judge)> {
    let slots = stage.slots();
    let v = build.values();
    let mut out = Vec::new();
    if let Some(min) = spec.input_resistance_min {
        out.push(("input_resistance".to_string(), Judge::InputResistance(min)));
    }
    if let Some(t) = spec.gain_tolerance {
        let target = spec.gain.abs();
        out.push(("gain_low".into(), Judge::GainLow(target * (1.0 - t))));
        out.push(("gain_high".into(), Judge::GainHigh(target * (1.0 + t))));
    }
    if let Some(max) = spec.corner_low_max {
        for (i, n) in stage.networks(spec, &v).iter().enumerate() {
            out.push((
                format!("corner_{}", slots[n.cap_slot].name),
                Judge::Corner(i, max),
            ));
        }
    }
    let gbw = spec.amplifier.gbw.is_some();
    if let Some(max) = spec.band_loss_max {
        out.push(("band_low_loss".into(), Judge::BandLowLoss(max)));
        if gbw {
            out.push(("band_high_loss".into(), Judge::BandHighLoss(max)));
        }
    } else if gbw {
        out.push(("high_corner".into(), Judge::HighCorner));
    }
    if spec.band_loss_max.is_none() && spec.corner_low_max.is_none() {
        out.push(("low_corner".into(), Judge::LowCorner));
    }
    match (spec.output_peak, spec.input_peak) {
        (_, Some(inp)) => out.push(("input_range".into(), Judge::InputRange(inp))),
        (Some(outp), None) => out.push(("output_swing".into(), Judge::OutputSwing(outp))),
        (None, None) => out.push(("output_swing".into(), Judge::OutputSwing(0.0))),
    }
    if let Some(sr) = spec.amplifier.slew_rate {
        // Full-power bandwidth SR / (2π V_peak) against the band's top (any op-amp text): a
        // fixed verdict for a required output peak, per sample (its own |gain|) for an input
        // peak.
        match (spec.output_peak, spec.input_peak) {
            (Some(peak), _) => out.push((
                "slew_rate".into(),
                Judge::Fixed(passes(
                    sr / (2.0 * std::f64::consts::PI * peak),
                    Bound::Min,
                    spec.band.1,
                )),
            )),
            (None, Some(inp)) => out.push(("slew_rate".into(), Judge::SlewRate(sr, inp))),
            (None, None) => {}
        }
    }
    let dc = stage.dc(spec, &v, &DcErrors::nominal(spec));
    for (i, b) in stage.cap_bias(spec, &v, &dc).iter().enumerate() {
        let part = &build.parts[b.slot];
        let name = slots[b.slot].name;
        // The rating of the nominal pieces: the share of a series pair moves little with
        // tolerance, and in practice leakage, not capacitance, splits DC across series parts.
        if let Some(rating) = part.voltage_rating() {
            // The rail the part can see does not move with tolerance: judged once.
            let rail = super::rating::rating_needed(spec, stage, b.slot, 0.0);
            let judge = if rating < rail * (1.0 - 1e-12) {
                Judge::Fixed(false)
            } else {
                Judge::Rating(i, rating)
            };
            out.push((format!("rating_{name}"), judge));
        }
        if part.polarized() {
            out.push((
                format!("polarity_{name}"),
                Judge::Polarity(i, b.volts >= 0.0),
            ));
        }
    }
    for (slot, _) in stage.resistor_power(spec, &v, &dc, 0.0) {
        if let Some(rating) = power_rating(&build.parts[slot]) {
            out.push((
                format!("power_{}", slots[slot].name),
                Judge::Power(slot, rating * RESISTOR_DERATING),
            ));
        }
    }
    if let Some(max) = spec.output_offset_max {
        if stage
            .output_offset(spec, &v, &DcErrors::nominal(spec))
            .is_some()
        {
            out.push(("output_offset_max".into(), Judge::OutputOffset(max)));
        }
    }
    if stage.dc_gains(spec, &v).is_some() {
        if let Some(min) = spec.cmrr_min {
            out.push(("cmrr_min".into(), Judge::Cmrr(min)));
        }
        let half = spec
            .required_output_peak()
            .map_or(0.0, |p| p / spec.gain.abs() / 2.0);
        out.push((
            "common_mode_high".into(),
            Judge::CommonModeHigh(spec.source_dc + half),
        ));
        out.push((
            "common_mode_low".into(),
            Judge::CommonModeLow(spec.source_dc - half),
        ));
    }
    if let Some(max) = spec.input_noise_max {
        out.push(("input_noise".into(), Judge::InputNoise(max)));
    }
    for c in super::rating::dielectric_checks(spec, stage, build) {
        out.push((c.name, Judge::Fixed(c.pass)));
    }
    if let (Some(max), Some(v_r)) = (spec.ripple_out_max, spec.supply_ripple) {
        out.push(("ripple_out".into(), Judge::Ripple(max, v_r)));
    }
    {
        // The bypasses' corners (`analysis::ripple`), by network index.
        let slots = stage.slots();
        let off = stage.off_signal_path();
        for (i, n) in stage.networks(spec, &v).iter().enumerate() {
            if off.contains(&n.cap_slot) {
                out.push((
                    format!("bypass_{}", slots[n.cap_slot].name),
                    Judge::Corner(i, spec.band.0),
                ));
            }
        }
    }
    if let Some(max) = spec.amplifier.output_current_max {
        out.push(("output_current".into(), Judge::OutputCurrent(max)));
    }
    if let Some((lo, hi)) = spec.amplifier.input_common_mode {
        out.push(("input_common_mode_low".into(), Judge::InputLow(lo)));
        out.push((
            "input_common_mode_high".into(),
            Judge::InputHigh(spec.supply - hi),
        ));
    }
    out
}

/// Draws of one run: pieces by the chosen distribution, op-amp errors uniform.
struct Sampler {
    rng: StdRng,
    distribution: Distribution,
}

impl Sampler {
    /// A piece's relative deviation in units of its tolerance, in [−1, 1].
    fn piece(&mut self) -> f64 {
        match self.distribution {
            Distribution::Uniform => self.rng.gen_range(-1.0..=1.0),
            Distribution::Normal => loop {
                // σ = tolerance / 3; redraw beyond ±3σ (0.27 % of draws).
                let z: f64 = self.rng.sample::<f64, _>(StandardNormal) / 3.0;
                if z.abs() <= 1.0 {
                    return z;
                }
            },
        }
    }

    fn symmetric(&mut self) -> f64 {
        self.rng.gen_range(-1.0..=1.0)
    }

    fn sign(&mut self) -> f64 {
        if self.rng.gen::<bool>() {
            1.0
        } else {
            -1.0
        }
    }

    /// Every part's value from freshly drawn pieces, into `x`.
    fn values(&mut self, build: &Build, x: &mut Vec<f64>, drawn: &mut Vec<f64>) {
        x.clear();
        for part in &build.parts {
            drawn.clear();
            for p in &part.pieces {
                drawn.push(p.value * (1.0 + p.tolerance * self.piece()));
            }
            x.push(part_value(part, drawn));
        }
    }

    /// The op-amp's input errors: I_b± = s·I_b ± I_os/2 with s = ±1, I_os and V_os uniform
    /// within their maxima (the convention of `DcErrors::corners`).
    fn errors(&mut self, spec: &Spec) -> DcErrors {
        let a = &spec.amplifier;
        let ib = self.sign() * a.input_bias_current;
        let half = self.symmetric() * a.input_offset_current / 2.0;
        DcErrors {
            ib_plus: ib + half,
            ib_minus: ib - half,
            vos: self.symmetric() * a.input_offset_voltage,
        }
    }
}

/// Monte Carlo yield of a build: `opts.samples` random builds, each judged on every
/// requirement `analysis::evaluate` checks (but the stock quantity). Deterministic for a seed.
pub fn monte_carlo(
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    opts: &YieldOptions,
) -> YieldReport {
    let judges = judges(spec, stage, build);
    let opamp = OpAmp::of(spec);
    let (f_lo, f_hi) = spec.band;
    let centre = (f_lo * f_hi).sqrt();
    let need_networks = judges.iter().any(|(_, j)| matches!(j, Judge::Corner(..)));
    let need_caps = judges
        .iter()
        .any(|(_, j)| matches!(j, Judge::Rating(..) | Judge::Polarity(..)));
    let need_power = judges.iter().any(|(_, j)| matches!(j, Judge::Power(..)));

    let samples = opts.samples.max(1);
    let mut sampler = Sampler {
        rng: StdRng::seed_from_u64(opts.seed),
        distribution: opts.distribution,
    };
    let mut counts = vec![0usize; judges.len()];
    let mut all = 0usize;
    let mut x = Vec::with_capacity(build.parts.len());
    let mut drawn = Vec::with_capacity(2);
    for _ in 0..samples {
        sampler.values(build, &mut x, &mut drawn);
        let e = sampler.errors(spec);
        let loss = |f: f64| response::loss_db(stage, spec, &x, &opamp, f);
        let gain = stage.mid_gain(spec, &x).abs();
        let dc = stage.dc(spec, &x, &e);
        let swing = common::swing(spec, dc.v_out, dc.v_out);
        let networks = if need_networks {
            stage.networks(spec, &x)
        } else {
            Vec::new()
        };
        let caps = if need_caps {
            stage.cap_bias(spec, &x, &dc)
        } else {
            Vec::new()
        };
        let power = if need_power {
            let out_peak = spec.required_output_peak().unwrap_or(swing.max(0.0));
            stage.resistor_power(spec, &x, &dc, out_peak)
        } else {
            Vec::new()
        };
        let mut ok_all = true;
        for ((_, judge), count) in judges.iter().zip(counts.iter_mut()) {
            let ok = match *judge {
                Judge::InputResistance(min) => {
                    passes(stage.input_resistance(spec, &x), Bound::Min, min)
                }
                Judge::GainLow(lim) => passes(gain, Bound::Min, lim),
                Judge::GainHigh(lim) => passes(gain, Bound::Max, lim),
                Judge::Corner(i, max) => passes(networks[i].corner(), Bound::Max, max),
                Judge::BandLowLoss(max) => passes(loss(f_lo), Bound::Max, max),
                Judge::BandHighLoss(max) => passes(loss(f_hi), Bound::Max, max),
                // Monotone above the passband: corner ≥ f_hi ⇔ at most 3 dB down at f_hi.
                Judge::HighCorner => loss(f_hi) <= HALF_POWER_DB,
                // A passband at the band's centre, and at most 3 dB down at f_lo (monotone
                // below the passband: corner ≤ f_lo).
                Judge::LowCorner => loss(centre) < HALF_POWER_DB && loss(f_lo) <= HALF_POWER_DB,
                Judge::InputRange(inp) => passes(swing / gain, Bound::Min, inp),
                Judge::OutputSwing(outp) => passes(swing, Bound::Min, outp),
                Judge::Fixed(ok) => ok,
                Judge::SlewRate(sr, inp) => passes(
                    sr / (2.0 * std::f64::consts::PI * inp * gain),
                    Bound::Min,
                    f_hi,
                ),
                Judge::Rating(i, rating) => {
                    passes(rating, Bound::Min, caps[i].volts.abs() / CAP_DERATING)
                }
                Judge::Polarity(i, forward) => {
                    let least = if forward {
                        caps[i].volts
                    } else {
                        -caps[i].volts
                    };
                    passes(least, Bound::Min, 0.0)
                }
                Judge::Ripple(max, v_r) => passes(
                    super::ripple::ripple_out(spec, stage, &x, v_r),
                    Bound::Max,
                    max,
                ),
                Judge::OutputCurrent(max) => {
                    let peak = super::amplifier::output_peak(spec, gain, swing);
                    let i = super::amplifier::output_current(spec, stage, &x, peak);
                    passes(i, Bound::Max, max)
                }
                Judge::InputLow(min) => {
                    let peak = super::amplifier::output_peak(spec, gain, swing);
                    let (lo, _) = super::amplifier::input_range(spec, stage, &x, &dc, peak);
                    passes(lo, Bound::Min, min)
                }
                Judge::InputHigh(max) => {
                    let peak = super::amplifier::output_peak(spec, gain, swing);
                    let (_, hi) = super::amplifier::input_range(spec, stage, &x, &dc, peak);
                    passes(hi, Bound::Max, max)
                }
                Judge::Power(slot, limit) => power
                    .iter()
                    .find(|(s, _)| *s == slot)
                    .is_some_and(|(_, w)| passes(*w, Bound::Max, limit)),
                Judge::OutputOffset(max) => stage
                    .output_offset(spec, &x, &e)
                    .is_some_and(|o| passes(o.abs(), Bound::Max, max)),
                Judge::Cmrr(min) => stage.dc_gains(spec, &x).is_some_and(|(ad, cm)| {
                    cm == 0.0 || passes(20.0 * (ad / cm).abs().log10(), Bound::Min, min)
                }),
                // The op-amp's inputs at V_cm·k, k = A₂/(1 + A₁) (`evaluate`'s rule).
                Judge::CommonModeHigh(level) | Judge::CommonModeLow(level) => {
                    stage.dc_gains(spec, &x).is_some_and(|(ad, cm)| {
                        let k = (ad + cm / 2.0) / (1.0 + ad - cm / 2.0);
                        let (lo, hi) = spec.output_limits();
                        if matches!(judge, Judge::CommonModeHigh(_)) {
                            passes(hi / k, Bound::Min, level)
                        } else {
                            passes(lo / k, Bound::Max, level)
                        }
                    })
                }
                Judge::InputNoise(max) => {
                    let inputs = super::noise::NoiseInputs::of(spec);
                    let n = super::noise::noise(&inputs, stage, spec, &x);
                    passes(n.input_rms_v, Bound::Max, max)
                }
            };
            *count += usize::from(ok);
            ok_all &= ok;
        }
        all += usize::from(ok_all);
    }
    let n = samples as f64;
    YieldReport {
        samples,
        seed: opts.seed,
        distribution: opts.distribution,
        overall: all as f64 / n,
        by_check: judges
            .into_iter()
            .zip(counts)
            .map(|((name, _), c)| (name, c as f64 / n))
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::evaluate;
    use crate::circuit::circuit_for;
    use crate::vocab::PartKind;

    const INVERTING: &str = r#"
[stage]
kind = "inverting"
supply = "9 V"
gain = -1
gain_tolerance = "1%"
load = "10k"
band = ["20 Hz", "20 kHz"]
"#;

    fn r(v: f64, t: f64) -> Part {
        Part::single(PartKind::Resistor, Piece::plain(v, t))
    }

    fn c(v: f64, t: f64) -> Part {
        Part::single(PartKind::Capacitor, Piece::plain(v, t))
    }

    /// Inverting: r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out (slot order of the stage).
    fn inverting(r_in: f64, r_fb: f64, t: f64) -> Build {
        Build {
            parts: vec![
                r(r_in, t),
                r(r_fb, t),
                r(100e3, t),
                r(100e3, t),
                c(10e-6, 0.2),
                c(10e-6, 0.2),
            ],
        }
    }

    fn run(spec: &Spec, build: &Build, samples: usize, d: Distribution) -> YieldReport {
        let opts = YieldOptions {
            samples,
            seed: 7,
            distribution: d,
        };
        monte_carlo(spec, circuit_for(spec.stage), build, &opts)
    }

    /// A seven-part non-inverting build with every kind of check: ratings, polarity, power,
    /// corners, losses, slew rate, input resistance. Worst case passes.
    const RICH: &str = r#"
[stage]
kind = "non-inverting"
supply = "9 V"
gain = 11
gain_tolerance = "5%"
input_resistance_min = "40k"
load = "10k"
band = ["20 Hz", "20 kHz"]
band_loss_max = "1 dB"
corner_low_max = "10 Hz"
output_peak = "2 V"

[amplifier]
gbw = "1 MHz"
input_bias_current = "50 nA"
input_offset_current = "10 nA"
input_offset_voltage = "2 mV"
slew_rate = "0.5 V/us"
"#;

    /// c_in, r_bias_hi, r_bias_lo, r_fb, r_g, c_g, c_out.
    fn rich_build(t: f64, ct: f64, cap_rating: f64) -> Build {
        let rated = |v: f64| {
            let mut p = Piece::plain(v, ct);
            p.voltage = Some(cap_rating);
            p.polarized = true;
            Part::single(PartKind::Capacitor, p)
        };
        let powered = |v: f64| {
            let mut p = Piece::plain(v, t);
            p.power = Some(0.25);
            Part::single(PartKind::Resistor, p)
        };
        Build {
            parts: vec![
                rated(1e-6),
                powered(200e3),
                powered(200e3),
                // 100k as 47k + 53k in series: exercises the two-piece draw.
                Part::pair(
                    PartKind::Resistor,
                    Arrangement::Series,
                    Piece::plain(47e3, t),
                    Piece::plain(53e3, t),
                ),
                powered(10e3),
                rated(47e-6),
                rated(47e-6),
            ],
        }
    }

    #[test]
    fn deterministic_for_a_seed() {
        let spec = Spec::from_toml(INVERTING).unwrap();
        let build = inverting(10e3, 10e3, 0.01);
        let a = run(&spec, &build, 2000, Distribution::Uniform);
        let b = run(&spec, &build, 2000, Distribution::Uniform);
        assert_eq!(a, b);
        let other = monte_carlo(
            &spec,
            circuit_for(spec.stage),
            &build,
            &YieldOptions {
                samples: 2000,
                seed: 8,
                distribution: Distribution::Uniform,
            },
        );
        assert_ne!(a.by_check, other.by_check, "another seed, other draws");
    }

    #[test]
    fn check_names_match_evaluate() {
        let spec = Spec::from_toml(RICH).unwrap();
        let build = rich_build(0.01, 0.2, 16.0);
        let eval = evaluate(&spec, circuit_for(spec.stage), &build, None);
        let y = run(&spec, &build, 10, Distribution::Uniform);
        let names: Vec<&str> = eval.checks.iter().map(|c| c.name.as_str()).collect();
        let ours: Vec<&str> = y.by_check.iter().map(|(n, _)| n.as_str()).collect();
        assert_eq!(ours, names);
        for prefix in ["rating_", "polarity_", "power_", "corner_"] {
            assert!(ours.iter().any(|n| n.starts_with(prefix)), "{prefix}");
        }
    }

    #[test]
    fn worst_case_pass_means_full_yield() {
        let spec = Spec::from_toml(RICH).unwrap();
        let build = rich_build(0.01, 0.2, 16.0);
        let eval = evaluate(&spec, circuit_for(spec.stage), &build, None);
        assert!(eval.pass, "{:#?}", eval.checks);
        for d in [Distribution::Uniform, Distribution::Normal] {
            let y = run(&spec, &build, 3000, d);
            assert_eq!(y.overall, 1.0, "{y:?}");
            assert!(y.by_check.iter().all(|(_, f)| *f == 1.0));
        }
    }

    #[test]
    fn zero_tolerance_agrees_with_evaluate_check_by_check() {
        // Without tolerances or op-amp errors every sample is the nominal build, so each
        // check's yield is 1 or 0 exactly as `evaluate` passes or fails it. A 5 V rating
        // fails every capacitor (4.5 V / 0.8 = 5.6 V needed) and a 11.5 ± 1 % window fails the
        // gain's low side, while the other checks pass.
        let mut spec = Spec::from_toml(RICH).unwrap();
        spec.amplifier.input_bias_current = 0.0;
        spec.amplifier.input_offset_current = 0.0;
        spec.amplifier.input_offset_voltage = 0.0;
        spec.gain = 11.5;
        spec.gain_tolerance = Some(0.01);
        let build = rich_build(0.0, 0.0, 5.0);
        let eval = evaluate(&spec, circuit_for(spec.stage), &build, None);
        assert!(!eval.pass);
        let y = run(&spec, &build, 50, Distribution::Uniform);
        for (check, (name, f)) in eval.checks.iter().zip(&y.by_check) {
            assert_eq!(&check.name, name);
            assert_eq!(*f, if check.pass { 1.0 } else { 0.0 }, "{name}");
        }
        assert!(eval.checks.iter().any(|c| c.pass) && eval.checks.iter().any(|c| !c.pass));
        assert_eq!(y.overall, 0.0);
    }

    #[test]
    fn nominal_on_a_gain_limit_gives_half() {
        // |G| = R_fb/R_in = 1.01·X/Y with X, Y i.i.d.: P(X ≤ Y) = 1/2 by symmetry (exact).
        let spec = Spec::from_toml(INVERTING).unwrap();
        let build = inverting(10e3, 10.1e3, 0.01);
        let y = run(&spec, &build, 10_000, Distribution::Uniform);
        let high = y.check("gain_high").unwrap();
        // 10 000 samples: σ = 0.005; 0.02 is 4σ.
        assert!((high - 0.5).abs() < 0.02, "{high}");
        assert_eq!(y.check("gain_low"), Some(1.0));
    }

    /// P(X/Y > z) and P(X/Y < z) for X, Y i.i.d. uniform on [a, b], derived by integrating
    /// P(X ≷ zy) over y (a ratio of independent uniforms; valid for a ≤ z·a, z·b ≤ b·b/a):
    /// P(X > zY) = (b − za)² / (2z(b − a)²) for z ≥ 1, P(X < zY) = (zb − a)² / (2z(b − a)²)
    /// for z ≤ 1.
    fn ratio_tails(a: f64, b: f64, z_lo: f64, z_hi: f64) -> (f64, f64) {
        let w2 = (b - a).powi(2);
        let below = (z_lo * b - a).powi(2) / (2.0 * z_lo * w2);
        let above = (b - z_hi * a).powi(2) / (2.0 * z_hi * w2);
        (below, above)
    }

    #[test]
    fn ratio_of_two_uniform_resistors_matches_the_analytic_yield() {
        // Gain R_fb/R_in, both ±1 % uniform, window ±1 %: the closed form above gives
        // 1 − 0.12375 − 0.12625 = 0.75 (to first order in t the ratio is 1 + t(U1 − U2), a
        // triangle on ±2t, and P(|U1 − U2| ≤ 1) = 3/4). The numeric integration below checks
        // the closed form itself.
        let (below, above) = ratio_tails(0.99, 1.01, 0.99, 1.01);
        assert!((below - 0.12375).abs() < 1e-9 && (above - 0.12625).abs() < 1e-9);
        // Midpoint-rule integral over y of P(X > 1.01·y): same as the closed form.
        let n = 100_000;
        let numeric_above: f64 = (0..n)
            .map(|i| {
                let y = 0.99 + 0.02 * (i as f64 + 0.5) / n as f64;
                ((1.01 - 1.01 * y) / 0.02).clamp(0.0, 1.0)
            })
            .sum::<f64>()
            / n as f64;
        assert!((numeric_above - above).abs() < 1e-6, "{numeric_above}");

        let spec = Spec::from_toml(INVERTING).unwrap();
        let build = inverting(10e3, 10e3, 0.01);
        let y = run(&spec, &build, 40_000, Distribution::Uniform);
        // 40 000 samples: σ ≈ 0.0022 on 0.75 and 0.0017 on 0.87; 0.01 is over 4σ.
        assert!((y.overall - 0.75).abs() < 0.01, "{y:?}");
        assert!((y.check("gain_low").unwrap() - (1.0 - below)).abs() < 0.01);
        assert!((y.check("gain_high").unwrap() - (1.0 - above)).abs() < 0.01);
    }

    #[test]
    fn normal_beats_uniform_on_a_marginal_build() {
        // Same ±1 % window: σ = t/3 puts most draws near nominal (≈ 97 % against 75 %).
        let spec = Spec::from_toml(INVERTING).unwrap();
        let build = inverting(10e3, 10e3, 0.01);
        let u = run(&spec, &build, 10_000, Distribution::Uniform);
        let n = run(&spec, &build, 10_000, Distribution::Normal);
        assert!(
            n.overall > u.overall + 0.1,
            "{} vs {}",
            n.overall,
            u.overall
        );
        assert!(n.overall < 1.0);
    }

    #[test]
    fn normal_draws_stay_inside_the_tolerance() {
        let mut s = Sampler {
            rng: StdRng::seed_from_u64(3),
            distribution: Distribution::Normal,
        };
        let draws: Vec<f64> = (0..20_000).map(|_| s.piece()).collect();
        assert!(draws.iter().all(|z| z.abs() <= 1.0));
        // σ of a normal truncated at 3σ is 0.9865σ (from the truncated-normal variance
        // 1 − 2·3·φ(3)/(2Φ(3) − 1)); here σ = 1/3.
        let var = draws.iter().map(|z| z * z).sum::<f64>() / draws.len() as f64;
        assert!((var.sqrt() - 0.9865 / 3.0).abs() < 0.01, "{}", var.sqrt());
    }

    #[test]
    fn two_piece_parts_combine_like_part_pair() {
        let a = Piece::plain(10e3, 0.01);
        let b = Piece::plain(22e3, 0.01);
        for arr in [Arrangement::Series, Arrangement::Parallel] {
            for kind in [PartKind::Resistor, PartKind::Capacitor] {
                let part = Part::pair(kind, arr, a.clone(), b.clone());
                assert_eq!(part_value(&part, &[10e3, 22e3]), part.value);
                assert_eq!(part_value(&part, &[a.max(), b.max()]), part.max);
            }
        }
        assert_eq!(part_value(&r(4.7e3, 0.05), &[4.8e3]), 4.8e3);
    }

    #[test]
    fn offset_errors_move_the_swing_yield() {
        // A 200 mV offset voltage at DC noise gain 1 moves the output by up to ±200 mV:
        // asking for exactly the nominal swing leaves about half the builds short.
        let mut spec = Spec::from_toml(INVERTING).unwrap();
        spec.gain_tolerance = None;
        spec.output_peak = Some(4.5);
        spec.amplifier.input_offset_voltage = 0.2;
        let build = inverting(10e3, 10e3, 0.0);
        let y = run(&spec, &build, 10_000, Distribution::Uniform);
        let s = y.check("output_swing").unwrap();
        // swing = 4.5 − |V_os·u|: passes only at u = 0 exactly.
        assert!(s < 0.01, "{s}");
        spec.output_peak = Some(4.4);
        let y = run(&spec, &build, 10_000, Distribution::Uniform);
        // Passes when |u| ≤ 0.5: half.
        assert!((y.check("output_swing").unwrap() - 0.5).abs() < 0.02);
    }
}
