//! Capacitor dielectrics by class, from the code an inventory writes (`C0G`, `X7R`, `2C1`, …).
//!
//! Class-2 ceramics change their capacitance with DC bias, temperature and signal level, which
//! distorts a signal passing through them; class 1 (C0G/NP0), film and electrolytics do not in
//! that way (common practice). The codes: the EIA three-character temperature codes of class 2
//! — a letter X, Y or Z for the low temperature, a digit for the high, a letter for the
//! change — and the IEC 60384-9 codes, which start with the class digit `2` (both from
//! memory).

/// True when `text` names a class-2 ceramic dielectric: an EIA code such as X5R, X7R, X6S,
/// X8R, Y5V or Z5U, an IEC 60384-9 class-2 code such as 2B1, 2C1, 2E6 or 2F4, or the words
/// "class 2" / "class II". Case and surrounding words are ignored (`"ceramic X7R"`).
pub fn is_class2(text: &str) -> bool {
    let t = text.to_ascii_uppercase();
    if t.contains("CLASS 2") || t.contains("CLASS II") || t.contains("CLASS-2") {
        // "CLASS III" is not class 2.
        return !t.contains("CLASS III");
    }
    t.split(|c: char| !c.is_ascii_alphanumeric())
        .any(|w| eia_class2(w.as_bytes()) || iec_class2(w.as_bytes()))
}

/// EIA class-2 code: X, Y or Z; a digit 4–9; a letter P–V (from memory).
fn eia_class2(w: &[u8]) -> bool {
    matches!(w, [a, b'4'..=b'9', c] if matches!(a, b'X' | b'Y' | b'Z') && (b'P'..=b'V').contains(c))
}

/// IEC 60384-9 class-2 code: `2`, a letter for the change, a digit for the range (from memory).
fn iec_class2(w: &[u8]) -> bool {
    matches!(w, [b'2', b'A'..=b'Z', b'0'..=b'9'])
}

#[cfg(test)]
mod tests {
    use super::is_class2;

    #[test]
    fn class_two_codes_are_recognised() {
        // EIA codes of class 2 and IEC 60384-9 class-2 codes (from memory).
        for t in [
            "X7R",
            "x5r",
            "X6S",
            "X8R",
            "Y5V",
            "Z5U",
            "X7S",
            "2C1",
            "2E6",
            "2F4",
            "ceramic X7R",
            "class 2",
            "Class II",
        ] {
            assert!(is_class2(t), "{t}");
        }
    }

    #[test]
    fn class_one_film_and_electrolytics_are_not() {
        for t in [
            "C0G",
            "NP0",
            "film",
            "polyester",
            "PET",
            "PP",
            "electrolytic",
            "tantalum",
            "",
            "class III",
            "1B",
            "X7",
            "X7RR",
        ] {
            assert!(!is_class2(t), "{t}");
        }
    }
}
