//! The files a run writes: one list of the outputs asked for (`--json`, `--spice`, `--plot`,
//! `--schematic`, `--bom`, `--report`), used both to write them and to say, when no build
//! meets the spec, which were not written.

use super::args::Output;
use super::failure::Failure;
use anyhow::Context;
use std::io::Write;
use std::path::PathBuf;
use stockfit::circuit::Circuit;
use stockfit::report::{bom, html, json, plot, schematic, spice};
use stockfit::search::diagnose::Diagnosis;
use stockfit::search::Ranked;
use stockfit::spec::Spec;
use stockfit::stock::Stock;

/// One kind of output file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Json,
    Spice,
    Plot,
    Schematic,
    Bom,
    Report,
}

impl Kind {
    /// What the file is, for messages.
    fn noun(self) -> &'static str {
        match self {
            Kind::Json => "JSON file",
            Kind::Spice => "SPICE netlist",
            Kind::Plot => "plot",
            Kind::Schematic => "schematic",
            Kind::Bom => "BOM",
            Kind::Report => "HTML report",
        }
    }
}

/// Where one output goes: a file, or standard output (`--json -`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Target {
    File(PathBuf),
    Stdout,
}

/// The outputs a run asks for, in the order they are written.
pub fn requested(output: &Output) -> Vec<(Kind, Target)> {
    let mut out = Vec::new();
    if let Some(j) = output.json.as_deref() {
        let t = if j == "-" {
            Target::Stdout
        } else {
            Target::File(PathBuf::from(j))
        };
        out.push((Kind::Json, t));
    }
    for (kind, path) in [
        (Kind::Spice, &output.spice),
        (Kind::Plot, &output.plot),
        (Kind::Schematic, &output.schematic),
        (Kind::Bom, &output.bom),
        (Kind::Report, &output.report),
    ] {
        if let Some(p) = path {
            out.push((kind, Target::File(p.clone())));
        }
    }
    out
}

/// True when the JSON goes to standard output (then nothing else is printed there).
pub fn json_to_stdout(output: &Output) -> bool {
    output.json.as_deref() == Some("-")
}

fn write(target: &Target, kind: Kind, text: &str) -> Result<(), Failure> {
    match target {
        Target::Stdout => {
            let mut out = std::io::stdout().lock();
            // A closed pipe (`… | head`) is not an error worth reporting.
            let _ = writeln!(out, "{text}");
            Ok(())
        }
        Target::File(path) => {
            let bytes = if kind == Kind::Json {
                format!("{text}\n")
            } else {
                text.to_string()
            };
            std::fs::write(path, bytes)
                .with_context(|| format!("cannot write the {} {}", kind.noun(), path.display()))
                .map_err(Failure::input)
        }
    }
}

/// What a run with builds writes: the builds' JSON, and the netlist, plot, schematic, BOM
/// and HTML report of the first build.
pub struct Builds<'a> {
    pub spec: &'a Spec,
    pub circuit: &'a dyn Circuit,
    pub ranked: &'a [Ranked],
    pub stock: &'a Stock,
    pub stock_text: &'a str,
    /// The search ran to its exact end.
    pub proven: bool,
}

/// Write every requested output of a run with builds.
pub fn write_builds(output: &Output, b: &Builds) -> Result<(), Failure> {
    let Some(best) = b.ranked.first() else {
        return Ok(());
    };
    for (kind, target) in requested(output) {
        let text = match kind {
            Kind::Json => json::builds(b.spec, b.circuit, b.ranked, b.proven),
            Kind::Spice => spice::netlist(b.spec, b.circuit, &best.build),
            Kind::Plot => plot::svg(b.spec, b.circuit, &best.build, &best.evaluation)?,
            Kind::Schematic => schematic::svg(b.spec, b.circuit, &best.build, &best.evaluation),
            Kind::Bom => bom::csv(b.circuit, &best.build, Some(b.stock))?,
            Kind::Report => html::report(b.spec, b.circuit, b.ranked, Some(b.stock), b.stock_text)?,
        };
        write(&target, kind, &text)?;
    }
    Ok(())
}

/// Write what a run without a build can: the diagnosis as JSON; a note for every other file.
pub fn write_diagnosis(
    output: &Output,
    spec: &Spec,
    circuit: &dyn Circuit,
    d: &Diagnosis,
) -> Result<(), Failure> {
    for (kind, target) in requested(output) {
        match (kind, &target) {
            (Kind::Json, _) => write(&target, kind, &json::diagnosis(spec, circuit, d))?,
            (Kind::Spice, Target::File(p)) => eprintln!(
                "note: no build meets the spec, so no netlist was written to {}",
                p.display()
            ),
            (_, Target::File(p)) => eprintln!(
                "note: no build meets the spec, so nothing was written to {}",
                p.display()
            ),
            (_, Target::Stdout) => {}
        }
    }
    Ok(())
}
