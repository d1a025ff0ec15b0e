//! The files a run writes: one list of the outputs asked for (`--json`, `--spice`, `--plot`,
//! `--schematic`, `--bom`, `--report`), used to check them before the search ([`check`]: no
//! output is an input of the run or another output, every folder exists), to write them
//! (each whole, `write::output`, after all are drawn) and to say, when no build meets the
//! spec, which were not written.

use super::args::Output;
use super::console::{self, say_raw};
use super::failure::Failure;
use super::files::{self, FileId};
use super::write;
use anyhow::{anyhow, Context};
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

    /// The flag that names it.
    fn flag(self) -> &'static str {
        match self {
            Kind::Json => "--json",
            Kind::Spice => "--spice",
            Kind::Plot => "--plot",
            Kind::Schematic => "--schematic",
            Kind::Bom => "--bom",
            Kind::Report => "--report",
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

/// Checks the outputs before anything is written (and before the search, so a typo costs
/// nothing): each file output's folder exists, and no output is a file the run has read (the
/// spec, an inventory: `files::inputs`) or another output — compared by resolved path and,
/// for existing files, by device and inode, so a symbolic or hard link to an input counts as
/// the input. A clash is bad input (exit 2) naming both.
pub fn check(output: &Output) -> Result<(), Failure> {
    let inputs = files::inputs();
    let mut outputs: Vec<(Kind, FileId)> = Vec::new();
    for (kind, target) in requested(output) {
        let Target::File(path) = target else { continue };
        if let Ok(meta) = std::fs::metadata(&path) {
            let read_only = meta.is_file()
                && (meta.permissions().readonly()
                    || std::fs::OpenOptions::new().write(true).open(&path).is_err());
            let what = if meta.is_dir() {
                "a folder"
            } else if read_only {
                "a read-only file"
            } else {
                ""
            };
            if !what.is_empty() {
                return Err(Failure::input(anyhow!(
                    "{} {}: that is {what}; nothing was written: name another file for the {}",
                    kind.flag(),
                    console::shown(&path),
                    kind.noun()
                )));
            }
        }
        let id = files::identify(&path, kind.noun()).map_err(|e| {
            Failure::input(anyhow!(
                "{} {}: cannot write the {} there: {e}; nothing was written",
                kind.flag(),
                console::shown(&path),
                kind.noun()
            ))
        })?;
        if let Some(input) = inputs.iter().find(|i| i.same(&id)) {
            return Err(Failure::input(anyhow!(
                "{} {}: that is the {} {} this run reads{}; nothing was written: name another \
                 file for the {}",
                kind.flag(),
                console::shown(&path),
                input.what,
                console::shown(&input.given),
                through_link(&id, input),
                kind.noun()
            )));
        }
        if let Some((other, first)) = outputs.iter().find(|(_, o)| o.same(&id)) {
            return Err(Failure::input(anyhow!(
                "{} {} and {} {} are the same file{}; nothing was written: give each output a \
                 file of its own",
                other.flag(),
                console::shown(&first.given),
                kind.flag(),
                console::shown(&path),
                through_link(&id, first)
            )));
        }
        outputs.push((kind, id));
    }
    Ok(())
}

/// " (through a link)" when two names of one file differ after resolving.
fn through_link(a: &FileId, b: &FileId) -> &'static str {
    if a.resolved == b.resolved {
        ""
    } else {
        " (the same file through a link)"
    }
}

fn write(target: &Target, kind: Kind, text: &str) -> Result<(), Failure> {
    match target {
        Target::Stdout => {
            // Through the console: a failed write is exit 2 at the end of the run, a closed
            // pipe is quiet.
            say_raw!("{text}\n");
            Ok(())
        }
        Target::File(path) => {
            let bytes = if kind == Kind::Json {
                format!("{text}\n")
            } else {
                text.to_string()
            };
            write::output(path, bytes.as_bytes())
                .with_context(|| {
                    format!("cannot write the {} {}", kind.noun(), console::shown(path))
                })
                .map_err(Failure::input)
        }
    }
}

/// What a run with builds writes: the builds' JSON, and the netlist, plot, schematic, BOM
/// and HTML report of the chosen build (the first unless `pick --build N`).
pub struct Builds<'a> {
    pub spec: &'a Spec,
    pub circuit: &'a dyn Circuit,
    pub ranked: &'a [Ranked],
    pub stock: &'a Stock,
    pub stock_text: &'a str,
    /// The search ran to its exact end.
    pub proven: bool,
    /// The ranked build (0-based) the netlist, plot, schematic, BOM and report detail are of
    /// (`pick --build N`).
    pub chosen: usize,
}

/// Write every requested output of a run with builds.
pub fn write_builds(output: &Output, b: &Builds) -> Result<(), Failure> {
    let Some(best) = b.ranked.get(b.chosen) else {
        return Ok(());
    };
    // Every output is drawn before the first is written, so that one that cannot be drawn
    // leaves none written.
    let mut texts = Vec::new();
    for (kind, target) in requested(output) {
        let text = match kind {
            Kind::Json => json::builds(b.spec, b.circuit, b.ranked, b.proven),
            Kind::Spice => spice::netlist(b.spec, b.circuit, &best.build),
            Kind::Plot => plot::svg(b.spec, b.circuit, &best.build, &best.evaluation)?,
            Kind::Schematic => schematic::svg(b.spec, b.circuit, &best.build, &best.evaluation),
            Kind::Bom => bom::csv(b.circuit, &best.build, Some(b.stock))?,
            Kind::Report => html::report_for(
                b.spec,
                b.circuit,
                b.ranked,
                b.chosen,
                Some(b.stock),
                b.stock_text,
            )?,
        };
        texts.push((kind, target, text));
    }
    for (kind, target, text) in &texts {
        write(target, *kind, text)?;
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
            (Kind::Spice, Target::File(p)) => console::eprint(format_args!(
                "note: no build meets the spec, so no netlist was written to {}",
                p.display()
            )),
            (_, Target::File(p)) => console::eprint(format_args!(
                "note: no build meets the spec, so nothing was written to {}",
                p.display()
            )),
            (_, Target::Stdout) => {}
        }
    }
    Ok(())
}
