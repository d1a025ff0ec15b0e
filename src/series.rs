//! IEC 60063 preferred-number series (E3 … E192) and the standard values they give in a range.
//!
//! A series `En` has `n` values per decade, spaced close to a geometric progression
//! `10^(i/n)`. IEC 60063 fixes the values of E3 … E24 by table (two significant digits; several
//! E24 values do not follow the rounding formula, see the tests) and E48 … E192 by the formula
//! `round(10^(i/n))` to three significant digits, with one exception: 9.20 in E192 where the
//! formula gives 9.19.
//!
//! Values are kept as integer codes (`47` for 4.7, `475` for 4.75) so that every value handed
//! out is the exact nearest `f64` of its decimal (`4700.0 == 4.7e3`, `4.7e-9 == 4.7e-9`), never
//! the product of repeated float multiplications.

use std::sync::OnceLock;

/// One of the IEC 60063 preferred-number series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
pub enum Series {
    /// 3 values per decade (IEC 60063 table).
    E3,
    /// 6 values per decade (IEC 60063 table).
    E6,
    /// 12 values per decade (IEC 60063 table).
    E12,
    /// 24 values per decade (IEC 60063 table).
    E24,
    /// 48 values per decade (IEC 60063 formula, three digits).
    E48,
    /// 96 values per decade (IEC 60063 formula, three digits).
    E96,
    /// 192 values per decade (IEC 60063 formula, three digits; 9.20 by exception).
    E192,
}

// IEC 60063 tables for the two-digit series, from memory (common practice in every parts
// catalogue). Codes are the value × 10 (47 ↔ 4.7).
const E3_CODES: [u16; 3] = [10, 22, 47];
const E6_CODES: [u16; 6] = [10, 15, 22, 33, 47, 68];
const E12_CODES: [u16; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];
const E24_CODES: [u16; 24] = [
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
];

const E3_MANTISSAS: [f64; 3] = [1.0, 2.2, 4.7];
const E6_MANTISSAS: [f64; 6] = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8];
const E12_MANTISSAS: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
const E24_MANTISSAS: [f64; 24] = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6,
    6.2, 6.8, 7.5, 8.2, 9.1,
];

/// Relative tolerance used for range ends and membership: 1e-9 absorbs the rounding of a value
/// that went through arithmetic (e.g. 4.7e3 computed as 4.7 × 1000) without ever merging two
/// neighbouring series values (the closest pair, in E192, is about 1 % apart).
const REL_EPS: f64 = 1e-9;

/// Three-digit codes of `round(10^(i/n) × 100)` for E48/E96/E192, per IEC 60063.
fn formula_codes(n: usize) -> Vec<u16> {
    (0..n)
        .map(|i| {
            let code = (10f64.powf(i as f64 / n as f64) * 100.0).round() as u16;
            // IEC 60063: the single exception to the formula in the three-digit series is
            // 9.20 in E192 (i = 185), where round(10^(185/192), 3 digits) = 9.19.
            if n == 192 && i == 185 {
                920
            } else {
                code
            }
        })
        .collect()
}

fn cached_codes(cell: &'static OnceLock<Vec<u16>>, n: usize) -> &'static [u16] {
    cell.get_or_init(|| formula_codes(n)).as_slice()
}

fn cached_mantissas(cell: &'static OnceLock<Vec<f64>>, codes: &'static [u16]) -> &'static [f64] {
    // code / 100 is one correctly rounded division, so 475 → the f64 nearest to 4.75.
    cell.get_or_init(|| codes.iter().map(|&c| f64::from(c) / 100.0).collect())
        .as_slice()
}

/// `code × 10^exp` as the f64 nearest to that decimal.
///
/// For |exp| ≤ 22 the power of ten is exact in f64, so a single multiplication or division
/// rounds once, correctly. Beyond that the decimal is handed to the standard library parser,
/// which is correctly rounded too.
fn scaled(code: u16, exp: i32) -> f64 {
    let c = f64::from(code);
    if (0..=22).contains(&exp) {
        c * 10f64.powi(exp)
    } else if (-22..0).contains(&exp) {
        c / 10f64.powi(-exp)
    } else {
        // Always a valid float literal; overflow gives inf and underflow 0, both filtered out
        // by the callers.
        format!("{code}e{exp}").parse().unwrap_or(f64::NAN)
    }
}

impl Series {
    /// Every series, coarsest first.
    pub const ALL: [Series; 7] = [
        Series::E3,
        Series::E6,
        Series::E12,
        Series::E24,
        Series::E48,
        Series::E96,
        Series::E192,
    ];

    /// Reads a series name such as `"E24"` or `" e96 "` (case-insensitive, trimmed).
    pub fn parse(name: &str) -> Option<Series> {
        let name = name.trim();
        Series::ALL
            .into_iter()
            .find(|s| s.name().eq_ignore_ascii_case(name))
    }

    /// The series name, e.g. `"E24"`.
    pub fn name(self) -> &'static str {
        match self {
            Series::E3 => "E3",
            Series::E6 => "E6",
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// Number of values per decade (the `n` of `En`).
    pub fn per_decade(self) -> usize {
        match self {
            Series::E3 => 3,
            Series::E6 => 6,
            Series::E12 => 12,
            Series::E24 => 24,
            Series::E48 => 48,
            Series::E96 => 96,
            Series::E192 => 192,
        }
    }

    /// The values of one decade in [1, 10), ascending: E24 → 1.0, 1.1, 1.2, 1.3, 1.5 … 9.1.
    pub fn mantissas(self) -> &'static [f64] {
        static E48: OnceLock<Vec<f64>> = OnceLock::new();
        static E96: OnceLock<Vec<f64>> = OnceLock::new();
        static E192: OnceLock<Vec<f64>> = OnceLock::new();
        match self {
            Series::E3 => &E3_MANTISSAS,
            Series::E6 => &E6_MANTISSAS,
            Series::E12 => &E12_MANTISSAS,
            Series::E24 => &E24_MANTISSAS,
            Series::E48 => cached_mantissas(&E48, self.codes()),
            Series::E96 => cached_mantissas(&E96, self.codes()),
            Series::E192 => cached_mantissas(&E192, self.codes()),
        }
    }

    /// The tolerance traditionally paired with the series, as a fraction.
    ///
    /// IEC 60063 pairs E6 with ±20 %, E12 ±10 %, E24 ±5 %, E48 ±2 %, E96 ±1 %, E192 ±0.5 %
    /// (and tighter). For E3 the standard only says "wider than ±20 %"; we use ±40 %, the
    /// figure usually quoted for it (from memory). This is the tolerance a part *bought to
    /// the series* typically has; a real inventory states its own.
    pub fn tolerance(self) -> f64 {
        match self {
            Series::E3 => 0.40,
            Series::E6 => 0.20,
            Series::E12 => 0.10,
            Series::E24 => 0.05,
            Series::E48 => 0.02,
            Series::E96 => 0.01,
            Series::E192 => 0.005,
        }
    }

    /// Integer codes of one decade: two digits for E3 … E24 (47 ↔ 4.7), three digits for
    /// E48 … E192 (475 ↔ 4.75).
    fn codes(self) -> &'static [u16] {
        static E48: OnceLock<Vec<u16>> = OnceLock::new();
        static E96: OnceLock<Vec<u16>> = OnceLock::new();
        static E192: OnceLock<Vec<u16>> = OnceLock::new();
        match self {
            Series::E3 => &E3_CODES,
            Series::E6 => &E6_CODES,
            Series::E12 => &E12_CODES,
            Series::E24 => &E24_CODES,
            Series::E48 => cached_codes(&E48, 48),
            Series::E96 => cached_codes(&E96, 96),
            Series::E192 => cached_codes(&E192, 192),
        }
    }

    /// Significant digits of the codes, minus one: the power of ten that turns a code into a
    /// mantissa in [1, 10).
    fn code_exponent(self) -> i32 {
        match self {
            Series::E3 | Series::E6 | Series::E12 | Series::E24 => 1,
            Series::E48 | Series::E96 | Series::E192 => 2,
        }
    }

    /// All values of the series in `[min, max]`, ascending.
    ///
    /// Both ends are inclusive with a relative tolerance of 1e-9, so `values_in(4.7e3, 4.7e3)`
    /// finds 4.7 kΩ even if the bound was computed. Each value is the exact nearest `f64` of its
    /// decimal (`4700.0`, not `4699.999…`; `1e-12` for 1 pF). An empty vector is returned when
    /// `min` is not a positive finite number, `max` is not finite, or `max < min` (a series has
    /// no smallest value, so a range reaching down to zero would be infinite).
    pub fn values_in(self, min: f64, max: f64) -> Vec<f64> {
        if !(min.is_finite() && max.is_finite()) || min <= 0.0 || max < min {
            return Vec::new();
        }
        let lo = min * (1.0 - REL_EPS);
        // Near f64::MAX the widened bound would overflow to inf (and log10(inf) to a loop
        // over two billion decades); no finite value lies above MAX anyway.
        let hi = (max * (1.0 + REL_EPS)).min(f64::MAX);
        let shift = self.code_exponent();
        // Decade exponents, one spare on each side so that rounding in log10 cannot lose the
        // first or last decade; the filter below decides membership exactly. Both logs lie in
        // [-324, 309] since lo and hi are positive finite.
        let first = lo.log10().floor() as i32 - shift - 1;
        let last = hi.log10().floor() as i32 - shift + 1;
        let codes = self.codes();
        let mut out = Vec::new();
        for exp in first..=last {
            for &code in codes {
                let v = scaled(code, exp);
                if v.is_finite() && v >= lo && v <= hi {
                    out.push(v);
                }
            }
        }
        out
    }

    /// True when `value` is, within 1e-9 relative, a member of the series in some decade.
    /// Zero, negative and non-finite values are never members.
    pub fn contains(self, value: f64) -> bool {
        if !value.is_finite() || value <= 0.0 {
            return false;
        }
        let centre = value.log10().floor() as i32 - self.code_exponent();
        let codes = self.codes();
        (centre - 1..=centre + 1).any(|exp| {
            codes.iter().any(|&code| {
                let v = scaled(code, exp);
                (v - value).abs() <= REL_EPS * value
            })
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// IEC 60063 table, from memory: the E96 decade as three-digit codes.
    const E96_TABLE: [u16; 96] = [
        100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150,
        154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232,
        237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357,
        365, 374, 383, 392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549,
        562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845,
        866, 887, 909, 931, 953, 976,
    ];

    /// IEC 60063 table, from memory: the E192 decade as three-digit codes (note 920).
    const E192_TABLE: [u16; 192] = [
        100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123,
        124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
        154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176, 178, 180, 182, 184, 187, 189,
        191, 193, 196, 198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
        237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291,
        294, 298, 301, 305, 309, 312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
        365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448,
        453, 459, 464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
        562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673, 681, 690,
        698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
        866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
    ];

    fn is_subset(small: Series, big: Series) -> bool {
        small.mantissas().iter().all(|&m| big.contains(m))
    }

    #[test]
    fn names_parse_and_round_trip() {
        for s in Series::ALL {
            assert_eq!(Series::parse(s.name()), Some(s));
            assert_eq!(Series::parse(&s.name().to_lowercase()), Some(s));
            assert_eq!(Series::parse(&format!("  {}\t", s.name())), Some(s));
            assert_eq!(s.name(), format!("E{}", s.per_decade()));
        }
        assert_eq!(Series::parse("e24"), Some(Series::E24));
        for bad in ["", "E", "E25", "24", "E 24", "EE24", "E24x", "E0"] {
            assert_eq!(Series::parse(bad), None, "{bad:?}");
        }
    }

    #[test]
    fn each_series_has_n_strictly_ascending_values_in_one_decade() {
        for s in Series::ALL {
            let m = s.mantissas();
            assert_eq!(m.len(), s.per_decade(), "{}", s.name());
            assert_eq!(s.codes().len(), s.per_decade(), "{}", s.name());
            assert_eq!(m[0], 1.0);
            assert!(
                m.windows(2).all(|w| w[0] < w[1]),
                "{} not ascending",
                s.name()
            );
            assert!(m.iter().all(|&x| (1.0..10.0).contains(&x)));
        }
    }

    #[test]
    fn mantissas_are_exact_decimals() {
        // The f64 tables and the integer codes must describe the same decimals.
        for s in Series::ALL {
            let div = 10f64.powi(s.code_exponent());
            for (&m, &c) in s.mantissas().iter().zip(s.codes()) {
                assert_eq!(m, f64::from(c) / div, "{} {c}", s.name());
            }
        }
        assert_eq!(Series::E96.mantissas()[65], 4.75);
        assert_eq!(Series::E24.mantissas()[16], 4.7);
    }

    #[test]
    fn e24_values_that_depart_from_the_rounding_formula() {
        // IEC 60063 (from memory): the historical E24 values 2.7 … 4.7 and 8.2 are not
        // round(10^(i/24)) to two significant digits. Show exactly which, and that the table
        // keeps the historical value.
        let mut departures = Vec::new();
        for (i, &code) in E24_CODES.iter().enumerate() {
            let formula = (10f64.powf(i as f64 / 24.0) * 10.0).round() as u16;
            if formula != code {
                departures.push((code, formula));
            }
        }
        assert_eq!(
            departures,
            vec![
                (27, 26),
                (30, 29),
                (33, 32),
                (36, 35),
                (39, 38),
                (43, 42),
                (47, 46),
                (82, 83),
            ]
        );
        let e24 = Series::E24;
        for v in [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2] {
            assert!(e24.contains(v), "{v}");
        }
        for v in [2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6, 8.3] {
            assert!(!e24.contains(v), "{v}");
        }
    }

    #[test]
    fn e96_formula_agrees_with_the_table() {
        // IEC 60063 table, from memory, against the IEC 60063 formula.
        assert_eq!(Series::E96.codes(), &E96_TABLE[..]);
        assert_eq!(formula_codes(96), E96_TABLE.to_vec());
    }

    #[test]
    fn e192_is_the_formula_except_920() {
        // IEC 60063: the formula gives 919 at i = 185, the standard (table from memory) has 920.
        let raw = (10f64.powf(185.0 / 192.0) * 100.0).round() as u16;
        assert_eq!(raw, 919);
        assert_eq!(Series::E192.codes()[185], 920);
        assert_eq!(Series::E192.codes(), &E192_TABLE[..]);
        assert!(Series::E192.contains(9.2));
        assert!(!Series::E192.contains(9.19));
        // E48 has no departures from the formula at all.
        let e48: Vec<u16> = (0..48)
            .map(|i| (10f64.powf(i as f64 / 48.0) * 100.0).round() as u16)
            .collect();
        assert_eq!(Series::E48.codes(), &e48[..]);
    }

    #[test]
    fn coarser_series_are_subsets_of_finer_ones() {
        // IEC 60063: each series takes every second value of the next finer one, within the
        // two-digit family (E3 ⊂ E6 ⊂ E12 ⊂ E24) and within the three-digit family
        // (E48 ⊂ E96 ⊂ E192).
        assert!(is_subset(Series::E3, Series::E6));
        assert!(is_subset(Series::E6, Series::E12));
        assert!(is_subset(Series::E12, Series::E24));
        assert!(is_subset(Series::E48, Series::E96));
        assert!(is_subset(Series::E96, Series::E192));
        for (coarse, fine) in [
            (Series::E3, Series::E6),
            (Series::E6, Series::E12),
            (Series::E12, Series::E24),
            (Series::E48, Series::E96),
            (Series::E96, Series::E192),
        ] {
            let every_second: Vec<f64> = fine.mantissas().iter().step_by(2).copied().collect();
            assert_eq!(coarse.mantissas(), &every_second[..]);
        }
    }

    #[test]
    fn e24_is_not_a_subset_of_e96() {
        // The two families are separate: only six E24 values also appear in E96
        // (1.0, 1.1, 1.3, 1.5, 2.0, 7.5 — checked against the E96 table above). 1.1 *is* in
        // E96 (110); 1.2 is not (E96 has 1.18 and 1.21), nor is 4.7 (4.64, 4.75).
        assert!(!is_subset(Series::E24, Series::E96));
        let common: Vec<f64> = Series::E24
            .mantissas()
            .iter()
            .copied()
            .filter(|&m| Series::E96.contains(m))
            .collect();
        assert_eq!(common, vec![1.0, 1.1, 1.3, 1.5, 2.0, 7.5]);
        assert!(Series::E96.contains(1.1));
        assert!(!Series::E96.contains(1.2));
        assert!(!Series::E96.contains(4.7));
        // 4.70 is an E192 code, though: E192 holds 4.7 even where E96 does not.
        assert!(Series::E192.contains(4.7));
    }

    #[test]
    fn values_in_resistor_range_count() {
        // 10 Ω … 10 MΩ is six decades: 6 × 96 values plus the closing 10 MΩ.
        let v = Series::E96.values_in(10.0, 10e6);
        assert_eq!(v.len(), 577);
        assert_eq!(v[0], 10.0);
        assert_eq!(*v.last().unwrap(), 10e6);
        assert!(v.windows(2).all(|w| w[0] < w[1]));
        assert_eq!(Series::E24.values_in(10.0, 10e6).len(), 6 * 24 + 1);
        assert_eq!(Series::E192.values_in(1.0, 1e3).len(), 3 * 192 + 1);
    }

    #[test]
    fn values_in_gives_exact_decimals() {
        let v = Series::E12.values_in(1e3, 1e4);
        assert!(v.contains(&4700.0));
        assert!(v.contains(&4.7e3));
        assert_eq!(
            v,
            vec![
                1e3, 1.2e3, 1.5e3, 1.8e3, 2.2e3, 2.7e3, 3.3e3, 3.9e3, 4.7e3, 5.6e3, 6.8e3, 8.2e3,
                1e4
            ]
        );
        // Capacitor decades: 1 pF … 10 pF must be the literals, not 0.1 × 0.1 × … products.
        let pf = Series::E6.values_in(1e-12, 1e-11);
        assert_eq!(
            pf,
            vec![1e-12, 1.5e-12, 2.2e-12, 3.3e-12, 4.7e-12, 6.8e-12, 1e-11]
        );
        let nf = Series::E96.values_in(4.7e-9, 4.9e-9);
        assert_eq!(nf, vec![4.75e-9, 4.87e-9]);
        // Very small and very large decades go through the exact decimal parser.
        assert_eq!(Series::E3.values_in(1e-30, 3e-30), vec![1e-30, 2.2e-30]);
        assert_eq!(Series::E3.values_in(4e30, 1.1e31), vec![4.7e30, 1e31]);
    }

    #[test]
    fn values_in_ends_are_inclusive_with_relative_epsilon() {
        let e24 = Series::E24;
        assert_eq!(e24.values_in(4700.0, 4700.0), vec![4700.0]);
        // A bound computed with rounding error still finds the value.
        let computed = 4.7 * 1000.0 * (1.0 + 1e-12);
        assert_eq!(e24.values_in(computed, computed), vec![4700.0]);
        assert_eq!(
            e24.values_in(4699.9999999999, 4700.0000000001),
            vec![4700.0]
        );
        // But not a neighbouring value a long way off.
        assert!(e24.values_in(4701.0, 5000.0).is_empty());
        assert_eq!(e24.values_in(4690.0, 5100.0), vec![4700.0, 5100.0]);
    }

    #[test]
    fn values_in_rejects_meaningless_ranges() {
        let s = Series::E12;
        assert!(s.values_in(0.0, 10.0).is_empty());
        assert!(s.values_in(-1.0, 10.0).is_empty());
        assert!(s.values_in(10.0, 1.0).is_empty());
        assert!(s.values_in(f64::NAN, 10.0).is_empty());
        assert!(s.values_in(1.0, f64::INFINITY).is_empty());
        // Extreme but valid ranges neither panic nor produce inf/0.
        let wide = Series::E3.values_in(f64::MIN_POSITIVE, f64::MAX);
        assert!(wide.iter().all(|v| v.is_finite() && *v > 0.0));
        assert!(wide.windows(2).all(|w| w[0] < w[1]));
        let tiny = Series::E3.values_in(5e-324, 1e-300);
        assert!(tiny.iter().all(|v| v.is_finite() && *v > 0.0));
    }

    #[test]
    fn contains_checks_every_decade() {
        let e12 = Series::E12;
        for v in [
            4.7, 47.0, 470.0, 4.7e3, 4.7e6, 4.7e-9, 4.7e-12, 1.0, 10.0, 1e-12, 8.2e5,
        ] {
            assert!(e12.contains(v), "{v}");
        }
        for v in [4.6, 5.0, 4.75e3, 0.0, -4.7, f64::NAN, f64::INFINITY, 1.1] {
            assert!(!e12.contains(v), "{v}");
        }
        assert!(e12.contains(4700.0 * (1.0 + 1e-10)));
        assert!(!e12.contains(4700.0 * (1.0 + 1e-6)));
        assert!(Series::E96.contains(4.75e3));
        assert!(Series::E96.contains(9.76e-6));
        assert!(!Series::E96.contains(9.75e-6));
    }

    #[test]
    fn every_value_in_a_range_is_contained() {
        for s in Series::ALL {
            for v in s.values_in(1e-13, 1e8) {
                assert!(s.contains(v), "{} {v}", s.name());
            }
        }
    }

    #[test]
    fn tolerances_tighten_with_finer_series() {
        let t: Vec<f64> = Series::ALL.iter().map(|s| s.tolerance()).collect();
        assert_eq!(t, vec![0.40, 0.20, 0.10, 0.05, 0.02, 0.01, 0.005]);
    }
}
