//! What each subcommand does: read files, call the library (`stockfit::pick`), print, write.

use super::args::{Command, Output};
use super::console::{self, say, say_raw, tell};
use super::failure::{Failure, EXIT_NO_BUILD, EXIT_OK};
use super::files::{load_inventory, load_spec};
use super::output::{self, Builds};
use super::progress::Bar;
use anyhow::{anyhow, Context};
use std::io::IsTerminal;
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};
use stockfit::analysis::yield_mc::YieldOptions;
use stockfit::circuit;
use stockfit::pick::{self, Options, Resolved, SlotEntry, StockOverride};
use stockfit::report::table;
use stockfit::search::{self, Ranked, Stop};
use stockfit::series::Series;
use stockfit::spec::Spec;
use stockfit::stock::pool::Pools;
use stockfit::value::{self, Unit};
use stockfit::vocab::PartKind;

/// The built-in example for `stockfit demo`.
pub const DEMO_SPEC: &str = include_str!("../../examples/hydrophone-preamp-9v.toml");

/// Every subcommand but `take`.
pub fn run(command: Command) -> Result<i32, Failure> {
    match command {
        Command::Pick {
            spec,
            stock,
            lock,
            top,
            build,
            distinct,
            output,
        } => {
            if let Some(n) = build.filter(|&n| n > top) {
                return Err(Failure::input(anyhow!(
                    "--build {n}: only {top} builds are ranked; raise --top to at least {n}"
                )));
            }
            let (parsed, _) = load_spec(&spec)?;
            let chosen = build.unwrap_or(1) - 1;
            let ranking = Ranking {
                top,
                chosen,
                distinct,
            };
            pick(&parsed, &spec, stock.as_deref(), &lock, &ranking, &output)
        }
        Command::Demo { top, output } => {
            let parsed = Spec::from_toml(DEMO_SPEC).context("the built-in demo spec")?;
            if !output::json_to_stdout(&output) {
                say!("Demo: examples/hydrophone-preamp-9v.toml (a 9 V piezo hydrophone preamp)\n");
            }
            let path = Path::new("examples/hydrophone-preamp-9v.toml");
            pick(
                &parsed,
                path,
                None,
                &[],
                &Ranking {
                    top,
                    chosen: 0,
                    distinct: Vec::new(),
                },
                &output,
            )
        }
        Command::Check {
            spec,
            set,
            stock,
            output,
        } => {
            let (parsed, _) = load_spec(&spec)?;
            check(&parsed, &spec, stock.as_deref(), &set, &output)
        }
        Command::Series { name, from, to } => series(&name, &from, &to),
        Command::Stock { file } => stock_summary(&file),
        Command::Take(_) => unreachable!("`take` is dispatched to take.rs"),
    }
}

/// `--stock`: a series name replaces the resistors, an inventory CSV both kinds.
fn stock_override(over: Option<&str>) -> Result<Option<StockOverride>, Failure> {
    let Some(o) = over else {
        return Ok(None);
    };
    let t = o.trim();
    if let Some(s) = Series::parse(t) {
        return Ok(Some(StockOverride::Series(s)));
    }
    let looks_like_series =
        t.len() > 1 && t.starts_with(['E', 'e']) && t[1..].chars().all(|c| c.is_ascii_digit());
    if looks_like_series && !Path::new(t).exists() {
        return Err(Failure::input(anyhow!(
            "--stock {t}: unknown series; expected one of E3, E6, E12, E24, E48, E96, E192 or an inventory CSV"
        )));
    }
    Ok(Some(StockOverride::Inventory(Arc::new(load_inventory(
        Path::new(t),
    )?))))
}

/// The stock a run draws from: the spec's `[stock]` (inventory paths relative to the spec's
/// folder) or `--stock`.
pub(super) fn resolve_stock(
    spec: &Spec,
    spec_path: &Path,
    over: Option<&str>,
) -> Result<Resolved, Failure> {
    let base = spec_path.parent().unwrap_or(Path::new(""));
    let over = stock_override(over)?;
    pick::resolve_stock(spec, over.as_ref(), &mut |p| {
        load_inventory(&base.join(p))
            .map(Arc::new)
            .map_err(|f| named_by(f, spec, spec_path, p))
    })
}

/// An inventory the spec names that cannot be read: the error says which spec, line and key
/// named it, so that the user knows where to fix the path.
fn named_by(f: Failure, spec: &Spec, spec_path: &Path, file: &str) -> Failure {
    use stockfit::spec::SourceSpec;
    let names = |s: &SourceSpec| matches!(s, SourceSpec::File(f) if f == file);
    let key = if names(&spec.stock.resistors) {
        "resistors"
    } else if names(&spec.stock.capacitors) {
        "capacitors"
    } else {
        return f;
    };
    // The spec was read a moment ago; read again only to locate the key (bounded, as before).
    let line = super::files::read_bounded(spec_path, stockfit::spec::MAX_SPEC_BYTES, "spec")
        .ok()
        .and_then(|b| String::from_utf8(b).ok())
        .and_then(|t| stockfit::spec::key_line(&t, "stock", key));
    let place = match line {
        Some(l) => format!("line {l}, "),
        None => String::new(),
    };
    Failure {
        code: f.code,
        error: f.error.context(format!(
            "in {}: {place}`stock.{key}` names the inventory {file:?}",
            console::shown(spec_path)
        )),
    }
}

/// `SLOT=VALUE` flags split at their `=`.
pub(super) fn split_entries(raw: &[String], flag: &str) -> Result<Vec<SlotEntry>, Failure> {
    raw.iter()
        .map(|e| {
            SlotEntry::parse(e).ok_or_else(|| {
                Failure::input(anyhow!(
                    "{flag} {e}: expected SLOT=VALUE, e.g. {flag} r_in=47k"
                ))
            })
        })
        .collect()
}

/// A library error from a step that reads the spec: its spec errors are "in" the file.
pub(super) fn in_spec(path: &Path, e: stockfit::Error) -> Failure {
    match e {
        e @ stockfit::Error::Spec(_) => {
            Failure::input(anyhow::Error::new(e).context(format!("in {}", path.display())))
        }
        e => Failure::input(e),
    }
}

/// When the search gives up before it is proven complete: at `--time-limit`, or at the first
/// Ctrl-C (a second one ends the program at once, exit 130 as a shell reports SIGINT).
fn stop_for(output: &Output) -> Stop {
    let flag = Arc::new(AtomicBool::new(false));
    let set = flag.clone();
    let installed = ctrlc::set_handler(move || {
        if set.swap(true, Ordering::SeqCst) {
            std::process::exit(130);
        }
        tell!(
            "\ninterrupted: stopping the search; the builds found so far follow (not proven best)"
        );
    });
    Stop {
        deadline: output
            .time_limit
            .map(|s| Instant::now() + Duration::from_secs_f64(s)),
        interrupt: installed.is_ok().then_some(flag),
    }
}

fn yield_options(spec: &Spec, output: &Output) -> YieldOptions {
    YieldOptions {
        samples: output.yield_samples,
        seed: output.seed,
        distribution: spec.stock.distribution,
    }
}

fn style() -> table::Style {
    let color = std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none();
    table::Style { color }
}

/// What `pick` ranks and reports: `--top`, `--build` (0-based) and `--distinct`.
struct Ranking {
    top: usize,
    chosen: usize,
    distinct: Vec<String>,
}

fn pick(
    spec: &Spec,
    spec_path: &Path,
    stock_over: Option<&str>,
    locks: &[String],
    ranking: &Ranking,
    output: &Output,
) -> Result<i32, Failure> {
    let (top, chosen) = (ranking.top, ranking.chosen);
    let circuit = circuit::circuit_of(spec);
    let Resolved { stock, description } = resolve_stock(spec, spec_path, stock_over)?;
    // Every input is read now: no output may be one of them (nor another output).
    output::check(output)?;
    let entries = split_entries(locks, "--lock")?;
    let locked =
        pick::resolve_locks(spec, circuit, &stock, &entries).map_err(|e| in_spec(spec_path, e))?;
    let options = Options {
        top,
        engine: output.engine.engine(),
        yield_options: Some(yield_options(spec, output)),
        stop: stop_for(output),
        distinct: ranking.distinct.clone(),
        ..Options::default()
    };
    let started = Instant::now();
    let mut bar = Bar::new(
        !output.quiet && std::io::stderr().is_terminal(),
        circuit,
        top,
    );
    let picked = match pick::pick(spec, &stock, &locked, &options, &mut |p| bar.update(p)) {
        Ok(p) => p,
        Err(stockfit::Error::Search(e @ search::SearchError::NoCandidates { .. })) => {
            bar.finish();
            tell!("error: {e}");
            return Ok(EXIT_NO_BUILD);
        }
        Err(e) => return Err(Failure::input(e)),
    };
    bar.finish();
    if std::env::var_os("STOCKFIT_STATS").is_some() {
        let s = &picked.stats;
        tell!(
            "search: gain ≤ {:?}, root bound {:.4}; {:?} candidates per slot, {} nodes {:?}, {} builds evaluated ({:?} rejected early, {:?} by the full analysis), joint bounds (runs, raised) {:?}, DC screens (runs, cut) {:?}, {:.3} s",
            s.gain_max,
            s.root_bound,
            s.candidates,
            s.nodes,
            s.nodes_by_level,
            s.evaluated,
            s.quick_rejects,
            s.full_rejects,
            s.joint_bounds,
            s.dc_screens,
            started.elapsed().as_secs_f64()
        );
    }
    let style = style();
    let quiet_stdout = output::json_to_stdout(output);
    if let Some(d) = &picked.diagnosis {
        if !quiet_stdout {
            say_raw!(
                "{}",
                table::fit_width(&table::heading(spec, circuit, &description), table::WIDTH)
            );
            say!();
            // Stopped before any build was found, the search proved nothing: say so, rather
            // than "no build meets the spec".
            let text = if picked.proven {
                table::diagnosis(spec, circuit, d, style)
            } else {
                table::stopped_before_any_build(style)
            };
            say_raw!("{}", table::fit_width(&text, table::WIDTH));
        }
        output::write_diagnosis(output, spec, circuit, d)?;
        return Ok(EXIT_NO_BUILD);
    }
    if !quiet_stdout {
        say_raw!(
            "{}",
            table::fit_width(&table::heading(spec, circuit, &description), table::WIDTH)
        );
        say!();
        if !picked.proven {
            say_raw!(
                "{}",
                table::fit_width(&table::unproven(style), table::WIDTH)
            );
            say!();
        }
    }
    // `--build N` past the builds found (fewer pass than --top asks for): nothing is written.
    if chosen >= picked.builds.len() {
        return Err(Failure::input(anyhow!(
            "--build {}: only {} build{} meet{} the spec; nothing was written",
            chosen + 1,
            picked.builds.len(),
            if picked.builds.len() == 1 { "" } else { "s" },
            if picked.builds.len() == 1 { "s" } else { "" }
        )));
    }
    if !quiet_stdout {
        say_raw!("{}", table::builds(spec, circuit, &picked.builds, style));
        say!();
        if chosen == 0 {
            say!("Best build (#1)");
        } else {
            say!("Build #{} (--build {})", chosen + 1, chosen + 1);
        }
        say_raw!(
            "{}",
            table::detail(spec, circuit, &picked.builds[chosen], style)
        );
    }
    output::write_builds(
        output,
        &Builds {
            spec,
            circuit,
            ranked: &picked.builds,
            stock: &stock,
            stock_text: &description,
            proven: picked.proven,
            chosen,
        },
    )?;
    Ok(EXIT_OK)
}

fn check(
    spec: &Spec,
    spec_path: &Path,
    stock_over: Option<&str>,
    set: &[String],
    output: &Output,
) -> Result<i32, Failure> {
    let circuit = circuit::circuit_of(spec);
    let Resolved { stock, description } = resolve_stock(spec, spec_path, stock_over)?;
    output::check(output)?;
    let entries = split_entries(set, "--set")?;
    let opts = yield_options(spec, output);
    let ranked: Ranked =
        pick::check(spec, &stock, &entries, Some(&opts)).map_err(Failure::input)?;
    let pass = ranked.evaluation.pass;
    if !output::json_to_stdout(output) {
        let style = style();
        say_raw!(
            "{}",
            table::fit_width(&table::heading(spec, circuit, &description), table::WIDTH)
        );
        say!();
        say_raw!(
            "{}",
            table::builds(spec, circuit, std::slice::from_ref(&ranked), style)
        );
        say!();
        say_raw!("{}", table::detail(spec, circuit, &ranked, style));
        say!();
        say_raw!(
            "{}",
            table::fit_width(&table::verdict(&ranked.evaluation, style), table::WIDTH)
        );
    }
    output::write_builds(
        output,
        &Builds {
            spec,
            circuit,
            ranked: std::slice::from_ref(&ranked),
            stock: &stock,
            stock_text: &description,
            proven: true,
            chosen: 0,
        },
    )?;
    Ok(if pass { EXIT_OK } else { EXIT_NO_BUILD })
}

fn series(name: &str, from: &str, to: &str) -> Result<i32, Failure> {
    let s = Series::parse(name).ok_or_else(|| {
        anyhow!("unknown series {name:?}; expected one of E3, E6, E12, E24, E48, E96, E192")
    })?;
    // The range is written with any prefix and either no unit, ohms or farads: the series are
    // the same numbers for resistors and capacitors (IEC 60063). A capacitance on either end
    // lists capacitances, each with its unit.
    let (lo, hi, unit) = series_range(from, to)?;
    if !(lo > 0.0 && hi >= lo) {
        return Err(Failure::input(anyhow!(
            "--from {from} and --to {to}: expected 0 < from ≤ to (the defaults are 1 and 10; \
             give both ends in the same unit)"
        )));
    }
    let values = s.values_in(lo, hi);
    let digits = if s.per_decade() > 24 { 3 } else { 2 };
    let text: Vec<String> = values
        .iter()
        .map(|v| match unit {
            Unit::Farad => value::format_sig(*v, Unit::Farad, digits),
            _ => value::format_sig(*v, Unit::Ohm, digits)
                .replace(" Ω", "")
                .replace('Ω', ""),
        })
        .collect();
    say!("{}", text.join("\n"));
    tell!(
        "{} values of {} (IEC 60063, {} % tolerance class)",
        values.len(),
        s.name(),
        s.tolerance() * 100.0
    );
    Ok(EXIT_OK)
}

/// `--from` and `--to` of `series`: unit-free or resistances (listed without a unit, as
/// before), or capacitances (listed in farads) when either end is written as one.
fn series_range(from: &str, to: &str) -> Result<(f64, f64, Unit), Failure> {
    let read = |flag: &str, text: &str| -> Result<(f64, Unit), Failure> {
        match value::parse(text, Unit::Ohm) {
            Ok(v) => Ok((v, Unit::Ohm)),
            Err(e) => value::parse(text, Unit::Farad)
                .map(|v| (v, Unit::Farad))
                .map_err(|_| {
                    Failure::input(anyhow!(
                        "{flag} {text}: {e} (or a capacitance such as \"1n\" or \"100 nF\")"
                    ))
                }),
        }
    };
    let (lo, lo_unit) = read("--from", from)?;
    let (hi, hi_unit) = read("--to", to)?;
    let unit = if lo_unit == Unit::Farad || hi_unit == Unit::Farad {
        Unit::Farad
    } else {
        Unit::Ohm
    };
    Ok((lo, hi, unit))
}

/// The values shown in full in a grouped note, and the rows shown of each.
const NOTE_EXAMPLES: usize = 3;
const NOTE_ROWS: usize = 10;

/// "3 values appear on several rows, pooled …: 10 Ω 1 % (rows 1, 141), … and 137 more".
fn repeated_note(
    group: &[&stockfit::stock::inventory::Duplicate],
    how: &str,
    unit: Unit,
) -> String {
    let shown: Vec<String> = group
        .iter()
        .take(NOTE_EXAMPLES)
        .map(|d| {
            let rows: Vec<String> = d
                .rows
                .iter()
                .take(NOTE_ROWS)
                .map(usize::to_string)
                .collect();
            let more = match d.rows.len().saturating_sub(NOTE_ROWS) {
                0 => String::new(),
                n => format!(" and {n} more"),
            };
            // A no-break space inside a quantity, so that wrapping never parts "1" from "%".
            let keep = |t: String| t.replace(' ', "\u{a0}");
            format!(
                "{} {} (rows {}{more})",
                keep(value::format(d.value, unit)),
                keep(value::format(d.tolerance, Unit::Percent)),
                rows.join(", ")
            )
        })
        .collect();
    let more = match group.len().saturating_sub(NOTE_EXAMPLES) {
        0 => String::new(),
        n => format!(" and {n} more"),
    };
    format!(
        "{} value{} on several rows, {how}: {}{more}",
        group.len(),
        if group.len() == 1 {
            " appears"
        } else {
            "s appear"
        },
        shown.join(", ")
    )
}

fn stock_summary(file: &Path) -> Result<i32, Failure> {
    let inv = load_inventory(file)?;
    let s = inv.summary();
    let pools = Pools::new(&inv);
    say!("{}: {} lines", console::shown(file), inv.lines.len());
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
        // Repeated values, one line per kind of note (a lab stock repeats hundreds): rows of
        // the same part (ratings, dielectric and cost too) are one line to the search, their
        // pieces pooled (`stock::pool`); rows that only share value and tolerance are not.
        let (pooled, apart): (Vec<_>, Vec<_>) = k.duplicates.iter().partition(|d| {
            let first = pools.representative(d.rows[0]);
            d.rows.iter().all(|&r| pools.representative(r) == first)
        });
        for (group, how) in [
            (
                pooled,
                "pooled as one line each (the same part on each row)",
            ),
            (apart, "kept apart (ratings, dielectric or cost differ)"),
        ] {
            if !group.is_empty() {
                let note = format!("    note: {}", repeated_note(&group, how, unit));
                say_raw!("{}", table::fit_width(&note, table::WIDTH));
            }
        }
    }
    Ok(EXIT_OK)
}
