//! Bill of materials of one build: one row per stock line to fetch (every piece of the same
//! inventory row, or of the same series value and tolerance, together), with designators,
//! slots, value, tolerance, quantity, rating, polarity and dielectric, the inventory's location
//! and note, unit and line cost, and a total row.
//!
//! As CSV ([`csv()`]) it follows RFC 4180 (CRLF line ends) and the OWASP "CSV Injection"
//! guidance, so that a note typed into an inventory cannot run as a formula when the BOM is
//! opened in a spreadsheet, whichever separator the spreadsheet splits on: every text cell is
//! quoted, control characters (line breaks, tabs, NUL, ESC …) are escaped as visible text, and
//! a formula character (`=`, `+`, `-`, `@`) at the start of a cell or after a `,` or `;` inside
//! it gets a single quote before it ([`sanitise::spreadsheet_cell`]).

use super::common::RenderError;
use super::designators;
use super::sanitise;
use crate::build::{Build, LineKey, Piece};
use crate::circuit::Circuit;
use crate::stock::inventory::Line;
use crate::stock::{Source, Stock};
use crate::value::{format, Unit};
use crate::vocab::PartKind;

/// One line to fetch.
#[derive(Debug, Clone, PartialEq)]
pub struct BomRow {
    /// Resistor or capacitor.
    pub kind: PartKind,
    /// R1, R3 … in designator order.
    pub designators: Vec<String>,
    /// The slots the pieces fill, each once, in slot order.
    pub slots: Vec<String>,
    /// SI base units.
    pub value: f64,
    /// Tolerance as a fraction (0.01 = 1 %).
    pub tolerance: f64,
    /// Pieces to fetch.
    pub quantity: usize,
    /// Pieces on hand on this inventory line; `None` for a series value.
    pub on_hand: Option<u32>,
    /// Voltage rating of a capacitor, power rating of a resistor.
    pub rating: Option<f64>,
    /// True for a polarised capacitor (mind the + marking).
    pub polarized: bool,
    /// Capacitor dielectric as the inventory writes it, where given.
    pub dielectric: Option<String>,
    /// 1-based data row of the inventory CSV (of a pool of identical lines, its
    /// representative row, as in `Piece::line`).
    pub inventory_row: Option<usize>,
    /// The rows the pieces come off, in file order: `inventory_row` alone, or the rows of its
    /// pool that give them (`stock::pool`, the rows `stockfit take` deducts from).
    pub inventory_rows: Vec<usize>,
    /// Where the pieces are kept, from the inventory (of each row they come off, each once,
    /// joined by `; `).
    pub location: Option<String>,
    /// The inventory's note for the line (as the location, for pooled rows).
    pub note: Option<String>,
    /// Price of one piece in the inventory's currency, where given.
    pub unit_cost: Option<f64>,
    /// `unit_cost × quantity`; 0 for a locked part (already on the board).
    pub line_cost: Option<f64>,
    /// Fixed by the user (`--lock`): already on the board, not fetched.
    pub locked: bool,
}

/// The inventory line behind a piece, when its kind comes from an inventory.
fn line_of(stock: Option<&Stock>, kind: PartKind, row: usize) -> Option<&Line> {
    match stock?.source(kind) {
        Source::Inventory(inv) => inv.lines.iter().find(|l| l.row == row && l.kind == kind),
        Source::Series { .. } => None,
    }
}

/// What makes two pieces one line to fetch: the same inventory row, or (for a series value or
/// a lock) the same kind, value and tolerance. Values compare by their 12 significant digits,
/// which tells every IEC 60063 value apart at any decade; unlike `LineKey`, a locked part never
/// shares a row with pieces to fetch.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Key {
    Row(PartKind, usize),
    Value(PartKind, String, i64, bool),
}

impl Key {
    fn of(kind: PartKind, piece: &Piece, locked: bool) -> Key {
        match piece.line {
            Some(row) if !locked => Key::Row(kind, row),
            _ => Key::Value(
                kind,
                format!("{:.11e}", piece.value),
                (piece.tolerance * 1e6).round() as i64,
                locked,
            ),
        }
    }
}

/// Designator number for ordering ("R12" → 12).
fn number(d: &str) -> usize {
    d.trim_start_matches(|c: char| c.is_ascii_alphabetic())
        .parse()
        .unwrap_or(usize::MAX)
}

/// The rows of the BOM: resistors, then capacitors, each in order of their first designator.
/// `stock` (the stock the build was drawn from) adds the inventory's location, note and the
/// pieces on hand; each kind is looked up in its own source, so resistors and capacitors may
/// come from different files.
pub fn rows(stage: &dyn Circuit, build: &Build, stock: Option<&Stock>) -> Vec<BomRow> {
    let names = designators::designators(stage, build);
    let slots = stage.slots();
    let mut rows: Vec<(Key, BomRow)> = Vec::new();
    for (i, part) in build.parts.iter().enumerate() {
        for (k, piece) in part.pieces.iter().enumerate() {
            let key = Key::of(part.kind, piece, part.locked);
            let designator = names
                .get(i)
                .and_then(|d| d.get(k))
                .cloned()
                .unwrap_or_else(|| "?".into());
            let slot = slots.get(i).map_or("?", |s| s.name).to_string();
            if let Some((_, row)) = rows.iter_mut().find(|(k, _)| *k == key) {
                row.designators.push(designator);
                if !row.slots.contains(&slot) {
                    row.slots.push(slot);
                }
                row.quantity += 1;
                continue;
            }
            let line = piece.line.and_then(|r| line_of(stock, part.kind, r));
            let rating = match part.kind {
                PartKind::Capacitor => piece.voltage,
                PartKind::Resistor => piece.power,
            };
            rows.push((
                key,
                BomRow {
                    kind: part.kind,
                    designators: vec![designator],
                    slots: vec![slot],
                    value: piece.value,
                    tolerance: piece.tolerance,
                    quantity: 1,
                    on_hand: piece
                        .line
                        .and_then(|r| stock.and_then(|s| s.quantity(LineKey::Row(part.kind, r)))),
                    rating,
                    polarized: piece.polarized,
                    dielectric: piece.dielectric.clone(),
                    inventory_row: piece.line,
                    inventory_rows: piece.line.into_iter().collect(),
                    location: line.and_then(|l| l.location.clone()),
                    note: line.and_then(|l| l.note.clone()),
                    unit_cost: if part.locked { None } else { piece.unit_cost },
                    line_cost: None,
                    locked: part.locked,
                },
            ));
        }
    }
    let mut out: Vec<BomRow> = rows.into_iter().map(|(_, r)| r).collect();
    for r in out.iter_mut().filter(|r| !r.locked) {
        draw_from_pool(r, stock);
    }
    for r in &mut out {
        r.designators.sort_by_key(|d| number(d));
        r.line_cost = if r.locked {
            Some(0.0)
        } else {
            r.unit_cost.map(|c| c * r.quantity as f64)
        };
    }
    out.sort_by_key(|r| {
        (
            r.kind,
            r.designators.first().map_or(usize::MAX, |d| number(d)),
        )
    });
    out
}

/// The rows of an inventory line's pool that give its pieces, in file order (as
/// `pick::takings` draws them), with their locations and notes, each distinct text once.
fn draw_from_pool(r: &mut BomRow, stock: Option<&Stock>) {
    let (Some(stock), Some(row)) = (stock, r.inventory_row) else {
        return;
    };
    let (Some(pools), Source::Inventory(inv)) = (stock.pools(r.kind), stock.source(r.kind)) else {
        return;
    };
    let drawn: Vec<usize> = pools
        .draw(row, u32::try_from(r.quantity).unwrap_or(u32::MAX))
        .into_iter()
        .map(|(row, _)| row)
        .collect();
    if drawn.len() < 2 && drawn.first().is_none_or(|&d| d == row) {
        return;
    }
    let texts = |field: fn(&Line) -> &Option<String>| {
        let mut seen: Vec<&str> = Vec::new();
        for d in &drawn {
            if let Some(t) = inv.lines.get(d - 1).and_then(|l| field(l).as_deref()) {
                if !seen.contains(&t) {
                    seen.push(t);
                }
            }
        }
        (!seen.is_empty()).then(|| seen.join("; "))
    };
    r.location = texts(|l| &l.location);
    r.note = texts(|l| &l.note);
    r.inventory_rows = drawn;
}

/// Total cost of the rows with a known cost, and how many rows have none.
pub fn total(rows: &[BomRow]) -> (f64, usize) {
    let known: f64 = rows.iter().filter_map(|r| r.line_cost).sum();
    let unknown = rows.iter().filter(|r| r.line_cost.is_none()).count();
    (known, unknown)
}

/// Engineering text in ASCII ("47 kohm", "2.2 uF"), which every spreadsheet reads whatever
/// encoding it guesses for the file.
pub fn ascii_value(value: f64, unit: Unit) -> String {
    format(value, unit).replace('Ω', "ohm").replace('µ', "u")
}

/// A money amount: up to 4 decimals, trailing zeros trimmed ("0.014", "1.2").
pub fn money(x: f64) -> String {
    let s = format!("{x:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s.is_empty() || s == "-" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// The cell as written to the CSV: see [`sanitise::spreadsheet_cell`].
pub fn neutralise(cell: &str) -> String {
    sanitise::spreadsheet_cell(cell)
}

/// The column names of the CSV, in order.
pub const HEADER: &[&str] = &[
    "item",
    "designators",
    "slots",
    "kind",
    "value",
    "value_si",
    "tolerance",
    "quantity",
    "on_hand",
    "rating",
    "polarized",
    "dielectric",
    "inventory_row",
    "location",
    "note",
    "unit_cost",
    "line_cost",
];

fn unit_of(kind: PartKind) -> Unit {
    match kind {
        PartKind::Resistor => Unit::Ohm,
        PartKind::Capacitor => Unit::Farad,
    }
}

/// The cells of one row, before neutralising.
pub fn cells(item: usize, r: &BomRow) -> Vec<String> {
    let rating = r.rating.map_or(String::new(), |v| match r.kind {
        PartKind::Capacitor => ascii_value(v, Unit::Volt),
        PartKind::Resistor => ascii_value(v, Unit::Watt),
    });
    let mut note = r.note.clone().unwrap_or_default();
    if r.locked {
        let fixed = "locked: already on the board, not fetched";
        note = if note.is_empty() {
            fixed.into()
        } else {
            format!("{fixed}; {note}")
        };
    }
    vec![
        item.to_string(),
        r.designators.join(", "),
        r.slots.join(", "),
        r.kind.to_string(),
        ascii_value(r.value, unit_of(r.kind)),
        format!("{}", r.value),
        format(r.tolerance, Unit::Percent),
        r.quantity.to_string(),
        r.on_hand.map_or(String::new(), |q| q.to_string()),
        rating,
        // A series value says nothing about polarity: blank, not "no".
        match (r.polarized, r.inventory_row) {
            (true, _) => "yes",
            (false, Some(_)) => "no",
            (false, None) => "",
        }
        .into(),
        r.dielectric.clone().unwrap_or_default(),
        r.inventory_rows
            .iter()
            .map(usize::to_string)
            .collect::<Vec<_>>()
            .join(", "),
        r.location.clone().unwrap_or_default(),
        note,
        r.unit_cost.map_or(String::new(), money),
        r.line_cost.map_or(String::new(), money),
    ]
}

/// The BOM of `build` as CSV text (see the module docs). `stock` is the stock the build was
/// drawn from, for the inventory's location and note; `None` leaves those cells empty.
pub fn csv(
    stage: &dyn Circuit,
    build: &Build,
    stock: Option<&Stock>,
) -> Result<String, RenderError> {
    let rows = rows(stage, build, stock);
    // Every cell that is not a number is quoted (OWASP: "ensure that each cell field is
    // enclosed in double quotes"); numbers stay bare so that spreadsheets read them as numbers.
    let mut w = ::csv::WriterBuilder::new()
        .terminator(::csv::Terminator::CRLF)
        .quote_style(::csv::QuoteStyle::NonNumeric)
        .from_writer(Vec::new());
    let e = |e: ::csv::Error| RenderError::Csv(e.to_string());
    w.write_record(HEADER.iter().map(|h| neutralise(h)))
        .map_err(e)?;
    for (i, r) in rows.iter().enumerate() {
        w.write_record(cells(i + 1, r).iter().map(|c| neutralise(c)))
            .map_err(e)?;
    }
    let (cost, unknown) = total(&rows);
    let pieces: usize = rows.iter().map(|r| r.quantity).sum();
    let note = match unknown {
        0 => String::new(),
        1 => "1 line has no cost in the stock; not counted".into(),
        n => format!("{n} lines have no cost in the stock; not counted"),
    };
    let mut last = vec![String::new(); HEADER.len()];
    last[0] = "total".into();
    last[7] = pieces.to_string();
    last[14] = note;
    last[16] = if unknown == rows.len() {
        String::new()
    } else {
        money(cost)
    };
    w.write_record(last.iter().map(|c| neutralise(c)))
        .map_err(e)?;
    let bytes = w
        .into_inner()
        .map_err(|e| RenderError::Csv(e.to_string()))?;
    String::from_utf8(bytes).map_err(|e| RenderError::Csv(e.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::build::{Arrangement, Part, Piece};
    use crate::circuit::circuit_for;
    use crate::spec::Spec;
    use crate::stock::inventory::Inventory;
    use crate::vocab::StageKind;
    use std::sync::Arc;

    const INVENTORY: &str =
        "kind,value,tolerance,qty,voltage,power,polarized,dielectric,unit_cost,location,note\n\
R,10k,1%,50,,0.25W,,metal film,0.02,drawer A1,\"=HYPERLINK(\"\"http://x\"\",\"\"y\"\")\"\n\
R,47k,1%,20,,0.25W,,metal film,0.02,@drawer,-2+3\n\
R,100k,1%,20,,0.25W,,metal film,0.03,drawer A3,\"says \"\"hi\"\", then\nnext line\"\n\
C,1u,10%,10,50V,,,X7R,0.1,+box 2,\tnote with a tab\n\
C,10u,20%,5,25V,,yes,electrolytic,0.15,box 3,\r\n";

    fn stock() -> (Stock, Arc<Inventory>) {
        let inv = Arc::new(Inventory::parse_str(INVENTORY).unwrap());
        let spec = Spec::from_toml(
            r#"
            [stage]
            kind = "inverting"
            supply = "9 V"
            gain = -4.7
            load = "10k"
            band = ["20 Hz", "20 kHz"]
            headroom = "1 V"
            [amplifier]
            input_bias_current = "10 nA"
            input_offset_voltage = "1 mV"
            [stock]
            resistors = "E24"
            capacitors = "E6"
            "#,
        )
        .unwrap();
        (
            Stock::new(
                Source::Inventory(inv.clone()),
                Source::Inventory(inv.clone()),
                spec.stock.limits(),
            ),
            inv,
        )
    }

    fn piece(inv: &Inventory, row: usize) -> Piece {
        let l = inv.lines.iter().find(|l| l.row == row).unwrap();
        Piece {
            value: l.value,
            tolerance: l.tolerance,
            line: Some(l.row),
            voltage: l.voltage,
            power: l.power,
            polarized: l.polarized,
            dielectric: l.dielectric.clone(),
            unit_cost: l.unit_cost,
        }
    }

    fn build(inv: &Inventory) -> Build {
        let r = |row| Part::single(PartKind::Resistor, piece(inv, row));
        let c = |row| Part::single(PartKind::Capacitor, piece(inv, row));
        Build {
            parts: vec![
                r(1),
                Part::pair(
                    PartKind::Resistor,
                    Arrangement::Series,
                    piece(inv, 2),
                    piece(inv, 1),
                ),
                r(3),
                r(3),
                c(4),
                c(5),
            ],
        }
    }

    fn parse(text: &str) -> Vec<Vec<String>> {
        let mut r = ::csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(text.as_bytes());
        r.records()
            .map(|x| x.unwrap().iter().map(str::to_string).collect())
            .collect()
    }

    #[test]
    fn one_row_per_line_and_quantities_add_up() {
        let (stock, inv) = stock();
        let stage = circuit_for(StageKind::Inverting);
        let b = build(&inv);
        let rows = rows(stage, &b, Some(&stock));
        // Lines: 10k (r_in + half of r_fb), 47k, 100k (both divider halves), 1u, 10u.
        assert_eq!(rows.len(), 5);
        assert_eq!(rows.len(), b.bom_lines());
        let q: usize = rows.iter().map(|r| r.quantity).sum();
        assert_eq!(q, b.piece_count());
        assert_eq!(rows[0].designators, vec!["R1", "R3"]);
        assert_eq!(rows[0].slots, vec!["r_in", "r_fb"]);
        assert_eq!(rows[0].on_hand, Some(50));
        assert_eq!(rows[2].designators, vec!["R4", "R5"]);
        assert_eq!(rows[2].location.as_deref(), Some("drawer A3"));
        assert!((rows[2].line_cost.unwrap() - 0.06).abs() < 1e-12);
        assert!(rows[4].polarized);
        assert_eq!(rows[4].rating, Some(25.0));

        let text = csv(stage, &b, Some(&stock)).unwrap();
        let table = parse(&text);
        assert_eq!(table[0], HEADER);
        assert_eq!(table.len(), 1 + 5 + 1);
        let total = table.last().unwrap();
        assert_eq!(total[0], "total");
        assert_eq!(total[7], b.piece_count().to_string());
        // 2·0.02 + 0.02 + 2·0.03 + 0.1 + 0.15 (the sum of the inventory's unit costs).
        assert_eq!(total[16], "0.37");
        assert!(text.ends_with("\r\n"));
    }

    #[test]
    fn hostile_notes_are_neutralised_and_survive_quoting() {
        let (stock, inv) = stock();
        let stage = circuit_for(StageKind::Inverting);
        let text = csv(stage, &build(&inv), Some(&stock)).unwrap();
        let table = parse(&text);
        let note = |i: usize| table[i][14].as_str();
        let location = |i: usize| table[i][13].as_str();
        // OWASP CSV Injection: a leading ', and the rest kept verbatim.
        assert_eq!(note(1), "'=HYPERLINK(\"http://x\",\"y\")");
        assert_eq!(note(2), "'-2+3");
        assert_eq!(location(2), "'@drawer");
        assert_eq!(location(4), "'+box 2");
        // (The inventory loader trims cells, so a leading tab cannot come from a file;
        // `neutralise_cases` covers it.)
        assert_eq!(note(4), "note with a tab");
        // Quotes and commas come back whole through RFC 4180 quoting; the line break is
        // escaped, so that a reader splitting lines naively sees no new row.
        assert_eq!(note(3), "says \"hi\", then\\nnext line");
        // No cell of any row starts with a formula character.
        for row in &table {
            for cell in row {
                assert!(
                    !cell.starts_with(['=', '+', '-', '@', '\t', '\r']),
                    "{cell:?}"
                );
            }
        }
    }

    #[test]
    fn large_series_capacitors_stay_apart() {
        // 4.7 µF, 10 µF and 100 µF from a series are three lines, not one.
        let stage = circuit_for(StageKind::Inverting);
        let r = |v| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let c = |v| Part::single(PartKind::Capacitor, Piece::plain(v, 0.2));
        let b = Build {
            parts: vec![
                r(10e3),
                r(47e3),
                r(100e3),
                r(100e3),
                Part::pair(
                    PartKind::Capacitor,
                    Arrangement::Parallel,
                    Piece::plain(10e-6, 0.2),
                    Piece::plain(4.7e-6, 0.2),
                ),
                c(100e-6),
            ],
        };
        let rows = rows(stage, &b, None);
        let caps: Vec<_> = rows
            .iter()
            .filter(|r| r.kind == PartKind::Capacitor)
            .collect();
        assert_eq!(caps.len(), 3);
        assert!(caps.iter().all(|r| r.quantity == 1));
    }

    #[test]
    fn neutralise_cases() {
        for (a, b) in [
            ("=1+2", "'=1+2"),
            ("+1", "'+1"),
            ("-1", "'-1"),
            ("@SUM(A1)", "'@SUM(A1)"),
            ("\tx", "\\tx"),
            ("\rx", "\\rx"),
            ("a;=1", "a;'=1"),
            ("a=1", "a=1"),
            ("", ""),
        ] {
            assert_eq!(neutralise(a), b);
        }
    }

    #[test]
    fn series_values_and_locks() {
        let stage = circuit_for(StageKind::Inverting);
        let r = |v| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let c = |v| Part::single(PartKind::Capacitor, Piece::plain(v, 0.1));
        let mut parts = vec![r(10e3), r(47e3), r(100e3), r(100e3), c(1e-6), c(1e-6)];
        parts[0] = Part::locked(PartKind::Resistor, 10e3, 0.01);
        let b = Build { parts };
        let rows = rows(stage, &b, None);
        assert_eq!(rows.len(), 4);
        assert!(rows[0].locked);
        assert_eq!(rows[0].line_cost, Some(0.0));
        let text = csv(stage, &b, None).unwrap();
        assert!(text.contains("locked: already on the board"));
        assert!(text.contains("10 kohm") && text.contains("1 uF"));
        let q: usize = rows.iter().map(|r| r.quantity).sum();
        assert_eq!(q, 6);
    }
}
