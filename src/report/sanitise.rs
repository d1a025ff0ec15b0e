//! Text from a user's files made safe to show: control characters escaped for a terminal or a
//! page, and spreadsheet cells that cannot start a formula.
//!
//! An inventory's notes, locations and dielectrics, and the names of files, are whatever bytes
//! someone typed or pasted. Shown raw, an ESC starts a terminal control sequence (ECMA-48:
//! CSI colours and cursor moves, OSC window titles and OSC-8 links), a backspace overwrites
//! what was printed, and a bidirectional override reorders it (Unicode TR 9); written raw into
//! a CSV, `=`, `+`, `-` or `@` at the start of a cell runs as a formula (OWASP, "CSV
//! Injection"). [`escape_controls`] makes every such character visible text (`\x1b`), and
//! [`spreadsheet_cell`] also neutralises formula starts wherever a reader could start a cell.

use std::borrow::Cow;

/// A character that is shown escaped: C0 controls, DEL and C1 controls (ECMA-48), and the
/// bidirectional embedding, override and isolate controls (Unicode TR 9, "explicit
/// directional formatting characters").
fn is_hidden(c: char) -> bool {
    c.is_control() || matches!(c, '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
}

/// How a hidden character is shown: `\0`, `\t`, `\n`, `\r` by name, other C0 controls and DEL
/// as `\xNN`, everything else as `\u{NNNN}` (the Rust and C spellings, common practice).
fn push_escaped(out: &mut String, c: char) {
    match c {
        '\0' => out.push_str("\\0"),
        '\t' => out.push_str("\\t"),
        '\n' => out.push_str("\\n"),
        '\r' => out.push_str("\\r"),
        c if (c as u32) < 0x80 => out.push_str(&format!("\\x{:02x}", c as u32)),
        c => out.push_str(&format!("\\u{{{:x}}}", c as u32)),
    }
}

fn escape_where(text: &str, hidden: impl Fn(char) -> bool) -> Cow<'_, str> {
    if !text.chars().any(&hidden) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        if hidden(c) {
            push_escaped(&mut out, c);
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// `text` with every control character (line ends and tabs included) and bidirectional
/// control shown as visible escapes, e.g. ESC as `\x1b`: one line of plain text that no
/// terminal or spreadsheet acts on.
pub fn escape_controls(text: &str) -> Cow<'_, str> {
    escape_where(text, is_hidden)
}

/// As [`escape_controls`], but line feeds are kept: for messages of several lines (error
/// lists) whose parts came from files.
pub fn escape_controls_but_newlines(text: &str) -> Cow<'_, str> {
    escape_where(text, |c| c != '\n' && is_hidden(c))
}

/// The characters a spreadsheet reads as the start of a formula or a control, at the start
/// of a cell (OWASP, "CSV Injection"). Tab and CR are escaped before this is asked.
const FORMULA_START: [char; 4] = ['=', '+', '-', '@'];

/// The separators a spreadsheet may split a CSV file on (`,` in most locales, `;` where the
/// comma is the decimal mark; tab is escaped before this is asked), so that what follows one
/// inside a cell may be read as the start of a new cell (OWASP, "CSV Injection").
const SEPARATORS: [char; 2] = [',', ';'];

/// A BOM cell that no spreadsheet evaluates, however it splits the file: control characters
/// escaped ([`escape_controls`], so no line break, tab or NUL is left to start a cell either),
/// then a single quote put before a formula character at the start of the cell and after each
/// `,` or `;` — past any spaces and double quotes there, which a reader may drop before it
/// looks at the cell (OWASP, "CSV Injection": prefix with `'`, and mind separators inside the
/// cell). Text without such a start is returned as it is.
pub fn spreadsheet_cell(text: &str) -> String {
    let text = escape_controls(text);
    let mut out = String::with_capacity(text.len() + 2);
    // True at the start of the cell and after a separator, until a character other than a
    // space or a double quote is seen.
    let mut at_start = true;
    for c in text.chars() {
        if at_start && FORMULA_START.contains(&c) {
            out.push('\'');
        }
        out.push(c);
        if SEPARATORS.contains(&c) {
            at_start = true;
        } else if c != ' ' && c != '"' {
            at_start = false;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        /// Any text of formula characters, separators, quotes, spaces and controls: the cell
        /// holds no control character, and no piece of it — split on `,` or `;` (the line ends
        /// are escaped), leading spaces and quotes dropped — starts a formula (OWASP).
        #[test]
        fn no_split_of_a_cell_starts_a_formula(
            text in "[=+@,; \"'\\-\t\r\n\x00\x1b\x7fa1\u{9b}\u{202e}]{0,24}"
        ) {
            let cell = spreadsheet_cell(&text);
            prop_assert!(!cell.chars().any(is_hidden), "{:?}", cell);
            for piece in cell.split([',', ';']) {
                let start = piece.trim_start_matches([' ', '"']);
                prop_assert!(!start.starts_with(FORMULA_START), "{:?} → {:?}", text, cell);
            }
            // Nothing is lost: removing the inserted quotes and undoing the escapes gives the
            // text back (the escapes are unambiguous where the text has no backslash).
            if !text.contains(['\\', '\'']) {
                let plain: String = cell.replace('\'', "");
                prop_assert_eq!(plain, escape_controls(&text).into_owned());
            }
        }
    }

    #[test]
    fn controls_are_shown_escaped() {
        // ECMA-48: ESC [ … m (SGR), ESC ] … BEL (OSC), BS; U+009B is the C1 CSI; U+202E is
        // the right-to-left override (Unicode TR 9).
        assert_eq!(
            escape_controls("\u{1b}[31mred\u{1b}[0m"),
            "\\x1b[31mred\\x1b[0m"
        );
        assert_eq!(escape_controls("a\u{8}\u{7}b"), "a\\x08\\x07b");
        assert_eq!(escape_controls("\0\t\n\r\u{7f}"), "\\0\\t\\n\\r\\x7f");
        assert_eq!(escape_controls("\u{9b}31m"), "\\u{9b}31m");
        assert_eq!(escape_controls("x\u{202e}y"), "x\\u{202e}y");
        assert!(matches!(escape_controls("47 kΩ ∥ µ"), Cow::Borrowed(_)));
        assert_eq!(escape_controls_but_newlines("a\nb\u{1b}"), "a\nb\\x1b");
    }

    #[test]
    fn formula_starts_are_neutralised_wherever_a_cell_may_start() {
        // OWASP, "CSV Injection": a leading ' makes the cell text.
        for (a, b) in [
            ("=1+2", "'=1+2"),
            ("+1", "'+1"),
            ("-1", "'-1"),
            ("@SUM(A1)", "'@SUM(A1)"),
            ("ok;=cmd|' /C calc'!A0;", "ok;'=cmd|' /C calc'!A0;"),
            ("a,-1", "a,'-1"),
            ("a; =1", "a; '=1"),
            ("a;\"=1\"", "a;\"'=1\""),
            ("\t=1", "\\t=1"),
            ("\0=1", "\\0=1"),
            ("x\n@y", "x\\n@y"),
            ("a=1", "a=1"),
            ("drawer A; shelf 2", "drawer A; shelf 2"),
            ("", ""),
        ] {
            assert_eq!(spreadsheet_cell(a), b, "{a:?}");
        }
    }
}
