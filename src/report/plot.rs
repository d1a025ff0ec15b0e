//! Frequency-response plot of one build as SVG: gain (dB) and phase against log frequency, the
//! nominal curve with the worst-case envelope over every tolerance corner, the band shaded, the
//! −3 dB corners and the losses at the band's edges marked. Drawn with `plotters` into a string.
//!
//! The curves come from the stage's own transfer function (`Circuit::response`), the same one the
//! analysis judges; the envelope is the pointwise min and max over the corners of the tolerance
//! box (`circuit::common::vertices`, the extreme-value rule of the analysis).

use super::common::RenderError;
use crate::analysis::Evaluation;
use crate::build::{Build, Part};
use crate::circuit::{common, Circuit, OpAmp};
use crate::spec::Spec;
use crate::value::{format, format_sig, Unit};
use num_complex::Complex64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Size of the drawing in pixels.
pub const WIDTH: u32 = 960;
/// Height of the drawing in pixels.
pub const HEIGHT: u32 = 720;
/// Frequencies per decade of the sweep: smooth at the plot's resolution (the corners it marks
/// come from the analysis, not from the samples).
const PER_DECADE: usize = 40;
/// Widest sweep, in decades.
const MAX_DECADES: f64 = 9.0;

const FONT: &str = "sans-serif";
const NOMINAL: RGBColor = RGBColor(31, 100, 180);
const BAND: RGBColor = RGBColor(60, 170, 60);
const CORNER: RGBColor = RGBColor(200, 40, 40);
const EDGE: RGBColor = RGBColor(150, 80, 0);
const GRID: RGBColor = RGBColor(232, 232, 232);
const DECADE: RGBColor = RGBColor(195, 195, 195);
const INK: RGBColor = RGBColor(40, 40, 40);

/// Width of the area left of each panel for its tick labels and its rotated axis label, px:
/// the widest tick label (`−315°`, about 3.3 em of a 17 px font scaled into the page) and the
/// axis label beside it with a gap, so that the two never overlap (64 px let `phase` touch
/// `−315°` in a sans font with wide digits; issue 12, part 8).
const Y_LABEL_AREA: u32 = 80;

/// The sampled response of a build: nominal curve and envelope, magnitude in dB and phase in
/// degrees (unwrapped outward from the band's centre).
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// Frequencies of the samples, Hz, log-spaced, ascending.
    pub freq: Vec<f64>,
    /// Nominal magnitude of the response from the source EMF to the load, dB (20·log10 |H|).
    pub gain_db: Vec<f64>,
    /// Lowest magnitude over the tolerance corners, dB.
    pub gain_db_min: Vec<f64>,
    /// Highest magnitude over the tolerance corners, dB.
    pub gain_db_max: Vec<f64>,
    /// Nominal phase, degrees.
    pub phase_deg: Vec<f64>,
    /// Lowest phase over the tolerance corners, degrees.
    pub phase_deg_min: Vec<f64>,
    /// Highest phase over the tolerance corners, degrees.
    pub phase_deg_max: Vec<f64>,
    /// Tolerance corners the envelope covers (1 in nominal mode).
    pub corners: usize,
}

/// Width of the plotting area in pixels (the drawing less the axis labels and margins), and the
/// room a corner's label takes beside its dot.
const PLOT_PX: f64 = 850.0;
const LABEL_PX: f64 = 150.0;

/// Sweep range: at least a decade beyond the band and beyond every −3 dB corner on each side,
/// rounded out to whole decades, and wider where a corner's label would not fit beside it.
pub fn range(spec: &Spec, e: &Evaluation) -> (f64, f64) {
    let m = &e.metrics;
    let positive = |f: &f64| *f > 0.0 && f.is_finite();
    let low = [Some(spec.band.0), m.low_corner_hz, m.low_corner_worst_hz]
        .into_iter()
        .flatten()
        .filter(positive)
        .fold(f64::INFINITY, f64::min);
    let high = [Some(spec.band.1), m.high_corner_hz, m.high_corner_worst_hz]
        .into_iter()
        .flatten()
        .filter(positive)
        .fold(0.0, f64::max);
    let mut lo = (low / 10.0).log10().floor();
    let mut hi = (high * 10.0).log10().ceil();
    // The labels sit outside the nominal corners (left of the low one, right of the high one).
    for _ in 0..4 {
        let need = LABEL_PX / (PLOT_PX / (hi - lo));
        let mut wider = false;
        if let Some(f) = m.low_corner_hz.filter(positive) {
            if f.log10() - lo < need {
                lo -= 1.0;
                wider = true;
            }
        }
        if let Some(f) = m.high_corner_hz.filter(positive) {
            if hi - f.log10() < need {
                hi += 1.0;
                wider = true;
            }
        }
        if !wider {
            break;
        }
    }
    if hi - lo > MAX_DECADES {
        // Keep the band and cut the far ends evenly.
        let centre = (spec.band.0 * spec.band.1).sqrt().log10();
        lo = lo.max((centre - MAX_DECADES / 2.0).floor());
        hi = lo + MAX_DECADES;
    }
    // A hair beyond the decades, so that plotters' key points include both ends.
    (10f64.powf(lo) * 0.9999, 10f64.powf(hi) * 1.0001)
}

/// Phase in degrees, unwrapped outward from sample `c` so that the curve is continuous; the
/// centre takes the branch in (−270°, 90°], so an inverting stage reads −180° in its band.
fn unwrapped_phase(h: &[Complex64], c: usize) -> Vec<f64> {
    let mut out = vec![0.0; h.len()];
    if h.is_empty() {
        return out;
    }
    let follow = |prev: f64, raw: f64| {
        let mut x = raw;
        while x - prev > 180.0 {
            x -= 360.0;
        }
        while x - prev < -180.0 {
            x += 360.0;
        }
        x
    };
    let mut p0 = h[c].arg().to_degrees();
    if p0 > 90.0 {
        p0 -= 360.0;
    }
    out[c] = p0;
    for i in c + 1..h.len() {
        out[i] = follow(out[i - 1], h[i].arg().to_degrees());
    }
    for i in (0..c).rev() {
        out[i] = follow(out[i + 1], h[i].arg().to_degrees());
    }
    out
}

/// Sample the response of `build` from `f_lo` to `f_hi`, nominal and at every tolerance corner.
pub fn sweep(spec: &Spec, stage: &dyn Circuit, build: &Build, f_lo: f64, f_hi: f64) -> Sweep {
    let opamp = OpAmp::of(spec);
    let decades = (f_hi / f_lo).log10().max(0.1);
    let n = (decades * PER_DECADE as f64).round() as usize + 1;
    let freq: Vec<f64> = (0..n)
        .map(|i| f_lo * 10f64.powf(decades * i as f64 / (n - 1) as f64))
        .collect();
    let centre_f = (spec.band.0 * spec.band.1).sqrt();
    let c = freq
        .iter()
        .enumerate()
        .min_by(|a, b| {
            let da = (a.1 / centre_f).ln().abs();
            let db = (b.1 / centre_f).ln().abs();
            da.total_cmp(&db)
        })
        .map_or(0, |(i, _)| i);
    let curve = |v: &[f64]| -> (Vec<f64>, Vec<f64>) {
        let h: Vec<Complex64> = freq
            .iter()
            .map(|&f| stage.response(spec, v, &opamp, f))
            .collect();
        let db = h.iter().map(|z| 20.0 * z.norm().log10()).collect();
        (db, unwrapped_phase(&h, c))
    };
    let (gain_db, phase_deg) = curve(&build.values());
    let parts: Vec<&Part> = build.parts.iter().collect();
    let vertices = common::vertices(spec, &parts);
    let mut gain_db_min = gain_db.clone();
    let mut gain_db_max = gain_db.clone();
    let mut phase_deg_min = phase_deg.clone();
    let mut phase_deg_max = phase_deg.clone();
    for x in &vertices {
        let (g, p) = curve(x);
        for i in 0..n {
            gain_db_min[i] = gain_db_min[i].min(g[i]);
            gain_db_max[i] = gain_db_max[i].max(g[i]);
            phase_deg_min[i] = phase_deg_min[i].min(p[i]);
            phase_deg_max[i] = phase_deg_max[i].max(p[i]);
        }
    }
    Sweep {
        freq,
        gain_db,
        gain_db_min,
        gain_db_max,
        phase_deg,
        phase_deg_min,
        phase_deg_max,
        corners: vertices.len(),
    }
}

/// The runs of a curve inside [lo, hi], with the crossing points interpolated, so that a curve
/// leaving the axes stops at the frame instead of being drawn over the labels.
fn clip(points: &[(f64, f64)], lo: f64, hi: f64) -> Vec<Vec<(f64, f64)>> {
    let inside = |y: f64| y >= lo && y <= hi;
    let cross = |a: (f64, f64), b: (f64, f64), y: f64| {
        let t = (y - a.1) / (b.1 - a.1);
        // Interpolate in log f: the axis is logarithmic.
        ((a.0.ln() + t * (b.0.ln() - a.0.ln())).exp(), y)
    };
    let mut runs: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut run: Vec<(f64, f64)> = Vec::new();
    for (i, &p) in points.iter().enumerate() {
        if !p.1.is_finite() {
            if run.len() > 1 {
                runs.push(std::mem::take(&mut run));
            }
            run.clear();
            continue;
        }
        let prev = if i > 0 { Some(points[i - 1]) } else { None };
        match (prev.filter(|q| q.1.is_finite()), inside(p.1)) {
            (Some(q), true) if !inside(q.1) => {
                let edge = if q.1 < lo { lo } else { hi };
                run.push(cross(q, p, edge));
                run.push(p);
            }
            (_, true) => run.push(p),
            (Some(q), false) if inside(q.1) => {
                let edge = if p.1 < lo { lo } else { hi };
                run.push(cross(q, p, edge));
                runs.push(std::mem::take(&mut run));
            }
            _ => {}
        }
    }
    if run.len() > 1 {
        runs.push(run);
    }
    runs
}

fn err<E: std::fmt::Display>(e: E) -> RenderError {
    RenderError::Plot(e.to_string())
}

/// "−12" with a true minus sign (typographic common practice), trimmed to `digits` significant
/// digits of `format_sig`.
fn signed(x: f64, digits: usize) -> String {
    let s = format_sig(x.abs(), Unit::Decibel, digits).replace(" dB", "");
    if x < 0.0 && s != "0" {
        format!("−{s}")
    } else {
        s
    }
}

fn decade_label(f: f64) -> String {
    let l = f.log10();
    if (l - l.round()).abs() < 1e-6 {
        format(10f64.powf(l.round()), Unit::Hertz)
    } else {
        String::new()
    }
}

fn decades(lo: f64, hi: f64) -> Vec<f64> {
    let (a, b) = (lo.log10().round() as i32, hi.log10().round() as i32);
    (a..=b).map(|e| 10f64.powi(e)).collect()
}

/// Round `x` down (or up) to a multiple of `step`.
fn floor_to(x: f64, step: f64) -> f64 {
    (x / step).floor() * step
}
fn ceil_to(x: f64, step: f64) -> f64 {
    (x / step).ceil() * step
}

/// The plot of `build` as an SVG document.
pub fn svg(
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    evaluation: &Evaluation,
) -> Result<String, RenderError> {
    let (f_lo, f_hi) = range(spec, evaluation);
    let s = sweep(spec, stage, build, f_lo, f_hi);
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root, spec, stage, build, evaluation, &s, (f_lo, f_hi))?;
        root.present().map_err(err)?;
    }
    Ok(out)
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    spec: &Spec,
    stage: &dyn Circuit,
    build: &Build,
    evaluation: &Evaluation,
    s: &Sweep,
    (f_lo, f_hi): (f64, f64),
) -> Result<(), RenderError>
where
    DB::ErrorType: 'static,
{
    let m = &evaluation.metrics;
    let mid = stage.mid_gain(spec, &build.values());
    let mid_db = 20.0 * mid.abs().log10();
    let worst = spec.worst_case() && s.corners > 1;
    root.fill(&WHITE).map_err(err)?;

    let (title_area, rest) = root.split_vertically(50);
    let title = format!(
        "{} stage: mid-band gain {} V/V ({} dB), band {} – {}",
        stage.kind().name(),
        signed(mid, 4),
        signed(mid_db, 3),
        format(spec.band.0, Unit::Hertz),
        format(spec.band.1, Unit::Hertz)
    );
    let sub = if worst {
        format!(
            "nominal curve; shaded: worst-case envelope over {} tolerance corners",
            s.corners
        )
    } else {
        "nominal curve (the spec asks for nominal values, so no tolerance envelope)".to_string()
    };
    title_area
        .draw(&Text::new(
            title,
            (16, 6),
            (FONT, 24).into_font().color(&INK),
        ))
        .map_err(err)?;
    title_area
        .draw(&Text::new(
            sub,
            (16, 31),
            (FONT, 17).into_font().color(&RGBColor(90, 90, 90)),
        ))
        .map_err(err)?;
    let (upper, lower) = rest.split_vertically(430);

    // Magnitude axis: a little above the highest envelope, 40 dB below mid-band.
    let top = s
        .gain_db_max
        .iter()
        .copied()
        .filter(|x| x.is_finite())
        .fold(mid_db, f64::max);
    let (y_lo, y_hi) = (floor_to(mid_db - 40.0, 10.0), ceil_to(top + 4.0, 5.0));
    let n_dec = (f_hi / f_lo).log10().round() as usize;
    let x_fmt = |f: &f64| decade_label(*f);
    let blank = |_: &f64| String::new();

    let mut mag = ChartBuilder::on(&upper)
        .margin_left(12)
        .margin_right(28)
        .margin_top(6)
        .x_label_area_size(12)
        .y_label_area_size(Y_LABEL_AREA)
        .build_cartesian_2d((f_lo..f_hi).log_scale(), y_lo..y_hi)
        .map_err(err)?;
    mag.configure_mesh()
        .x_labels(n_dec * 10 + 1)
        .x_label_formatter(&blank)
        .y_labels(10)
        .y_label_formatter(&|y| signed(*y, 3))
        .bold_line_style(GRID)
        .light_line_style(TRANSPARENT)
        .y_desc("gain (dB)")
        .label_style((FONT, 17))
        .axis_desc_style((FONT, 18))
        .draw()
        .map_err(err)?;

    let mut ph = ChartBuilder::on(&lower)
        .margin_left(12)
        .margin_right(28)
        .margin_top(10)
        .margin_bottom(6)
        .x_label_area_size(44)
        .y_label_area_size(Y_LABEL_AREA)
        .build_cartesian_2d((f_lo..f_hi).log_scale(), {
            // In units of 45°, so the axis steps are 45° or 90° multiples.
            let lo = s
                .phase_deg_min
                .iter()
                .copied()
                .fold(f64::INFINITY, f64::min);
            let hi = s
                .phase_deg_max
                .iter()
                .copied()
                .fold(f64::NEG_INFINITY, f64::max);
            let (lo, hi) = if lo.is_finite() && hi.is_finite() {
                // A few degrees of room, so that a curve never runs along the frame.
                (
                    floor_to((lo - 5.0) / 45.0, 1.0),
                    ceil_to((hi + 5.0) / 45.0, 1.0),
                )
            } else {
                (-4.0, 4.0)
            };
            lo..hi.max(lo + 1.0)
        })
        .map_err(err)?;
    let ph_range = ph.y_range();
    let units = ph_range.end - ph_range.start;
    ph.configure_mesh()
        .x_labels(n_dec * 10 + 1)
        .x_label_formatter(&x_fmt)
        .y_labels(if units <= 8.0 { units as usize + 1 } else { 6 })
        .y_label_formatter(&|y| format!("{}°", signed((y * 45.0).round(), 3)))
        .bold_line_style(GRID)
        .light_line_style(TRANSPARENT)
        .y_desc("phase")
        .x_desc("frequency")
        .label_style((FONT, 17))
        .axis_desc_style((FONT, 18))
        .draw()
        .map_err(err)?;

    // Decade lines a shade darker than the 2…9 lines.
    let dec = decades(f_lo, f_hi);
    mag.draw_series(
        dec.iter()
            .map(|&f| PathElement::new(vec![(f, y_lo), (f, y_hi)], DECADE.stroke_width(1))),
    )
    .map_err(err)?;
    ph.draw_series(dec.iter().map(|&f| {
        PathElement::new(
            vec![(f, ph_range.start), (f, ph_range.end)],
            DECADE.stroke_width(1),
        )
    }))
    .map_err(err)?;

    // The band.
    let band_label = format!(
        "band {} – {}",
        format(spec.band.0, Unit::Hertz),
        format(spec.band.1, Unit::Hertz)
    );
    mag.draw_series(std::iter::once(Rectangle::new(
        [(spec.band.0, y_hi), (spec.band.1, y_lo)],
        BAND.mix(0.12).filled(),
    )))
    .map_err(err)?
    .label(band_label)
    .legend(|(x, y)| Rectangle::new([(x, y - 6), (x + 22, y + 6)], BAND.mix(0.25).filled()));
    ph.draw_series(std::iter::once(Rectangle::new(
        [(spec.band.0, ph_range.end), (spec.band.1, ph_range.start)],
        BAND.mix(0.12).filled(),
    )))
    .map_err(err)?;

    // Envelopes, clamped to the axes (a fill has no outline to run over the labels).
    let clamp = |y: f64, lo: f64, hi: f64| if y.is_finite() { y.clamp(lo, hi) } else { lo };
    let polygon = |lo_curve: &[f64], hi_curve: &[f64], lo: f64, hi: f64, scale: f64| {
        let mut pts: Vec<(f64, f64)> = s
            .freq
            .iter()
            .zip(hi_curve)
            .map(|(&f, &y)| (f, clamp(y / scale, lo, hi)))
            .collect();
        pts.extend(
            s.freq
                .iter()
                .zip(lo_curve)
                .rev()
                .map(|(&f, &y)| (f, clamp(y / scale, lo, hi))),
        );
        pts
    };
    if worst {
        mag.draw_series(std::iter::once(Polygon::new(
            polygon(&s.gain_db_min, &s.gain_db_max, y_lo, y_hi, 1.0),
            NOMINAL.mix(0.28).filled(),
        )))
        .map_err(err)?
        .label(format!("worst-case envelope ({} corners)", s.corners))
        .legend(|(x, y)| Rectangle::new([(x, y - 6), (x + 22, y + 6)], NOMINAL.mix(0.35).filled()));
        ph.draw_series(std::iter::once(Polygon::new(
            polygon(
                &s.phase_deg_min,
                &s.phase_deg_max,
                ph_range.start,
                ph_range.end,
                45.0,
            ),
            NOMINAL.mix(0.28).filled(),
        )))
        .map_err(err)?;
    }

    // Nominal curves.
    let mag_pts: Vec<(f64, f64)> = s.freq.iter().copied().zip(s.gain_db.clone()).collect();
    for (i, run) in clip(&mag_pts, y_lo, y_hi).into_iter().enumerate() {
        let a = mag
            .draw_series(LineSeries::new(run, NOMINAL.stroke_width(2)))
            .map_err(err)?;
        if i == 0 {
            a.label("nominal").legend(|(x, y)| {
                PathElement::new(vec![(x, y), (x + 22, y)], NOMINAL.stroke_width(2))
            });
        }
    }
    let ph_pts: Vec<(f64, f64)> = s
        .freq
        .iter()
        .copied()
        .zip(s.phase_deg.iter().map(|p| p / 45.0))
        .collect();
    for run in clip(&ph_pts, ph_range.start, ph_range.end) {
        ph.draw_series(LineSeries::new(run, NOMINAL.stroke_width(2)))
            .map_err(err)?;
    }

    // −3 dB corners: a dot on the nominal curve, a dashed line down both panels, a label to
    // the outer side (where the curve has fallen away and leaves room).
    let y3 = mid_db - 10.0 * std::f64::consts::LOG10_2;
    let label_font = (FONT, 18).into_font().color(&CORNER);
    let small = (FONT, 16).into_font().color(&CORNER);
    let corners = [
        (m.low_corner_hz, m.low_corner_worst_hz, true),
        (m.high_corner_hz, m.high_corner_worst_hz, false),
    ];
    let mut legend_done = false;
    for (nominal, worst_f, low) in corners {
        let Some(fc) = nominal.filter(|f| *f > f_lo && *f < f_hi) else {
            continue;
        };
        for (f, style) in [(Some(fc), CORNER.stroke_width(1))]
            .into_iter()
            .chain(worst.then_some((worst_f, CORNER.mix(0.45).stroke_width(1))))
        {
            let Some(f) = f.filter(|f| *f > f_lo && *f < f_hi) else {
                continue;
            };
            mag.draw_series(DashedLineSeries::new(
                vec![(f, y_lo), (f, y_hi)],
                5,
                4,
                style,
            ))
            .map_err(err)?;
            ph.draw_series(DashedLineSeries::new(
                vec![(f, ph_range.start), (f, ph_range.end)],
                5,
                4,
                style,
            ))
            .map_err(err)?;
        }
        let (h, dx) = if low {
            (HPos::Right, -10)
        } else {
            (HPos::Left, 10)
        };
        let first = format!("−3 dB at {}", format(fc, Unit::Hertz));
        let second = match worst_f.filter(|_| worst) {
            Some(w) => format!("worst case {}", format(w, Unit::Hertz)),
            None => String::new(),
        };
        let a = mag
            .draw_series(std::iter::once(
                EmptyElement::at((fc, y3))
                    + Circle::new((0, 0), 5, CORNER.filled())
                    + Text::new(
                        first,
                        (dx, -34),
                        label_font.clone().pos(Pos::new(h, VPos::Bottom)),
                    )
                    + Text::new(
                        second,
                        (dx, -13),
                        small.clone().pos(Pos::new(h, VPos::Bottom)),
                    ),
            ))
            .map_err(err)?;
        if !legend_done {
            legend_done = true;
            a.label(if worst {
                "−3 dB corner (dashed: nominal, light: worst case)"
            } else {
                "−3 dB corner"
            })
            .legend(|(x, y)| Circle::new((x + 11, y), 5, CORNER.filled()));
        }
    }

    // Loss at each band edge, against the mid-band gain: a diamond on the curve and the
    // figures below the curve inside the band (low edge left-aligned, high edge right-aligned,
    // on two heights so that a narrow band cannot make them collide).
    let edges = [
        (
            spec.band.0,
            m.band_low_loss_db,
            m.band_low_loss_worst_db,
            true,
        ),
        (
            spec.band.1,
            m.band_high_loss_db,
            m.band_high_loss_worst_db,
            false,
        ),
    ];
    let edge_font = (FONT, 16).into_font().color(&EDGE);
    for (f, loss, loss_worst, low) in edges {
        let y = mid_db - loss;
        let text = if worst {
            format!(
                "{}: −{} dB (worst −{} dB)",
                format(f, Unit::Hertz),
                format_sig(loss.max(0.0), Unit::Decibel, 2).replace(" dB", ""),
                format_sig(loss_worst.max(0.0), Unit::Decibel, 2).replace(" dB", "")
            )
        } else {
            format!(
                "{}: −{} dB",
                format(f, Unit::Hertz),
                format_sig(loss.max(0.0), Unit::Decibel, 2).replace(" dB", "")
            )
        };
        let (h, dx, dy) = if low {
            (HPos::Left, 8, 22)
        } else {
            (HPos::Right, -8, 46)
        };
        let diamond = |c: (i32, i32)| {
            Polygon::new(
                vec![
                    (c.0, c.1 - 6),
                    (c.0 + 6, c.1),
                    (c.0, c.1 + 6),
                    (c.0 - 6, c.1),
                ],
                EDGE.filled(),
            )
        };
        mag.draw_series(std::iter::once(
            EmptyElement::at((f, y.clamp(y_lo, y_hi)))
                + diamond((0, 0))
                + PathElement::new(vec![(0, 6), (0, dy - 2)], EDGE.mix(0.6).stroke_width(1))
                + Text::new(
                    text,
                    (dx, dy),
                    edge_font.clone().pos(Pos::new(h, VPos::Top)),
                ),
        ))
        .map_err(err)?;
    }
    mag.draw_series(std::iter::once(EmptyElement::at((f_lo, y_lo))))
        .map_err(err)?
        .label("loss at the band edges (vs mid-band)")
        .legend(|(x, y)| {
            Polygon::new(
                vec![(x + 11, y - 6), (x + 17, y), (x + 11, y + 6), (x + 5, y)],
                EDGE.filled(),
            )
        });

    mag.configure_series_labels()
        .position(SeriesLabelPosition::LowerMiddle)
        .margin(12)
        .label_font((FONT, 16))
        .background_style(WHITE.mix(0.92))
        .border_style(RGBColor(170, 170, 170))
        .draw()
        .map_err(err)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::evaluate;
    use crate::build::Piece;
    use crate::circuit::{circuit_for, inverting};
    use crate::vocab::PartKind;
    use crate::vocab::StageKind;

    const SPEC: &str = r#"
        [stage]
        kind = "inverting"
        supply = "5 V"
        gain = -4.7
        gain_tolerance = "10%"
        load = "100k"
        band = ["30 Hz", "4 kHz"]
        corner_low_max = "15 Hz"
        headroom = "0.15 V"
        [amplifier]
        gbw = "1 MHz"
        input_bias_current = "1 pA"
        input_offset_voltage = "5 mV"
        [stock]
        resistors = "E24"
        capacitors = "E6"
    "#;

    fn build() -> Build {
        let r = |v| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let c = |v| Part::single(PartKind::Capacitor, Piece::plain(v, 0.1));
        let mut parts = vec![r(100e3), r(470e3), r(470e3), r(470e3), c(220e-9), c(220e-9)];
        parts[inverting::C_OUT] = c(220e-9);
        Build { parts }
    }

    #[test]
    fn plot_marks_band_corners_and_edges() {
        let spec = Spec::from_toml(SPEC).unwrap();
        let stage = circuit_for(StageKind::Inverting);
        let b = build();
        let e = evaluate(&spec, stage, &b, None);
        let svg = svg(&spec, stage, &b, &e).unwrap();
        assert!(svg.starts_with("<svg"), "{}", &svg[..80]);
        // The band: a shaded rectangle and its legend entry.
        assert!(svg.contains("band 30 Hz – 4 kHz"));
        assert!(svg.contains("fill=\"#3CAA3C\""), "band shading colour");
        // −3 dB markers at the analysis' own corners, low and high.
        let low = format(e.metrics.low_corner_hz.unwrap(), Unit::Hertz);
        let high = format(e.metrics.high_corner_hz.unwrap(), Unit::Hertz);
        assert!(svg.contains(&format!("−3 dB at {low}")), "{low}");
        assert!(svg.contains(&format!("−3 dB at {high}")), "{high}");
        // Band-edge losses, and decade labels in engineering units.
        assert!(svg.contains("30 Hz: −0.49 dB"));
        assert!(svg.contains("\n10 Hz\n") && svg.contains("\n1 kHz\n"));
        assert!(svg.contains("worst-case envelope (64 corners)"));
    }

    #[test]
    fn sweep_envelope_holds_nominal_and_corners_sit_at_minus_3_db() {
        let spec = Spec::from_toml(SPEC).unwrap();
        let stage = circuit_for(StageKind::Inverting);
        let b = build();
        let e = evaluate(&spec, stage, &b, None);
        let (lo, hi) = range(&spec, &e);
        // Whole decades (to a hair), more than a decade beyond each corner for its label.
        for f in [lo, hi] {
            assert!((f.log10() - f.log10().round()).abs() < 1e-3, "{f}");
        }
        assert!(lo < e.metrics.low_corner_hz.unwrap() / 10.0);
        assert!(hi > e.metrics.high_corner_hz.unwrap() * 10.0);
        let s = sweep(&spec, stage, &b, lo, hi);
        for i in 0..s.freq.len() {
            assert!(s.gain_db_min[i] <= s.gain_db[i] + 1e-12);
            assert!(s.gain_db[i] <= s.gain_db_max[i] + 1e-12);
            assert!(s.phase_deg_min[i] <= s.phase_deg[i] + 1e-12);
        }
        // Inverting: −180° in the band (the branch the plot reads), +90° per high-pass network
        // far below it (two networks: toward 0°), −90° more above the op-amp pole (first-order
        // circuit theory).
        let at = |f: f64| {
            let i = s.freq.iter().position(|x| *x >= f).unwrap();
            (s.gain_db[i], s.phase_deg[i])
        };
        assert!((at(350.0).1 + 180.0).abs() < 5.0, "{:?}", at(350.0));
        assert!(at(1.0).1 > -30.0, "{:?}", at(1.0));
        assert!(at(9e6).1 < -250.0, "{:?}", at(9e6));
        // The −3 dB point of the sweep agrees with the analysis' corner to a sample step.
        let mid = 20.0 * stage.mid_gain(&spec, &b.values()).abs().log10();
        let fc = e.metrics.low_corner_hz.unwrap();
        let (g, _) = at(fc);
        assert!((g - (mid - 3.0103)).abs() < 0.3, "{g} vs {mid}");
    }

    #[test]
    fn clip_stops_curves_at_the_frame() {
        let pts = [(1.0, -50.0), (10.0, -10.0), (100.0, 0.0), (1000.0, -50.0)];
        let runs = clip(&pts, -20.0, 10.0);
        assert_eq!(runs.len(), 1);
        let r = &runs[0];
        assert_eq!(r.first().unwrap().1, -20.0);
        assert_eq!(r.last().unwrap().1, -20.0);
        assert!(r.iter().all(|p| p.1 >= -20.0 && p.1 <= 10.0));
    }
}
