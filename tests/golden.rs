//! Golden outputs: every example, fixture and inventory run through the binary, each output
//! (terminal table, JSON, netlist, BOM, plot, schematic, HTML, stock summary, series list)
//! compared byte for byte with the file recorded under `tests/golden/`.
//!
//! Why: a refactor must keep every output the same (DEVELOPERS.md, "How to measure"). A change
//! that alters an output on purpose re-records them with `STOCKFIT_BLESS=1 cargo test --test
//! golden` and the diff of `tests/golden/` shows, in review, exactly what changed.

use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn files_in(dir: &str, ext: &str) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(root().join(dir))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == ext))
        .collect();
    v.sort();
    v
}

/// One recorded run: a name, the arguments, and the output files it writes (beside stdout).
struct Case {
    name: String,
    args: Vec<String>,
    files: Vec<&'static str>,
}

fn rel(p: &Path) -> String {
    p.strip_prefix(root())
        .unwrap()
        .to_string_lossy()
        .into_owned()
}

fn cases() -> Vec<Case> {
    let mut out = Vec::new();
    let stem = |p: &Path| p.file_stem().unwrap().to_string_lossy().into_owned();
    let mut specs = files_in("examples", "toml");
    specs.extend(
        files_in("tests/data", "toml")
            .into_iter()
            .filter(|p| stem(p).starts_with("spice-") || stem(p).starts_with("cli-")),
    );
    for spec in &specs {
        let s = rel(spec);
        out.push(Case {
            name: format!("pick-{}", stem(spec)),
            args: vec![
                "pick".into(),
                s.clone(),
                "-q".into(),
                "--yield".into(),
                "300".into(),
            ],
            files: vec![],
        });
        out.push(Case {
            name: format!("files-{}", stem(spec)),
            args: vec![
                "pick".into(),
                s.clone(),
                "-q".into(),
                "--yield".into(),
                "300".into(),
                "--top".into(),
                "3".into(),
                "--json".into(),
                "{dir}/out.json".into(),
                "--spice".into(),
                "{dir}/out.cir".into(),
                "--bom".into(),
                "{dir}/out.csv".into(),
                "--plot".into(),
                "{dir}/out-plot.svg".into(),
                "--schematic".into(),
                "{dir}/out-schematic.svg".into(),
                "--report".into(),
                "{dir}/out.html".into(),
            ],
            files: vec![
                "out.json",
                "out.cir",
                "out.csv",
                "out-plot.svg",
                "out-schematic.svg",
                "out.html",
            ],
        });
    }
    for inv in files_in("inventories", "csv") {
        out.push(Case {
            name: format!("stock-{}", stem(&inv)),
            args: vec!["stock".into(), rel(&inv)],
            files: vec![],
        });
        for spec in [
            "examples/piezo-knock-5v.toml",
            "examples/line-stage-12v.toml",
        ] {
            out.push(Case {
                name: format!("inv-{}-{}", stem(&inv), stem(Path::new(spec))),
                args: vec![
                    "pick".into(),
                    spec.into(),
                    "-q".into(),
                    "--yield".into(),
                    "300".into(),
                    "--stock".into(),
                    rel(&inv),
                    "--json".into(),
                    "-".into(),
                ],
                files: vec![],
            });
        }
    }
    out.push(Case {
        name: "demo".into(),
        args: vec!["demo".into(), "-q".into(), "--yield".into(), "300".into()],
        files: vec![],
    });
    out.push(Case {
        name: "series-e24".into(),
        args: vec![
            "series".into(),
            "E24".into(),
            "--from".into(),
            "1k".into(),
            "--to".into(),
            "10k".into(),
        ],
        files: vec![],
    });
    out.push(Case {
        name: "check-inverting".into(),
        args: [
            "check",
            "tests/data/cli-check-inverting-9v.toml",
            "--set",
            "r_in=10k",
            "--set",
            "r_fb=100k",
            "--set",
            "r_bias_hi=100k",
            "--set",
            "r_bias_lo=100k",
            "--set",
            "c_in=1u",
            "--set",
            "c_out=10u",
            "--yield",
            "300",
        ]
        .map(String::from)
        .to_vec(),
        files: vec![],
    });
    out
}

fn sanitise(text: &str, dir: &Path) -> String {
    text.replace(&dir.to_string_lossy().into_owned(), "{dir}")
}

#[test]
fn outputs_match_the_recorded_ones() {
    let bless = std::env::var_os("STOCKFIT_BLESS").is_some();
    let golden = root().join("tests/golden");
    std::fs::create_dir_all(&golden).unwrap();
    let mut failures = Vec::new();
    for case in cases() {
        let dir = tempfile::tempdir().unwrap();
        let args: Vec<String> = case
            .args
            .iter()
            .map(|a| a.replace("{dir}", &dir.path().to_string_lossy()))
            .collect();
        let out = Command::new(env!("CARGO_BIN_EXE_stockfit"))
            .args(&args)
            .current_dir(root())
            .env("NO_COLOR", "1")
            .env_remove("STOCKFIT_STATS")
            .output()
            .unwrap();
        let mut got = vec![(
            format!("{}.stdout", case.name),
            format!(
                "exit {}\n{}\n--- stderr\n{}",
                out.status.code().unwrap_or(-1),
                sanitise(&String::from_utf8_lossy(&out.stdout), dir.path()),
                sanitise(&String::from_utf8_lossy(&out.stderr), dir.path())
            ),
        )];
        for f in &case.files {
            let text = std::fs::read_to_string(dir.path().join(f)).unwrap_or_default();
            got.push((format!("{}.{f}", case.name), sanitise(&text, dir.path())));
        }
        for (name, text) in got {
            let path = golden.join(&name);
            if bless {
                std::fs::write(&path, &text).unwrap();
                continue;
            }
            match std::fs::read_to_string(&path) {
                Ok(want) if want == text => {}
                Ok(want) => {
                    let line = want
                        .lines()
                        .zip(text.lines())
                        .position(|(a, b)| a != b)
                        .map_or(want.lines().count().min(text.lines().count()), |i| i);
                    failures.push(format!(
                        "{name}: differs from line {}:\n  want: {}\n  got:  {}",
                        line + 1,
                        want.lines().nth(line).unwrap_or("<end>"),
                        text.lines().nth(line).unwrap_or("<end>")
                    ));
                }
                Err(_) => failures.push(format!("{name}: no recorded output (STOCKFIT_BLESS=1)")),
            }
        }
    }
    assert!(
        failures.is_empty(),
        "{} outputs differ from tests/golden (re-record with STOCKFIT_BLESS=1 if intended):\n{}",
        failures.len(),
        failures.join("\n")
    );
}
