//! What the reports share: the error of a report that cannot be drawn, and the XML escape
//! for text in HTML and SVG.

/// A report that could not be drawn or written out. The string-building reports never fail;
/// these wrap the libraries behind the plot and the CSV, whose writers into memory report
/// errors they do not expect to have.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum RenderError {
    /// The plotting library could not draw the plot.
    #[error("could not draw the frequency-response plot: {0}")]
    Plot(String),
    /// The CSV writer failed.
    #[error("could not write the BOM as CSV: {0}")]
    Csv(String),
}

/// The supply as reports write it: one value for a single supply ("9 V"), "±15 V" for a
/// symmetric split pair, "−12 V / +15 V" otherwise.
pub fn supply_text(spec: &crate::spec::Spec) -> String {
    use crate::value::{format, Unit};
    if !spec.split() {
        return format(spec.supply, Unit::Volt);
    }
    if spec.supply_low == -spec.supply {
        format!("±{}", format(spec.supply, Unit::Volt))
    } else {
        format!(
            "−{} / +{}",
            format(-spec.supply_low, Unit::Volt),
            format(spec.supply, Unit::Volt)
        )
    }
}

/// Text for HTML and SVG: the five XML character escapes, so that text from a user's files
/// (inventory notes, locations) is shown as text and never read as markup; and control
/// characters other than tab and line feed shown as visible escapes (`\x1b`), since XML 1.0
/// does not allow them in a document and HTML counts them as parse errors (XML 1.0 §2.2,
/// WHATWG HTML "control-character-in-input-stream").
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\n' | '\t' => out.push(c),
            c => out.push_str(&super::sanitise::escape_controls(
                c.encode_utf8(&mut [0; 4]),
            )),
        }
    }
    out
}

/// A capacitor's DC range in the sense the reports print its nominal value: from its
/// `positive_side` to its `negative_side`, so that "400 mV (348 mV … 426 mV), + to source
/// side" reads one way round (issue 12, part 8). The analysis measures V(a) − V(b) of the
/// circuit's fixed ends (`CapBias`), which the JSON keeps; `positive_side` is the end that the
/// nominal value finds positive, so a negative nominal turns the range round.
pub fn cap_range(c: &crate::analysis::CapReport) -> (f64, f64) {
    if c.volts >= 0.0 {
        (c.volts_min, c.volts_max)
    } else {
        (-c.volts_max, -c.volts_min)
    }
}

/// Share of a resistor's rating past which the reports caution that it runs hot: 80 % of the
/// 50 % derating the power check applies (common practice: a resistor near its rating runs
/// hot, drifts, and can scorch the board or fail).
pub const HOT_SHARE: f64 = 0.8 * crate::analysis::RESISTOR_DERATING;

/// The dissipation past which a resistor without a given rating is cautioned: half of 1/16 W,
/// the rating of the smallest common chip resistors (0402; from memory).
pub const UNRATED_HOT_W: f64 = 0.0625 * crate::analysis::RESISTOR_DERATING;

/// Cautions that belong to one build: a resistor whose dissipation approaches its rating (or,
/// without a rating, that the smallest common parts would not take), in slot order.
pub fn build_cautions(evaluation: &crate::analysis::Evaluation) -> Vec<String> {
    use crate::value::{format_sig, Unit};
    let w = |x: f64| format_sig(x, Unit::Watt, 3);
    evaluation
        .power
        .iter()
        .filter_map(|p| match p.rating {
            Some(r) if p.watts >= HOT_SHARE * r => Some(format!(
                "{} dissipates {}, {:.0} % of its {} rating: a resistor near its rating runs hot, \
                 drifts and can scorch the board or fail; keep it under {:.0} % (a larger part, or \
                 a larger value) and check the datasheet's derating with temperature.",
                p.slot,
                w(p.watts),
                100.0 * p.watts / r,
                w(r),
                100.0 * crate::analysis::RESISTOR_DERATING
            )),
            None if p.watts >= UNRATED_HOT_W => Some(format!(
                "{} dissipates {} and its power rating is not given: fit a part rated for at \
                 least {} (twice the dissipation), or it may overheat.",
                p.slot,
                w(p.watts),
                w(p.watts / crate::analysis::RESISTOR_DERATING)
            )),
            _ => None,
        })
        .collect()
}

#[cfg(test)]
mod tests {
    #[test]
    fn escape_markup() {
        assert_eq!(
            super::escape("<a href=\"x\">&'</a>"),
            "&lt;a href=&quot;x&quot;&gt;&amp;&#39;&lt;/a&gt;"
        );
        assert_eq!(super::escape("a\u{1b}[2J\nb\0"), "a\\x1b[2J\nb\\0");
    }
}

#[cfg(test)]
mod cap_range_tests {
    use super::*;
    use crate::analysis::CapReport;

    fn cap(volts: f64, lo: f64, hi: f64) -> CapReport {
        CapReport {
            slot: "c_in".into(),
            volts,
            volts_min: lo,
            volts_max: hi,
            positive_side: "source side".into(),
            negative_side: "+ input side".into(),
            polarized: false,
            rating: None,
            rating_needed: hi.abs().max(lo.abs()) / 0.8,
        }
    }

    /// ngspice `.op` on an exported netlist (non-inverting stage, source at 5 V DC, + input at
    /// 4.5 V): V(source side) − V(+ input side) = +0.5 V, while the analysis measures
    /// V(+ input side) − V(source side) = −0.5 V (−0.545 … −0.455 V over the corners). The
    /// range printed beside "+ to source side" is +0.455 … +0.545 V.
    #[test]
    fn a_negative_nominal_turns_the_range_round() {
        assert_eq!(cap_range(&cap(-0.5, -0.545, -0.455)), (0.455, 0.545));
        assert_eq!(cap_range(&cap(4.5, 4.46, 4.54)), (4.46, 4.54));
    }
}
