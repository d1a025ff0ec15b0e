//! The terminal report: ranked builds as two tables (parts, figures) that fit 100 columns, then
//! the best build's checks, capacitor bias and cautions.

use crate::analysis::{Bound, Check, Evaluation};
use crate::build::Build;
use crate::circuit::Circuit;
use crate::search::Ranked;
use crate::spec::Spec;
use crate::value::{format, format_sig, Unit};
use std::fmt::Write;

/// Terminal styling: colour only when the binary says the terminal wants it.
#[derive(Debug, Clone, Copy, Default)]
pub struct Style {
    /// Colour the output with ANSI escapes.
    pub color: bool,
}

impl Style {
    fn paint(&self, code: &str, text: &str) -> String {
        if self.color {
            format!("\x1b[{code}m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
    fn pass(&self, pass: bool) -> String {
        if pass {
            self.paint("32", "pass")
        } else {
            self.paint("31;1", "FAIL")
        }
    }
    fn bold(&self, text: &str) -> String {
        self.paint("1", text)
    }
}

/// The usual cautions, printed with every report.
pub const CAUTIONS: &[&str] = &[
    "Confirm every figure against the op-amp's datasheet: this analysis uses the figures in the spec, a single-pole amplifier and ideal rails.",
    "A polarised (electrolytic or tantalum) capacitor fitted reversed, or run above its voltage rating, can fail violently: check the + marking against the polarity listed here before power is applied.",
    "Resistor and capacitor ratings are checked only where the inventory gives them; confirm the rest against each part's datasheet.",
    "For anything mains-powered, follow local codes and licensed practice; this tool does not assess mains safety.",
];

/// Pad or cut `text` to `width` display columns (all our symbols are one column wide).
fn cell(text: &str, width: usize) -> String {
    let n = text.chars().count();
    if n >= width {
        // Cut with an ellipsis and keep one space, so a long label never runs into the next
        // column.
        let mut cut: String = text.chars().take(width.saturating_sub(2)).collect();
        cut.push_str("… ");
        cut
    } else {
        format!("{text}{}", " ".repeat(width - n))
    }
}

fn gain_text(g: f64) -> String {
    // Gains are plain ratios; 4 significant digits show a 0.1 % error.
    let s = format_sig(g.abs(), Unit::Decibel, 4).replace(" dB", "");
    if g < 0.0 {
        format!("−{s}")
    } else {
        s
    }
}

fn opt_hz(v: Option<f64>) -> String {
    v.map_or_else(|| "—".to_string(), |f| format(f, Unit::Hertz))
}

/// A relative error: percent, or ppm below 0.01 %, and 0 below 0.01 ppm (float rounding).
fn error_text(e: f64) -> String {
    if e < 1e-8 {
        "0 %".to_string()
    } else if e < 1e-4 {
        format!(
            "{} ppm",
            format_sig(e * 1e6, Unit::Decibel, 2).replace(" dB", "")
        )
    } else {
        format_sig(e, Unit::Percent, 2)
    }
}

pub(crate) fn yield_text(y: Option<f64>) -> String {
    // One decimal of a percent: 10,000 samples resolve about that well.
    y.map_or_else(|| "—".to_string(), |y| format!("{:.1} %", y * 100.0))
}

fn cost_text(c: Option<f64>) -> String {
    c.map_or_else(|| "—".to_string(), |c| format!("{c:.2}"))
}

/// One-line heading for a report.
pub fn heading(spec: &Spec, stage: &dyn Circuit, stock_text: &str) -> String {
    format!(
        "{} stage · gain {} · {} supply · band {} – {} · stock: {}",
        stage.kind().name(),
        gain_text(spec.gain),
        super::common::supply_text(spec),
        format(spec.band.0, Unit::Hertz),
        format(spec.band.1, Unit::Hertz),
        stock_text
    )
}

/// A part's label with the dielectric where the inventory names it, so that two builds that
/// differ only in which line of a value they take can be told apart.
fn table_label(part: &crate::build::Part) -> String {
    let mut label = part.label();
    if part.kind != crate::vocab::PartKind::Capacitor {
        return label;
    }
    // The dielectric is text from the inventory: shown with its control characters escaped,
    // so that it cannot drive the terminal (`report::sanitise`).
    let mut kinds: Vec<std::borrow::Cow<str>> = part
        .pieces
        .iter()
        .filter_map(|p| p.dielectric.as_deref())
        .map(super::sanitise::escape_controls)
        .collect();
    kinds.dedup();
    if !kinds.is_empty() {
        label = format!("{label} {}", kinds.join("/"));
    }
    label
}

/// The note above a ranking that is not proven best: the search stopped early (a time limit
/// or Ctrl-C), so these are the best builds found so far — each passes every check, but a
/// better one may exist.
pub fn unproven(style: Style) -> String {
    let mark = if style.color { "\x1b[33m!\x1b[0m" } else { "!" };
    format!(
        "{mark} Not proven best: the search stopped early (--time-limit or Ctrl-C). These are the \
         best builds found so far; each passes every check, but a better one may exist. Run \
         without a limit for the exact ranking.\n"
    )
}

/// What a search stopped early (a time limit or Ctrl-C) before it found any build says: not
/// that no build meets the spec, which it did not prove, but that it ran out of time.
pub fn stopped_before_any_build(style: Style) -> String {
    let mark = if style.color { "\x1b[33m!\x1b[0m" } else { "!" };
    format!(
        "{mark} The search stopped (--time-limit or Ctrl-C) before it found any build. This does \
         not mean that no build meets the spec: run with a longer --time-limit, or without one, \
         for the exact answer.\n"
    )
}

/// The ranked builds: a parts table, then a figures table.
pub fn builds(spec: &Spec, stage: &dyn Circuit, ranked: &[Ranked], style: Style) -> String {
    let mut out = String::new();
    let slots = stage.slots();
    // A locked part's label carries its `*`, counted in the column's width, so that the next
    // column keeps its two spaces (`2.4 MΩ* 1.6 MΩ ∥ 1.6 MΩ` ran together).
    let labels: Vec<Vec<String>> = ranked
        .iter()
        .map(|r| {
            r.build
                .parts
                .iter()
                .map(|p| {
                    let text = table_label(p);
                    if p.locked {
                        format!("{text}*")
                    } else {
                        text
                    }
                })
                .collect()
        })
        .collect();
    // Column widths from the content, so two-part labels get the room they need.
    let widths: Vec<usize> = (0..slots.len())
        .map(|i| {
            labels
                .iter()
                .map(|l| l[i].chars().count())
                .chain(std::iter::once(slots[i].name.len()))
                .max()
                .unwrap_or(8)
                + 2
        })
        .collect();
    let _ = writeln!(out, "{}", style.bold("Parts"));
    let mut head = cell("#", 4);
    for (i, s) in slots.iter().enumerate() {
        head.push_str(&cell(s.name, widths[i]));
    }
    let _ = writeln!(out, "{}", head.trim_end());
    for (n, l) in labels.iter().enumerate() {
        let mut row = cell(&(n + 1).to_string(), 4);
        for (i, text) in l.iter().enumerate() {
            row.push_str(&cell(text, widths[i]));
        }
        let _ = writeln!(out, "{}", row.trim_end());
    }
    if ranked
        .iter()
        .any(|r| r.build.parts.iter().any(|p| p.locked))
    {
        let _ = writeln!(out, "    * locked (already on the board)");
    }
    let _ = writeln!(out);
    let worst = if spec.worst_case() {
        "worst"
    } else {
        "nominal"
    };
    let _ = writeln!(out, "{}", style.bold("Figures"));
    let _ = writeln!(
        out,
        "{}",
        format!(
            "{}{}{}{}{}{}{}{}{}{}",
            cell("#", 4),
            cell("gain", 9),
            cell("error", 9),
            cell(&format!("{worst} |gain|"), 18),
            cell("low −3 dB", 11),
            cell(&format!("{worst} swing"), 13),
            cell("parts", 7),
            cell("lines", 7),
            cell("cost", 8),
            cell("yield", 8),
        )
        .trim_end()
    );
    // Pareto optimality compares builds: a single build is marked nothing.
    let compared = ranked.len() > 1;
    let front = crate::search::pareto(ranked);
    for (n, r) in ranked.iter().enumerate() {
        let m = &r.evaluation.metrics;
        let (lo, hi) = (
            m.gain_min.abs().min(m.gain_max.abs()),
            m.gain_min.abs().max(m.gain_max.abs()),
        );
        let row = format!(
            "{}{}{}{}{}{}{}{}{}{}",
            cell(
                &format!("{}{}", n + 1, if compared && front[n] { "◆" } else { "" }),
                4
            ),
            cell(&gain_text(m.gain), 9),
            cell(&error_text(m.gain_error), 9),
            cell(&format!("{} … {}", gain_text(lo), gain_text(hi)), 18),
            cell(&opt_hz(m.low_corner_hz), 11),
            cell(&format!("±{}", format(m.swing_peak_v, Unit::Volt)), 13),
            cell(&m.part_count.to_string(), 7),
            cell(&m.bom_lines.to_string(), 7),
            cell(&cost_text(m.cost), 8),
            cell(
                &yield_text(r.evaluation.yield_report.as_ref().map(|y| y.overall)),
                8
            ),
        );
        let _ = writeln!(out, "{}", row.trim_end());
    }
    if compared {
        let _ = writeln!(
            out,
            "    ◆ Pareto-optimal over gain error, part count and cost"
        );
    }
    out
}

/// The one-line verdict that ends a `check` report: pass, or which checks fail.
pub fn verdict(evaluation: &crate::analysis::Evaluation, style: Style) -> String {
    let failed: Vec<&str> = evaluation
        .checks
        .iter()
        .filter(|c| !c.pass)
        .map(|c| c.name.as_str())
        .collect();
    if failed.is_empty() {
        format!(
            "{} this build meets every requirement ({} checks pass)\n",
            style.bold("Verdict: pass —"),
            evaluation.checks.len()
        )
    } else {
        format!(
            "{} {} of {} checks fail: {}\n",
            style.bold("Verdict: FAIL —"),
            failed.len(),
            evaluation.checks.len(),
            failed.join(", ")
        )
    }
}

fn value_text(c: &Check) -> (String, String, String) {
    let f = |v: f64| match c.unit {
        Unit::Percent if c.name.starts_with("gain") => gain_text(v),
        Unit::Percent => {
            if v >= 1.0 {
                "yes".into()
            } else {
                "no".into()
            }
        }
        // A loss of a few µdB is 0.00000x dB: three digits keep it inside the column.
        Unit::Decibel if v.abs() < 0.01 => format_sig(v, Unit::Decibel, 3),
        unit => format_sig(v, unit, 4),
    };
    let margin = match c.unit {
        Unit::Percent if c.name.starts_with("gain") => {
            format_sig(c.margin / c.limit, Unit::Percent, 2)
        }
        Unit::Percent => String::new(),
        unit => format_sig(c.margin, unit, 3),
    };
    (f(c.value), f(c.limit), margin)
}

/// Width of the requirement column: the longest label ("worst-case corner of the output
/// network (c_out)", 47 characters) in full, and the table still within 100 columns (96).
const CHECK_LABEL: usize = 48;

/// The checks of one build: requirement, value, limit, margin, pass/fail.
pub fn checks(evaluation: &Evaluation, style: Style) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{}", style.bold("Checks"));
    let _ = writeln!(
        out,
        "{}{}{}{}{}pass",
        cell("requirement", CHECK_LABEL),
        cell("value", 12),
        cell("limit", 13),
        cell("margin", 11),
        cell("yield", 8)
    );
    for c in &evaluation.checks {
        let (v, l, m) = value_text(c);
        let op = match c.bound {
            Bound::Min => "≥ ",
            Bound::Max => "≤ ",
        };
        let y = evaluation
            .yield_report
            .as_ref()
            .and_then(|y| y.check(&c.name));
        let _ = writeln!(
            out,
            "{}{}{}{}{}{}",
            cell(&c.label, CHECK_LABEL),
            cell(&v, 12),
            cell(&format!("{op}{l}"), 13),
            cell(&m, 11),
            cell(&yield_text(y), 8),
            style.pass(c.pass)
        );
    }
    out
}

/// DC across each capacitor with the side that is positive, and the rating it needs.
pub fn capacitors(
    spec: &Spec,
    evaluation: &Evaluation,
    build: &Build,
    stage: &dyn Circuit,
) -> String {
    let mut out = String::new();
    let worst = if spec.worst_case() {
        "worst"
    } else {
        "nominal"
    };
    let _ = writeln!(
        out,
        "Capacitor DC bias ({worst} range; + lead toward the side named)"
    );
    if evaluation.caps.is_empty() {
        let _ = writeln!(out, "  none: the stage is DC-coupled");
    }
    for c in &evaluation.caps {
        let idx = crate::circuit::slot_index(stage, &c.slot).unwrap_or(0);
        let part = &build.parts[idx];
        let kind = if c.polarized {
            "polarised"
        } else {
            "non-polarised or unknown"
        };
        let rating = match c.rating {
            Some(r) => format!("rated {}", format(r, Unit::Volt)),
            None => "rating not given".to_string(),
        };
        let _ = writeln!(
            out,
            "  {:<6} {:<12} {} ({} … {}), + to {}; needs ≥ {}; {}, {}",
            c.slot,
            part.label(),
            format_sig(c.volts.abs(), Unit::Volt, 3),
            format_sig(super::common::cap_range(c).0, Unit::Volt, 3),
            format_sig(super::common::cap_range(c).1, Unit::Volt, 3),
            c.positive_side,
            format_sig(c.rating_needed, Unit::Volt, 2),
            rating,
            kind
        );
        // Class-2 ceramics (X7R, X5R, Y5V, Z5U …) lose capacitance under DC bias, often by half
        // near their rated voltage (common practice): the corner moves up.
        let class2 = part.pieces.iter().any(|p| {
            p.dielectric.as_deref().is_some_and(|d| {
                let d = d.to_ascii_uppercase();
                ["X7R", "X5R", "X6S", "X7S", "Y5V", "Z5U", "X8R"]
                    .iter()
                    .any(|k| d.contains(k))
            })
        });
        if class2 {
            let _ = writeln!(
                out,
                "    {}: class-2 ceramic, its capacitance falls with DC bias; check the datasheet's DC-bias curve at {}",
                c.slot,
                format_sig(c.volts.abs(), Unit::Volt, 2)
            );
        }
    }
    out
}

/// Other figures a bench engineer wants beside the checks.
pub fn figures(spec: &Spec, evaluation: &Evaluation) -> String {
    let m = &evaluation.metrics;
    let mut out = String::new();
    let _ = writeln!(out, "Figures");
    let _ = writeln!(
        out,
        "  gain {} (target {}, error {}), noise gain {}",
        gain_text(m.gain),
        gain_text(spec.gain),
        error_text(m.gain_error),
        gain_text(m.noise_gain)
    );
    let _ = writeln!(
        out,
        "  input resistance {} (worst {})",
        format(m.input_resistance, Unit::Ohm),
        format(m.input_resistance_worst, Unit::Ohm)
    );
    for n in &m.networks {
        let _ = writeln!(
            out,
            "  {} network ({} with {}): corner {} (worst {})",
            n.name,
            n.cap_slot,
            format(n.resistance, Unit::Ohm),
            format(n.corner_hz, Unit::Hertz),
            format(n.corner_worst_hz, Unit::Hertz)
        );
    }
    let _ = writeln!(
        out,
        "  whole response: low −3 dB {} (worst {}), high −3 dB {} (worst {}; GBW/noise gain {})",
        opt_hz(m.low_corner_hz),
        opt_hz(m.low_corner_worst_hz),
        opt_hz(m.high_corner_hz),
        opt_hz(m.high_corner_worst_hz),
        opt_hz(m.high_corner_estimate_hz)
    );
    let _ = writeln!(
        out,
        "  loss at {}: {} dB (worst {} dB); at {}: {} dB (worst {} dB)",
        format(spec.band.0, Unit::Hertz),
        format_sig(m.band_low_loss_db, Unit::Decibel, 3).replace(" dB", ""),
        format_sig(m.band_low_loss_worst_db, Unit::Decibel, 3).replace(" dB", ""),
        format(spec.band.1, Unit::Hertz),
        format_sig(m.band_high_loss_db, Unit::Decibel, 3).replace(" dB", ""),
        format_sig(m.band_high_loss_worst_db, Unit::Decibel, 3).replace(" dB", "")
    );
    if spec.split() {
        let _ = writeln!(
            out,
            "  output DC {} (target {}, worst {} … {})",
            format_sig(m.output_dc_v, Unit::Volt, 4),
            format_sig(spec.bias_target(), Unit::Volt, 4),
            format_sig(m.output_dc_min_v, Unit::Volt, 4),
            format_sig(m.output_dc_max_v, Unit::Volt, 4),
        );
    } else {
        let _ = writeln!(
            out,
            "  output DC {} (target {}, worst {} … {}), divider current {}",
            format_sig(m.output_dc_v, Unit::Volt, 4),
            format_sig(spec.bias_target(), Unit::Volt, 4),
            format_sig(m.output_dc_min_v, Unit::Volt, 4),
            format_sig(m.output_dc_max_v, Unit::Volt, 4),
            format(m.divider_current_a, Unit::Ampere)
        );
    }
    if let Some(e) = m.output_offset_worst_v {
        let _ = writeln!(
            out,
            "  output DC error of the stage itself (source at 0 V; Ib, Ios, Vos through it): \
             worst ±{}",
            format_sig(e, Unit::Volt, 4)
        );
    }
    if let Some(d) = &m.difference {
        let db = |x: Option<f64>| {
            x.map_or("∞ (ratios match exactly)".to_string(), |x| {
                format!("{x:.1} dB")
            })
        };
        let _ = writeln!(
            out,
            "  common-mode rejection at DC {} (worst {}); common-mode gain {:.3e} V/V (worst ±{:.3e} V/V)",
            db(d.cmrr_db),
            db(d.cmrr_worst_db),
            d.common_mode_gain,
            d.common_mode_gain_worst
        );
        let _ = writeln!(
            out,
            "  input resistance − leg {} (worst {}), + leg {} (worst {})",
            format(d.input_resistance_minus, Unit::Ohm),
            format(d.input_resistance_minus_worst, Unit::Ohm),
            format(d.input_resistance_plus, Unit::Ohm),
            format(d.input_resistance_plus_worst, Unit::Ohm)
        );
        let _ = writeln!(
            out,
            "  common-mode input range {} … {} (worst case, inputs within the headroom limits)",
            format_sig(d.common_mode_min_v, Unit::Volt, 4),
            format_sig(d.common_mode_max_v, Unit::Volt, 4)
        );
        let pairs: Vec<String> = d
            .pairs
            .iter()
            .map(|p| match p.line {
                Some(row) => format!(
                    "{} + {}: one stock line (row {row}, one batch)",
                    p.slots[0], p.slots[1]
                ),
                None => format!("{} + {}: not from one line", p.slots[0], p.slots[1]),
            })
            .collect();
        let _ = writeln!(
            out,
            "  matched pairs: {} (the worst case takes no credit for a batch's closer matching)",
            pairs.join("; ")
        );
    }
    let _ = writeln!(
        out,
        "  swing ±{} at the output, ±{} at the input (worst case)",
        format(m.swing_peak_v, Unit::Volt),
        format(m.input_range_peak_v, Unit::Volt)
    );
    if let (Some(r), Some(w), Some(v_r)) =
        (m.ripple_out_v, m.ripple_out_worst_v, spec.supply_ripple)
    {
        let _ = writeln!(
            out,
            "  supply ripple {} rms at {} gives {} rms at the output (worst {})",
            format(v_r, Unit::Volt),
            format(spec.ripple_frequency, Unit::Hertz),
            format(r, Unit::Volt),
            format(w, Unit::Volt)
        );
    }
    if let Some(i) = m.output_current_peak_a {
        let _ = writeln!(
            out,
            "  output current {} at the peak (load and feedback network, worst case)",
            format(i, Unit::Ampere)
        );
    }
    if let Some((lo, hi)) = m.input_voltage_range_v {
        let _ = writeln!(
            out,
            "  op-amp inputs between {} and {} (DC and signal, worst case)",
            format_sig(lo, Unit::Volt, 3),
            format_sig(hi, Unit::Volt, 3)
        );
    }
    if let Some(n) = &evaluation.noise {
        let snr = n.snr_db.map_or(String::new(), |s| {
            format!(", SNR {s:.1} dB at the required peak")
        });
        let _ = writeln!(
            out,
            "  noise over the band: {} rms at the output, {} at the input{} ({} K; {} at {})",
            format(n.output_rms_v, Unit::Volt),
            format(n.input_rms_v, Unit::Volt),
            snr,
            n.temperature_k,
            format(n.input_density_mid, Unit::VoltPerRootHz),
            format(n.mid_frequency_hz, Unit::Hertz)
        );
        let mut top: Vec<_> = n.by_source.iter().collect();
        top.sort_by(|a, b| b.share.total_cmp(&a.share));
        let parts: Vec<String> = top
            .iter()
            .take(3)
            .map(|s| format!("{} {:.0} %", s.source, s.share * 100.0))
            .collect();
        let _ = writeln!(
            out,
            "    largest noise sources (power share): {}",
            parts.join(", ")
        );
    }
    if let Some(b) = &evaluation.dc_budget {
        let items: Vec<String> = b
            .items
            .iter()
            .map(|i| {
                format!(
                    "{} ±{}",
                    i.cause.replace('_', " "),
                    format(i.volts, Unit::Volt)
                )
            })
            .collect();
        let _ = writeln!(
            out,
            "  output DC budget (worst case): {} — total ±{}",
            items.join(", "),
            format(b.total_v, Unit::Volt)
        );
    }
    for p in &evaluation.power {
        let rating = p.rating.map_or(String::new(), |r| {
            format!(" (rated {})", format(r, Unit::Watt))
        });
        let _ = writeln!(
            out,
            "  {} dissipates {}{}",
            p.slot,
            format(p.watts, Unit::Watt),
            rating
        );
    }
    out
}

/// Columns a string takes on a terminal: characters, not counting ANSI colour sequences.
fn visible_len(text: &str) -> usize {
    let mut n = 0;
    let mut in_escape = false;
    for c in text.chars() {
        match (in_escape, c) {
            (false, '\x1b') => in_escape = true,
            (true, 'm') => in_escape = false,
            (true, _) => {}
            (false, _) => n += 1,
        }
    }
    n
}

/// Terminal width the reports keep to.
pub const WIDTH: usize = 100;

/// Wrap every line longer than `width` columns at spaces; continuation lines keep the line's
/// indent plus two spaces. Column counting is by characters (our symbols are one column).
pub fn fit_width(text: &str, width: usize) -> String {
    let mut out = String::new();
    for line in text.lines() {
        if visible_len(line) <= width {
            out.push_str(line);
            out.push('\n');
            continue;
        }
        let indent = line.chars().take_while(|c| *c == ' ').count();
        let cont = " ".repeat(indent + 2);
        let mut current = String::new();
        let mut len = 0;
        for word in line.trim_start().split(' ') {
            let w = visible_len(word);
            if len > 0 && len + 1 + w > width {
                out.push_str(&current);
                out.push('\n');
                current = cont.clone();
                len = cont.len();
            } else if len == 0 {
                current = " ".repeat(indent);
                len = indent;
            } else {
                current.push(' ');
                len += 1;
            }
            current.push_str(word);
            len += w;
        }
        out.push_str(&current);
        out.push('\n');
    }
    out
}

/// The full report of one build (the best of a pick, or a `check`).
pub fn detail(spec: &Spec, stage: &dyn Circuit, ranked: &Ranked, style: Style) -> String {
    fit_width(&detail_lines(spec, stage, ranked, style), WIDTH)
}

fn detail_lines(spec: &Spec, stage: &dyn Circuit, ranked: &Ranked, style: Style) -> String {
    let mut out = String::new();
    out.push_str(&figures(spec, &ranked.evaluation));
    out.push('\n');
    out.push_str(&checks(&ranked.evaluation, style));
    out.push('\n');
    out.push_str(&capacitors(spec, &ranked.evaluation, &ranked.build, stage));
    out.push('\n');
    let mut own = super::common::build_cautions(&ranked.evaluation);
    own.extend(crate::analysis::rating::build_cautions(
        spec,
        stage,
        &ranked.build,
    ));
    out.push_str(&cautions_for(&own));
    out
}

/// The cautions the reports show (polarised capacitors, ratings, mains), one `!` line each
/// under a `Cautions` heading; they defer to the datasheets, local codes and licensed practice.
pub fn cautions() -> String {
    cautions_for(&[])
}

/// [`cautions`] after a build's own (a resistor that runs hot).
fn cautions_for(own: &[String]) -> String {
    let mut out = String::from("Cautions\n");
    for c in own
        .iter()
        .map(String::as_str)
        .chain(CAUTIONS.iter().copied())
    {
        let _ = writeln!(out, "  ! {c}");
    }
    out
}

/// Why no build meets the spec, for people.
pub fn diagnosis(
    spec: &Spec,
    stage: &dyn Circuit,
    d: &crate::search::diagnose::Diagnosis,
    style: Style,
) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{}",
        style.bold("No build from this stock meets the spec.")
    );
    if d.several {
        let _ = writeln!(
            out,
            "No single requirement is to blame: dropping any one of them still leaves no build."
        );
    } else if !d.blockers.is_empty() {
        let _ = writeln!(out, "Blocking requirements (each alone; the others kept):");
        for b in &d.blockers {
            let _ = writeln!(out, "  - {}", b.message);
            for note in &b.notes {
                let _ = writeln!(out, "    {note}");
            }
        }
    }
    if !d.untried.is_empty() {
        let _ = writeln!(
            out,
            "Not tried in the time the diagnosis takes: {} (each may block too).",
            d.untried.join(", ")
        );
    }
    if let Some(n) = &d.nearest {
        let _ = writeln!(out);
        let _ = writeln!(
            out,
            "Nearest build (closest to meeting the spec), judged against the spec:"
        );
        let labels: Vec<String> = n
            .build
            .parts
            .iter()
            .zip(stage.slots())
            .map(|(p, s)| format!("{} {}", s.name, p.label()))
            .collect();
        let _ = writeln!(out, "  {}", labels.join(" · "));
        for c in n.evaluation.checks.iter().filter(|c| !c.pass) {
            let (v, l, m) = value_text(c);
            let op = match c.bound {
                Bound::Min => "≥",
                Bound::Max => "≤",
            };
            let _ = writeln!(
                out,
                "  FAIL {}: {} (needs {} {}; misses by {})",
                c.label,
                v,
                op,
                l,
                m.trim_start_matches('-')
            );
        }
        let _ = spec;
    }
    out
}
