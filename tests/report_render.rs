//! The visual reports through the binary: `--plot`, `--schematic`, `--bom` and `--report` on
//! every example in `examples/` (found by listing the folder), and the HTML report rendered by
//! headless Chromium to a PNG that must be the window's size and not blank.
//!
//! The rendering test needs Chromium, so it is `#[ignore]`d: a plain `cargo test` lists it as
//! ignored (with the reason) rather than passing without having rendered anything. CI runs it
//! with `cargo test -- --include-ignored` (`.ci/run` installs the Debian package `chromium`),
//! and there a missing Chromium is a failure that says so.

use assert_cmd::Command;
use std::path::{Path, PathBuf};
use std::process::{Command as Process, Stdio};
use std::time::{Duration, Instant};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn examples() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(root().join("examples"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    v.sort();
    assert!(!v.is_empty());
    v
}

/// Run `pick` on `spec` with all four files into `dir`; returns their paths.
fn pick_with_reports(spec: &Path, dir: &Path) -> [PathBuf; 4] {
    let name = spec.file_stem().unwrap().to_string_lossy().to_string();
    let files = [
        dir.join(format!("{name}-plot.svg")),
        dir.join(format!("{name}-schematic.svg")),
        dir.join(format!("{name}-bom.csv")),
        dir.join(format!("{name}.html")),
    ];
    Command::cargo_bin("stockfit")
        .unwrap()
        .current_dir(root())
        .arg("pick")
        .arg(spec)
        .arg("--quiet")
        .arg("--plot")
        .arg(&files[0])
        .arg("--schematic")
        .arg(&files[1])
        .arg("--bom")
        .arg(&files[2])
        .arg("--report")
        .arg(&files[3])
        .assert()
        .success();
    files
}

fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

#[test]
fn every_example_writes_plot_schematic_bom_and_report() {
    let dir = tempfile::tempdir().unwrap();
    for spec in examples() {
        let [plot, schematic, bom, report] = pick_with_reports(&spec, dir.path());
        let what = spec.display();

        let svg = read(&plot);
        assert!(
            svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"),
            "{what}"
        );
        assert!(svg.len() > 20_000, "{what}: plot only {} bytes", svg.len());
        assert!(svg.contains("−3 dB at"), "{what}: no corner marker");
        assert!(svg.contains("band "), "{what}: no band");

        let svg = read(&schematic);
        assert!(
            svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"),
            "{what}"
        );
        // Every slot's designator (single pieces: R1…, C1… in slot order) and the op-amp.
        let parsed = stockfit::spec::Spec::from_toml(&read(&spec)).unwrap();
        let slots = stockfit::circuit::circuit_for(parsed.stage).slots();
        let count = |k| slots.iter().filter(|s| s.kind == k).count();
        let mut names: Vec<String> = (1..=count(stockfit::vocab::PartKind::Resistor))
            .map(|i| format!("R{i}"))
            .chain((1..=count(stockfit::vocab::PartKind::Capacitor)).map(|i| format!("C{i}")))
            .collect();
        names.push("U1".into());
        for d in &names {
            assert!(
                svg.contains(&format!(">{d}</tspan>")) || svg.contains(&format!(">{d}</text>")),
                "{what}: {d}"
            );
        }

        let csv = read(&bom);
        let mut r = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(csv.as_bytes());
        let rows: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
        assert!(rows.len() >= 3, "{what}: {csv}");
        let total = rows.last().unwrap();
        assert_eq!(&total[0], "total", "{what}");
        let pieces: usize = rows[..rows.len() - 1]
            .iter()
            .map(|r| r[7].parse::<usize>().unwrap())
            .sum();
        assert_eq!(total[7].parse::<usize>().unwrap(), pieces, "{what}");

        let html = read(&report);
        assert!(html.starts_with("<!DOCTYPE html>"), "{what}");
        assert!(html.trim_end().ends_with("</html>"), "{what}");
        assert!(
            html.len() > 50_000,
            "{what}: report only {} bytes",
            html.len()
        );
        assert_eq!(html.matches("<svg").count(), 2, "{what}");
        for scheme in ["http://", "https://"] {
            assert!(
                !html.contains(scheme),
                "{what}: the report refers to {scheme}"
            );
        }
    }
}

#[test]
fn check_writes_the_reports_of_the_given_build() {
    let dir = tempfile::tempdir().unwrap();
    let (bom, report) = (dir.path().join("b.csv"), dir.path().join("r.html"));
    let out = Command::cargo_bin("stockfit")
        .unwrap()
        .current_dir(root())
        .args([
            "check",
            "examples/piezo-knock-5v.toml",
            "--set",
            "r_in=100k",
            "--set",
            "r_fb=470k",
            "--set",
            "r_bias_hi=470k",
            "--set",
            "r_bias_lo=470k",
            "--set",
            "c_in=220n",
            "--set",
            "c_out=220n",
            "--bom",
        ])
        .arg(&bom)
        .arg("--report")
        .arg(&report)
        .output()
        .unwrap();
    assert!(out.status.code().is_some_and(|c| c <= 1), "{out:?}");
    let csv = read(&bom);
    assert!(csv.contains("R2, R3, R4"), "{csv}");
    assert!(read(&report).contains("<h2>Build</h2>"));
}

/// The browser, when installed: `chromium` (Debian) or `chromium-browser`.
fn chromium() -> Option<&'static str> {
    ["chromium", "chromium-browser"].into_iter().find(|c| {
        Process::new(c)
            .arg("--version")
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .status()
            .is_ok_and(|s| s.success())
    })
}

/// Run a command, killing it after `limit`.
fn run_with_limit(cmd: &mut Process, limit: Duration) -> bool {
    let mut child = cmd
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let started = Instant::now();
    loop {
        if let Some(status) = child.try_wait().unwrap() {
            return status.success();
        }
        if started.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return false;
        }
        std::thread::sleep(Duration::from_millis(100));
    }
}

const WIDTH: u32 = 1200;
const HEIGHT: u32 = 2000;

#[test]
#[ignore = "needs chromium; run with `cargo test -- --include-ignored`"]
fn report_renders_in_headless_chromium() {
    let Some(browser) = chromium() else {
        panic!(
            "Chromium is not installed (neither `chromium` nor `chromium-browser` runs): install \
             it (Debian: `apt-get install chromium`; `.ci/run` does) to run the report rendering \
             test, or leave out `--include-ignored`"
        );
    };
    let dir = tempfile::tempdir().unwrap();
    for spec in examples() {
        let [.., report] = pick_with_reports(&spec, dir.path());
        let png = report.with_extension("png");
        let profile = tempfile::tempdir().unwrap();
        let url = format!("file://{}", report.display());
        // Flags: no sandbox (CI runs as root), no GPU, nothing fetched in the background, a
        // fresh profile per run (Chromium's own `--help`, from memory).
        let ok = run_with_limit(
            Process::new(browser)
                .arg("--headless")
                .arg("--no-sandbox")
                .arg("--disable-gpu")
                .arg("--disable-background-networking")
                .arg("--disable-component-update")
                .arg("--disable-sync")
                .arg("--no-first-run")
                .arg(format!("--user-data-dir={}", profile.path().display()))
                .arg(format!("--screenshot={}", png.display()))
                .arg(format!("--window-size={WIDTH},{HEIGHT}"))
                .arg(url),
            Duration::from_secs(120),
        );
        assert!(ok, "{browser} failed on {}", report.display());
        let decoder = png::Decoder::new(std::fs::File::open(&png).unwrap());
        let mut reader = decoder.read_info().unwrap();
        let mut buf = vec![0; reader.output_buffer_size()];
        let info = reader.next_frame(&mut buf).unwrap();
        assert_eq!(
            (info.width, info.height),
            (WIDTH, HEIGHT),
            "{}",
            spec.display()
        );
        let channels = info.color_type.samples();
        let data = &buf[..info.buffer_size()];
        // Non-white pixels: the page's text, tables and the plot. A blank or failed render is
        // all white (or all one colour); a rendered report inks a few percent of the window.
        let inked = data
            .chunks(channels)
            .filter(|px| px.iter().take(3).any(|&v| v < 200))
            .count();
        let share = inked as f64 / (WIDTH * HEIGHT) as f64;
        assert!(
            share > 0.02,
            "{}: only {:.2} % inked",
            spec.display(),
            share * 100.0
        );
        assert!(
            share < 0.6,
            "{}: {:.0} % inked",
            spec.display(),
            share * 100.0
        );
    }
}
