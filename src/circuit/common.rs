//! Shared equations of the single-supply stages: divider, DC point, offset, the relaxed
//! checks the hand-tuned plans use, tolerance vertices, and the capacitance a coupling network
//! needs.

use super::types::{DcErrors, DcPoint};
use crate::build::{Part, SlotValue};
use crate::interval::{Cx, Iv, Num};
use crate::spec::Spec;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Two resistances in parallel, a·b/(a + b) (circuit theory); rising in both, so over
/// intervals it is exact at the corners.
pub fn parallel<T: Num>(a: T, b: T) -> T {
    T::monotone(|[a, b]| a * b / (a + b), [a, b], [true, true])
}

/// The divider's output V_s·R_lo/(R_hi + R_lo): falling in R_hi, rising in R_lo.
pub fn divider_out<T: Num>(supply: f64, r_hi: T, r_lo: T) -> T {
    T::monotone(
        |[hi, lo]| supply * lo / (hi + lo),
        [r_hi, r_lo],
        [false, true],
    )
}

/// How far the op-amp's errors move the output DC of a divider-biased stage either way at
/// worst case: I_b·|R_fb − R_p| + (I_os/2)·(R_fb + R_p) + V_os, the half range of [`dc_out`]
/// over the eight sign corners of `DcErrors::corners` (V_out − V_div = s_b·I_b·(R_fb − R_p) −
/// s_o·(I_os/2)·(R_fb + R_p) + s_v·V_os). Zero in nominal mode, which judges one corner.
pub fn dc_error<T: Num>(spec: &Spec, r_hi: T, r_lo: T, r_fb: T) -> T {
    if !spec.worst_case() {
        return T::c(0.0);
    }
    let a = &spec.amplifier;
    let rp = parallel(r_hi, r_lo);
    T::c(a.input_bias_current) * (r_fb - rp).abs()
        + T::c(a.input_offset_current / 2.0) * (r_fb + rp)
        + T::c(a.input_offset_voltage)
}

/// The current the divider draws, V_s/(R_hi + R_lo): falling in both.
pub fn divider_current<T: Num>(supply: f64, r_hi: T, r_lo: T) -> T {
    T::monotone(|[hi, lo]| supply / (hi + lo), [r_hi, r_lo], [false, false])
}

/// The output DC of [`dc_point`] alone, over any number type (the generic plan's swing
/// bound): V_div − I_b+·R_p + V_os + I_b−·R_fb.
pub fn dc_out<T: Num>(spec: &Spec, r_hi: T, r_lo: T, r_fb: T, e: &DcErrors) -> T {
    let v_div = divider_out(spec.supply, r_hi, r_lo);
    let rp = parallel(r_hi, r_lo);
    let v_plus = v_div - T::c(e.ib_plus) * rp;
    let v_minus = v_plus + T::c(e.vos);
    v_minus + T::c(e.ib_minus) * r_fb
}

/// First-order high-pass R/(R + 1/(jωC)) (circuit theory).
pub fn high_pass(r: f64, c: f64, f: f64) -> Complex64 {
    let zc = Complex64::new(0.0, -1.0 / (2.0 * PI * f * c));
    Complex64::new(r, 0.0) / (Complex64::new(r, 0.0) + zc)
}

/// A resistor's impedance with the spec's stray capacitance across it, R/(1 + jωRC_s)
/// (circuit theory); R itself without one.
pub fn resistor_z(spec: &Spec, r: f64, f: f64) -> Complex64 {
    let x = 2.0 * PI * f * r * spec.stray_capacitance;
    Complex64::new(r, 0.0) / Complex64::new(1.0, x)
}

/// The thermal noise resistance of a resistor with its stray capacitance across it: Re Z =
/// R/(1 + (ωRC_s)²), so that 4kT·Re Z is the one-port's open-circuit noise (Nyquist 1928,
/// the noise of a passive impedance).
pub fn resistor_noise_r(spec: &Spec, r: f64, f: f64) -> f64 {
    resistor_z(spec, r, f).re
}

/// The source's impedance at f: its resistance, in series with its capacitance when the spec
/// gives one.
pub fn source_z(spec: &Spec, f: f64) -> Complex64 {
    let r = Complex64::new(spec.source_resistance, 0.0);
    match spec.source_capacitance {
        Some(c) => r + Complex64::new(0.0, -1.0 / (2.0 * PI * f * c)),
        None => r,
    }
}

/// The input coupling capacitor in series with the source's capacitance (series capacitors,
/// C₁C₂/(C₁ + C₂)), rising in `c_in`: the capacitance of the input network's corner.
pub fn with_source_capacitance<T: Num>(spec: &Spec, c_in: T) -> T {
    match spec.source_capacitance {
        Some(cs) => T::monotone(|[c]| c * cs / (c + cs), [c_in], [true]),
        None => c_in,
    }
}

/// Loss of a first-order high-pass at f: 10·log10(1 + (fc/f)²) dB.
pub fn high_pass_loss_db(r: f64, c: f64, f: f64) -> f64 {
    let fc = 1.0 / (2.0 * PI * r * c);
    10.0 * (1.0 + (fc / f).powi(2)).log10()
}

/// DC point of a single-supply stage whose + input sits on a divider and whose − input
/// sees `r_minus` to the output at DC (capacitors open): V+ = V_div − I_b+·R_p,
/// V− = V+ + V_os, V_out = V− + I_b−·R_fb (KCL at each input).
pub fn dc_point(spec: &Spec, r_hi: f64, r_lo: f64, r_fb: f64, e: &DcErrors) -> DcPoint {
    let v_div = spec.supply * r_lo / (r_hi + r_lo);
    let rp = parallel(r_hi, r_lo);
    let v_plus = v_div - e.ib_plus * rp;
    let v_minus = v_plus + e.vos;
    DcPoint {
        v_plus,
        v_minus,
        v_out: v_minus + e.ib_minus * r_fb,
        divider_current: spec.supply / (r_hi + r_lo),
    }
}

/// Nominal output DC error bound: |V_div − target| + I_b·|R_fb − R_p| + (I_os/2)·(R_fb + R_p).
/// With I_b± = I_b ± I_os/2 the bias currents shift the output by
/// I_b·(R_fb − R_p) − (I_os/2)·(R_fb + R_p); compensation (R_p = R_fb) removes the first
/// term only, so large resistances still cost through the second (any op-amp text, "bias
/// current compensation").
pub fn offset_error<T: Num>(spec: &Spec, r_hi: T, r_lo: T, r_fb: T) -> T {
    let rp = parallel(r_hi, r_lo);
    divider_error(spec, r_hi, r_lo)
        + T::c(spec.amplifier.input_bias_current) * (r_fb - rp).abs()
        + T::c(spec.amplifier.input_offset_current / 2.0) * r_fb
}

/// The part of `offset_error` the divider alone decides (a lower bound of it).
pub fn divider_error<T: Num>(spec: &Spec, r_hi: T, r_lo: T) -> T {
    let v_div = divider_out(spec.supply, r_hi, r_lo);
    (v_div - T::c(spec.bias_target())).abs()
        + T::c(spec.amplifier.input_offset_current / 2.0) * parallel(r_hi, r_lo)
}

/// Slack for the search's relaxations, so rounding never rejects what the exact analysis
/// would accept.
pub const SLACK: f64 = 1e-6;

/// Worst-case (or nominal) gain range inside the tolerance window, when one is given.
pub fn gain_window_ok(spec: &Spec, g_lo: f64, g_hi: f64) -> bool {
    let hi = g_lo.abs().max(g_hi.abs());
    if spec
        .derived
        .gain_max
        .is_some_and(|max| hi > max * (1.0 + SLACK))
    {
        return false;
    }
    match spec.gain_tolerance {
        None => true,
        Some(t) => {
            let target = spec.gain.abs();
            let lo = g_lo.abs().min(g_hi.abs());
            lo >= target * (1.0 - t) * (1.0 - SLACK) && hi <= target * (1.0 + t) * (1.0 + SLACK)
        }
    }
}

/// The end of a part's tolerance to use: worst case takes the given end, nominal mode the
/// nominal value.
pub fn end(spec: &Spec, part: &SlotValue, high: bool) -> f64 {
    if spec.worst_case() {
        part.at(high)
    } else {
        part.value
    }
}

/// Divider output extremes over the divider's tolerances, ignoring op-amp errors (which
/// widen the range symmetrically, so leaving them out is the optimistic side).
pub fn divider_range(spec: &Spec, hi: &SlotValue, lo: &SlotValue) -> (f64, f64) {
    let vmin = spec.supply * end(spec, lo, false) / (end(spec, hi, true) + end(spec, lo, false));
    let vmax = spec.supply * end(spec, lo, true) / (end(spec, hi, false) + end(spec, lo, true));
    (vmin, vmax)
}

/// Relaxed `bias_current_max`: the nominal divider current (the worst case is higher).
pub fn divider_current_ok(spec: &Spec, hi: &SlotValue, lo: &SlotValue) -> bool {
    spec.bias_current_max
        .is_none_or(|max| spec.supply / (hi.value + lo.value) <= max * (1.0 + SLACK))
}

/// Output peak the headroom allows around a DC range, to each rail's limit
/// (`Spec::output_limits`).
pub fn swing(spec: &Spec, dc_min: f64, dc_max: f64) -> f64 {
    let (lo, hi) = spec.output_limits();
    (dc_min - lo).min(hi - dc_max)
}

/// Relaxed swing requirement: the output swing, or the input range at the highest gain.
pub fn swing_ok(spec: &Spec, swing: f64, gain_max: f64) -> bool {
    if let Some(out) = spec.output_peak {
        return swing >= out * (1.0 - SLACK) - SLACK;
    }
    if let Some(inp) = spec.input_peak {
        return swing / gain_max.abs() >= inp * (1.0 - SLACK) - SLACK;
    }
    swing > -SLACK
}

/// 10·log10(2): the loss at a −3 dB corner (half the power).
pub const THREE_DB: f64 = 3.010_299_956_639_812;

/// The loss the stage may take at the band's low edge, summed over its buffered coupling
/// networks: `band_loss_max`; or with neither it nor `corner_low_max` given, 3 dB (the
/// whole response's −3 dB corner must then sit at or below the band's low edge); or none.
pub fn loss_budget(spec: &Spec) -> Option<f64> {
    match (spec.band_loss_max, spec.corner_low_max) {
        (Some(max), _) => Some(max),
        (None, None) => Some(THREE_DB),
        (None, Some(_)) => None,
    }
}

/// Whether the summed worst-case losses of the networks fit `loss_budget`.
pub fn losses_ok(spec: &Spec, total_db: f64) -> bool {
    loss_budget(spec).is_none_or(|max| total_db <= max * (1.0 + SLACK) + SLACK)
}

/// Relaxed per-network checks of one coupling network: its worst corner and its own loss
/// at the band's low edge against the whole budget; with neither limit given, a plain
/// first-order network's corner at or below the band's low edge (the whole response's
/// −3 dB corner lies above each section's, and must sit at or below the band's edge).
pub fn plain_network_ok(spec: &Spec, worst_corner: f64, worst_loss_db: f64) -> bool {
    if spec.corner_low_max.is_none()
        && spec.band_loss_max.is_none()
        && worst_corner > spec.band.0 * (1.0 + SLACK)
    {
        return false;
    }
    network_ok(spec, worst_corner, worst_loss_db)
}

/// Relaxed per-network checks of one coupling network: its worst corner and its own loss
/// at the band's low edge against the whole budget.
pub fn network_ok(spec: &Spec, worst_corner: f64, worst_loss_db: f64) -> bool {
    if let Some(max) = spec.corner_low_max {
        if worst_corner > max * (1.0 + SLACK) {
            return false;
        }
    }
    if let Some(max) = spec.band_loss_max {
        if worst_loss_db > max * (1.0 + SLACK) + SLACK {
            return false;
        }
    }
    true
}

/// Relaxed rating check at the nominal DC point (the exact analysis checks every tolerance
/// corner and the polarity): DC stress ≤ 80 % of the rating (common-practice derating).
pub fn cap_ok(part: &SlotValue, volts: f64) -> bool {
    match part.rating {
        Some(rating) => volts.abs() <= rating * 0.8 * (1.0 + SLACK),
        None => true,
    }
}

/// The vertices of the tolerance box of slot values (2^n), or just the nominal point.
pub fn value_vertices(spec: &Spec, parts: &[&SlotValue]) -> Vec<Vec<f64>> {
    let nominal: Vec<f64> = parts.iter().map(|p| p.value).collect();
    if !spec.worst_case() {
        return vec![nominal];
    }
    (0..1usize << parts.len())
        .map(|mask| {
            (0..parts.len())
                .map(|i| parts[i].at(mask >> i & 1 == 1))
                .collect()
        })
        .collect()
}

/// All vertices of the tolerance box of `parts` (2^n), or just the nominal point.
pub fn vertices(spec: &Spec, parts: &[&Part]) -> Vec<Vec<f64>> {
    vertices_where(spec, parts, |_| true)
}

/// Vertices over the parts `vary` selects, the others at nominal: 2^k points.
pub fn vertices_where(spec: &Spec, parts: &[&Part], vary: impl Fn(&Part) -> bool) -> Vec<Vec<f64>> {
    let nominal: Vec<f64> = parts.iter().map(|p| p.value).collect();
    if !spec.worst_case() {
        return vec![nominal];
    }
    let varied: Vec<usize> = (0..parts.len()).filter(|&i| vary(parts[i])).collect();
    (0..1usize << varied.len())
        .map(|mask| {
            let mut v = nominal.clone();
            for (bit, &i) in varied.iter().enumerate() {
                v[i] = parts[i].at(mask >> bit & 1 == 1);
            }
            v
        })
        .collect()
}
/// Corner each of `n` coupling networks should have so that the spec holds with equal shares:
/// the smaller of `corner_low_max` and the corner that spends 1/n of `band_loss_max` at the
/// band's low edge (first-order loss 10·log10(1 + (fc/f)²) solved for fc). With neither given,
/// a decade below the band (common practice).
pub fn common_corner_target(spec: &Spec, n: usize) -> Option<f64> {
    let f = spec.band.0;
    let from_loss = spec
        .band_loss_max
        .map(|l| f * (10f64.powf(l / (10.0 * n as f64)) - 1.0).sqrt());
    match (spec.corner_low_max, from_loss) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (Some(a), None) => Some(a),
        (None, Some(b)) => Some(b),
        (None, None) => Some(f / 10.0),
    }
}

/// The least capacitance a first-order coupling network against `r` (its low-end value) needs
/// for the spec's corner and band-loss limits, each alone: C ≥ 1/(2π·R·f_c) with f_c the
/// corner limit, or the corner that spends the whole loss budget at the band's low edge,
/// f·√(10^(L/10) − 1) (first-order high-pass). With `loss` false only the corner limit counts.
pub fn needed_capacitance(spec: &Spec, r: f64, loss: bool) -> Option<f64> {
    let mut fc = f64::INFINITY;
    if let Some(max) = spec.corner_low_max {
        fc = fc.min(max);
    }
    if let (true, Some(l)) = (loss, spec.band_loss_max) {
        fc = fc.min(spec.band.0 * (10f64.powf(l / 10.0) - 1.0).sqrt());
    }
    if loss && spec.corner_low_max.is_none() && spec.band_loss_max.is_none() {
        // Then the whole response's −3 dB corner must sit at or below the band's low edge,
        // and a cascade's corner is above each first-order section's own corner.
        fc = fc.min(spec.band.0);
    }
    fc.is_finite()
        .then(|| 1.0 / (2.0 * std::f64::consts::PI * r * fc))
}

/// The least capacitance a first-order coupling network against `r` (its low-end value) may
/// have once other networks, buffered from it, have spent `spent` dB of the loss budget at
/// the band's low edge (`loss_budget`): the corner limit and the loss left, each with
/// the search's slack (as `common::network_ok` and the stages' summed-loss checks read them).
/// `Some(∞)` when no loss is left.
pub fn needed_capacitance_after(spec: &Spec, r: f64, spent: f64) -> Option<f64> {
    let mut fc = f64::INFINITY;
    if let Some(max) = spec.corner_low_max {
        fc = fc.min(max * (1.0 + SLACK));
    }
    if let Some(l) = loss_budget(spec) {
        let left = l * (1.0 + SLACK) + SLACK - spent;
        if left <= 0.0 {
            return Some(f64::INFINITY);
        }
        fc = fc.min(spec.band.0 * (10f64.powf(left / 10.0) - 1.0).sqrt());
    }
    Some(1.0 / (2.0 * std::f64::consts::PI * r * fc))
}

/// The loss budget at the band's top: `band_loss_max`, or 3 dB (the band inside the −3 dB
/// corner), with the search's slack.
fn top_budget(spec: &Spec) -> f64 {
    let l = spec.band_loss_max.unwrap_or(THREE_DB);
    l * (1.0 + SLACK) + SLACK
}

/// The largest corner a plain coupling network may have in a passing build: its own corner
/// limit (`corner_low_max`), the corner that spends the whole loss budget at the band's low
/// edge (a first-order section's loss 10·log10(1 + (fc/f)²) solved for fc), or the band's low
/// edge itself (each section's corner lies below the whole response's), the least of those
/// that apply, with slack.
pub fn network_corner_max(spec: &Spec) -> f64 {
    let mut fc = f64::INFINITY;
    if let Some(max) = spec.corner_low_max {
        fc = fc.min(max);
    }
    if let Some(l) = spec.band_loss_max {
        fc = fc.min(spec.band.0 * (10f64.powf(l / 10.0) - 1.0).sqrt());
    }
    if spec.corner_low_max.is_none() && spec.band_loss_max.is_none() {
        fc = fc.min(spec.band.0);
    }
    fc * (1.0 + SLACK)
}

/// 1/a(jf) of the spec's amplifier as `(ε, u)` = (1/A0, f/GBW): the single pole a(s) =
/// A0/(1 + s/ω_p) with A0·f_p = GBW (`types::OpAmp`).
pub fn inverse_gain_parts(spec: &Spec, f: f64) -> Option<(f64, f64)> {
    spec.amplifier
        .gbw
        .map(|gbw| (1.0 / super::types::OPEN_LOOP_GAIN, f / gbw))
}

/// The largest noise gain at which the amplifier can still meet the band's top, from a
/// rigorous lower bound of the loss there: `loss_lb(ng)` bounds from below, in dB, the loss at
/// the band's top of every build (at every vertex) whose noise gain lies in the interval `ng`.
/// A bisection on points finds the crossing, then the noise gains from there to `ng_top` (the
/// most any candidate can reach) are checked as intervals, so the answer holds whatever the
/// shape of the bound. `None` when nothing limits it (no GBW, or it never fails).
pub fn noise_gain_max(spec: &Spec, ng_top: f64, loss_lb: &dyn Fn(Iv) -> f64) -> Option<f64> {
    spec.amplifier.gbw?;
    let budget = top_budget(spec);
    let fails = |ng: Iv| loss_lb(ng) > budget;
    let ng_top = ng_top.max(1.0);
    if !fails(Iv::point(ng_top)) {
        return None;
    }
    if fails(Iv::point(1.0)) {
        return Some(0.0);
    }
    // The last point that passes, by bisection in log.
    let (mut ok, mut bad) = (1.0f64, ng_top);
    for _ in 0..80 {
        let mid = (ok * bad).sqrt();
        if fails(Iv::point(mid)) {
            bad = mid;
        } else {
            ok = mid;
        }
        if bad / ok < 1.0 + 1e-9 {
            break;
        }
    }
    // Verify [bad, top] as intervals, split in halves (in log) where an interval is too wide
    // to fail as a whole; a piece that does not fail at 10⁻⁶ width moves the limit up.
    let mut limit = bad;
    let mut stack = vec![(bad, ng_top)];
    let mut budget_evals = 20_000;
    while let Some((lo, hi)) = stack.pop() {
        if hi <= limit {
            continue;
        }
        budget_evals -= 1;
        if fails(Iv::new(lo, hi)) {
            continue;
        }
        if hi / lo < 1.0 + 1e-6 || budget_evals <= 0 {
            limit = limit.max(hi);
            continue;
        }
        let mid = (lo * hi).sqrt();
        stack.push((mid, hi));
        stack.push((lo, mid));
    }
    Some(limit)
}

/// A lower bound of 10·log10 of |z|² over a rectangle of complex values, in dB.
pub fn db_lb(z: Cx<Iv>) -> f64 {
    10.0 * z.norm_sqr().lo.max(0.0).log10()
}
