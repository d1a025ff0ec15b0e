//! What each subcommand does: read files, build the request, call the library, print.

use super::args::{Arguments, Command, Output};
use super::{Failure, EXIT_NO_BUILD, EXIT_OK};
use anyhow::{anyhow, Context};
use indicatif::{ProgressBar, ProgressStyle};
use std::collections::HashMap;
use std::io::IsTerminal;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};
use stockfit::build::Part;
use stockfit::circuit::{self, Circuit};
use stockfit::report::{bom, html, json, plot, schematic, spice, table};
use stockfit::search::{self, diagnose, Progress, Ranked, Request};
use stockfit::series::Series;
use stockfit::spec::{self, SourceSpec, Spec};
use stockfit::stock::inventory::Inventory;
use stockfit::stock::{Source, Stock};
use stockfit::value::{self, Unit};
use stockfit::vocab::PartKind;

/// Print to stdout; a closed pipe (`stockfit … | head`) is not an error worth a panic.
macro_rules! say {
    () => { let _ = writeln!(std::io::stdout().lock()); };
    ($($t:tt)*) => { let _ = writeln!(std::io::stdout().lock(), $($t)*); };
}
macro_rules! say_raw {
    ($($t:tt)*) => { let _ = write!(std::io::stdout().lock(), $($t)*); };
}

/// The built-in example for `stockfit demo`.
pub const DEMO_SPEC: &str = include_str!("../../examples/hydrophone-preamp-9v.toml");

pub fn run(args: Arguments) -> Result<i32, Failure> {
    match args.command {
        Command::Pick {
            spec,
            stock,
            lock,
            top,
            output,
        } => {
            let (parsed, base) = load_spec(&spec)?;
            pick(&parsed, &base, stock.as_deref(), &lock, top, &output)
        }
        Command::Demo { top, output } => {
            let parsed = Spec::from_toml(DEMO_SPEC).context("the built-in demo spec")?;
            if output.json.as_deref() != Some("-") {
                say!("Demo: examples/hydrophone-preamp-9v.toml (a 9 V piezo hydrophone preamp)\n");
            }
            pick(&parsed, Path::new("."), None, &[], top, &output)
        }
        Command::Check {
            spec,
            set,
            stock,
            output,
        } => {
            let (parsed, base) = load_spec(&spec)?;
            check(&parsed, &base, stock.as_deref(), &set, &output)
        }
        Command::Series { name, from, to } => series(&name, &from, &to),
        Command::Stock { file } => stock_summary(&file),
        Command::Take(args) => super::take::take(&args),
    }
}

/// `--engine`: `walk` or `milp`.
pub(super) fn parse_engine(name: &str) -> Result<search::Engine, Failure> {
    search::Engine::parse(name).ok_or_else(|| {
        Failure::input(anyhow!(
            "--engine {name}: expected `walk` (the default) or `milp`"
        ))
    })
}

pub(super) fn load_spec(path: &Path) -> Result<(Spec, PathBuf), Failure> {
    let bytes = super::take::read_bounded(path, spec::MAX_SPEC_BYTES, "spec")?;
    let spec = Spec::from_bytes(&bytes).with_context(|| format!("in {}", path.display()))?;
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    Ok((spec, base))
}

fn load_inventory(path: &Path) -> Result<Inventory, Failure> {
    super::take::load_inventory(path)
}

/// The stock a run draws from, and a short description of it.
fn resolve_stock(spec: &Spec, base: &Path, over: Option<&str>) -> Result<(Stock, String), Failure> {
    let mut cache: HashMap<PathBuf, Arc<Inventory>> = HashMap::new();
    let mut source =
        |s: &SourceSpec, kind: PartKind, relative_to: &Path| -> Result<Source, Failure> {
            Ok(match s {
                SourceSpec::Series(series) => Source::Series {
                    series: *series,
                    tolerance: match kind {
                        PartKind::Resistor => spec.stock.resistor_tolerance,
                        PartKind::Capacitor => spec.stock.capacitor_tolerance,
                    },
                },
                SourceSpec::File(p) => {
                    let path = relative_to.join(p);
                    let inv = match cache.get(&path) {
                        Some(inv) => inv.clone(),
                        None => {
                            let inv = Arc::new(load_inventory(&path)?);
                            cache.insert(path.clone(), inv.clone());
                            inv
                        }
                    };
                    Source::Inventory(inv)
                }
            })
        };
    if let Some(o) = over {
        let t = o.trim();
        let looks_like_series =
            t.len() > 1 && t.starts_with(['E', 'e']) && t[1..].chars().all(|c| c.is_ascii_digit());
        if looks_like_series && Series::parse(t).is_none() && !Path::new(t).exists() {
            return Err(Failure::input(anyhow!(
                "--stock {t}: unknown series; expected one of E3, E6, E12, E24, E48, E96, E192 or an inventory CSV"
            )));
        }
    }
    let (r, c) = match over.map(SourceSpec::parse) {
        None => (
            source(&spec.stock.resistors, PartKind::Resistor, base)?,
            source(&spec.stock.capacitors, PartKind::Capacitor, base)?,
        ),
        // A series on the command line replaces the resistors only; a CSV replaces both.
        Some(s @ SourceSpec::Series(_)) => (
            source(&s, PartKind::Resistor, Path::new(""))?,
            source(&spec.stock.capacitors, PartKind::Capacitor, base)?,
        ),
        Some(f @ SourceSpec::File(_)) => (
            source(&f, PartKind::Resistor, Path::new(""))?,
            source(&f, PartKind::Capacitor, Path::new(""))?,
        ),
    };
    let text = format!("resistors {}, capacitors {}", r.describe(), c.describe());
    Ok((Stock::new(r, c, spec.stock.limits()), text))
}

/// Parse `SLOT=VALUE[/TOL]` entries into locked parts by slot index.
pub(super) fn parse_slot_values(
    stage: &dyn Circuit,
    stock: &Stock,
    entries: &[(String, String)],
    flag: &str,
) -> Result<Vec<(usize, Part)>, Failure> {
    let mut out: Vec<(usize, Part)> = Vec::new();
    for (slot, text) in entries {
        let idx = circuit::slot_index(stage, slot).ok_or_else(|| {
            let names: Vec<&str> = stage.slots().iter().map(|s| s.name).collect();
            anyhow!(
                "{flag} {slot}=…: the {} stage has no slot `{slot}`; its slots are {}",
                stage.kind().name(),
                names.join(", ")
            )
        })?;
        let kind = stage.slots()[idx].kind;
        let unit = match kind {
            PartKind::Resistor => Unit::Ohm,
            PartKind::Capacitor => Unit::Farad,
        };
        let (v, tol) =
            spec::parse_lock_value(text, unit).map_err(|m| anyhow!("{flag} {slot}={text}: {m}"))?;
        let part = Part::locked(
            kind,
            v,
            tol.unwrap_or_else(|| stock.default_tolerance(kind)),
        );
        out.retain(|(i, _)| *i != idx);
        out.push((idx, part));
    }
    Ok(out)
}

/// The spec's `[lock]` table and the `--lock` flags as `SLOT=VALUE` entries, flags last (so
/// they win).
pub(super) fn lock_entries(
    spec: &Spec,
    flags: &[String],
) -> Result<Vec<(String, String)>, Failure> {
    let mut entries: Vec<(String, String)> = Vec::new();
    for l in &spec.locks {
        let unit = if l.slot.starts_with("c_") {
            Unit::Farad
        } else {
            Unit::Ohm
        };
        let mut t = value::format_sig(l.value, unit, 12);
        if let Some(tol) = l.tolerance {
            t = format!("{t}/{}", value::format_sig(tol, Unit::Percent, 12));
        }
        entries.push((l.slot.clone(), t));
    }
    entries.extend(split_entries(flags, "--lock")?);
    Ok(entries)
}

pub(super) fn split_entries(raw: &[String], flag: &str) -> Result<Vec<(String, String)>, Failure> {
    raw.iter()
        .map(|e| {
            e.split_once('=')
                .map(|(s, v)| (s.trim().to_string(), v.trim().to_string()))
                .ok_or_else(|| {
                    Failure::input(anyhow!(
                        "{flag} {e}: expected SLOT=VALUE, e.g. {flag} r_in=47k"
                    ))
                })
        })
        .collect()
}

fn yield_options(spec: &Spec, output: &Output) -> stockfit::analysis::yield_mc::YieldOptions {
    stockfit::analysis::yield_mc::YieldOptions {
        samples: output.yield_samples,
        seed: output.seed,
        distribution: spec.stock.distribution,
    }
}

fn style() -> table::Style {
    let color = std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none();
    table::Style { color }
}

fn write_json(output: &Output, text: &str) -> Result<(), Failure> {
    match output.json.as_deref() {
        None => Ok(()),
        Some("-") => {
            say!("{text}");
            Ok(())
        }
        Some(path) => std::fs::write(path, format!("{text}\n"))
            .with_context(|| format!("cannot write the JSON file {path}"))
            .map_err(Failure::input),
    }
}

/// Write the netlist of `build` when `--spice FILE` asks for it.
fn write_spice(
    output: &Output,
    spec: &Spec,
    stage: &dyn Circuit,
    build: &stockfit::Build,
) -> Result<(), Failure> {
    match &output.spice {
        None => Ok(()),
        Some(path) => std::fs::write(path, spice::netlist(spec, stage, build))
            .with_context(|| format!("cannot write the SPICE netlist {}", path.display()))
            .map_err(Failure::input),
    }
}

/// Write the plot, schematic, BOM and HTML report of the best of `ranked` where `--plot`,
/// `--schematic`, `--bom` and `--report` ask for them.
fn write_visuals(
    output: &Output,
    spec: &Spec,
    stage: &dyn Circuit,
    ranked: &[Ranked],
    stock: &Stock,
    stock_text: &str,
) -> Result<(), Failure> {
    let Some(best) = ranked.first() else {
        return Ok(());
    };
    let write = |path: &Path, what: &str, text: String| {
        std::fs::write(path, text)
            .with_context(|| format!("cannot write the {what} {}", path.display()))
            .map_err(Failure::input)
    };
    if let Some(path) = &output.plot {
        let svg = plot::svg(spec, stage, &best.build, &best.evaluation)?;
        write(path, "plot", svg)?;
    }
    if let Some(path) = &output.schematic {
        let svg = schematic::svg(spec, stage, &best.build, &best.evaluation);
        write(path, "schematic", svg)?;
    }
    if let Some(path) = &output.bom {
        write(path, "BOM", bom::csv(stage, &best.build, Some(stock))?)?;
    }
    if let Some(path) = &output.report {
        let page = html::report(spec, stage, ranked, Some(stock), stock_text)?;
        write(path, "HTML report", page)?;
    }
    Ok(())
}

fn pick(
    spec: &Spec,
    base: &Path,
    stock_over: Option<&str>,
    locks: &[String],
    top: usize,
    output: &Output,
) -> Result<i32, Failure> {
    let stage = circuit::circuit_for(spec.stage);
    let (stock, stock_text) = resolve_stock(spec, base, stock_over)?;
    let entries = lock_entries(spec, locks)?;
    let locked = parse_slot_values(stage, &stock, &entries, "--lock")?;
    if top == 0 {
        return Err(Failure::input(anyhow!(
            "--top 0: ask for at least one build"
        )));
    }
    let engine = parse_engine(&output.engine)?;
    let req = Request {
        spec,
        stage,
        stock: &stock,
        locks: &locked,
        top,
        max_nodes: None,
        plan: stockfit::search::PlanChoice::Best,
    };
    let quiet_stdout = output.json.as_deref() == Some("-");
    let started = Instant::now();
    let show_bar = !output.quiet && std::io::stderr().is_terminal();
    let mut bar: Option<ProgressBar> = None;
    let mut on_progress = |p: Progress| {
        if !show_bar {
            return;
        }
        if bar.is_none() && started.elapsed() > Duration::from_secs(1) {
            let b = match p {
                Progress::Walk { total, .. } => {
                    let b = ProgressBar::new(total as u64);
                    if let Ok(style) = ProgressStyle::with_template(
                        "searching {msg} {wide_bar} {pos}/{len} ({eta})",
                    ) {
                        b.set_style(style);
                    }
                    b
                }
                Progress::Milp { .. } => ProgressBar::new_spinner(),
            };
            bar = Some(b);
        }
        if let Some(b) = &bar {
            match p {
                Progress::Walk { slot, done, total } => {
                    b.set_message(format!("{} candidates", stage.slots()[slot].name));
                    b.set_length(total as u64);
                    b.set_position(done as u64);
                }
                Progress::Milp { solved, best } => {
                    let best = if best.is_finite() {
                        format!("{best:.4} points")
                    } else {
                        "none yet".to_string()
                    };
                    b.set_message(format!(
                        "MILP: {solved} models solved, {top}th best so far {best}"
                    ));
                    b.tick();
                }
            }
        }
    };
    let mut outcome = match search::run(&req, engine, &mut on_progress) {
        Ok(o) => o,
        Err(e @ search::SearchError::NoCandidates { .. }) => {
            eprintln!("error: {e}");
            return Ok(EXIT_NO_BUILD);
        }
        Err(e) => return Err(Failure::input(e)),
    };
    if let Some(b) = bar.take() {
        b.finish_and_clear();
    }
    if std::env::var_os("STOCKFIT_STATS").is_some() {
        eprintln!(
            "search: {:?} candidates per slot, {} nodes {:?}, {} builds evaluated, {:.3} s",
            outcome.stats.candidates,
            outcome.stats.nodes,
            outcome.stats.nodes_by_group,
            outcome.stats.evaluated,
            started.elapsed().as_secs_f64()
        );
    }
    let opts = yield_options(spec, output);
    for r in &mut outcome.builds {
        stockfit::analysis::complete(spec, stage, &r.build, &mut r.evaluation, Some(&opts));
    }
    let style = style();
    if outcome.builds.is_empty() {
        let d = diagnose::diagnose(&req).map_err(Failure::input)?;
        if !quiet_stdout {
            say_raw!(
                "{}",
                table::fit_width(&table::heading(spec, stage, &stock_text), table::WIDTH)
            );
            say!();
            say_raw!(
                "{}",
                table::fit_width(&table::diagnosis(spec, stage, &d, style), table::WIDTH)
            );
        }
        write_json(output, &json::diagnosis(spec, stage, &d))?;
        if let Some(path) = &output.spice {
            eprintln!(
                "note: no build meets the spec, so no netlist was written to {}",
                path.display()
            );
        }
        for path in [&output.plot, &output.schematic, &output.bom, &output.report]
            .into_iter()
            .flatten()
        {
            eprintln!(
                "note: no build meets the spec, so nothing was written to {}",
                path.display()
            );
        }
        return Ok(EXIT_NO_BUILD);
    }
    if !quiet_stdout {
        say_raw!(
            "{}",
            table::fit_width(&table::heading(spec, stage, &stock_text), table::WIDTH)
        );
        say!();
        say_raw!("{}", table::builds(spec, stage, &outcome.builds, style));
        say!();
        say!("Best build (#1)");
        say_raw!("{}", table::detail(spec, stage, &outcome.builds[0], style));
    }
    write_json(output, &json::builds(spec, stage, &outcome.builds))?;
    write_spice(output, spec, stage, &outcome.builds[0].build)?;
    write_visuals(output, spec, stage, &outcome.builds, &stock, &stock_text)?;
    Ok(EXIT_OK)
}

fn check(
    spec: &Spec,
    base: &Path,
    stock_over: Option<&str>,
    set: &[String],
    output: &Output,
) -> Result<i32, Failure> {
    let stage = circuit::circuit_for(spec.stage);
    let (stock, stock_text) = resolve_stock(spec, base, stock_over)?;
    let entries = split_entries(set, "--set")?;
    let given = parse_slot_values(stage, &stock, &entries, "--set")?;
    let missing: Vec<&str> = stage
        .slots()
        .iter()
        .enumerate()
        .filter(|(i, _)| !given.iter().any(|(g, _)| g == i))
        .map(|(_, s)| s.name)
        .collect();
    if !missing.is_empty() {
        return Err(Failure::input(anyhow!(
            "check needs every slot: add --set for {} (or use `pick --lock` to have the rest chosen)",
            missing.join(", ")
        )));
    }
    let mut parts: Vec<Option<Part>> = vec![None; stage.slots().len()];
    for (i, mut p) in given {
        // A checked build is a build, not a board repair: its parts are not "locked". A value
        // found in the inventory takes that line's ratings, cost and polarity.
        p.locked = false;
        let tol = entries
            .iter()
            .find(|(slot, _)| circuit::slot_index(stage, slot) == Some(i))
            .and_then(|(_, text)| text.contains('/').then_some(p.pieces[0].tolerance));
        if let Some(piece) = stock.find_piece(p.kind, p.value, tol) {
            p = Part::single(p.kind, piece);
        }
        parts[i] = Some(p);
    }
    let build = stockfit::Build {
        parts: parts.into_iter().flatten().collect(),
    };
    let mut evaluation = stockfit::analysis::evaluate(spec, stage, &build, None);
    let opts = yield_options(spec, output);
    stockfit::analysis::complete(spec, stage, &build, &mut evaluation, Some(&opts));
    let pass = evaluation.pass;
    let ranked = Ranked { build, evaluation };
    if output.json.as_deref() != Some("-") {
        let style = style();
        say_raw!(
            "{}",
            table::fit_width(&table::heading(spec, stage, &stock_text), table::WIDTH)
        );
        say!();
        say_raw!(
            "{}",
            table::builds(spec, stage, std::slice::from_ref(&ranked), style)
        );
        say!();
        say_raw!("{}", table::detail(spec, stage, &ranked, style));
    }
    write_json(
        output,
        &json::builds(spec, stage, std::slice::from_ref(&ranked)),
    )?;
    write_spice(output, spec, stage, &ranked.build)?;
    write_visuals(
        output,
        spec,
        stage,
        std::slice::from_ref(&ranked),
        &stock,
        &stock_text,
    )?;
    Ok(if pass { EXIT_OK } else { EXIT_NO_BUILD })
}

fn series(name: &str, from: &str, to: &str) -> Result<i32, Failure> {
    let s = Series::parse(name).ok_or_else(|| {
        anyhow!("unknown series {name:?}; expected one of E3, E6, E12, E24, E48, E96, E192")
    })?;
    // The range is unit-free: values may be written with any prefix, a unit letter is refused.
    let lo = value::parse(from, Unit::Ohm).map_err(|e| anyhow!("--from {from}: {e}"))?;
    let hi = value::parse(to, Unit::Ohm).map_err(|e| anyhow!("--to {to}: {e}"))?;
    if !(lo > 0.0 && hi >= lo) {
        return Err(Failure::input(anyhow!(
            "--from and --to: expected 0 < from ≤ to"
        )));
    }
    let values = s.values_in(lo, hi);
    let digits = if s.per_decade() > 24 { 3 } else { 2 };
    let text: Vec<String> = values
        .iter()
        .map(|v| {
            value::format_sig(*v, Unit::Ohm, digits)
                .replace(" Ω", "")
                .replace('Ω', "")
        })
        .collect();
    say!("{}", text.join("\n"));
    eprintln!(
        "{} values of {} (IEC 60063, {} % tolerance class)",
        values.len(),
        s.name(),
        s.tolerance() * 100.0
    );
    Ok(EXIT_OK)
}

fn stock_summary(file: &Path) -> Result<i32, Failure> {
    let inv = load_inventory(file)?;
    let s = inv.summary();
    say!("{}: {} lines", file.display(), inv.lines.len());
    for k in [&s.resistors, &s.capacitors] {
        let unit = match k.kind {
            PartKind::Resistor => Unit::Ohm,
            PartKind::Capacitor => Unit::Farad,
        };
        let range = k.values.as_ref().map_or("—".to_string(), |r| {
            format!(
                "{} … {}",
                value::format(r.min, unit),
                value::format(r.max, unit)
            )
        });
        let tols: Vec<String> = k
            .tolerances
            .iter()
            .map(|t| value::format(*t, Unit::Percent))
            .collect();
        say!(
            "  {:?}s: {} lines, {} pieces, {}, tolerances {}; {} out of stock",
            k.kind,
            k.lines,
            k.pieces,
            range,
            if tols.is_empty() {
                "—".into()
            } else {
                tols.join(", ")
            },
            k.out_of_stock
        );
        if k.polarized > 0 {
            say!("    {} polarised lines", k.polarized);
        }
        if let Some(v) = &k.voltage {
            say!(
                "    voltage ratings {} … {}",
                value::format(v.min, Unit::Volt),
                value::format(v.max, Unit::Volt)
            );
        }
        if k.lines_with_cost > 0 {
            say!(
                "    {} lines with a cost; stock value {:.2}",
                k.lines_with_cost,
                k.stock_value
            );
        }
        for d in &k.duplicates {
            say!(
                "    note: {} {} appears on several rows {:?}",
                value::format(d.value, unit),
                value::format(d.tolerance, Unit::Percent),
                d.rows
            );
        }
    }
    Ok(EXIT_OK)
}
