//! Hostile text in a user's files, through the binary: the BOM must hold no cell a spreadsheet
//! would run as a formula, however the file is split, and nothing from a file may reach the
//! terminal as a control sequence.
//!
//! Sources: OWASP, "CSV Injection" (formula characters `=` `+` `-` `@`, tab and carriage
//! return at the start of a cell; a field separator inside a cell starts a new cell for a
//! reader that splits on it; quote every cell); RFC 4180 (the CSV format the BOM keeps);
//! ECMA-48 (ESC, CSI, OSC and the C1 controls a terminal obeys).

use assert_cmd::Command;
use std::path::{Path, PathBuf};

const SPEC: &str = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
    band = [\"20 Hz\", \"20 kHz\"]\n";

/// Notes a spreadsheet would run, each a way around a guard that only looks at the first
/// character or only quotes cells with a comma (OWASP, "CSV Injection", and the campaign of
/// issue 14).
const FORMULAS: &[&str] = &[
    "ok;=cmd|' /C calc'!A0;",
    "\0=1+1",
    "=HYPERLINK(\"http://x.invalid\",\"y\")",
    "a,=1+1",
    "a;-1+1",
    "x\t=1",
    "x\r=1",
    "x\n@SUM(A1)",
    "x; =1",
    "x;\"=1+1\"",
    "x,\"\"+1",
    "+1",
    "-1",
    "@x",
    "\u{1b}[31m;=1",
];

/// Terminal controls: colours and clear-screen (CSI), a window title and an OSC-8 link (OSC),
/// backspaces over text, a C1 CSI (U+009B), a bare BEL and a right-to-left override.
const CONTROLS: &[&str] = &[
    "\u{1b}[2J\u{1b}[31mA1\u{1b}[0m",
    "C0G\u{1b}]0;owned\u{7}",
    "\u{1b}]8;;http://evil.invalid/\u{1b}\\click\u{1b}]8;;\u{1b}\\",
    "safe\u{8}\u{8}\u{8}\u{8}evil",
    "\u{9b}31mred",
    "bell\u{7}",
    "\u{202e}txt.exe",
];

/// A CSV cell holding `text` as it is (RFC 4180 quoting).
fn quoted(text: &str) -> String {
    format!("\"{}\"", text.replace('"', "\"\""))
}

/// An inventory whose every text cell is `text`, with the three lines the spec's best build
/// takes (10 kΩ, 100 kΩ, 10 µF), so that `text` is in every BOM row.
fn inventory(text: &str) -> String {
    let t = quoted(text);
    format!(
        "kind,value,tolerance,qty,dielectric,location,note\n\
         r,10k,1%,10,{t},{t},{t}\n\
         r,100k,1%,10,{t},{t},{t}\n\
         c,10u,20%,10,{t},{t},{t}\n"
    )
}

struct Out {
    code: Option<i32>,
    stdout: Vec<u8>,
    stderr: Vec<u8>,
}

fn stockfit(dir: &Path, args: &[&std::ffi::OsStr]) -> Out {
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .args(args)
        .output()
        .unwrap();
    let r = Out {
        code: out.status.code(),
        stdout: out.stdout,
        stderr: out.stderr,
    };
    assert!(
        !String::from_utf8_lossy(&r.stderr).contains("panicked"),
        "{}",
        String::from_utf8_lossy(&r.stderr)
    );
    r
}

/// The first control character in `bytes` other than a line feed (ECMA-48 C0, DEL and C1),
/// or a bidirectional override (Unicode TR 9), with its offset.
fn first_control(bytes: &[u8], allow_cr: bool) -> Option<(usize, char)> {
    let text = String::from_utf8_lossy(bytes);
    text.char_indices().find(|&(_, c)| {
        let control = c.is_control() && c != '\n' && !(allow_cr && c == '\r');
        let bidi = matches!(c, '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}');
        control || bidi
    })
}

fn assert_clean(what: &str, bytes: &[u8]) {
    if let Some((at, c)) = first_control(bytes, false) {
        let text = String::from_utf8_lossy(bytes);
        let from = text[..at]
            .char_indices()
            .rev()
            .nth(60)
            .map_or(0, |(i, _)| i);
        panic!(
            "{what}: {c:?} at byte {at}: …{:?}…",
            &text[from..(at + 20).min(text.len())]
        );
    }
}

/// Every cell of `bom` as a reader splitting on `delimiter` sees it, with RFC 4180 quoting or
/// without any (a naive split of each line).
fn cells(bom: &[u8], delimiter: u8, quoting: bool) -> Vec<String> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .quoting(quoting)
        .from_reader(bom);
    r.byte_records()
        .flat_map(|rec| {
            rec.unwrap()
                .iter()
                .map(|c| String::from_utf8_lossy(c).into_owned())
                .collect::<Vec<_>>()
        })
        .collect()
}

/// A cell a spreadsheet would evaluate: after the spaces and quote marks a reader may drop,
/// it starts with a formula character, a tab or a carriage return (OWASP).
fn starts_a_formula(cell: &str) -> bool {
    let rest = cell.trim_start_matches([' ', '"']);
    rest.starts_with(['=', '+', '-', '@', '\t', '\r'])
}

fn pick_bom(dir: &Path, text: &str) -> (Vec<u8>, Out) {
    let spec = dir.join("amp.toml");
    std::fs::write(&spec, SPEC).unwrap();
    let stock = dir.join("stock.csv");
    std::fs::write(&stock, inventory(text)).unwrap();
    let bom = dir.join("bom.csv");
    let _ = std::fs::remove_file(&bom);
    let out = stockfit(
        dir,
        &[
            "pick".as_ref(),
            spec.as_os_str(),
            "--stock".as_ref(),
            stock.as_os_str(),
            "--bom".as_ref(),
            bom.as_os_str(),
            "-q".as_ref(),
            "--yield".as_ref(),
            "0".as_ref(),
        ],
    );
    assert_eq!(
        out.code,
        Some(0),
        "{text:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    (std::fs::read(&bom).unwrap(), out)
}

/// The BOM of hostile notes, locations and dielectrics, split on `,` and on `;`, quoted and
/// naively, has no cell that starts a formula, no control character but the CRLF line ends,
/// and still reads back as RFC 4180 with one record per BOM row, each of the header's width.
#[test]
fn a_bom_from_hostile_notes_holds_no_formula_however_it_is_split() {
    let dir = tempfile::tempdir().unwrap();
    for text in FORMULAS.iter().chain(CONTROLS) {
        let (bom, _) = pick_bom(dir.path(), text);
        if let Some((at, c)) = first_control(&bom, true) {
            panic!("{text:?}: control {c:?} at byte {at} of the BOM");
        }
        assert!(
            bom.windows(2).all(|w| w[1] != b'\n' || w[0] == b'\r'),
            "{text:?}: a bare line feed in the BOM"
        );
        for (delimiter, quoting) in [(b',', true), (b';', true), (b',', false), (b';', false)] {
            for cell in cells(&bom, delimiter, quoting) {
                assert!(
                    !starts_a_formula(&cell),
                    "{text:?}: split on {:?} (quoting {quoting}) gives the cell {cell:?}\n{}",
                    delimiter as char,
                    String::from_utf8_lossy(&bom)
                );
            }
        }
        // RFC 4180: header, three lines, total; every record of the header's width.
        let mut r = csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(&bom[..]);
        let records: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
        assert_eq!(records.len(), 5, "{text:?}");
        assert!(records.iter().all(|r| r.len() == records[0].len()));
    }
}

/// Text cells are quoted (OWASP: "ensure that each cell field is enclosed in double quotes"),
/// so a reader that honours quotes never splits one.
#[test]
fn every_text_cell_of_the_bom_is_quoted() {
    let dir = tempfile::tempdir().unwrap();
    let (bom, _) = pick_bom(dir.path(), "drawer A; shelf 2");
    let text = String::from_utf8(bom).unwrap();
    let header = text.lines().next().unwrap();
    assert!(header.starts_with("\"item\",\"designators\","), "{header}");
    let first = text.lines().nth(1).unwrap();
    assert!(first.contains("\"drawer A; shelf 2\""), "{first}");
    assert!(first.contains(",\"resistor\","), "{first}");
}

/// A file name with control characters, as the inventory's name.
fn hostile_name(dir: &Path) -> PathBuf {
    dir.join("stock\u{1b}[2J\u{1b}]0;x\u{7}.csv")
}

/// Notes, locations, dielectrics and file names with terminal controls reach neither stdout
/// nor stderr raw, in any subcommand that reads them — successful runs and refusals alike.
#[test]
fn terminal_output_holds_no_control_from_file_contents() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let spec = d.join("amp.toml");
    std::fs::write(&spec, SPEC).unwrap();
    let stock = hostile_name(d);
    let bom = d.join("bom.csv");
    let html = d.join("report.html");
    for text in CONTROLS {
        std::fs::write(&stock, inventory(text)).unwrap();
        let runs: Vec<Vec<&std::ffi::OsStr>> = vec![
            vec!["stock".as_ref(), stock.as_os_str()],
            vec![
                "pick".as_ref(),
                spec.as_os_str(),
                "--stock".as_ref(),
                stock.as_os_str(),
                "--yield".as_ref(),
                "0".as_ref(),
                "--bom".as_ref(),
                bom.as_os_str(),
                "--report".as_ref(),
                html.as_os_str(),
            ],
            vec![
                "check".as_ref(),
                spec.as_os_str(),
                "--stock".as_ref(),
                stock.as_os_str(),
                "--yield".as_ref(),
                "0".as_ref(),
                "--set".as_ref(),
                "r_in=10k".as_ref(),
                "--set".as_ref(),
                "r_fb=100k".as_ref(),
                "--set".as_ref(),
                "r_bias_hi=10k".as_ref(),
                "--set".as_ref(),
                "r_bias_lo=10k".as_ref(),
                "--set".as_ref(),
                "c_in=10u".as_ref(),
                "--set".as_ref(),
                "c_out=10u".as_ref(),
            ],
            vec![
                "take".as_ref(),
                spec.as_os_str(),
                "--stock".as_ref(),
                stock.as_os_str(),
            ],
        ];
        for args in runs {
            let out = stockfit(d, &args);
            let what = format!("{text:?} {:?}", args[0]);
            assert!(
                matches!(out.code, Some(0 | 1)),
                "{what}: {}",
                String::from_utf8_lossy(&out.stderr)
            );
            assert_clean(&format!("{what} stdout"), &out.stdout);
            assert_clean(&format!("{what} stderr"), &out.stderr);
        }
        // The HTML page shows the text, its controls escaped (HTML: control characters
        // other than whitespace are parse errors; XML 1.0 does not allow them at all).
        let page = std::fs::read(&html).unwrap();
        if let Some((at, c)) = first_control(&page, false) {
            panic!("{text:?}: control {c:?} at byte {at} of the HTML report");
        }
    }
    // Refusals name the file and quote the bad cell: escaped too.
    let bad = format!(
        "kind,value,tolerance,qty,note\nr,10k,1%,\u{1b}[31mten\u{8},{}\n",
        quoted(CONTROLS[2])
    );
    std::fs::write(&stock, bad).unwrap();
    let missing = d.join("gone\u{1b}[2J.csv");
    let key_spec = d.join("key\u{1b}[1m.toml");
    std::fs::write(&key_spec, format!("{SPEC}\"\\u001b]0;t\\u0007\" = 1\n")).unwrap();
    for args in [
        vec!["stock".as_ref(), stock.as_os_str()],
        vec!["stock".as_ref(), missing.as_os_str()],
        vec![
            "pick".as_ref(),
            spec.as_os_str(),
            "--stock".as_ref(),
            stock.as_os_str(),
        ],
        vec!["pick".as_ref(), key_spec.as_os_str()],
        vec!["pick".as_ref(), missing.as_os_str()],
    ] {
        let out = stockfit(d, &args);
        assert_eq!(out.code, Some(2), "{args:?}");
        assert!(!out.stderr.is_empty(), "{args:?}: a message");
        assert_clean(&format!("{args:?} stdout"), &out.stdout);
        assert_clean(&format!("{args:?} stderr"), &out.stderr);
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("\\x1b"), "{args:?}: shown escaped: {err}");
    }
}
