//! What each fuzz target checks on one input. Shared (by `#[path]`) between the cargo-fuzz
//! targets in `fuzz_targets/` and the bounded proptest run in `tests/fuzz_props.rs`, so that
//! the CI run on stable Rust exercises exactly what a long nightly campaign does.
//!
//! Every check panics on a broken promise — that is how both libFuzzer and proptest see a
//! finding — and never on mere bad input, which the library must answer with an error.
//!
//! Each check also says how far the input got: the promises about a *loaded* value, inventory
//! or spec are only asserted when loading succeeds, so `tests/fuzz_props.rs` counts those cases
//! and fails when a generator stops reaching them (a property that only ever sees errors would
//! pass having checked nothing).

#![allow(dead_code)]

use stockfit::report::{bom, sanitise};
use stockfit::spec::Spec;
use stockfit::stock::edit::{self, EditError};
use stockfit::stock::inventory::{self, Inventory};
use stockfit::stock::pool::Pools;
use stockfit::value::{self, Unit};

/// The value parser: no panic for any text and unit; whatever parses is finite, and prints
/// back (17 significant digits, enough for any f64) to text that parses to the same value.
/// Returns the number of units the text parsed as, i.e. the round trips checked.
pub fn value(data: &[u8]) -> usize {
    let Ok(text) = std::str::from_utf8(data) else {
        return 0;
    };
    let mut parsed = 0;
    for unit in Unit::ALL {
        let Ok(v) = value::parse(text, unit) else {
            continue;
        };
        parsed += 1;
        assert!(v.is_finite(), "{text:?} as {unit:?} gave {v}");
        let printed = value::format_sig(v, unit, 17);
        match value::parse(&printed, unit) {
            Ok(back) => assert!(
                back == v,
                "{text:?} as {unit:?}: {v:e} printed {printed:?} parsed back as {back:e}"
            ),
            Err(e) => panic!("{text:?} as {unit:?}: {v:e} printed {printed:?} does not parse: {e}"),
        }
    }
    parsed
}

/// How far an inventory got through [`inventory`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InventoryReached {
    /// The loader refused it (only "no panic" was checked).
    Refused,
    /// It loaded and its lines were checked; the editor refused to edit a qty cell in place.
    Loaded,
    /// It loaded and the edited file was re-loaded and compared line by line.
    Edited,
}

/// Text from a file, made safe: shown escaped it holds no control character (nothing a
/// terminal obeys, ECMA-48), and as a BOM cell no piece of it — split on `,`, `;` or a line
/// end, leading spaces and quotes dropped — starts a formula (OWASP, "CSV Injection").
pub fn text_is_made_safe(text: &str) {
    let shown = sanitise::escape_controls(text);
    assert!(
        !shown.chars().any(char::is_control),
        "{text:?} shown as {shown:?}"
    );
    let cell = bom::neutralise(text);
    assert!(
        !cell.chars().any(char::is_control),
        "{text:?} as a cell {cell:?}"
    );
    for piece in cell.split([',', ';']) {
        let start = piece.trim_start_matches([' ', '"']);
        assert!(
            !start.starts_with(['=', '+', '-', '@']),
            "{text:?} as a cell {cell:?} has a piece {piece:?}"
        );
    }
}

/// The inventory loader and the stock editor: no panic for any bytes; every loaded line keeps
/// the documented ranges; identical lines pool (each row in its pool, the pool's total the sum
/// of its rows, a draw of the whole pool takes each row's own pieces in file order); text
/// cells are safe to show and to put in a BOM ([`text_is_made_safe`]); taking a piece from
/// every line that has one either changes exactly those quantities or is refused as not
/// editable in place — never a different file.
pub fn inventory(data: &[u8]) -> InventoryReached {
    let inv = match Inventory::from_reader(data) {
        Ok(inv) => inv,
        Err(e) => {
            let _ = e.to_string();
            return InventoryReached::Refused;
        }
    };
    for l in &inv.lines {
        assert!(l.value.is_finite() && l.value > 0.0, "{l:?}");
        assert!(l.tolerance > 0.0 && l.tolerance < 1.0, "{l:?}");
        assert!(l.file_line >= 1 && l.row >= 1, "{l:?}");
        for text in [&l.note, &l.location, &l.dielectric].into_iter().flatten() {
            text_is_made_safe(text);
        }
    }
    let pools = Pools::new(&inv);
    for l in &inv.lines {
        let rows = pools.rows(l.row);
        assert!(
            rows.contains(&l.row) && rows.windows(2).all(|w| w[0] < w[1]),
            "{rows:?}"
        );
        let own = |r: usize| inv.lines[r - 1].qty;
        let sum = rows.iter().fold(0u32, |s, &r| s.saturating_add(own(r)));
        assert_eq!(pools.total(l.row), sum, "row {}", l.row);
        if sum < u32::MAX {
            let drawn = pools.draw(l.row, sum);
            let expected: Vec<(usize, u32)> = rows
                .iter()
                .filter(|&&r| own(r) > 0)
                .map(|&r| (r, own(r)))
                .collect();
            assert_eq!(drawn, expected, "row {}", l.row);
        }
    }
    let deductions: Vec<(usize, u32)> = inv
        .lines
        .iter()
        .filter(|l| l.qty > 0)
        .map(|l| (l.row, 1))
        .collect();
    match edit::deduct(data, &deductions) {
        Ok(after) => {
            let again = inventory::parse_bytes(&after).expect("the edited file loads");
            assert_eq!(again.lines.len(), inv.lines.len());
            for (old, new) in inv.lines.iter().zip(&again.lines) {
                let mut expected = old.clone();
                expected.qty = old.qty.saturating_sub(1);
                assert_eq!(&expected, new);
            }
            // Nothing but digits changed: same bytes outside the digit runs.
            let strip = |b: &[u8]| -> Vec<u8> {
                b.iter().copied().filter(|c| !c.is_ascii_digit()).collect()
            };
            assert_eq!(strip(data), strip(&after), "only digits change");
            InventoryReached::Edited
        }
        // A qty cell written in a way the editor will not touch (`"1"2`): refused, fine.
        Err(EditError::Layout { .. }) => InventoryReached::Loaded,
        Err(e) => panic!("a loadable inventory could not be edited: {e}"),
    }
}

/// The spec loader: no panic for any bytes; a spec that loads keeps its invariants; every error
/// that names a line names one inside the file. Returns whether it loaded (the invariants were
/// checked) rather than being refused (the error lines were checked).
pub fn spec(data: &[u8]) -> bool {
    let lines = 1 + data.iter().filter(|&&b| b == b'\n').count();
    match Spec::from_bytes(data) {
        Ok(s) => {
            assert!(s.supply > 0.0 && s.supply.is_finite(), "{s:?}");
            assert!(s.load > 0.0, "{s:?}");
            assert!(s.band.0 > 0.0 && s.band.1 > s.band.0, "{s:?}");
            assert!(s.headroom.0 + s.headroom.1 < s.supply, "{s:?}");
            // A lock's value is judged once its slot's kind is known; either kind's parse
            // may fail, but one that succeeds gives a positive finite value.
            for l in &s.locks {
                for kind in stockfit::vocab::PartKind::ALL {
                    if let Ok((v, t)) = l.parse(kind) {
                        assert!(v > 0.0 && v.is_finite(), "{l:?}");
                        assert!(t.is_none_or(|t| (0.0..1.0).contains(&t)), "{l:?}");
                    }
                }
            }
            true
        }
        Err(errors) => {
            assert!(!errors.0.is_empty());
            for e in &errors.0 {
                if let Some(line) = e.line {
                    assert!(
                        (1..=lines).contains(&line),
                        "{e} (the file has {lines} lines)"
                    );
                }
            }
            let _ = errors.to_string();
            false
        }
    }
}
