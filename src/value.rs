//! Engineering values: parse what the trade writes ("4k7", "100 nF", "1%") and print it back.
//!
//! [`parse`] reads a number with an optional SI prefix and unit symbol, or an IEC 60062 RKM code
//! ("4k7", "R47", "3u3"), checks that it is the kind of quantity the caller asked for, and
//! returns it in SI base units. [`format()`] and [`format_sig`] print a value back in engineering
//! form ("4.7 kΩ", "100 nF").
//!
//! Numbers never go through float multiplication: the digits, the exponent, the SI prefix and
//! the unit scale are all collected as one decimal `digits × 10^exp` and handed to the standard
//! library's correctly rounded parser once, so `parse("4n7", Farad)` is exactly `4.7e-9` and
//! `parse("4k7", Ohm)` exactly `4700.0` — the same f64s that [`crate::series`] hands out.
//!
//! Grammar, in short:
//!
//! ```text
//! value   = [sign] ( decimal [exp] [ws] [prefix] [unit] | rkm [ws] [unit] )
//! sign    = "+" | "-" | "−" | "±" | "+/-"        (± only for a tolerance, - only for
//!                                                 voltages and dB)
//! decimal = digits ["." digits] | "." digits
//! rkm     = [digits] marker digits | digits "R"   (marker in place of the decimal point)
//! marker  = prefix letter (f p n u µ m k K M G T), "R" (ohms), "V" (volts)
//! prefix  = f p n u µ μ m k K M G T | meg Meg MEG
//! ```
//!
//! Prefix case follows the SI rule strictly: `m` is always milli and `M` mega (so "1 mΩ" is a
//! milliohm). SPICE users write mega as `meg`, which is accepted in any of its usual spellings.
//! `k` and `K` are both kilo, as IEC 60062 prints `K` in RKM codes ("1K0").

use std::fmt::Write as _;

/// The kind of quantity a value measures. Parsed values are in the SI base unit of the kind
/// (ohm, farad, volt, ampere, hertz, V/s, watt, V/√Hz, A/√Hz); [`Unit::Percent`] is a plain
/// fraction and [`Unit::Decibel`] the dB number itself.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
pub enum Unit {
    /// Resistance, Ω.
    Ohm,
    /// Capacitance, F.
    Farad,
    /// Voltage, V.
    Volt,
    /// Current, A.
    Ampere,
    /// Frequency, Hz.
    Hertz,
    /// Slew rate, V/s (printed in V/µs).
    VoltPerSecond,
    /// Power, W.
    Watt,
    /// Tolerance or ratio, as a fraction (0.01 = 1 %); a bare number is read as percent.
    Percent,
    /// Level in dB (the dB number itself).
    Decibel,
    /// Voltage noise density, V/√Hz.
    VoltPerRootHz,
    /// Current noise density, A/√Hz.
    AmpPerRootHz,
}

impl Unit {
    /// Every unit, in declaration order.
    pub const ALL: [Unit; 11] = [
        Unit::Ohm,
        Unit::Farad,
        Unit::Volt,
        Unit::Ampere,
        Unit::Hertz,
        Unit::VoltPerSecond,
        Unit::Watt,
        Unit::Percent,
        Unit::Decibel,
        Unit::VoltPerRootHz,
        Unit::AmpPerRootHz,
    ];

    /// The symbol used when printing. Slew rate is printed in V/µs, the unit datasheets use,
    /// although [`parse`] returns V/s.
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Ohm => "\u{3a9}",
            Unit::Farad => "F",
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Hertz => "Hz",
            Unit::VoltPerSecond => "V/\u{b5}s",
            Unit::Watt => "W",
            Unit::Percent => "%",
            Unit::Decibel => "dB",
            Unit::VoltPerRootHz => "V/\u{221a}Hz",
            Unit::AmpPerRootHz => "A/\u{221a}Hz",
        }
    }

    /// The name of the quantity, for messages ("expected a resistance").
    pub fn quantity(self) -> &'static str {
        match self {
            Unit::Ohm => "resistance",
            Unit::Farad => "capacitance",
            Unit::Volt => "voltage",
            Unit::Ampere => "current",
            Unit::Hertz => "frequency",
            Unit::VoltPerSecond => "slew rate",
            Unit::Watt => "power",
            Unit::Percent => "tolerance",
            Unit::Decibel => "level in dB",
            Unit::VoltPerRootHz => "voltage noise density",
            Unit::AmpPerRootHz => "current noise density",
        }
    }

    /// Inputs shown in error messages; every one of them parses (tested).
    fn examples(self) -> &'static [&'static str] {
        match self {
            Unit::Ohm => &["4.7k", "4k7", "47 kΩ"],
            Unit::Farad => &["100n", "100 nF", "4n7"],
            Unit::Volt => &["3.3", "2V5", "-1.5 V"],
            Unit::Ampere => &["10 nA", "1.5 mA", "2 A"],
            Unit::Hertz => &["20 Hz", "20k", "1.5 MHz"],
            Unit::VoltPerSecond => &["0.5 V/µs", "13 V/us", "5e5 V/s"],
            Unit::Watt => &["0.25 W", "250 mW", "0.125"],
            Unit::Percent => &["1 %", "±5 %", "1"],
            Unit::Decibel => &["0.5 dB", "-3 dB", "3"],
            Unit::VoltPerRootHz => &["10 nV/√Hz", "10 nV/rtHz"],
            Unit::AmpPerRootHz => &["1 pA/√Hz", "1 pA/rtHz"],
        }
    }

    /// `expected a resistance such as "4.7k", "4k7" or "47 kΩ"`.
    fn expected_phrase(self) -> String {
        let ex = self.examples();
        let mut out = format!("expected a {} such as ", self.quantity());
        for (i, e) in ex.iter().enumerate() {
            if i > 0 {
                out.push_str(if i + 1 == ex.len() { " or " } else { ", " });
            }
            let _ = write!(out, "\"{e}\"");
        }
        out
    }

    /// Tolerances and dB levels are plain numbers: "1 k%" means nothing.
    fn takes_prefix(self) -> bool {
        !matches!(self, Unit::Percent | Unit::Decibel)
    }

    /// A negative voltage (below ground, or a negative rail) and a negative dB level are
    /// meaningful; a negative resistance, capacitance, frequency or tolerance is a typo.
    fn may_be_negative(self) -> bool {
        matches!(self, Unit::Volt | Unit::Decibel)
    }
}

/// Why a text is not a value of the expected unit. `message` is a complete sentence that
/// quotes the input, says what was found and what was expected.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct ValueError {
    /// The text as given.
    pub input: String,
    /// The unit the caller asked for.
    pub expected: Unit,
    /// The full explanation, e.g.
    /// `"10 uF" is a capacitance, expected a resistance such as "4.7k", "4k7" or "47 kΩ"`.
    pub message: String,
}

/// A unit symbol as it may be written after a number.
struct Token {
    text: &'static str,
    unit: Unit,
    /// Power of ten from the written unit to the base unit (V/µs → V/s is +6).
    exp: i32,
    /// Match ASCII letters case-insensitively ("kOhm", "KOHM", "hz", "db").
    nocase: bool,
    /// Only valid right after a prefix: lowercase "f" is farad in "100nf", but a bare "10f"
    /// is ten femto.
    needs_prefix: bool,
}

const fn tok(text: &'static str, unit: Unit, exp: i32) -> Token {
    Token {
        text,
        unit,
        exp,
        nocase: false,
        needs_prefix: false,
    }
}

const fn tok_nocase(text: &'static str, unit: Unit) -> Token {
    Token {
        text,
        unit,
        exp: 0,
        nocase: true,
        needs_prefix: false,
    }
}

const TOKENS: &[Token] = &[
    tok("\u{3a9}", Unit::Ohm, 0), // Greek capital omega, the form Unicode recommends
    tok("\u{2126}", Unit::Ohm, 0), // OHM SIGN, what some keyboards and fonts produce
    tok_nocase("ohm", Unit::Ohm),
    tok_nocase("ohms", Unit::Ohm),
    tok("F", Unit::Farad, 0),
    Token {
        text: "f",
        unit: Unit::Farad,
        exp: 0,
        nocase: false,
        needs_prefix: true,
    },
    tok("V", Unit::Volt, 0),
    tok("A", Unit::Ampere, 0),
    tok_nocase("Hz", Unit::Hertz),
    tok("V/s", Unit::VoltPerSecond, 0),
    tok("V/ms", Unit::VoltPerSecond, 3),
    tok("V/us", Unit::VoltPerSecond, 6),
    tok("V/\u{b5}s", Unit::VoltPerSecond, 6),  // MICRO SIGN
    tok("V/\u{3bc}s", Unit::VoltPerSecond, 6), // Greek small mu
    tok("W", Unit::Watt, 0),
    tok("%", Unit::Percent, 0),
    tok_nocase("dB", Unit::Decibel),
    tok("V/\u{221a}Hz", Unit::VoltPerRootHz, 0),
    tok("V/\u{221a}(Hz)", Unit::VoltPerRootHz, 0),
    tok("V/rtHz", Unit::VoltPerRootHz, 0),
    tok("V/sqrtHz", Unit::VoltPerRootHz, 0),
    tok("V/sqrt(Hz)", Unit::VoltPerRootHz, 0),
    tok("A/\u{221a}Hz", Unit::AmpPerRootHz, 0),
    tok("A/\u{221a}(Hz)", Unit::AmpPerRootHz, 0),
    tok("A/rtHz", Unit::AmpPerRootHz, 0),
    tok("A/sqrtHz", Unit::AmpPerRootHz, 0),
    tok("A/sqrt(Hz)", Unit::AmpPerRootHz, 0),
];

impl Token {
    /// The text before this token if `s` ends with it.
    fn strip_from<'a>(&self, s: &'a str) -> Option<&'a str> {
        if self.nocase {
            let cut = s.len().checked_sub(self.text.len())?;
            if s.is_char_boundary(cut) && s[cut..].eq_ignore_ascii_case(self.text) {
                Some(&s[..cut])
            } else {
                None
            }
        } else {
            s.strip_suffix(self.text)
        }
    }

    /// `s` is exactly this token.
    fn is(&self, s: &str) -> bool {
        if self.nocase {
            s.eq_ignore_ascii_case(self.text)
        } else {
            s == self.text
        }
    }
}

/// SI prefix letters (BIPM SI Brochure, table of prefixes) as powers of ten. Femto is included
/// because current noise densities are quoted in fA/√Hz.
fn prefix_letter(c: char) -> Option<i32> {
    Some(match c {
        'f' => -15,
        'p' => -12,
        'n' => -9,
        // 'u' is the ASCII stand-in for micro (common practice); U+00B5 MICRO SIGN and U+03BC
        // GREEK SMALL LETTER MU both occur in real text.
        'u' | '\u{b5}' | '\u{3bc}' => -6,
        // SI: lower-case m is milli, always; upper-case M is mega.
        'm' => -3,
        'k' | 'K' => 3,
        'M' => 6,
        'G' => 9,
        'T' => 12,
        _ => return None,
    })
}

/// A whole prefix: one letter, or SPICE's "meg" for mega.
fn prefix(s: &str) -> Option<i32> {
    if matches!(s, "meg" | "Meg" | "MEG") {
        return Some(6);
    }
    let mut chars = s.chars();
    let c = chars.next()?;
    if chars.next().is_some() {
        return None;
    }
    prefix_letter(c)
}

/// `s` is two prefixes in a row ("kk", "mM", "umeg").
fn two_prefixes(s: &str) -> bool {
    s.char_indices()
        .skip(1)
        .any(|(i, _)| prefix(&s[..i]).is_some() && prefix(&s[i..]).is_some())
}

/// What an RKM letter stands for.
#[derive(Clone, Copy)]
enum Marker {
    /// An SI prefix letter: "4k7" = 4.7 k.
    Prefix(i32),
    /// The unit itself: "4R7" = 4.7 Ω (IEC 60062), "2V5" = 2.5 V (common practice).
    Base(Unit),
}

fn marker(c: char) -> Option<Marker> {
    match c {
        'R' => Some(Marker::Base(Unit::Ohm)),
        'V' => Some(Marker::Base(Unit::Volt)),
        _ => prefix_letter(c).map(Marker::Prefix),
    }
}

/// Splits `s` after its leading ASCII digits.
fn digits(s: &str) -> (&str, &str) {
    let end = s.find(|c: char| !c.is_ascii_digit()).unwrap_or(s.len());
    s.split_at(end)
}

/// If `s` starts with an RKM letter followed by a digit, the marker and the text after it.
fn rkm_marker(s: &str) -> Option<(Marker, &str)> {
    let c = s.chars().next()?;
    let m = marker(c)?;
    let rest = &s[c.len_utf8()..];
    rest.starts_with(|d: char| d.is_ascii_digit())
        .then_some((m, rest))
}

/// The pieces of a value collected by the scanner.
struct Reading {
    negative: bool,
    plus_minus: bool,
    /// All significant digits, integer and fraction, without the point.
    mantissa: String,
    /// Power of ten applied to `mantissa` read as an integer.
    exp: i64,
    prefixed: bool,
    found: Option<Unit>,
}

/// Builds error messages that quote the input.
struct Ctx<'a> {
    text: &'a str,
    s: &'a str,
    unit: Unit,
}

impl Ctx<'_> {
    fn error(&self, message: String) -> ValueError {
        ValueError {
            input: self.text.to_string(),
            expected: self.unit,
            message,
        }
    }

    fn invalid(&self, reason: &str) -> ValueError {
        self.error(format!(
            "\"{}\" is not a valid {}: {reason}; {}",
            self.s,
            self.unit.quantity(),
            self.unit.expected_phrase()
        ))
    }

    fn mismatch(&self, found: Unit) -> ValueError {
        self.error(format!(
            "\"{}\" is a {}, {}",
            self.s,
            found.quantity(),
            self.unit.expected_phrase()
        ))
    }

    fn comma(&self) -> ValueError {
        // Suggest the two unambiguous spellings, built from what was typed: "4,7k" → "4.7k"
        // or "4k7"; "4,7" for a resistor → "4.7" or "4R7".
        let point = self.s.replacen(',', ".", 1);
        let (int, rest) = digits(self.s.trim_start_matches(['+', '-']));
        let rkm = rest.strip_prefix(',').and_then(|after| {
            let (frac, tail) = digits(after);
            if int.is_empty() || frac.is_empty() {
                return None;
            }
            let mut chars = tail.chars();
            match chars.next() {
                Some(c) if marker(c).is_some() => Some(format!("{int}{c}{frac}{}", chars.as_str())),
                None if self.unit == Unit::Ohm => Some(format!("{int}R{frac}")),
                None if self.unit == Unit::Volt => Some(format!("{int}V{frac}")),
                _ => None,
            }
        });
        let how = match rkm {
            Some(r) => format!("use a point or the RKM code: \"{point}\" or \"{r}\""),
            None => format!("use a point: \"{point}\""),
        };
        self.error(format!(
            "\"{}\" has a decimal comma; {how} (and no thousands separators)",
            self.s
        ))
    }
}

/// Parse `text` as a value of `unit`, returning SI base units (ohm, farad, volt, ampere, hertz,
/// V/s, W, V/√Hz, A/√Hz).
///
/// - SI prefixes f p n u µ μ m k K M G T and SPICE's `meg`, with or without the unit symbol,
///   with or without a space: "4.7k", "4.7 kΩ", "4.7kohm", "100n", "0.1 uF", "20 kHz",
///   "0.5 V/µs" (= 5e5 V/s), "10 nV/√Hz" or "10 nV/rtHz", "250 mW", "4.7e-9 F".
/// - IEC 60062 RKM codes, the letter in place of the decimal point: "4k7", "R47", "4R7",
///   "10R", "2M2", "1K0", "3u3", "n47", "1m5" (1.5 mF). The RKM letter may be any prefix
///   letter, "R" for ohms, or "V" for volts ("2V5" = 2.5 V, common practice on schematics).
/// - A bare number is in the base unit. For [`Unit::Percent`] a bare number is *percent*, not
///   a fraction: "1" → 0.01, because inventory spreadsheets write tolerance as 1 or 5.
///   Percent returns a fraction (1 % → 0.01); Decibel returns the dB number.
/// - Rejected, with a message naming what was found and what was expected: empty text,
///   anything that is not a number, NaN and infinity, out-of-range values, a unit symbol of
///   another quantity ("10 uF" for a resistance), negative values (except voltages and dB),
///   a decimal comma ("4,7k"), two prefixes, and trailing text.
///
/// Never panics, whatever the input.
pub fn parse(text: &str, unit: Unit) -> Result<f64, ValueError> {
    let s = text.trim();
    let ctx = Ctx { text, s, unit };
    if s.is_empty() {
        return Err(ctx.error(format!("empty text; {}", unit.expected_phrase())));
    }
    if s.contains(',') {
        return Err(ctx.comma());
    }
    let r = scan(&ctx)?;

    if let Some(found) = r.found {
        if found != unit {
            return Err(ctx.mismatch(found));
        }
    }
    if r.prefixed && !unit.takes_prefix() {
        return Err(ctx.invalid(&format!(
            "an SI prefix does not apply to a {}",
            unit.quantity()
        )));
    }
    if r.plus_minus && unit != Unit::Percent {
        return Err(ctx.invalid(&format!(
            "\"±\" belongs to a tolerance; give a {} as one value",
            unit.quantity()
        )));
    }
    if r.negative && !unit.may_be_negative() {
        return Err(ctx.error(format!(
            "\"{s}\" is negative; a {} cannot be negative ({})",
            unit.quantity(),
            unit.expected_phrase()
        )));
    }

    // A bare tolerance is in percent, and "%" is the same scale: 10^-2 either way.
    let exp = if unit == Unit::Percent {
        r.exp - 2
    } else {
        r.exp
    };
    // Clamp so the literal stays short; anything beyond ±10^6 is 0 or inf for f64 anyway.
    let exp = exp.clamp(-1_000_000, 1_000_000);
    let magnitude: f64 = format!("{}e{exp}", r.mantissa)
        .parse()
        .map_err(|_| ctx.invalid("not a number"))?;
    if !magnitude.is_finite() {
        return Err(ctx.invalid("too large to represent"));
    }
    if magnitude == 0.0 && r.mantissa.bytes().any(|b| b != b'0') {
        return Err(ctx.invalid("too small to represent"));
    }
    Ok(if r.negative && magnitude != 0.0 {
        -magnitude
    } else {
        magnitude
    })
}

/// A plain number (a bare TOML number, `-20e-9`) as a value of `unit`, under the rules that
/// [`parse`] applies to the same number written as text (`"-20e-9"`): finite, negative only
/// for a voltage or a dB level, and a bare tolerance in percent (`5` → 0.05). Returns SI base
/// units like [`parse`].
pub fn from_number(x: f64, unit: Unit) -> Result<f64, ValueError> {
    let text = number_text(x);
    let ctx = Ctx {
        text: &text,
        s: &text,
        unit,
    };
    if !x.is_finite() {
        return Err(ctx.invalid("NaN and infinity are not values"));
    }
    if x < 0.0 && !unit.may_be_negative() {
        return Err(ctx.error(format!(
            "{text} is negative; a {} cannot be negative ({})",
            unit.quantity(),
            unit.expected_phrase()
        )));
    }
    // A bare tolerance is in percent, as in `parse`.
    Ok(if unit == Unit::Percent { x / 100.0 } else { x })
}

/// A plain number as a person would have written it: `-1`, `0.5`, `2e-8`, `1e308`.
pub(crate) fn number_text(x: f64) -> String {
    let text = format!("{x:?}");
    match text.strip_suffix(".0") {
        Some(whole) => whole.to_string(),
        None => text,
    }
}

/// Reads sign, number (decimal or RKM), prefix and unit symbol; checks only the syntax.
fn scan(ctx: &Ctx<'_>) -> Result<Reading, ValueError> {
    let mut rest = ctx.s;
    let mut negative = false;
    let mut plus_minus = false;
    if let Some(r) = ["±", "+/-", "+-"]
        .iter()
        .find_map(|pm| rest.strip_prefix(pm))
    {
        plus_minus = true;
        rest = r.trim_start();
    } else if let Some(r) = rest.strip_prefix('+') {
        rest = r;
    } else if let Some(r) = rest.strip_prefix(['-', '\u{2212}']) {
        negative = true;
        rest = r;
    }
    if rest.starts_with(['+', '-', '\u{2212}', '±']) {
        return Err(ctx.invalid("more than one sign"));
    }

    let (int, after_int) = digits(rest);

    // RKM: the marker letter stands where the decimal point would be (IEC 60062).
    if let Some((m, after_marker)) = rkm_marker(after_int) {
        let (frac, tail) = digits(after_marker);
        if tail.starts_with('.') {
            return Err(ctx.invalid(
                "an RKM code has its letter in place of the decimal point, so it cannot also \
                 have a point",
            ));
        }
        let tail_spaced = tail.trim_start();
        let written = if tail_spaced.is_empty() {
            None
        } else if let Some(t) = TOKENS
            .iter()
            .find(|t| t.is(tail_spaced) && (!t.needs_prefix || matches!(m, Marker::Prefix(_))))
        {
            Some(t)
        } else if prefix(tail_spaced).is_some() {
            return Err(ctx.invalid("two SI prefixes; an RKM letter already is the prefix"));
        } else {
            return Err(ctx.invalid(&format!("unexpected \"{tail_spaced}\" after the RKM code")));
        };
        let (prefix_exp, prefixed, marker_unit) = match m {
            Marker::Prefix(e) => (e, true, None),
            Marker::Base(u) => (0, false, Some(u)),
        };
        let found = match (marker_unit, written) {
            (Some(mu), Some(t)) if mu != t.unit => {
                return Err(ctx.invalid(&format!(
                    "the RKM letter marks a {} but the symbol \"{}\" a {}",
                    mu.quantity(),
                    t.text,
                    t.unit.quantity()
                )))
            }
            (mu, t) => t.map(|t| t.unit).or(mu),
        };
        let unit_exp = written.map_or(0, |t| t.exp);
        return Ok(Reading {
            negative,
            plus_minus,
            mantissa: format!("{int}{frac}"),
            exp: i64::from(prefix_exp) + i64::from(unit_exp) - frac.len() as i64,
            prefixed,
            found,
        });
    }

    // Decimal: digits, optional fraction, optional exponent.
    let (frac, after_num) = match after_int.strip_prefix('.') {
        Some(f) => {
            let (frac, tail) = digits(f);
            (Some(frac), tail)
        }
        None => (None, after_int),
    };
    let frac_digits = frac.unwrap_or("");
    if int.is_empty() && frac_digits.is_empty() {
        let lower = rest.to_ascii_lowercase();
        return Err(if lower.starts_with("nan") || lower.starts_with("inf") {
            ctx.invalid("NaN and infinity are not values")
        } else if rest.starts_with(|c: char| marker(c).is_some()) {
            ctx.invalid("no digits (a prefix or RKM letter needs a number)")
        } else {
            ctx.invalid("no number")
        });
    }
    if frac.is_some() && rkm_marker(after_num).is_some() {
        return Err(ctx.invalid(
            "a decimal point and an RKM letter together; write \"4.7k\" or \"4k7\", not \"4.7k7\"",
        ));
    }
    let mut exp = -(frac_digits.len() as i64);
    let mut tail = after_num;
    if let Some(e) = after_num.strip_prefix(['e', 'E']) {
        let (neg_exp, e_digits) = match e.strip_prefix(['-', '\u{2212}']) {
            Some(d) => (true, d),
            None => (false, e.strip_prefix('+').unwrap_or(e)),
        };
        let (ed, after_exp) = digits(e_digits);
        if !ed.is_empty() {
            // Saturate: an exponent of a million digits is as out of range as one of seven.
            let trimmed = ed.trim_start_matches('0');
            let value: i64 = if trimmed.len() > 7 {
                10_000_000
            } else {
                trimmed.parse().unwrap_or(0)
            };
            exp += if neg_exp { -value } else { value };
            tail = after_exp;
        }
    }

    let had_point_or_exp = frac.is_some() || tail.len() != after_num.len();
    let suffix = tail.trim_start();
    let spaced = suffix.len() != tail.len();
    let (prefix_exp, found, unit_exp) = suffix_parts(ctx, suffix, spaced, had_point_or_exp)?;
    Ok(Reading {
        negative,
        plus_minus,
        mantissa: format!("{int}{frac_digits}"),
        exp: exp + i64::from(prefix_exp.unwrap_or(0)) + i64::from(unit_exp),
        prefixed: prefix_exp.is_some(),
        found,
    })
}

/// Splits the text after a decimal number into prefix and unit symbol.
/// Returns (prefix exponent, unit named, unit scale exponent).
fn suffix_parts(
    ctx: &Ctx<'_>,
    suffix: &str,
    spaced: bool,
    had_point_or_exp: bool,
) -> Result<(Option<i32>, Option<Unit>, i32), ValueError> {
    if suffix.is_empty() {
        return Ok((None, None, 0));
    }
    if suffix.starts_with('.') {
        return Err(ctx.invalid("more than one decimal point"));
    }
    // "10R": an RKM code with nothing after the letter (IEC 60062). R is not a unit symbol on
    // its own, so "4.7R" or "10 R" are refused rather than guessed.
    if suffix == "R" {
        return if had_point_or_exp || spaced {
            Err(ctx.invalid(
                "R stands for the decimal point in the RKM code; write \"4R7\" or \"4.7 Ω\"",
            ))
        } else {
            Ok((None, Some(Unit::Ohm), 0))
        };
    }
    // The longest unit symbol the text ends with; the text before it must be a prefix or
    // nothing. Longest first, so "nV/√Hz" is read as n + V/√Hz, not as something + Hz.
    let best = TOKENS
        .iter()
        .filter_map(|t| t.strip_from(suffix).map(|before| (t, before)))
        .filter(|(t, before)| !t.needs_prefix || prefix(before).is_some())
        .max_by_key(|(t, _)| t.text.len());
    let (before, token) = match best {
        Some((t, before)) => (before, Some(t)),
        None => (suffix, None),
    };
    let prefix_exp = if before.is_empty() {
        None
    } else if let Some(e) = prefix(before) {
        Some(e)
    } else if two_prefixes(before) {
        return Err(ctx.invalid(&format!("two SI prefixes in \"{before}\"; use one")));
    } else {
        return Err(ctx.invalid(&format!("unexpected \"{suffix}\" after the number")));
    };
    Ok((
        prefix_exp,
        token.map(|t| t.unit),
        token.map_or(0, |t| t.exp),
    ))
}

/// Engineering form with 3 significant digits, trailing zeros trimmed:
/// 4700 Ω → "4.7 kΩ", 47000 Ω → "47 kΩ", 1e-7 F → "100 nF", 3.3e-6 F → "3.3 µF",
/// 0.01 (Percent) → "1 %", 1e6 Ω → "1 MΩ", 0 → "0 Ω".
pub fn format(value: f64, unit: Unit) -> String {
    format_sig(value, unit, 3)
}

/// [`format()`] with `digits` significant digits (1 … 17; trailing zeros trimmed), e.g.
/// `format_sig(12345.6, Unit::Ohm, 4)` → "12.35 kΩ".
///
/// Resistance, capacitance, voltage, current, frequency, power and noise densities take an SI
/// prefix from f to T (down to "0.001 fF"; beyond that, scientific notation: "1.5e-19 F").
/// Slew rate is printed in V/µs, tolerance in %, and dB as the plain number, without
/// prefixes. Every output parses back with [`parse`] to the same value within the rounding of
/// `digits`.
pub fn format_sig(value: f64, unit: Unit, digits: usize) -> String {
    let symbol = unit.symbol();
    if value.is_nan() {
        return format!("NaN {symbol}");
    }
    if value.is_infinite() {
        let sign = if value < 0.0 { "-" } else { "" };
        return format!("{sign}inf {symbol}");
    }
    let digits = digits.clamp(1, 17);
    if value == 0.0 {
        // Zero has no significant digits to place; also avoids "-0".
        return format!("0 {symbol}");
    }
    let sign = if value < 0.0 { "-" } else { "" };

    // Rust's `{:.*e}` rounds the exact binary value correctly, so the digits are exact and
    // carries (999.6 → 1.00e3) are already done.
    let sci = format!("{:.*e}", digits - 1, value.abs());
    let (mant, exp) = sci.split_once('e').unwrap_or((sci.as_str(), "0"));
    let ds: String = mant.chars().filter(char::is_ascii_digit).collect();
    let exp: i32 = exp.parse().unwrap_or(0);

    let plain = |e: i32| {
        if (-6..=11).contains(&e) {
            point(&ds, e + 1)
        } else {
            format!("{}e{e}", point(&ds, 1))
        }
    };
    match unit {
        Unit::VoltPerSecond => format!("{sign}{} {symbol}", plain(exp - 6)),
        Unit::Percent => format!("{sign}{} {symbol}", plain(exp + 2)),
        Unit::Decibel => format!("{sign}{} {symbol}", plain(exp)),
        _ => {
            let mut e3 = exp.div_euclid(3) * 3;
            if e3 == -18 {
                // "0.8 fA/√Hz" reads better than "8e-16 A/√Hz"; there is no atto below.
                e3 = -15;
            }
            match engineering_prefix(e3) {
                Some(p) => format!("{sign}{} {p}{symbol}", point(&ds, exp - e3 + 1)),
                None => format!("{sign}{}e{exp} {symbol}", point(&ds, 1)),
            }
        }
    }
}

fn engineering_prefix(e3: i32) -> Option<&'static str> {
    Some(match e3 {
        -15 => "f",
        -12 => "p",
        -9 => "n",
        -6 => "\u{b5}",
        -3 => "m",
        0 => "",
        3 => "k",
        6 => "M",
        9 => "G",
        12 => "T",
        _ => return None,
    })
}

/// Places a decimal point after `int_len` of the ASCII `digits` (padding with zeros either
/// side as needed) and trims trailing fractional zeros: ("470", 1) → "4.7", ("5", 3) → "500",
/// ("1", -1) → "0.01".
fn point(digits: &str, int_len: i32) -> String {
    let n = digits.len() as i32;
    let mut s = if int_len <= 0 {
        format!("0.{}{digits}", "0".repeat(int_len.unsigned_abs() as usize))
    } else if int_len >= n {
        format!("{digits}{}", "0".repeat((int_len - n) as usize))
    } else {
        let (a, b) = digits.split_at(int_len as usize);
        format!("{a}.{b}")
    };
    if s.contains('.') {
        let keep = s.trim_end_matches('0').trim_end_matches('.').len();
        s.truncate(keep);
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use Unit::*;

    fn ok(text: &str, unit: Unit) -> f64 {
        match parse(text, unit) {
            Ok(v) => v,
            Err(e) => panic!("{text:?} as {unit:?}: {e}"),
        }
    }

    fn err(text: &str, unit: Unit) -> String {
        match parse(text, unit) {
            Ok(v) => panic!("{text:?} as {unit:?} parsed to {v}"),
            Err(e) => {
                assert_eq!(e.input, text);
                assert_eq!(e.expected, unit);
                assert_eq!(e.to_string(), e.message);
                e.message
            }
        }
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * a.abs().max(b.abs())
    }

    #[test]
    fn zero_formats_plainly_in_every_unit() {
        assert_eq!(format(0.0, Unit::Percent), "0 %");
        assert_eq!(format_sig(-0.0, Unit::Ohm, 2), "0 Ω");
        assert_eq!(format(0.0, Unit::Decibel), "0 dB");
    }

    #[test]
    fn iec_60062_rkm_resistors() {
        // IEC 60062, RKM code examples, from memory.
        assert_eq!(ok("4k7", Ohm), 4700.0);
        assert_eq!(ok("R47", Ohm), 0.47);
        assert_eq!(ok("4R7", Ohm), 4.7);
        assert_eq!(ok("2M2", Ohm), 2.2e6);
        assert_eq!(ok("1K0", Ohm), 1000.0);
        assert_eq!(ok("10R", Ohm), 10.0);
        assert_eq!(ok("0R1", Ohm), 0.1);
        assert_eq!(ok("1G5", Ohm), 1.5e9);
        assert_eq!(ok("100R", Ohm), 100.0);
        assert_eq!(ok("M47", Ohm), 0.47e6);
        assert_eq!(ok("6K81", Ohm), 6810.0);
        assert_eq!(ok("1R00", Ohm), 1.0);
        // With a unit symbol after the code.
        assert_eq!(ok("4k7Ω", Ohm), 4700.0);
        assert_eq!(ok("4k7 ohm", Ohm), 4700.0);
    }

    #[test]
    fn iec_60062_rkm_capacitors() {
        // IEC 60062, RKM code examples, from memory.
        assert_eq!(ok("3u3", Farad), 3.3e-6);
        assert_eq!(ok("4n7", Farad), 4.7e-9);
        assert_eq!(ok("2p2", Farad), 2.2e-12);
        assert_eq!(ok("n47", Farad), 0.47e-9);
        assert_eq!(ok("u47", Farad), 0.47e-6);
        assert_eq!(ok("1m5", Farad), 1.5e-3);
        assert_eq!(ok("3µ3", Farad), 3.3e-6);
        assert_eq!(ok("4n7F", Farad), 4.7e-9);
        assert_eq!(ok("4n7 F", Farad), 4.7e-9);
    }

    #[test]
    fn rkm_for_other_units() {
        // Common practice on schematics: "2V5" for a 2.5 V reference, "1k5" for 1.5 kHz.
        assert_eq!(ok("2V5", Volt), 2.5);
        assert_eq!(ok("-2V5", Volt), -2.5);
        assert_eq!(ok("1V25", Volt), 1.25);
        assert_eq!(ok("1k5", Hertz), 1500.0);
        assert_eq!(ok("2m5", Ampere), 2.5e-3);
        assert_eq!(ok("1k5Hz", Hertz), 1500.0);
        // The letter says what the value is.
        assert!(err("2V5", Ohm).contains("is a voltage, expected a resistance"));
        assert!(err("4R7", Farad).contains("is a resistance, expected a capacitance"));
        // A tolerance or a dB level takes no prefix, RKM or not.
        assert!(err("1k5", Percent).contains("prefix"));
        assert!(err("4R7V", Ohm).contains("RKM letter marks a resistance"));
    }

    #[test]
    fn rkm_gives_the_exact_decimal() {
        // Same f64 as the literal and as the series values (crate::series builds 47 / 10^10).
        assert_eq!(ok("4n7", Farad), 47.0 / 1e10);
        assert_eq!(ok("4k7", Ohm), ok("4.7k", Ohm));
        assert_eq!(ok("R47", Ohm), ok("0.47", Ohm));
        assert_eq!(ok("n47", Farad), 4.7e-10);
    }

    #[test]
    fn prefixes() {
        assert_eq!(ok("4.7k", Ohm), 4700.0);
        assert_eq!(ok("4.7K", Ohm), 4700.0);
        assert_eq!(ok("4.7 kΩ", Ohm), 4700.0);
        assert_eq!(ok("4.7 k\u{2126}", Ohm), 4700.0); // OHM SIGN
        assert_eq!(ok("4.7kohm", Ohm), 4700.0);
        assert_eq!(ok("4.7 kOhms", Ohm), 4700.0);
        assert_eq!(ok("47000", Ohm), 47000.0);
        assert_eq!(ok("1M", Ohm), 1e6);
        assert_eq!(ok("1meg", Ohm), 1e6);
        assert_eq!(ok("1Meg", Ohm), 1e6);
        assert_eq!(ok("1 MEGohm", Ohm), 1e6);
        assert_eq!(ok("1m", Ohm), 1e-3); // SI: m is milli, also for ohms
        assert_eq!(ok("100 mΩ", Ohm), 0.1);
        assert_eq!(ok("1T", Ohm), 1e12);
        assert_eq!(ok("1G", Ohm), 1e9);
        assert_eq!(ok("100n", Farad), 1e-7);
        assert_eq!(ok("0.1 uF", Farad), 1e-7);
        assert_eq!(ok("1µF", Farad), 1e-6); // U+00B5
        assert_eq!(ok("1μF", Farad), 1e-6); // U+03BC
        assert_eq!(ok("100nf", Farad), 1e-7); // lower-case f after a prefix is farad
        assert_eq!(ok("10f", Farad), 1e-14); // but alone it is femto
        assert_eq!(ok("10 fF", Farad), 1e-14);
        assert_eq!(ok("4.7e-9 F", Farad), 4.7e-9);
        assert_eq!(ok("1 F", Farad), 1.0);
        assert_eq!(ok("10 nA", Ampere), 1e-8);
        assert_eq!(ok("2 V", Volt), 2.0);
        assert_eq!(ok("3.3V", Volt), 3.3);
        assert_eq!(ok("500 mV", Volt), 0.5);
        assert_eq!(ok("20 Hz", Hertz), 20.0);
        assert_eq!(ok("20 kHz", Hertz), 20e3);
        assert_eq!(ok("1.5MHz", Hertz), 1.5e6);
        assert_eq!(ok("10 mHz", Hertz), 0.01);
        assert_eq!(ok("20 khz", Hertz), 20e3);
        assert_eq!(ok("0.25 W", Watt), 0.25);
        assert_eq!(ok("250 mW", Watt), 0.25);
        assert_eq!(ok("1e3", Ohm), 1000.0);
        assert_eq!(ok("1E3", Ohm), 1000.0);
        assert_eq!(ok("1e+3", Ohm), 1000.0);
        assert_eq!(ok("2.2e-3k", Ohm), 2.2);
        assert_eq!(ok(".5", Ohm), 0.5);
        assert_eq!(ok("5.", Ohm), 5.0);
        assert_eq!(ok("+5", Ohm), 5.0);
        assert_eq!(ok("  4.7k  ", Ohm), 4700.0);
        assert_eq!(ok("4.7\u{202f}kΩ", Ohm), 4700.0); // narrow no-break space, SI style
        assert_eq!(ok("0", Ohm), 0.0); // a zero-ohm link is a real part
    }

    #[test]
    fn slew_rate_and_noise() {
        assert_eq!(ok("0.5 V/us", VoltPerSecond), 5e5);
        assert_eq!(ok("0.5 V/µs", VoltPerSecond), 5e5);
        assert_eq!(ok("0.5 V/μs", VoltPerSecond), 5e5);
        assert_eq!(ok("13V/us", VoltPerSecond), 13e6);
        assert_eq!(ok("500 V/ms", VoltPerSecond), 5e5);
        assert_eq!(ok("5e5 V/s", VoltPerSecond), 5e5);
        assert_eq!(ok("500 mV/µs", VoltPerSecond), 5e5);
        assert_eq!(ok("5e5", VoltPerSecond), 5e5); // bare: base unit V/s
        assert_eq!(ok("10 nV/√Hz", VoltPerRootHz), 1e-8);
        assert_eq!(ok("10 nV/rtHz", VoltPerRootHz), 1e-8);
        assert_eq!(ok("10nV/sqrt(Hz)", VoltPerRootHz), 1e-8);
        assert_eq!(ok("1 pA/√Hz", AmpPerRootHz), 1e-12);
        assert_eq!(ok("0.8 fA/rtHz", AmpPerRootHz), 0.8e-15);
        assert!(err("10 nV/√Hz", AmpPerRootHz).contains("is a voltage noise density"));
        assert!(err("10 nV", VoltPerRootHz).contains("is a voltage, expected"));
    }

    #[test]
    fn percent_and_decibel() {
        assert_eq!(ok("1%", Percent), 0.01);
        assert_eq!(ok("1 %", Percent), 0.01);
        assert_eq!(ok("±1 %", Percent), 0.01);
        assert_eq!(ok("± 5%", Percent), 0.05);
        assert_eq!(ok("+/-0.1%", Percent), 0.001);
        // A bare tolerance is percent (inventory spreadsheets write 1 or 5).
        assert_eq!(ok("1", Percent), 0.01);
        assert_eq!(ok("5", Percent), 0.05);
        assert_eq!(ok("0.5", Percent), 0.005);
        assert_eq!(ok("0.5 dB", Decibel), 0.5);
        assert_eq!(ok("-3 dB", Decibel), -3.0);
        assert_eq!(ok("3", Decibel), 3.0);
        assert_eq!(ok("60db", Decibel), 60.0);
        assert!(err("1 k%", Percent).contains("prefix does not apply to a tolerance"));
        assert!(err("1 mdB", Decibel).contains("prefix does not apply"));
        assert!(err("-1%", Percent).contains("negative"));
        assert!(err("±1 V", Volt).contains("±"));
        assert!(err("±1k", Ohm).contains("±"));
        assert!(err("1 dB", Percent).contains("is a level in dB, expected a tolerance"));
    }

    #[test]
    fn negative_values() {
        assert_eq!(ok("-1.5 V", Volt), -1.5);
        assert_eq!(ok("\u{2212}1.5 V", Volt), -1.5); // MINUS SIGN
        assert_eq!(ok("-0", Volt), 0.0);
        assert!(ok("-0", Volt).is_sign_positive());
        for u in [
            Ohm,
            Farad,
            Ampere,
            Hertz,
            VoltPerSecond,
            Watt,
            VoltPerRootHz,
        ] {
            let m = err("-1", u);
            assert!(m.contains("is negative"), "{m}");
            assert!(m.contains(u.quantity()), "{m}");
        }
        assert_eq!(
            err("-1k", Ohm),
            "\"-1k\" is negative; a resistance cannot be negative \
             (expected a resistance such as \"4.7k\", \"4k7\" or \"47 kΩ\")"
        );
    }

    #[test]
    fn unit_mismatches_name_both() {
        assert_eq!(
            err("10 uF", Ohm),
            "\"10 uF\" is a capacitance, expected a resistance such as \"4.7k\", \"4k7\" or \"47 kΩ\""
        );
        assert!(err("4.7 kΩ", Farad).contains("is a resistance, expected a capacitance"));
        assert!(err("2 V", Ampere).contains("is a voltage, expected a current"));
        assert!(err("10 nA", Volt).contains("is a current, expected a voltage"));
        assert!(err("20 kHz", Ohm).contains("is a frequency, expected a resistance"));
        assert!(err("1%", Ohm).contains("is a tolerance, expected a resistance"));
        assert!(err("0.25 W", Volt).contains("is a power, expected a voltage"));
        assert!(err("1 V/us", Volt).contains("is a slew rate, expected a voltage"));
        assert!(err("5 V", VoltPerSecond).contains("is a voltage, expected a slew rate"));
        assert!(err("10R", Farad).contains("is a resistance, expected a capacitance"));
        assert!(err("-10 uF", Ohm).contains("is a capacitance"));
    }

    #[test]
    fn rejects_garbage_with_a_clear_message() {
        for (text, needle) in [
            ("", "empty text"),
            ("   ", "empty text"),
            ("abc", "no number"),
            ("4.7.1k", "more than one decimal point"),
            ("k", "no digits"),
            ("--1", "more than one sign"),
            ("-+1", "more than one sign"),
            ("-±1", "more than one sign"),
            ("NaN", "NaN and infinity"),
            ("inf", "NaN and infinity"),
            ("-inf", "NaN and infinity"),
            ("1e999", "too large"),
            ("1e-999", "too small"),
            ("1e99999999999999999999", "too large"),
            ("4.7kk", "two SI prefixes"),
            ("1 mkΩ", "two SI prefixes"),
            ("4k7k", "two SI prefixes"),
            ("4.7k ohm extra", "unexpected"),
            ("4.7kx", "unexpected"),
            ("4.7 k Ω", "unexpected"),
            ("4.7 µH", "unexpected"),
            ("1e", "unexpected \"e\""),
            ("4.7R", "R stands for the decimal point"),
            ("10 R", "R stands for the decimal point"),
            ("4.7k7", "decimal point and an RKM letter"),
            ("4k7.5", "cannot also have a point"),
            ("4k7x", "unexpected \"x\" after the RKM code"),
            (".", "no number"),
            ("e3", "no number"),
        ] {
            let m = err(text, Ohm);
            assert!(m.contains(needle), "{text:?}: {m}");
            assert!(m.contains("resistance"), "{text:?}: {m}");
        }
    }

    #[test]
    fn decimal_comma_is_refused_with_a_suggestion() {
        assert_eq!(
            err("4,7k", Ohm),
            "\"4,7k\" has a decimal comma; use a point or the RKM code: \"4.7k\" or \"4k7\" \
             (and no thousands separators)"
        );
        assert!(err("4,7", Ohm).contains("\"4.7\" or \"4R7\""));
        assert!(err("2,5 V", Volt).contains("\"2.5 V\""));
        assert!(err("4,7nF", Farad).contains("\"4.7nF\" or \"4n7F\""));
        assert!(err("0,5 dB", Decibel).contains("use a point: \"0.5 dB\""));
        assert!(err("4,700", Ohm).contains("thousands"));
    }

    #[test]
    fn examples_in_messages_parse() {
        for u in Unit::ALL {
            for e in u.examples() {
                assert!(parse(e, u).is_ok(), "{u:?} example {e:?}");
            }
            // And every unit names itself when given the wrong one.
            let m = err("1 Hz", if u == Hertz { Ohm } else { u });
            assert!(m.contains("expected a"), "{m}");
        }
    }

    #[test]
    fn symbols_and_quantities() {
        let symbols: Vec<&str> = Unit::ALL.iter().map(|u| u.symbol()).collect();
        assert_eq!(
            symbols,
            ["Ω", "F", "V", "A", "Hz", "V/µs", "W", "%", "dB", "V/√Hz", "A/√Hz"]
        );
        // Every printed symbol is accepted back.
        for u in Unit::ALL {
            let text = format!("1 {}", u.symbol());
            assert!(parse(&text, u).is_ok(), "{text}");
        }
        assert_eq!(Ohm.quantity(), "resistance");
        assert_eq!(AmpPerRootHz.quantity(), "current noise density");
    }

    #[test]
    fn formatting_examples() {
        assert_eq!(format(4700.0, Ohm), "4.7 kΩ");
        assert_eq!(format(47000.0, Ohm), "47 kΩ");
        assert_eq!(format(1e-7, Farad), "100 nF");
        assert_eq!(format(3.3e-6, Farad), "3.3 µF");
        assert_eq!(format(0.01, Percent), "1 %");
        assert_eq!(format(1.0e6, Ohm), "1 MΩ");
        assert_eq!(format(0.0, Ohm), "0 Ω");
        assert_eq!(format(-0.0, Volt), "0 V");
        assert_eq!(format_sig(12345.6, Ohm, 4), "12.35 kΩ");
        assert_eq!(format(12345.6, Ohm), "12.3 kΩ");
        assert_eq!(format(999.6, Ohm), "1 kΩ"); // rounding carries into the next prefix
        assert_eq!(format(0.47, Ohm), "470 mΩ");
        assert_eq!(format(4.7e-9, Farad), "4.7 nF");
        assert_eq!(format(2.2e-12, Farad), "2.2 pF");
        assert_eq!(format(5e5, VoltPerSecond), "0.5 V/µs");
        assert_eq!(format(13e6, VoltPerSecond), "13 V/µs");
        assert_eq!(format(-2.5, Volt), "-2.5 V");
        assert_eq!(format(2.5e-3, Volt), "2.5 mV");
        assert_eq!(format(20e3, Hertz), "20 kHz");
        assert_eq!(format(0.25, Watt), "250 mW");
        assert_eq!(format(1e-8, VoltPerRootHz), "10 nV/√Hz");
        assert_eq!(format(0.8e-15, AmpPerRootHz), "0.8 fA/√Hz");
        assert_eq!(format(0.001, Percent), "0.1 %");
        assert_eq!(format(-3.0103, Decibel), "-3.01 dB");
        assert_eq!(format(1234.0, Decibel), "1230 dB");
        assert_eq!(format_sig(470.0, Ohm, 1), "500 Ω");
        assert_eq!(format_sig(4700.0, Ohm, 0), "5 kΩ"); // 0 digits is taken as 1
        assert_eq!(format(1.5e-18, Farad), "0.0015 fF");
        assert_eq!(format(1.5e-19, Farad), "1.5e-19 F");
        assert_eq!(format(2e15, Ohm), "2e15 Ω");
        assert_eq!(format(1e-12, Percent), "1e-10 %");
        assert_eq!(format(f64::NAN, Ohm), "NaN Ω");
        assert_eq!(format(f64::NEG_INFINITY, Volt), "-inf V");
    }

    #[test]
    fn round_trip_of_series_values() {
        // Every E96 value from 1 pF to 10 µF and from 1 Ω to 10 MΩ prints and parses back to
        // the identical f64 at the default 3 digits.
        for v in crate::series::Series::E96.values_in(1e-12, 1e-5) {
            assert_eq!(ok(&format(v, Farad), Farad), v, "{v}");
        }
        for v in crate::series::Series::E96.values_in(1.0, 1e7) {
            assert_eq!(ok(&format(v, Ohm), Ohm), v, "{v}");
        }
    }

    #[test]
    fn point_placement() {
        assert_eq!(point("470", 1), "4.7");
        assert_eq!(point("470", 3), "470");
        assert_eq!(point("5", 3), "500");
        assert_eq!(point("1", -1), "0.01");
        assert_eq!(point("100", 1), "1");
        assert_eq!(point("123", 0), "0.123");
    }

    /// Value-like text never panics, and whatever parses is finite and of an allowed sign.
    /// Those checks only run on text that parses, so the cases that did are counted: at least
    /// 10 % of them must parse as some unit (measured: 20 % on average over 20 runs of 256
    /// cases, 13 % at the lowest).
    #[test]
    fn value_like_strings_never_panic() {
        let mut runner = proptest::test_runner::TestRunner::new(ProptestConfig {
            source_file: Some(file!()),
            ..ProptestConfig::default()
        });
        let (run, parsed) = (std::cell::Cell::new(0u32), std::cell::Cell::new(0u32));
        // Symbol soup, and numbers with a prefix and a unit symbol in the shapes people write.
        let strategy = prop_oneof![
            "[0-9.,eE+\\-±−kKmMunpµμfGTRVAFHzWdB%ΩΩ/√rtsqoh() ]{0,12}",
            "[+\\-]?[0-9]{1,4}([.][0-9]{1,3})?([eE][+\\-]?[0-9]{1,2})? ?([pnuµkMG]|meg)?[0-9]{0,2} ?(Ω|F|V|A|Hz|W|%|dB|V/us)?",
        ];
        let outcome = runner.run(&strategy, |s| {
            run.set(run.get() + 1);
            let mut any = false;
            for u in Unit::ALL {
                if let Ok(v) = parse(&s, u) {
                    any = true;
                    prop_assert!(v.is_finite());
                    prop_assert!(v >= 0.0 || u.may_be_negative());
                }
            }
            parsed.set(parsed.get() + u32::from(any));
            Ok(())
        });
        if let Err(e) = outcome {
            panic!("{e}");
        }
        let (run, parsed) = (run.get(), parsed.get());
        println!("value-like strings: {parsed} of {run} parsed as some unit");
        assert!(
            parsed >= run / 10,
            "only {parsed} of {run} value-like strings parsed: the checks on parsed values \
             were barely reached"
        );
    }

    proptest! {
        #[test]
        fn arbitrary_strings_never_panic(s in ".*") {
            for u in Unit::ALL {
                let _ = parse(&s, u);
            }
        }

        #[test]
        fn format_then_parse_round_trips(bits in 1u64..0x7ff0_0000_0000_0000u64) {
            // Every finite positive f64, uniformly over its bit patterns.
            let v = f64::from_bits(bits);
            for u in Unit::ALL {
                let text = format_sig(v, u, 12);
                let back = parse(&text, u);
                prop_assert!(back.is_ok(), "{} {:?} → {:?}: {:?}", v, u, text, back);
                let back = back.unwrap_or(f64::NAN);
                prop_assert!((back - v).abs() <= 1e-9 * v, "{} {:?} → {:?} → {}", v, u, text, back);
            }
        }

        #[test]
        fn negative_voltages_and_levels_round_trip(v in -1e6f64..-1e-9) {
            for u in [Volt, Decibel] {
                let text = format_sig(v, u, 12);
                let back = parse(&text, u).unwrap_or(f64::NAN);
                prop_assert!((back - v).abs() <= 1e-9 * v.abs(), "{} → {:?} → {}", v, text, back);
            }
        }

        #[test]
        fn decimal_and_rkm_agree(int in 1u32..1000, frac in 0u32..100) {
            // "4k7" and "4.7k" are the same value, for every prefix letter.
            for (letter, mult) in [("p", 1e-12), ("n", 1e-9), ("u", 1e-6), ("k", 1e3), ("M", 1e6)] {
                let rkm = format!("{int}{letter}{frac}");
                let dec = format!("{int}.{frac}{letter}");
                let a = ok(&rkm, Farad);
                prop_assert_eq!(a, ok(&dec, Farad));
                let expect: f64 = format!("{int}.{frac}").parse().unwrap_or(f64::NAN) * mult;
                prop_assert!(close(a, expect), "{} {} {}", rkm, a, expect);
            }
        }
    }
}
