//! Inventory CSV loader: turns a stock list (one line per bin of resistors or capacitors) into
//! typed [`Line`]s in SI units, collecting the bad cells with their file line and column (the
//! first [`MAX_LISTED_PROBLEMS`] described, the rest counted).
//!
//! The format is plain CSV (RFC 4180 quoting) with a header row. Required columns: `kind`,
//! `value`, `tolerance`, `qty`; optional: `voltage`, `power`, `polarized`, `dielectric`,
//! `unit_cost`, `location`, `note`. Any other column is ignored, so a stock export can keep its
//! own bookkeeping columns. Column names are matched trimmed and case-insensitively, with spaces
//! and dashes read as underscores (`Unit Cost` is `unit_cost`). Lines starting with `#` are
//! comments, empty lines are skipped, a UTF-8 byte-order mark is accepted, and lines end at LF,
//! CRLF or a lone CR. Records are read by the csv crate's tokenizer (`csv-core`), which also
//! gives each `qty` cell's byte range for [`crate::stock::edit`].
//! A value outside what any part of its kind can be ([`crate::vocab::PLAUSIBLE_OHMS`], [`crate::vocab::PLAUSIBLE_FARADS`])
//! is reported as a value of the other kind typed on the wrong line (`c,4k7,…`). Input beyond
//! [`MAX_INVENTORY_BYTES`] or [`MAX_INVENTORY_LINES`] is refused before it is parsed.
//!
//! Like the rest of the library this module does no I/O: [`Inventory::from_reader`] takes any
//! `impl Read` and [`Inventory::parse_str`] a string; the binary adds the file name to errors.

use std::collections::HashMap;
use std::io::Read;

use csv_core::ReadFieldResult;

use serde::Serialize;

use crate::value::{parse, Unit, ValueError};
use crate::vocab::{implausible, PartKind};

/// One stock line: a number of identical parts in one place.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Line {
    /// 1-based data row (the first row after the header is 1; comments and blank lines are not
    /// rows). This is the `line` reports show, so it is stable when comments are edited.
    pub row: usize,
    /// 1-based line number in the file (a header on the first line is line 1), for messages.
    pub file_line: usize,
    /// Resistor or capacitor, from the `kind` cell (`r`, `res`, `resistor`, `c`, `cap`,
    /// `capacitor`, any case).
    pub kind: PartKind,
    /// SI: ohm for a resistor, farad for a capacitor. Always finite and > 0.
    pub value: f64,
    /// Symmetric tolerance as a fraction (0.01 = 1 %). Always in (0, 1).
    pub tolerance: f64,
    /// Pieces in stock; 0 means the line is known but out of stock.
    pub qty: u32,
    /// Voltage rating in volts (meaningful for capacitors; kept but unused on resistors).
    pub voltage: Option<f64>,
    /// Power rating in watts (meaningful for resistors; kept but unused on capacitors).
    pub power: Option<f64>,
    /// Polarized part (electrolytic, tantalum); `false` when the cell is empty or absent.
    pub polarized: bool,
    /// Capacitor dielectric as written (`C0G`, `X7R`, …), where given.
    pub dielectric: Option<String>,
    /// Cost of one piece, in whatever currency the file uses (a leading symbol is stripped).
    pub unit_cost: Option<f64>,
    /// Where the pieces are kept (drawer, bin), as written.
    pub location: Option<String>,
    /// Free text from the `note` column.
    pub note: Option<String>,
}

/// A loaded stock list, lines in file order.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Inventory {
    /// The data rows, in file order (`lines[i].row == i + 1`).
    pub lines: Vec<Line>,
    /// Per line (same index): where the digits of its `qty` cell are in the bytes it was
    /// loaded from, or why they cannot be edited in place. See [`Inventory::qty_digits`].
    #[serde(skip)]
    qty_digits: Vec<QtyDigits>,
}

/// The byte range of a `qty` cell's digits in the loaded bytes, or why the cell is written in
/// a way that is not edited in place.
pub type QtyDigits = Result<std::ops::Range<usize>, &'static str>;

/// One bad cell (or a row whose shape is wrong), located by file line and column name.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("line {file_line}, column `{column}`: found {found:?}, expected {expected}")]
pub struct RowError {
    /// 1-based line number in the file.
    pub file_line: usize,
    /// The column's name as the header writes it, or `#n` for cell n past the header's columns.
    pub column: String,
    /// The cell as written.
    pub found: String,
    /// What the column takes, with examples.
    pub expected: String,
}

/// Why an inventory could not be loaded.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum InventoryError {
    /// The header (the first row that is not blank or a comment) lacks required columns.
    #[error("line {file_line}: {}", missing_message(.missing, .found))]
    MissingColumns {
        /// 1-based file line of the header.
        file_line: usize,
        /// The required columns it lacks.
        missing: Vec<String>,
        /// The header's cells as written.
        found: Vec<String>,
    },
    /// Nothing but blank lines and comments (or nothing at all).
    #[error("line {file_line}: no header row: the file is empty or holds only comments and blank lines; expected a first row such as `kind,value,tolerance,qty`")]
    NoHeader {
        /// Always 1, the start of the file.
        file_line: usize,
    },
    /// The text is not well-formed CSV (or could not be read at all).
    #[error("line {file_line}: malformed CSV: {message}")]
    Csv {
        /// 1-based line of the fault: where an unclosed quote opens, or where reading stopped.
        file_line: usize,
        /// What went wrong.
        message: String,
    },
    /// The bad cells of the rows, in file order: the first [`MAX_LISTED_PROBLEMS`] in full,
    /// and how many more were found.
    #[error("{}", rows_message(.errors, *.more))]
    Rows {
        /// The problems described, in file order.
        errors: Vec<RowError>,
        /// How many more were found and only counted.
        more: usize,
    },
    /// A header and no data rows.
    #[error("line {header_line}: the inventory has a header but no data rows")]
    Empty {
        /// 1-based file line of the header.
        header_line: usize,
    },
    /// More than [`MAX_INVENTORY_BYTES`] bytes, or more than [`MAX_INVENTORY_LINES`] lines
    /// (`file_line` is then the first line past the limit). Refused before parsing, so a wrong
    /// file (a disk image, a log) costs bounded memory.
    #[error("{}", too_large_message(*.file_line))]
    TooLarge {
        /// The first line past [`MAX_INVENTORY_LINES`]; `None` when the bytes are too many.
        file_line: Option<usize>,
    },
}

/// Largest inventory read: 16 MiB. The largest shipped stock list is about 30 kB; a real
/// store's full catalogue export stays well below this (common practice).
pub const MAX_INVENTORY_BYTES: usize = 16 << 20;
/// Most lines in an inventory file.
pub const MAX_INVENTORY_LINES: usize = 1_000_000;

fn too_large_message(file_line: Option<usize>) -> String {
    match file_line {
        Some(line) => format!(
            "line {line}: the inventory has more than {MAX_INVENTORY_LINES} lines, more than this tool reads; is this the right file?"
        ),
        None => format!(
            "the inventory is larger than {} MiB, more than this tool reads; is this the right file?",
            MAX_INVENTORY_BYTES >> 20
        ),
    }
}

fn missing_message(missing: &[String], found: &[String]) -> String {
    let names: Vec<String> = missing.iter().map(|m| format!("`{m}`")).collect();
    let mut text = format!(
        "the header has no column {} (required: kind, value, tolerance, qty); found {}",
        names.join(", "),
        if found.is_empty() {
            "no columns".to_string()
        } else {
            found
                .iter()
                .map(|f| format!("{f:?}"))
                .collect::<Vec<_>>()
                .join(", ")
        }
    );
    // A file whose first row is data: `r,4k7,5%,10`.
    if found
        .first()
        .is_some_and(|f| PartKind::from_cell(f).is_some())
    {
        text.push_str("; the first row must be the header, e.g. `kind,value,tolerance,qty`");
    }
    text
}

fn rows_message(errors: &[RowError], more: usize) -> String {
    let n = errors.len() + more;
    let mut text = format!(
        "{n} problem{} in the inventory:",
        if n == 1 { "" } else { "s" }
    );
    for error in errors {
        text.push_str("\n  ");
        text.push_str(&error.to_string());
    }
    if more > 0 {
        text.push_str("\n  ");
        text.push_str(&more_problems(more));
    }
    text
}

/// The smallest and largest of some rating or value.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Range {
    /// Smallest value, SI base units.
    pub min: f64,
    /// Largest value, SI base units.
    pub max: f64,
}

impl Range {
    fn of(values: impl Iterator<Item = f64>) -> Option<Range> {
        values.fold(None, |range, v| match range {
            None => Some(Range { min: v, max: v }),
            Some(r) => Some(Range {
                min: r.min.min(v),
                max: r.max.max(v),
            }),
        })
    }
}

/// Several lines with the same kind, value and tolerance (for instance the same resistor in two
/// drawers, or at two power ratings). Not an error: the search may combine their quantities.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Duplicate {
    /// The shared value, Ω or F.
    pub value: f64,
    /// The shared tolerance, as a fraction.
    pub tolerance: f64,
    /// The data rows ([`Line::row`]) holding this value, ascending.
    pub rows: Vec<usize>,
}

/// Facts about the lines of one kind.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KindSummary {
    /// Which kind these facts are about.
    pub kind: PartKind,
    /// Number of lines of this kind.
    pub lines: usize,
    /// Total pieces over those lines.
    pub pieces: u64,
    /// Smallest and largest value (ohm or farad); `None` without lines.
    pub values: Option<Range>,
    /// Distinct tolerances present, ascending (fractions).
    pub tolerances: Vec<f64>,
    /// Lines with qty 0.
    pub out_of_stock: usize,
    /// Lines marked polarized.
    pub polarized: usize,
    /// Range of the voltage ratings given; `None` if no line has one.
    pub voltage: Option<Range>,
    /// Range of the power ratings given; `None` if no line has one.
    pub power: Option<Range>,
    /// Lines with a unit cost.
    pub lines_with_cost: usize,
    /// Sum of qty × unit_cost over the lines with a cost (lines without one are left out).
    pub stock_value: f64,
    /// Values present on more than one line, ascending by value then tolerance.
    pub duplicates: Vec<Duplicate>,
}

/// A summary of an inventory, per kind.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// Facts about the resistor lines.
    pub resistors: KindSummary,
    /// Facts about the capacitor lines.
    pub capacitors: KindSummary,
}

impl Summary {
    /// The summary of one kind.
    pub fn of(&self, kind: PartKind) -> &KindSummary {
        match kind {
            PartKind::Resistor => &self.resistors,
            PartKind::Capacitor => &self.capacitors,
        }
    }
}

/// Key that treats two parsed values as equal when they agree to 7 significant digits, so
/// `4k7`, `4.7k` and `4700` (which may differ in the last bit after parsing) group together.
fn same_value_key(x: f64) -> String {
    format!("{x:.6e}")
}

impl KindSummary {
    fn of<'a>(kind: PartKind, lines: impl Iterator<Item = &'a Line> + Clone) -> KindSummary {
        let mut tolerances: Vec<f64> = lines.clone().map(|l| l.tolerance).collect();
        tolerances.sort_by(f64::total_cmp);
        tolerances.dedup_by(|a, b| same_value_key(*a) == same_value_key(*b));

        let mut groups: HashMap<(String, String), Vec<&Line>> = HashMap::new();
        for line in lines.clone() {
            let key = (same_value_key(line.value), same_value_key(line.tolerance));
            groups.entry(key).or_default().push(line);
        }
        let mut duplicates: Vec<Duplicate> = groups
            .into_values()
            .filter(|group| group.len() > 1)
            .map(|group| Duplicate {
                value: group[0].value,
                tolerance: group[0].tolerance,
                rows: group.iter().map(|l| l.row).collect(),
            })
            .collect();
        duplicates.sort_by(|a, b| {
            a.value
                .total_cmp(&b.value)
                .then(a.tolerance.total_cmp(&b.tolerance))
        });

        KindSummary {
            kind,
            lines: lines.clone().count(),
            pieces: lines.clone().map(|l| u64::from(l.qty)).sum(),
            values: Range::of(lines.clone().map(|l| l.value)),
            tolerances,
            out_of_stock: lines.clone().filter(|l| l.qty == 0).count(),
            polarized: lines.clone().filter(|l| l.polarized).count(),
            voltage: Range::of(lines.clone().filter_map(|l| l.voltage)),
            power: Range::of(lines.clone().filter_map(|l| l.power)),
            lines_with_cost: lines.clone().filter(|l| l.unit_cost.is_some()).count(),
            stock_value: lines
                .filter_map(|l| l.unit_cost.map(|c| c * f64::from(l.qty)))
                .sum(),
            duplicates,
        }
    }
}

impl Inventory {
    /// Loads an inventory from CSV bytes. Reads the whole input (up to
    /// [`MAX_INVENTORY_BYTES`]; more is [`InventoryError::TooLarge`]), then parses it like
    /// [`Inventory::parse_str`]; a read failure is reported as [`InventoryError::Csv`].
    pub fn from_reader<R: Read>(reader: R) -> Result<Inventory, InventoryError> {
        let mut bytes = Vec::new();
        // One byte past the limit tells "exactly at the limit" from "too large" without
        // reading more than that into memory.
        let mut reader = reader.take(MAX_INVENTORY_BYTES as u64 + 1);
        if let Err(error) = reader.read_to_end(&mut bytes) {
            return Err(InventoryError::Csv {
                file_line: LineIndex::new(&bytes).line_of(bytes.len()),
                message: format!("could not read the input: {error}"),
            });
        }
        parse_bytes(&bytes)
    }

    /// Loads an inventory from CSV text. (Also available as `str::parse::<Inventory>()` through
    /// [`std::str::FromStr`]; the inherent name avoids clippy's `should_implement_trait`.)
    pub fn parse_str(text: &str) -> Result<Inventory, InventoryError> {
        parse_bytes(text.as_bytes())
    }

    /// Where the digits of data row `row`'s `qty` cell ([`Line::row`], 1-based) sit in the bytes
    /// this inventory was parsed from, so that [`crate::stock::edit`] changes exactly those
    /// bytes; `None` for a row that does not exist (or an inventory not parsed from bytes).
    pub fn qty_digits(&self, row: usize) -> Option<QtyDigits> {
        self.qty_digits.get(row.checked_sub(1)?).cloned()
    }

    /// Lines of one kind, in file order.
    pub fn of_kind(&self, kind: PartKind) -> impl Iterator<Item = &Line> + Clone {
        self.lines.iter().filter(move |l| l.kind == kind)
    }

    /// Resistor lines, in file order.
    pub fn resistors(&self) -> impl Iterator<Item = &Line> + Clone {
        self.of_kind(PartKind::Resistor)
    }

    /// Capacitor lines, in file order.
    pub fn capacitors(&self) -> impl Iterator<Item = &Line> + Clone {
        self.of_kind(PartKind::Capacitor)
    }

    /// Counts, ranges and duplicates per kind.
    pub fn summary(&self) -> Summary {
        Summary {
            resistors: KindSummary::of(PartKind::Resistor, self.resistors()),
            capacitors: KindSummary::of(PartKind::Capacitor, self.capacitors()),
        }
    }
}

impl std::str::FromStr for Inventory {
    type Err = InventoryError;

    fn from_str(text: &str) -> Result<Inventory, InventoryError> {
        Inventory::parse_str(text)
    }
}

/// The columns this loader understands. Order = order of `MissingColumns` and of checks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Column {
    Kind,
    Value,
    Tolerance,
    Qty,
    Voltage,
    Power,
    Polarized,
    Dielectric,
    UnitCost,
    Location,
    Note,
}

impl Column {
    const ALL: [Column; 11] = [
        Column::Kind,
        Column::Value,
        Column::Tolerance,
        Column::Qty,
        Column::Voltage,
        Column::Power,
        Column::Polarized,
        Column::Dielectric,
        Column::UnitCost,
        Column::Location,
        Column::Note,
    ];

    fn name(self) -> &'static str {
        match self {
            Column::Kind => "kind",
            Column::Value => "value",
            Column::Tolerance => "tolerance",
            Column::Qty => "qty",
            Column::Voltage => "voltage",
            Column::Power => "power",
            Column::Polarized => "polarized",
            Column::Dielectric => "dielectric",
            Column::UnitCost => "unit_cost",
            Column::Location => "location",
            Column::Note => "note",
        }
    }

    fn required(self) -> bool {
        matches!(
            self,
            Column::Kind | Column::Value | Column::Tolerance | Column::Qty
        )
    }

    fn from_header(cell: &str) -> Option<Column> {
        let name: String = cell
            .trim()
            .chars()
            .map(|c| match c {
                ' ' | '-' => '_',
                c => c.to_ascii_lowercase(),
            })
            .collect();
        Column::ALL.into_iter().find(|c| c.name() == name)
    }
}

/// Where each known column sits in a row, and how many cells the header has.
struct Layout {
    index: [Option<usize>; Column::ALL.len()],
    header: Vec<String>,
}

impl Layout {
    fn position(&self, column: Column) -> Option<usize> {
        self.index[column as usize]
    }
}

/// Where each line starts, to turn byte offsets into 1-based line numbers by bisection (the
/// spec loader uses it too).
pub(crate) struct LineIndex(Vec<usize>);

impl LineIndex {
    /// Lines of a CSV: a line ends at LF, CRLF or a lone CR. The csv reader ends records at
    /// all three, so a file saved with classic Mac line ends (CR alone) has its rows on lines
    /// of their own, not all on line 1.
    pub(crate) fn new(bytes: &[u8]) -> LineIndex {
        let mut starts = vec![0];
        for (i, &b) in bytes.iter().enumerate() {
            if b == b'\n' || (b == b'\r' && bytes.get(i + 1) != Some(&b'\n')) {
                starts.push(i + 1);
            }
        }
        LineIndex(starts)
    }

    /// Lines of TOML text, which ends lines with LF or CRLF only (TOML 1.0, "Newline means
    /// LF (0x0A) or CRLF (0x0D 0x0A)"): a lone CR is no line end there, and a spec holding one
    /// does not parse.
    pub(crate) fn lf(bytes: &[u8]) -> LineIndex {
        let breaks = bytes.iter().enumerate().filter(|(_, &b)| b == b'\n');
        LineIndex(
            std::iter::once(0)
                .chain(breaks.map(|(i, _)| i + 1))
                .collect(),
        )
    }

    /// The 1-based line holding the byte at `offset` (a line break belongs to the line it ends).
    pub(crate) fn line_of(&self, offset: usize) -> usize {
        self.0.partition_point(|&start| start <= offset)
    }

    /// The byte offset where 1-based `line` starts.
    pub(crate) fn start_of(&self, line: usize) -> usize {
        self.0[line.clamp(1, self.0.len()) - 1]
    }
}

/// Most problems a loader describes (inventory and spec alike); past it they are only counted,
/// so a wrong file of a million bad rows costs a short message and bounded memory, not a
/// gigabyte of text.
pub const MAX_LISTED_PROBLEMS: usize = 100;

/// The line that closes a capped list of problems.
pub(crate) fn more_problems(n: usize) -> String {
    format!("… and {n} more problem{}", if n == 1 { "" } else { "s" })
}

/// One record as the csv reader read it.
#[derive(Default)]
struct Record {
    /// Byte offset of its first byte in the input.
    start: usize,
    /// The fields' texts (quotes removed, `""` read as `"`), one after the other.
    text: Vec<u8>,
    /// Per field: its raw bytes in the input (quotes included, the delimiter or line end after
    /// it not), and the end of its text in `text`.
    fields: Vec<(std::ops::Range<usize>, usize)>,
}

impl Record {
    fn cells(&self) -> Vec<&[u8]> {
        let mut from = 0;
        self.fields
            .iter()
            .map(|(_, end)| {
                let cell = &self.text[from..*end];
                from = *end;
                cell
            })
            .collect()
    }
}

/// The records of an inventory, read by the csv crate's own tokenizer: `csv-core`, the engine
/// inside `csv::Reader`, with its defaults (RFC 4180 quoting with `""` inside quotes; records
/// end at LF, CR or CRLF; empty lines skipped). It is driven one field at a time because
/// `read_field` reports how many input bytes each field took, which makes every cell's raw
/// byte range exact — what [`crate::stock::edit`] needs to change a `qty` cell in place with
/// no tokenizer of its own. (`csv::Reader` gives a record's start only, and `ByteRecord`
/// ranges are offsets in the unquoted text, not in the input.)
///
/// Comment lines (`#` first on a line between records) are skipped here before the reader
/// sees them: csv-core ends a comment only at LF, so a CR-only file would be one long comment.
struct Records<'a> {
    bytes: &'a [u8],
    at: usize,
    reader: csv_core::Reader,
}

impl<'a> Records<'a> {
    fn new(bytes: &'a [u8], from: usize) -> Records<'a> {
        Records {
            bytes,
            at: from,
            reader: csv_core::Reader::new(),
        }
    }

    /// Reads the next record into `record`; `Ok(false)` at the end of the input. An error is
    /// the byte offset of a quoted field that is never closed: the reader would otherwise take
    /// the rest of the file into it without complaint.
    fn next(&mut self, record: &mut Record) -> Result<bool, usize> {
        let bytes = self.bytes;
        loop {
            while self.at < bytes.len() && matches!(bytes[self.at], b'\n' | b'\r') {
                self.at += 1;
            }
            if bytes.get(self.at) != Some(&b'#') {
                break;
            }
            while self.at < bytes.len() && !matches!(bytes[self.at], b'\n' | b'\r') {
                self.at += 1;
            }
        }
        if self.at >= bytes.len() {
            return Ok(false);
        }
        record.start = self.at;
        record.text.clear();
        record.fields.clear();
        let mut out = [0u8; 256];
        loop {
            let field_start = self.at;
            let record_end = loop {
                let input = &bytes[self.at..];
                if input.is_empty() {
                    // The input ends inside this field. Whether a quote is still open is the
                    // reader's to say: offered a delimiter, an open quote takes it as text and
                    // asks for more, a finished field ends at it.
                    let (probe, _, _) = self.reader.read_field(b",", &mut out);
                    if probe == ReadFieldResult::InputEmpty {
                        return Err(field_start);
                    }
                    break true;
                }
                let (result, nin, nout) = self.reader.read_field(input, &mut out);
                self.at += nin;
                record.text.extend_from_slice(&out[..nout]);
                match result {
                    ReadFieldResult::InputEmpty | ReadFieldResult::OutputFull => continue,
                    ReadFieldResult::Field { record_end } => break record_end,
                    ReadFieldResult::End => break true,
                }
            };
            // The reader has taken the delimiter or the line end after the field; a field's raw
            // bytes never end in a line break (inside quotes they end at the closing quote).
            let mut end = self.at;
            if record_end {
                while end > field_start && matches!(bytes[end - 1], b'\n' | b'\r') {
                    end -= 1;
                }
            } else {
                end -= 1;
            }
            record.fields.push((field_start..end, record.text.len()));
            if record_end {
                return Ok(true);
            }
        }
    }
}

/// Where the digits of a loaded `qty` cell are: the cell as written (`12`, ` 12 `, `+12`) or
/// inside quotes (`"12"`). Another spelling the reader also takes as 12 (`"1"2`) is left
/// alone rather than guessed at. `text` is the cell's text, already read as a quantity.
fn qty_digits(bytes: &[u8], raw: std::ops::Range<usize>, text: &[u8]) -> QtyDigits {
    let written = &bytes[raw.clone()];
    let inner = if written == text {
        raw.start
    } else if written.len() == text.len() + 2
        && written.first() == Some(&b'"')
        && written.last() == Some(&b'"')
        && &written[1..written.len() - 1] == text
    {
        raw.start + 1
    } else {
        return Err("the quoted cell goes on after its closing quote");
    };
    let first = text.iter().position(u8::is_ascii_digit);
    let last = text.iter().rposition(u8::is_ascii_digit);
    match (first, last) {
        (Some(first), Some(last)) => Ok(inner + first..inner + last + 1),
        _ => Err("no digits in the cell"),
    }
}

/// Problems found in the rows: the first [`MAX_LISTED_PROBLEMS`] described, the rest counted
/// without building their messages.
#[derive(Default)]
struct Problems {
    listed: Vec<RowError>,
    more: usize,
}

impl Problems {
    fn add(&mut self, error: impl FnOnce() -> RowError) {
        if self.listed.len() < MAX_LISTED_PROBLEMS {
            self.listed.push(error());
        } else {
            self.more += 1;
        }
    }

    fn is_empty(&self) -> bool {
        self.listed.is_empty()
    }
}

const BOM: &[u8] = b"\xEF\xBB\xBF";

/// Parses the bytes of an inventory file: what [`Inventory::from_reader`] does once the bytes
/// are read. Public so that a caller holding the bytes already (to hash them, or to edit them
/// with [`crate::stock::edit`]) parses exactly what it holds; [`Inventory::qty_digits`] are
/// offsets in these bytes.
pub fn parse_bytes(bytes: &[u8]) -> Result<Inventory, InventoryError> {
    if bytes.len() > MAX_INVENTORY_BYTES {
        return Err(InventoryError::TooLarge { file_line: None });
    }
    // Count the lines before indexing them, so a file of nothing but line breaks does not
    // build a large index first. Line MAX+1 exists when anything follows the MAX-th break.
    let mut breaks = 0;
    for (i, &b) in bytes.iter().enumerate() {
        if b == b'\n' || (b == b'\r' && bytes.get(i + 1) != Some(&b'\n')) {
            breaks += 1;
            if breaks == MAX_INVENTORY_LINES && i + 1 < bytes.len() {
                return Err(InventoryError::TooLarge {
                    file_line: Some(MAX_INVENTORY_LINES + 1),
                });
            }
        }
    }
    let lines = LineIndex::new(bytes);
    let from = if bytes.starts_with(BOM) { BOM.len() } else { 0 };
    let mut records = Records::new(bytes, from);
    let mut record = Record::default();

    let mut layout: Option<Layout> = None;
    let mut header_line = 1;
    let mut problems = Problems::default();
    let mut inventory = Inventory::default();
    let mut row = 0;

    loop {
        match records.next(&mut record) {
            Ok(true) => {}
            Ok(false) => break,
            Err(offset) => {
                return Err(InventoryError::Csv {
                    file_line: lines.line_of(offset),
                    message: "a quoted cell opened here is never closed (missing `\"`)".to_string(),
                });
            }
        }
        let file_line = lines.line_of(record.start);
        let cells = record.cells();
        if is_blank_or_comment(&cells) {
            continue;
        }
        match &layout {
            None => {
                header_line = file_line;
                layout = Some(read_header(&cells, file_line, &mut problems)?);
            }
            Some(layout) => {
                row += 1;
                let line = read_row(layout, &cells, row, file_line, &mut problems);
                // Once anything is wrong the load fails: keep no lines, so a bad file of a
                // million rows costs no more memory than a bad file of one.
                if let (Some(line), true) = (line, problems.is_empty()) {
                    let qty = layout.position(Column::Qty).unwrap_or(0);
                    let (raw, _) = record.fields[qty].clone();
                    inventory
                        .qty_digits
                        .push(qty_digits(bytes, raw, cells[qty]));
                    inventory.lines.push(line);
                }
            }
        }
    }

    if layout.is_none() {
        return Err(InventoryError::NoHeader { file_line: 1 });
    }
    if !problems.is_empty() {
        return Err(InventoryError::Rows {
            errors: problems.listed,
            more: problems.more,
        });
    }
    if row == 0 {
        return Err(InventoryError::Empty { header_line });
    }
    Ok(inventory)
}

/// A record of only empty cells (`,,,` from a spreadsheet) or one whose first cell starts with
/// `#` after leading blanks (an indented comment) carries no data.
fn is_blank_or_comment(cells: &[&[u8]]) -> bool {
    let first = cells.first().map(|c| c.trim_ascii_start());
    first.is_some_and(|c| c.starts_with(b"#")) || cells.iter().all(|c| c.trim_ascii().is_empty())
}

fn read_header(
    cells: &[&[u8]],
    file_line: usize,
    problems: &mut Problems,
) -> Result<Layout, InventoryError> {
    let header: Vec<String> = cells
        .iter()
        .map(|c| String::from_utf8_lossy(c).trim().to_string())
        .collect();
    let mut index = [None; Column::ALL.len()];
    for (i, name) in header.iter().enumerate() {
        let Some(column) = Column::from_header(name) else {
            continue; // unknown columns are the file's own business
        };
        match index[column as usize] {
            None => index[column as usize] = Some(i),
            Some(first) => problems.add(|| RowError {
                file_line,
                column: column.name().to_string(),
                found: name.clone(),
                expected: format!(
                    "each column once (`{}` is already column {})",
                    column.name(),
                    first + 1
                ),
            }),
        }
    }
    let missing: Vec<String> = Column::ALL
        .into_iter()
        .filter(|c| c.required() && index[*c as usize].is_none())
        .map(|c| c.name().to_string())
        .collect();
    if !missing.is_empty() {
        return Err(InventoryError::MissingColumns {
            file_line,
            missing,
            found: header,
        });
    }
    Ok(Layout { index, header })
}

/// Reads the cells of one data row, one column after the other, recording every bad cell.
struct RowReader<'a> {
    layout: &'a Layout,
    cells: &'a [&'a [u8]],
    file_line: usize,
    problems: &'a mut Problems,
    ok: bool,
}

impl<'a> RowReader<'a> {
    fn fail(&mut self, column: Column, found: &str, expected: impl Into<String>) {
        self.ok = false;
        self.problems.add(|| RowError {
            file_line: self.file_line,
            column: column.name().to_string(),
            found: found.to_string(),
            expected: expected.into(),
        });
    }

    /// The trimmed cell, or `None` when the column is not in the header, the row is too short
    /// (reported once for the row), or the cell is not UTF-8 (reported here).
    fn cell(&mut self, column: Column) -> Option<&'a str> {
        let raw = *self.cells.get(self.layout.position(column)?)?;
        match std::str::from_utf8(raw) {
            Ok(text) => Some(text.trim()),
            Err(_) => {
                let lossy = String::from_utf8_lossy(raw).trim().to_string();
                self.fail(column, &lossy, "UTF-8 text (save the file as UTF-8)");
                None
            }
        }
    }

    /// A non-empty cell of an optional column.
    fn optional(&mut self, column: Column) -> Option<&'a str> {
        self.cell(column).filter(|t| !t.is_empty())
    }

    /// A required cell; an empty one is recorded as an error.
    fn required(&mut self, column: Column, expected: &str) -> Option<&'a str> {
        let text = self.cell(column)?;
        if text.is_empty() {
            self.fail(column, text, expected);
            return None;
        }
        Some(text)
    }

    /// Checks a quantity parsed by the values module is finite and > 0. `what` names it ("a
    /// resistance"); the values module's message, which says what it saw, goes in brackets.
    fn quantity(
        &mut self,
        column: Column,
        text: &str,
        parsed: Result<f64, ValueError>,
        (what, example): (&str, &str),
    ) -> Option<f64> {
        match parsed {
            Ok(v) if v.is_finite() && v > 0.0 => Some(v),
            Ok(_) => {
                let expected = format!("{what} greater than zero, such as {example}");
                self.fail(column, text, expected);
                None
            }
            Err(error) => {
                self.fail(column, text, format!("{what} ({})", error.message));
                None
            }
        }
    }

    /// A required quantity: empty is an error, otherwise as [`RowReader::quantity`].
    fn required_quantity(
        &mut self,
        column: Column,
        unit: Unit,
        (what, example): (&str, &str),
    ) -> Option<f64> {
        let text = self.required(column, &format!("{what} such as {example}"))?;
        self.quantity(column, text, parse(text, unit), (what, example))
    }

    /// An optional quantity: empty is `None`, otherwise as [`RowReader::quantity`].
    fn optional_quantity(
        &mut self,
        column: Column,
        unit: Unit,
        described: (&str, &str),
    ) -> Option<f64> {
        let text = self.optional(column)?;
        self.quantity(column, text, parse(text, unit), described)
    }
}

fn read_row(
    layout: &Layout,
    cells: &[&[u8]],
    row: usize,
    file_line: usize,
    problems: &mut Problems,
) -> Option<Line> {
    let width = layout.header.len();
    let mut r = RowReader {
        layout,
        cells,
        file_line,
        problems,
        ok: true,
    };

    // Shape first: a short row is one located error (the cells it does have are still checked);
    // extra cells are fine only when empty (a trailing comma from a spreadsheet).
    if cells.len() < width {
        r.ok = false;
        let column = &layout.header[cells.len()];
        r.problems.add(|| RowError {
            file_line,
            column: column.clone(),
            found: format!("a row of {} cell(s)", cells.len()),
            expected: format!("{width} cells, one per header column"),
        });
    }
    for (i, extra) in cells.iter().enumerate().skip(width) {
        if !extra.trim_ascii().is_empty() {
            r.ok = false;
            r.problems.add(|| RowError {
                file_line,
                column: format!("#{}", i + 1),
                found: String::from_utf8_lossy(extra).trim().to_string(),
                expected: format!("nothing past the header's {width} columns"),
            });
        }
    }

    let kind = r
        .required(
            Column::Kind,
            "`resistor` or `capacitor` (or r, c, res, cap)",
        )
        .and_then(|text| {
            let kind = PartKind::from_cell(text);
            if kind.is_none() {
                r.fail(
                    Column::Kind,
                    text,
                    "`resistor` or `capacitor` (or r, c, res, cap)",
                );
            }
            kind
        });

    // The unit of `value` depends on the kind; with a bad kind the value cannot be judged.
    let value = match kind {
        Some(PartKind::Resistor) => r.required_quantity(
            Column::Value,
            Unit::Ohm,
            ("a resistance", "`4k7` or `10 kΩ`"),
        ),
        Some(PartKind::Capacitor) => r.required_quantity(
            Column::Value,
            Unit::Farad,
            ("a capacitance", "`100n` or `4.7 uF`"),
        ),
        None => None,
    };
    // A value of the other kind on this line (`c,4k7,…`) parses, but to no real part.
    let value = match (kind, value) {
        (Some(kind), Some(v)) => match implausible(kind, v) {
            None => Some(v),
            Some(why) => {
                let text = r.cell(Column::Value).unwrap_or_default();
                let what = match kind {
                    PartKind::Resistor => "a resistance",
                    PartKind::Capacitor => "a capacitance",
                };
                r.fail(Column::Value, text, format!("{what} ({why})"));
                None
            }
        },
        _ => None,
    };

    let tolerance = {
        let expected = "a tolerance above 0 and below 100 %, such as `1%` or `5`";
        r.required(Column::Tolerance, expected)
            .and_then(|text| match parse(text, Unit::Percent) {
                Ok(t) if t.is_finite() && t > 0.0 && t < 1.0 => Some(t),
                Ok(_) => {
                    r.fail(Column::Tolerance, text, expected);
                    None
                }
                Err(error) => {
                    r.fail(
                        Column::Tolerance,
                        text,
                        format!("a tolerance ({})", error.message),
                    );
                    None
                }
            })
    };

    let qty = {
        let expected = "a whole number of pieces, 0 or more";
        r.required(Column::Qty, expected).and_then(|text| {
            let qty = parse_qty(text);
            if qty.is_none() {
                r.fail(Column::Qty, text, expected);
            }
            qty
        })
    };

    let voltage = r.optional_quantity(Column::Voltage, Unit::Volt, ("a voltage rating", "`50V`"));
    let power = r.optional_quantity(Column::Power, Unit::Watt, ("a power rating", "`0.25W`"));
    let polarized = match r.optional(Column::Polarized) {
        None => false,
        Some(text) => match parse_bool(text) {
            Some(b) => b,
            None => {
                r.fail(
                    Column::Polarized,
                    text,
                    "true/false, yes/no, y/n or 1/0 (empty = false)",
                );
                false
            }
        },
    };

    let dielectric = r.optional(Column::Dielectric).map(str::to_string);

    let unit_cost = r.optional(Column::UnitCost).and_then(|text| {
        let cost = parse_cost(text);
        if cost.is_none() {
            r.fail(
                Column::UnitCost,
                text,
                "a plain non-negative number such as `0.12` (a leading $, € or £ is allowed)",
            );
        }
        cost
    });

    let location = r.optional(Column::Location).map(str::to_string);
    let note = r.optional(Column::Note).map(str::to_string);

    if !r.ok {
        return None;
    }
    Some(Line {
        row,
        file_line,
        kind: kind?,
        value: value?,
        tolerance: tolerance?,
        qty: qty?,
        voltage,
        power,
        polarized,
        dielectric,
        unit_cost,
        location,
        note,
    })
}

/// Digits only (an optional leading `+`), fitting a u32.
fn parse_qty(text: &str) -> Option<u32> {
    let digits = text.strip_prefix('+').unwrap_or(text);
    if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    digits.parse().ok()
}

fn parse_bool(text: &str) -> Option<bool> {
    match text.to_ascii_lowercase().as_str() {
        "true" | "yes" | "y" | "1" => Some(true),
        "false" | "no" | "n" | "0" => Some(false),
        _ => None,
    }
}

/// A plain decimal number (`12`, `0.05`, `.5`), optionally after one currency symbol. Exponents,
/// signs, `inf` and `NaN` — all of which `f64::from_str` would take — are refused: a cost column
/// holding them is a typo, not a price.
fn parse_cost(text: &str) -> Option<f64> {
    let number = text
        .strip_prefix(['$', '€', '£'])
        .map_or(text, str::trim_start);
    let digits = number.bytes().filter(u8::is_ascii_digit).count();
    let dots = number.bytes().filter(|&b| b == b'.').count();
    if digits == 0 || dots > 1 || digits + dots != number.len() {
        return None;
    }
    number.parse().ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    const HEADER: &str = "kind,value,tolerance,qty\n";

    fn load(text: &str) -> Inventory {
        match Inventory::parse_str(text) {
            Ok(inventory) => inventory,
            Err(error) => panic!("expected {text:?} to load, got: {error}"),
        }
    }

    fn row_errors(text: &str) -> Vec<RowError> {
        match Inventory::parse_str(text) {
            Err(InventoryError::Rows { errors, .. }) => errors,
            other => panic!("expected row errors for {text:?}, got {other:?}"),
        }
    }

    /// (file_line, column) of each error, for compact assertions.
    fn places(errors: &[RowError]) -> Vec<(usize, &str)> {
        errors
            .iter()
            .map(|e| (e.file_line, e.column.as_str()))
            .collect()
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-9 * a.abs().max(b.abs())
    }

    fn all_close(a: &[f64], b: &[f64]) -> bool {
        a.len() == b.len() && a.iter().zip(b).all(|(x, y)| close(*x, *y))
    }

    #[test]
    fn minimal_rows_load_in_si_units() {
        let inv = load(
            "kind,value,tolerance,qty\n\
             resistor,4k7,5%,12\n\
             capacitor,100n,10%,0\n",
        );
        assert_eq!(inv.lines.len(), 2);
        let r = &inv.lines[0];
        assert_eq!((r.row, r.file_line, r.kind), (1, 2, PartKind::Resistor));
        assert!(close(r.value, 4700.0), "4k7 = 4.7 kΩ (IEC 60062 RKM code)");
        assert!(close(r.tolerance, 0.05));
        assert_eq!(r.qty, 12);
        assert_eq!(
            (r.voltage, r.power, r.polarized, &r.dielectric),
            (None, None, false, &None)
        );
        let c = &inv.lines[1];
        assert_eq!(
            (c.row, c.file_line, c.kind, c.qty),
            (2, 3, PartKind::Capacitor, 0)
        );
        assert!(close(c.value, 100e-9));
        assert!(close(c.tolerance, 0.10));
        assert_eq!(inv.resistors().count(), 1);
        assert_eq!(inv.capacitors().count(), 1);
    }

    #[test]
    fn every_column_is_read() {
        let inv = load(
            "kind,value,tolerance,qty,voltage,power,polarized,dielectric,unit_cost,location,note\n\
             c,470u,20%,3,25V,,yes,electrolytic,€0.30,drawer B2,\"low ESR, 105 °C\"\n\
             r,10k,1%,50,,0.25W,,metal film,$0.02,R-01-03,\n",
        );
        let c = &inv.lines[0];
        assert!(close(c.value, 470e-6));
        assert!(close(c.voltage.unwrap(), 25.0));
        assert!(c.polarized);
        assert_eq!(c.dielectric.as_deref(), Some("electrolytic"));
        assert!(close(c.unit_cost.unwrap(), 0.30));
        assert_eq!(c.location.as_deref(), Some("drawer B2"));
        // RFC 4180 §2.6: a quoted field may hold the separator.
        assert_eq!(c.note.as_deref(), Some("low ESR, 105 °C"));
        let r = &inv.lines[1];
        assert!(close(r.power.unwrap(), 0.25));
        assert_eq!(r.note, None, "an empty cell is None");
        assert!(!r.polarized, "an empty polarized cell is false");
    }

    #[test]
    fn kind_aliases_are_case_insensitive() {
        let inv = load(&format!(
            "{HEADER}r,1k,1%,1\nRes,1k,1%,1\nRESISTOR,1k,1%,1\nC,1n,5%,1\ncap,1n,5%,1\nCapacitor,1n,5%,1\n"
        ));
        let kinds: Vec<PartKind> = inv.lines.iter().map(|l| l.kind).collect();
        use PartKind::{Capacitor as C, Resistor as R};
        assert_eq!(kinds, [R, R, R, C, C, C]);
    }

    #[test]
    fn header_is_trimmed_case_insensitive_and_unknown_columns_are_ignored() {
        let inv = load(
            " QTY , Supplier Ref,Kind,VALUE ,Tolerance, Unit Cost\n\
             7,XQ-1,r,220,5%,0.01\n",
        );
        let l = &inv.lines[0];
        assert_eq!((l.qty, l.kind), (7, PartKind::Resistor));
        assert!(close(l.value, 220.0));
        assert!(
            close(l.unit_cost.unwrap(), 0.01),
            "`Unit Cost` matches unit_cost"
        );
    }

    #[test]
    fn missing_required_columns_are_listed_in_order() {
        assert_eq!(
            Inventory::parse_str("value,kind,location\nr,1k,A\n"),
            Err(InventoryError::MissingColumns {
                file_line: 1,
                missing: vec!["tolerance".into(), "qty".into()],
                found: ["value", "kind", "location"].map(String::from).to_vec(),
            })
        );
        let none = InventoryError::NoHeader { file_line: 1 };
        assert_eq!(
            Inventory::parse_str(""),
            Err(none.clone()),
            "no header at all"
        );
        assert_eq!(Inventory::parse_str("# only a comment\n\n"), Err(none));
        // A header after comments is reported on its own line.
        match Inventory::parse_str("# stock\n\nkind,value,qty\nr,1k,1\n") {
            Err(e @ InventoryError::MissingColumns { file_line: 3, .. }) => {
                assert!(e.to_string().starts_with("line 3: "), "{e}");
                assert!(e.to_string().contains("`tolerance`"), "{e}");
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn data_where_the_header_should_be_is_explained() {
        let e = Inventory::parse_str("r,4k7,5%,10\n").unwrap_err();
        let text = e.to_string();
        assert!(text.starts_with("line 1: "), "{text}");
        assert!(text.contains("must be the header"), "{text}");
    }

    #[test]
    fn header_without_rows_is_empty() {
        assert_eq!(
            Inventory::parse_str(HEADER),
            Err(InventoryError::Empty { header_line: 1 })
        );
        assert_eq!(
            Inventory::parse_str(&format!("# a\n{HEADER}\n# nothing yet\n,,,\n")),
            Err(InventoryError::Empty { header_line: 2 })
        );
    }

    #[test]
    fn duplicate_header_column_is_an_error_on_the_header_line() {
        let errors = row_errors("kind,value,tolerance,qty,Value\nr,1k,1%,1,2k\n");
        assert_eq!(places(&errors), [(1, "value")]);
        assert!(errors[0].expected.contains("column 2"));
    }

    #[test]
    fn bom_crlf_comments_and_blank_lines() {
        let text = "\u{FEFF}# stock list\r\nkind,value,tolerance,qty\r\n\r\nr,1k,1%,5\r\n# moved\r\n  # indented\r\nc,1n,5%,5\r\n,,,\r\n";
        let inv = load(text);
        let at: Vec<(usize, usize)> = inv.lines.iter().map(|l| (l.row, l.file_line)).collect();
        assert_eq!(
            at,
            [(1, 4), (2, 7)],
            "rows count data only, file lines count all"
        );
        assert!(close(inv.lines[1].value, 1e-9));
    }

    #[test]
    fn every_bad_cell_of_every_row_is_collected() {
        let text = "kind,value,tolerance,qty,voltage,polarized,unit_cost\n\
                    r,1k,1%,1,,,\n\
                    x,1k,1%,1,,,\n\
                    r,10 uF,0%,-1,,maybe,\n\
                    c,1n,5%,1,0V,,12 USD\n\
                    r,,,,,,\n";
        let errors = row_errors(text);
        assert_eq!(
            places(&errors),
            [
                (3, "kind"),
                (4, "value"),
                (4, "tolerance"),
                (4, "qty"),
                (4, "polarized"),
                (5, "voltage"),
                (5, "unit_cost"),
                (6, "value"),
                (6, "tolerance"),
                (6, "qty"),
            ]
        );
        assert_eq!(errors[1].found, "10 uF");
        assert!(errors[1].expected.starts_with("a resistance"));
    }

    #[test]
    fn value_unit_follows_kind() {
        let errors = row_errors(&format!("{HEADER}r,10 uF,5%,1\nc,10 kΩ,5%,1\n"));
        assert_eq!(places(&errors), [(2, "value"), (3, "value")]);
        assert!(errors[1].expected.starts_with("a capacitance"));
    }

    #[test]
    fn qty_is_a_non_negative_integer() {
        let inv = load(&format!(
            "{HEADER}r,1k,1%,0\nr,1k,1%,+3\nr,1k,1%,4294967295\n"
        ));
        let q: Vec<u32> = inv.lines.iter().map(|l| l.qty).collect();
        assert_eq!(q, [0, 3, u32::MAX]);
        for bad in ["-1", "1.5", "abc", "4294967296", "1e3", "", "+"] {
            let errors = row_errors(&format!("{HEADER}r,1k,1%,{bad}\n"));
            assert_eq!(places(&errors), [(2, "qty")], "qty {bad:?}");
        }
    }

    #[test]
    fn tolerance_must_be_between_zero_and_hundred_percent() {
        let inv = load(&format!("{HEADER}r,1k,0.1%,1\nr,1k,5,1\n"));
        assert!(close(inv.lines[0].tolerance, 0.001));
        assert!(close(inv.lines[1].tolerance, 0.05), "bare number = percent");
        for bad in ["0", "0%", "100%", "150%", "-1%", "abc"] {
            let errors = row_errors(&format!("{HEADER}r,1k,{bad},1\n"));
            assert_eq!(places(&errors), [(2, "tolerance")], "tolerance {bad:?}");
        }
    }

    #[test]
    fn ratings_must_be_positive() {
        let head = "kind,value,tolerance,qty,voltage,power\n";
        for (bad, column) in [("0V,", "voltage"), ("-5V,", "voltage"), (",0W", "power")] {
            let errors = row_errors(&format!("{head}c,1n,5%,1,{bad}\n"));
            assert_eq!(places(&errors), [(2, column)], "{bad:?}");
        }
    }

    #[test]
    fn odd_but_harmless_combinations_are_allowed() {
        let inv = load(
            "kind,value,tolerance,qty,voltage,power,polarized\n\
             r,1k,1%,1,200V,,true\n\
             c,1u,10%,1,50V,0.5W,no\n",
        );
        assert!(inv.lines[0].polarized && inv.lines[0].voltage.is_some());
        assert!(inv.lines[1].power.is_some());
    }

    #[test]
    fn polarized_spellings() {
        let head = "kind,value,tolerance,qty,polarized\n";
        for (cell, want) in [
            ("true", true),
            ("Yes", true),
            ("y", true),
            ("1", true),
            ("FALSE", false),
            ("no", false),
            ("N", false),
            ("0", false),
            ("", false),
        ] {
            let inv = load(&format!("{head}c,1u,20%,1,{cell}\n"));
            assert_eq!(inv.lines[0].polarized, want, "{cell:?}");
        }
        let errors = row_errors(&format!("{head}c,1u,20%,1,+\n"));
        assert_eq!(places(&errors), [(2, "polarized")]);
    }

    #[test]
    fn unit_cost_is_a_plain_number_after_an_optional_symbol() {
        for (cell, want) in [
            ("0.02", 0.02),
            ("$0.10", 0.10),
            ("€ 1.5", 1.5),
            ("£3", 3.0),
            (".5", 0.5),
            ("0", 0.0),
        ] {
            assert_eq!(parse_cost(cell), Some(want), "{cell:?}");
        }
        for bad in [
            "-1", "1,5", "1e3", "NaN", "inf", "$", "1.2.3", "USD 2", "$-1", "¥5",
        ] {
            assert_eq!(parse_cost(bad), None, "{bad:?}");
        }
    }

    #[test]
    fn short_rows_are_located_errors_and_trailing_empty_cells_are_fine() {
        let text = "kind,value,tolerance,qty,location\n\
                    r,1k\n\
                    r,1k,1%,1,A1,,\n\
                    r,1k,1%,1,A1,stray\n\
                    r,1k,1%\n";
        let errors = row_errors(text);
        assert_eq!(places(&errors), [(2, "tolerance"), (4, "#6"), (5, "qty")]);
        assert_eq!(errors[0].found, "a row of 2 cell(s)");
        // A one-cell row that is a bad kind reports both the shape and the cell.
        let errors = row_errors(&format!("{HEADER}q\n"));
        assert_eq!(places(&errors), [(2, "value"), (2, "kind")]);
    }

    #[test]
    fn unterminated_quote_is_a_csv_error_at_its_line() {
        // RFC 4180 §2.5–2.7: a quoted field runs to its closing quote; without one the reader
        // would eat the rest of the file.
        let text = format!("{HEADER}r,1k,1%,1\nr,\"1k,1%,1\nr,2k,1%,1\n");
        assert_eq!(
            Inventory::parse_str(&text),
            Err(InventoryError::Csv {
                file_line: 3,
                message: "a quoted cell opened here is never closed (missing `\"`)".into()
            })
        );
        // A quote inside a comment or an unquoted cell does not open anything.
        load(&format!("# 5\" reel\n{HEADER}r,1k,1%,1\n"));
        let inv = load("kind,value,tolerance,qty,note\nr,1k,1%,1,2\" long leads\n");
        assert_eq!(inv.lines[0].note.as_deref(), Some("2\" long leads"));
    }

    #[test]
    fn quoted_multiline_cells_keep_line_numbers_right() {
        // RFC 4180 §2.6–2.7: line breaks and doubled quotes inside a quoted field.
        let text = "kind,value,tolerance,qty,note\n\
                    r,1k,1%,1,\"first line\nsecond \"\"quoted\"\" line\"\n\
                    r,2k,x,1,\n";
        let errors = row_errors(text);
        assert_eq!(places(&errors), [(4, "tolerance")]);
        let inv = load(&text.replace(",x,", ",1%,"));
        assert_eq!(
            inv.lines[0].note.as_deref(),
            Some("first line\nsecond \"quoted\" line")
        );
        assert_eq!((inv.lines[1].row, inv.lines[1].file_line), (2, 4));
    }

    #[test]
    fn invalid_utf8_is_reported_in_known_columns_and_ignored_elsewhere() {
        let mut bytes = b"kind,value,tolerance,qty,location,extra\nr,1k,1%,1,A".to_vec();
        bytes.extend_from_slice(b"\xE9,ok\nr,1k,1%,1,B,\xFF\n");
        match Inventory::from_reader(&bytes[..]) {
            Err(InventoryError::Rows { errors, .. }) => {
                assert_eq!(places(&errors), [(2, "location")]);
                assert_eq!(errors[0].found, "A\u{FFFD}");
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn a_value_of_the_other_kind_is_refused() {
        // `c,4k7` is 4.7 kF and `r,100n` 100 nΩ: both parse, neither is a part.
        let errors = row_errors(&format!(
            "{HEADER}c,4k7,10%,3\nr,100n,5%,2\nc,100,10%,1\nr,1m,1%,1\nc,100u,20%,1\n"
        ));
        assert_eq!(places(&errors), [(2, "value"), (3, "value"), (4, "value")]);
        assert!(
            errors[0].expected.contains("is this a resistance?"),
            "{}",
            errors[0]
        );
        assert_eq!(errors[0].found, "4k7");
        assert!(
            errors[1].expected.contains("is this a capacitance?"),
            "{}",
            errors[1]
        );
        assert!(
            errors[2].expected.contains("bare number is in farads"),
            "{}",
            errors[2]
        );
        // A 1 mΩ shunt and a 100 µF capacitor are real parts.
        assert_eq!(implausible(PartKind::Resistor, 1e-3), None);
        assert_eq!(implausible(PartKind::Capacitor, 100e-6), None);
        assert!(implausible(PartKind::Resistor, 1e13).is_some());
    }

    #[test]
    fn wrong_unit_and_negative_and_decimal_comma_cells() {
        let errors = row_errors(&format!(
            "{HEADER}r,10uF,1%,1\nr,\"4,7k\",1%,1\nr,4k7,1%,-3\nc,-1u,10%,1\n"
        ));
        assert_eq!(
            places(&errors),
            [(2, "value"), (3, "value"), (4, "qty"), (5, "value")]
        );
        assert!(
            errors[0].expected.contains("is a capacitance"),
            "{}",
            errors[0]
        );
        assert!(errors[1].expected.contains("4k7"), "{}", errors[1]);
        assert_eq!(errors[2].found, "-3");
        assert!(errors[3].expected.contains("negative"), "{}", errors[3]);
    }

    #[test]
    fn cr_only_line_ends_put_each_row_on_its_own_line() {
        // Classic Mac line ends (CR alone): the csv reader ends records at CR, and so do the
        // line numbers (they were all "line 1").
        let text =
            "# old Mac export\rkind,value,tolerance,qty\rr,1k,1%,1\rr,1k,x,1\r\rc,4k7,10%,3\r";
        let errors = row_errors(text);
        assert_eq!(places(&errors), [(4, "tolerance"), (6, "value")]);
        let inv = load("kind,value,tolerance,qty\rr,1k,1%,1\r\n# c\rc,1n,5%,2");
        let at: Vec<(usize, usize)> = inv.lines.iter().map(|l| (l.row, l.file_line)).collect();
        assert_eq!(at, [(1, 2), (2, 4)], "CR, CRLF and CR again");
    }

    #[test]
    fn problems_past_the_cap_are_counted_not_listed() {
        // 150 rows with two bad cells each: 100 described, 200 counted.
        let text = format!("{HEADER}{}", "x,1k,1%,y\n".repeat(150));
        match Inventory::parse_str(&text) {
            Err(e @ InventoryError::Rows { .. }) => {
                let InventoryError::Rows { errors, more } = &e else {
                    unreachable!()
                };
                assert_eq!((errors.len(), *more), (MAX_LISTED_PROBLEMS, 200));
                assert_eq!(places(&errors[98..]), [(51, "kind"), (51, "qty")]);
                let m = e.to_string();
                assert!(m.starts_with("300 problems in the inventory:"), "{m}");
                assert!(m.ends_with("\n  … and 200 more problems"), "{m}");
                assert_eq!(m.lines().count(), 1 + MAX_LISTED_PROBLEMS + 1);
            }
            other => panic!("{other:?}"),
        }
        let one_more = format!("{HEADER}{}", "x,1k,1%,1\n".repeat(101));
        let m = Inventory::parse_str(&one_more).unwrap_err().to_string();
        assert!(m.ends_with("… and 1 more problem"), "{m}");
    }

    #[test]
    fn qty_digits_are_located_in_the_bytes_read() {
        // BOM, CRLF, a quoted cell with a comma and doubled quotes before the qty, padding.
        let text = "\u{feff}kind,note,value,tolerance,qty\r\n\
                    r,\"a, \"\"b\"\"\",1k,1%,12\r\n\
                    r,,2k,1%,\" +7 \"\r\n\
                    # moved\r\n\
                    r,,3k,1%, 0\n\
                    r,,4k,1%,\"1\"2\n";
        let inv = load(text);
        let digits: Vec<Option<&str>> = (1..=4)
            .map(|row| inv.qty_digits(row).unwrap().ok().map(|r| &text[r]))
            .collect();
        assert_eq!(digits, [Some("12"), Some("7"), Some("0"), None]);
        // `"1"2` reads as 12 (csv: text after the closing quote is kept) but is not edited.
        assert_eq!(inv.lines[3].qty, 12);
        assert_eq!(inv.qty_digits(0), None);
        assert_eq!(inv.qty_digits(5), None);
    }

    #[test]
    fn endless_input_is_refused_in_bounded_memory() {
        // An endless reader: the loader must stop one byte past its limit, not read forever.
        let endless = std::io::repeat(b'x');
        assert_eq!(
            Inventory::from_reader(endless),
            Err(InventoryError::TooLarge { file_line: None })
        );
        let too_many = "\n".repeat(MAX_INVENTORY_LINES) + "x";
        match Inventory::parse_str(&too_many) {
            Err(e @ InventoryError::TooLarge { file_line: Some(n) }) => {
                assert_eq!(n, MAX_INVENTORY_LINES + 1);
                assert!(e.to_string().contains("more than 1000000 lines"), "{e}");
            }
            other => panic!("{other:?}"),
        }
        // Exactly the limit is still read (and here has no header).
        let at_limit = "\n".repeat(MAX_INVENTORY_LINES);
        assert_eq!(
            Inventory::parse_str(&at_limit),
            Err(InventoryError::NoHeader { file_line: 1 })
        );
    }

    #[test]
    fn from_reader_and_from_str_agree() {
        let text = format!("{HEADER}r,1k,1%,1\n");
        let a = Inventory::from_reader(text.as_bytes()).unwrap();
        let b: Inventory = text.parse().unwrap();
        assert_eq!(a, b);
        assert_eq!(a, Inventory::parse_str(&text).unwrap());
    }

    #[test]
    fn read_failure_is_reported_not_panicked() {
        struct Broken;
        impl Read for Broken {
            fn read(&mut self, _: &mut [u8]) -> std::io::Result<usize> {
                Err(std::io::Error::other("disk on fire"))
            }
        }
        match Inventory::from_reader(Broken) {
            Err(InventoryError::Csv { file_line, message }) => {
                assert_eq!(file_line, 1);
                assert!(message.contains("disk on fire"));
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn error_messages() {
        let e = RowError {
            file_line: 7,
            column: "value".into(),
            found: "10 uF".into(),
            expected: "a resistance".into(),
        };
        assert_eq!(
            e.to_string(),
            "line 7, column `value`: found \"10 uF\", expected a resistance"
        );
        let all = InventoryError::Rows {
            errors: vec![e.clone(), RowError { file_line: 9, ..e }],
            more: 0,
        };
        let text = all.to_string();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 3);
        assert_eq!(lines[0], "2 problems in the inventory:");
        assert!(lines[1].trim_start().starts_with("line 7,"));
        assert!(lines[2].trim_start().starts_with("line 9,"));
        assert_eq!(
            InventoryError::MissingColumns {
                file_line: 1,
                missing: vec!["qty".into()],
                found: vec!["kind".into(), "value".into(), "tolerance".into()],
            }
            .to_string(),
            "line 1: the header has no column `qty` (required: kind, value, tolerance, qty); \
             found \"kind\", \"value\", \"tolerance\""
        );
    }

    #[test]
    fn summary_of_a_small_inventory() {
        let inv = load(
            "kind,value,tolerance,qty,voltage,polarized,unit_cost\n\
             r,1k,1%,10,,,0.02\n\
             r,1000,1%,0,,,\n\
             r,4k7,5%,5,,,0.01\n\
             c,10u,20%,2,16V,yes,0.10\n\
             c,100n,10%,8,50V,,\n\
             r,4.7k,5%,1,,,\n",
        );
        let s = inv.summary();
        let r = &s.resistors;
        assert_eq!(
            (r.kind, r.lines, r.pieces, r.out_of_stock),
            (PartKind::Resistor, 4, 16, 1)
        );
        assert_eq!(
            r.values,
            Some(Range {
                min: 1000.0,
                max: 4700.0
            })
        );
        assert_eq!(r.tolerances.len(), 2);
        assert!(close(r.tolerances[0], 0.01) && close(r.tolerances[1], 0.05));
        assert_eq!(r.lines_with_cost, 2);
        assert!(close(r.stock_value, 10.0 * 0.02 + 5.0 * 0.01));
        assert_eq!(r.voltage, None);
        let dup_rows: Vec<&[usize]> = r.duplicates.iter().map(|d| d.rows.as_slice()).collect();
        assert_eq!(
            dup_rows,
            [&[1, 2][..], &[3, 6][..]],
            "1k = 1000, 4k7 = 4.7k"
        );
        let c = s.of(PartKind::Capacitor);
        assert_eq!(
            (c.lines, c.pieces, c.polarized, c.lines_with_cost),
            (2, 10, 1, 1)
        );
        assert_eq!(
            c.voltage,
            Some(Range {
                min: 16.0,
                max: 50.0
            })
        );
        assert!(c.duplicates.is_empty());
        assert!(close(c.stock_value, 0.2));
    }

    #[test]
    fn summary_of_nothing() {
        let s = Inventory::default().summary();
        assert_eq!((s.resistors.lines, s.resistors.pieces), (0, 0));
        assert_eq!(s.capacitors.values, None);
        assert_eq!(s.capacitors.stock_value, 0.0);
    }

    #[test]
    fn serializes_kind_lowercase() {
        let inv = load(&format!("{HEADER}r,1k,1%,1\n"));
        let json = serde_json::to_value(&inv).unwrap();
        assert_eq!(json["lines"][0]["kind"], "resistor");
        assert_eq!(json["lines"][0]["row"], 1);
        let json = serde_json::to_value(inv.summary()).unwrap();
        assert_eq!(json["capacitors"]["kind"], "capacitor");
    }

    // ---- the shipped inventories ------------------------------------------------------------

    const HOBBY: &str = include_str!("../../inventories/hobby-drawer.csv");
    const LAB: &str = include_str!("../../inventories/lab-stock.csv");

    /// IEC 60063 E24 significant figures (from memory).
    const E24: [u32; 24] = [
        10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82,
        91,
    ];

    /// The significant figures of `value` scaled into [10^(digits-1), 10^digits), if it has at
    /// most `digits` of them.
    fn mantissa(value: f64, digits: i32) -> Option<u32> {
        let scaled = value / 10f64.powi(value.log10().floor() as i32 - (digits - 1));
        let rounded = scaled.round();
        ((scaled - rounded).abs() < 1e-6).then_some(rounded as u32)
    }

    /// IEC 60063 E96: the rounded values of 100·10^(i/96), which match the published table for
    /// every i (checked against the printed table, from memory).
    fn is_e96(value: f64) -> bool {
        let Some(m) = mantissa(value, 3) else {
            return false;
        };
        (0..96).any(|i| (100.0 * 10f64.powf(f64::from(i) / 96.0)).round() as u32 == m)
    }

    #[test]
    fn hobby_drawer_loads() {
        let inv = load(HOBBY);
        let s = inv.summary();
        assert_eq!(inv.lines.len(), 62);
        assert_eq!(s.resistors.lines, 34);
        assert_eq!(s.capacitors.lines, 28);
        let ohms = s.resistors.values.unwrap();
        assert!(close(ohms.min, 10.0) && close(ohms.max, 1e6));
        assert!(all_close(&s.resistors.tolerances, &[0.01, 0.05]));
        assert!(all_close(&s.capacitors.tolerances, &[0.05, 0.1, 0.2]));
        assert!(s.resistors.out_of_stock >= 2 && s.capacitors.out_of_stock >= 1);
        // Every electrolytic is polarized and 20 % (common practice for aluminium electrolytics).
        let electrolytic: Vec<&Line> = inv
            .capacitors()
            .filter(|l| l.dielectric.as_deref() == Some("electrolytic"))
            .collect();
        assert_eq!(s.capacitors.polarized, electrolytic.len());
        assert!(electrolytic
            .iter()
            .all(|l| l.polarized && close(l.tolerance, 0.2)));
        assert_eq!(
            s.capacitors.voltage,
            Some(Range {
                min: 10.0,
                max: 100.0
            })
        );
        // Every capacitor has a voltage rating; every resistor a power rating.
        assert!(inv.capacitors().all(|l| l.voltage.is_some()));
        assert!(inv.resistors().all(|l| l.power.is_some()));
        // The 5 % resistors sit on the E12 grid (IEC 60063; E12 is every other E24 value).
        for l in inv.resistors().filter(|l| close(l.tolerance, 0.05)) {
            let m = mantissa(l.value, 2).unwrap();
            let i = E24.iter().position(|&e| e == m);
            assert!(i.is_some_and(|i| i % 2 == 0), "{} Ω not E12", l.value);
        }
        // The 10 kΩ 5 % in two drawers is the one intentional duplicate.
        let dups: Vec<f64> = s.resistors.duplicates.iter().map(|d| d.value).collect();
        assert!(all_close(&dups, &[10e3]), "{dups:?}");
        assert!(s.capacitors.duplicates.is_empty());
        assert!(inv.lines.iter().any(|l| l.note.is_some()));
        assert!(s.resistors.lines_with_cost > 0 && s.capacitors.lines_with_cost > 0);
    }

    #[test]
    fn lab_stock_loads() {
        let inv = load(LAB);
        let s = inv.summary();
        assert_eq!(inv.lines.len(), 571);
        assert_eq!(s.resistors.lines, 432);
        assert_eq!(s.capacitors.lines, 139);
        let ohms = s.resistors.values.unwrap();
        assert!(close(ohms.min, 10.0) && close(ohms.max, 10e6));
        assert!(all_close(&s.resistors.tolerances, &[0.001, 0.01]));
        assert!(all_close(&s.capacitors.tolerances, &[0.05, 0.1, 0.2]));
        assert!(inv
            .lines
            .iter()
            .all(|l| l.unit_cost.is_some() && l.location.is_some()));
        assert!(inv.lines.iter().all(|l| l.qty <= 500));
        assert!(s.resistors.out_of_stock > 0);
        // 1 % lines are E24 values, 0.1 % lines E96 values (IEC 60063).
        for l in inv.resistors() {
            if close(l.tolerance, 0.01) {
                let m = mantissa(l.value, 2);
                assert!(m.is_some_and(|m| E24.contains(&m)), "{} Ω not E24", l.value);
            } else {
                assert!(is_e96(l.value), "{} Ω not E96", l.value);
            }
            let watts = l.power.unwrap();
            assert!(close(watts, 0.25) || close(watts, 0.125), "{watts} W");
        }
        // The same E24 value at 0.25 W and 0.125 W makes a duplicate; several exist.
        assert!(s.resistors.duplicates.len() > 50);
        assert!(s.resistors.duplicates.iter().all(|d| d.rows.len() == 2));
        let polar: Vec<&Line> = inv.capacitors().filter(|l| l.polarized).collect();
        assert_eq!(polar.len(), s.capacitors.polarized);
        assert!(polar
            .iter()
            .all(|l| close(l.tolerance, 0.2) && l.voltage.is_some()));
        let caps = s.capacitors.values.unwrap();
        assert!(close(caps.min, 10e-12) && close(caps.max, 4700e-6));
        assert!(s.capacitors.stock_value > s.resistors.stock_value / 100.0);
    }

    // ---- never panic ------------------------------------------------------------------------

    use proptest::prelude::*;

    proptest! {
        #[test]
        fn arbitrary_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
            let _ = Inventory::from_reader(&bytes[..]);
        }

        #[test]
        fn arbitrary_strings_never_panic(text in any::<String>()) {
            let _ = Inventory::parse_str(&text);
        }

        /// CSV-shaped noise behind a valid header reaches the cell parsers, not just the header.
        #[test]
        fn csv_shaped_noise_never_panics(
            header in prop::sample::select(vec![
                "kind,value,tolerance,qty\n",
                "kind,value,tolerance,qty,voltage,power,polarized,dielectric,unit_cost,location,note\n",
                "\u{FEFF}QTY,Kind,x,Value,Tolerance\r\n",
            ]),
            body in "([rRcC ,\"#\r\n0-9.kKmMuµnpΩFVW%$€+-]|res|cap|yes|1e9|inf){0,80}",
        ) {
            let _ = Inventory::parse_str(&format!("{header}{body}"));
        }

        /// Whatever mix of comments, blank lines, CRLF and multi-line quoted cells surrounds
        /// them, each line reports the file line it was written on and its data row number.
        #[test]
        fn line_numbers_survive_comments_and_blank_lines(
            pieces in proptest::collection::vec(0u8..5, 0..40),
        ) {
            let mut text = String::from("kind,value,tolerance,qty,note\n");
            let mut file_line = 1;
            let mut expected = Vec::new();
            for piece in pieces {
                file_line += 1;
                match piece {
                    0 => text.push_str("# a comment, with \"quotes\n"),
                    1 => text.push_str("\r\n"),
                    2 => {
                        expected.push(file_line);
                        text.push_str("r,1k,1%,1,\"two\nlines\"\n");
                        file_line += 1;
                    }
                    3 => text.push_str(",,,,\n"),
                    _ => {
                        expected.push(file_line);
                        text.push_str("c,1n,5%,2,\r\n");
                    }
                }
            }
            match Inventory::parse_str(&text) {
                Ok(inv) => {
                    let got: Vec<usize> = inv.lines.iter().map(|l| l.file_line).collect();
                    prop_assert_eq!(&got, &expected);
                    let rows: Vec<usize> = inv.lines.iter().map(|l| l.row).collect();
                    prop_assert_eq!(rows, (1..=expected.len()).collect::<Vec<_>>());
                }
                Err(error) => {
                    prop_assert!(expected.is_empty(), "{}", error);
                    prop_assert_eq!(error, InventoryError::Empty { header_line: 1 });
                }
            }
        }

        /// Reading field by field gives the records `csv::Reader` gives (the same engine), and
        /// each field's recorded raw bytes, read on their own, give that field's text back.
        #[test]
        fn records_are_the_csv_readers_and_their_spans_exact(body in "[ab ,\"\r\n]{0,60}") {
            let bytes = body.as_bytes();
            let mut records = Records::new(bytes, 0);
            let mut record = Record::default();
            let mut ours = Vec::new();
            let mut spans = Vec::new();
            loop {
                match records.next(&mut record) {
                    Ok(true) => {}
                    Ok(false) => break,
                    // An open quote at the end: refused here, swallowed by csv::Reader.
                    Err(_) => return Ok(()),
                }
                let cells: Vec<Vec<u8>> = record.cells().iter().map(|c| c.to_vec()).collect();
                for ((raw, _), text) in record.fields.iter().zip(&cells) {
                    spans.push((raw.clone(), text.clone()));
                }
                ours.push(cells);
            }
            let theirs: Vec<Vec<Vec<u8>>> = csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(bytes)
                .byte_records()
                .map(|r| r.unwrap().iter().map(<[u8]>::to_vec).collect())
                .collect();
            prop_assert_eq!(&ours, &theirs);
            for (raw, text) in spans {
                let alone = &bytes[raw];
                if alone.is_empty() {
                    prop_assert!(text.is_empty());
                    continue;
                }
                let mut reader = csv::ReaderBuilder::new()
                    .has_headers(false)
                    .from_reader(alone);
                let again = reader.byte_records().next().unwrap().unwrap();
                prop_assert_eq!(again.len(), 1);
                prop_assert_eq!(&again[0], &text[..]);
            }
        }

        /// Well-formed rows load back to the numbers written (common practice: integers in ohm
        /// and percent are the plainest spellings a parser must take).
        #[test]
        fn written_rows_load_back(
            rows in proptest::collection::vec((1u32..10_000_000, 0u32..=500, 1u32..=20), 1..20),
        ) {
            let mut text = String::from("kind,value,tolerance,qty\n");
            for (ohms, qty, pct) in &rows {
                text.push_str(&format!("resistor,{ohms},{pct}%,{qty}\n"));
            }
            let inv = Inventory::parse_str(&text).unwrap();
            prop_assert_eq!(inv.lines.len(), rows.len());
            for (line, (ohms, qty, pct)) in inv.lines.iter().zip(&rows) {
                prop_assert!(close(line.value, f64::from(*ohms)));
                prop_assert_eq!(line.qty, *qty);
                prop_assert!(close(line.tolerance, f64::from(*pct) / 100.0));
            }
        }
    }
}
