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
            output,
        } => {
            let (parsed, base) = load_spec(&spec)?;
            pick(&parsed, &spec, &base, stock.as_deref(), &lock, top, &output)
        }
        Command::Demo { top, output } => {
            let parsed = Spec::from_toml(DEMO_SPEC).context("the built-in demo spec")?;
            if !output::json_to_stdout(&output) {
                say!("Demo: examples/hydrophone-preamp-9v.toml (a 9 V piezo hydrophone preamp)\n");
            }
            let path = Path::new("examples/hydrophone-preamp-9v.toml");
            pick(&parsed, path, Path::new("."), None, &[], top, &output)
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
    base: &Path,
    over: Option<&str>,
) -> Result<Resolved, Failure> {
    let over = stock_override(over)?;
    pick::resolve_stock(spec, over.as_ref(), &mut |p| {
        load_inventory(&base.join(p)).map(Arc::new)
    })
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

fn pick(
    spec: &Spec,
    spec_path: &Path,
    base: &Path,
    stock_over: Option<&str>,
    locks: &[String],
    top: usize,
    output: &Output,
) -> Result<i32, Failure> {
    let circuit = circuit::circuit_of(spec);
    let Resolved { stock, description } = resolve_stock(spec, base, stock_over)?;
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
            "search: gain ≤ {:?}, root bound {:.4}; {:?} candidates per slot, {} nodes {:?}, {} builds evaluated ({:?} rejected early, {:?} by the full analysis), joint bounds (runs, raised) {:?}, {:.3} s",
            s.gain_max,
            s.root_bound,
            s.candidates,
            s.nodes,
            s.nodes_by_level,
            s.evaluated,
            s.quick_rejects,
            s.full_rejects,
            s.joint_bounds,
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
            say_raw!(
                "{}",
                table::fit_width(&table::diagnosis(spec, circuit, d, style), table::WIDTH)
            );
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
        say_raw!("{}", table::builds(spec, circuit, &picked.builds, style));
        say!();
        say!("Best build (#1)");
        say_raw!("{}", table::detail(spec, circuit, &picked.builds[0], style));
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
        },
    )?;
    Ok(EXIT_OK)
}

fn check(
    spec: &Spec,
    base: &Path,
    stock_over: Option<&str>,
    set: &[String],
    output: &Output,
) -> Result<i32, Failure> {
    let circuit = circuit::circuit_of(spec);
    let Resolved { stock, description } = resolve_stock(spec, base, stock_over)?;
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
        },
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
    tell!(
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
        for d in &k.duplicates {
            // At most ten rows each: a value on 100 000 rows is a line, not a page.
            let shown = &d.rows[..d.rows.len().min(10)];
            let more = match d.rows.len() - shown.len() {
                0 => String::new(),
                n => format!(" and {n} more"),
            };
            say!(
                "    note: {} {} appears on several rows {:?}{more}",
                value::format(d.value, unit),
                value::format(d.tolerance, Unit::Percent),
                shown
            );
        }
        // Rows of the same part (ratings, dielectric and cost too) are one line to the search,
        // their pieces pooled (`stock::pool`); rows that only share value and tolerance are not.
        let pooled = k
            .duplicates
            .iter()
            .filter(|d| {
                let first = pools.representative(d.rows[0]);
                d.rows.iter().all(|&r| pools.representative(r) == first)
            })
            .count();
        if !k.duplicates.is_empty() {
            say!(
                "    pooled: {pooled} (the same part on each row); kept apart: {} (ratings, \
                 dielectric or cost differ)",
                k.duplicates.len() - pooled
            );
        }
    }
    Ok(EXIT_OK)
}
