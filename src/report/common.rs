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
