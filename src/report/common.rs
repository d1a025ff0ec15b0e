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

/// Text for HTML and SVG: the five XML character escapes, so that text from a user's files
/// (inventory notes, locations) is shown as text and never read as markup.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
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
    }
}
