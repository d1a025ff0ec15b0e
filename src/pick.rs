//! The whole job as a library call: a parsed spec and its stock sources in; the stock and the
//! locks resolved (typed values, parsed once with their slot's unit); the exact search; every
//! figure of the reported builds (noise, DC budget, yield); a diagnosis when nothing passes.
//! Everything the command line does but I/O — `stockfit pick`, `check`, `take` and `demo`
//! are thin callers of this module.
//!
//! ```
//! use std::sync::Arc;
//! use stockfit::pick::{self, Options};
//! use stockfit::stock::inventory::Inventory;
//!
//! let spec = stockfit::Spec::from_toml(
//!     "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\n\
//!      band = [\"50 Hz\", \"5 kHz\"]\n[stock]\nresistors = \"drawer.csv\"\n\
//!      capacitors = \"E6\"\n[lock]\nr_in = \"10k\"\n",
//! )
//! .unwrap();
//! let drawer = Arc::new(
//!     Inventory::parse_str("kind,value,tolerance,qty\nR,10k,1%,4\nR,100k,1%,3\nR,47k,1%,2\n")
//!         .unwrap(),
//! );
//! let stock =
//!     pick::resolve_stock::<()>(&spec, None, &mut |_path| Ok(drawer.clone())).unwrap();
//! let circuit = stockfit::circuit::circuit_of(&spec);
//! let locks = pick::resolve_locks(&spec, circuit, &stock.stock, &[]).unwrap();
//! let picked = pick::pick(&spec, &stock.stock, &locks, &Options::default(), &mut |_| {}).unwrap();
//! let best = &picked.builds[0];
//! assert_eq!(best.build.parts[0].value, 10e3); // the locked r_in
//! assert_eq!(best.build.parts[1].value, 100e3); // r_fb for a gain of −10
//! ```

use crate::analysis::{self, yield_mc::YieldOptions};
use crate::build::{Build, Part};
use crate::circuit::{self, Circuit};
use crate::error::{Error, SlotError};
use crate::search::{self, diagnose, Engine, PlanChoice, Progress, Ranked, Request, Stats, Stop};
use crate::series::Series;
use crate::spec::{self, Lock, SourceSpec, Spec, SpecError, SpecErrors};
use crate::stock::inventory::{Inventory, MAX_LISTED_PROBLEMS};
use crate::stock::{Source, Stock};
use crate::vocab::PartKind;
use std::collections::HashMap;
use std::sync::Arc;

/// A stock that replaces the spec's `[stock]` for one run (`--stock`).
#[derive(Debug, Clone)]
pub enum StockOverride {
    /// A series for the resistors; the capacitors stay as the spec says.
    Series(Series),
    /// An inventory for both kinds of part.
    Inventory(Arc<Inventory>),
}

/// A resolved stock and how reports describe it.
#[derive(Debug, Clone)]
pub struct Resolved {
    /// What the search draws from.
    pub stock: Stock,
    /// "resistors E24 at 1 %, capacitors inventory (12 lines)".
    pub description: String,
}

/// The spec's `[stock]`, or `over`, as a [`Stock`]: a series with the spec's tolerance for its
/// kind, an inventory through `load` — called once per distinct path as the spec writes it
/// (the caller resolves it against the spec's folder and reads the file).
pub fn resolve_stock<E>(
    spec: &Spec,
    over: Option<&StockOverride>,
    load: &mut dyn FnMut(&str) -> Result<Arc<Inventory>, E>,
) -> Result<Resolved, E> {
    let mut cache: HashMap<String, Arc<Inventory>> = HashMap::new();
    let mut source = |s: &SourceSpec, kind: PartKind| -> Result<Source, E> {
        Ok(match s {
            SourceSpec::Series(series) => Source::Series {
                series: *series,
                tolerance: match kind {
                    PartKind::Resistor => spec.stock.resistor_tolerance,
                    PartKind::Capacitor => spec.stock.capacitor_tolerance,
                },
            },
            SourceSpec::File(p) => {
                let inv = match cache.get(p) {
                    Some(inv) => inv.clone(),
                    None => {
                        let inv = load(p)?;
                        cache.insert(p.clone(), inv.clone());
                        inv
                    }
                };
                Source::Inventory(inv)
            }
        })
    };
    let (r, c) = match over {
        None => (
            source(&spec.stock.resistors, PartKind::Resistor)?,
            source(&spec.stock.capacitors, PartKind::Capacitor)?,
        ),
        // A series replaces the resistors only; an inventory replaces both.
        Some(StockOverride::Series(series)) => (
            source(&SourceSpec::Series(*series), PartKind::Resistor)?,
            source(&spec.stock.capacitors, PartKind::Capacitor)?,
        ),
        Some(StockOverride::Inventory(inv)) => (
            Source::Inventory(inv.clone()),
            Source::Inventory(inv.clone()),
        ),
    };
    let description = format!("resistors {}, capacitors {}", r.describe(), c.describe());
    Ok(Resolved {
        stock: Stock::new(r, c, spec.stock.limits()),
        description,
    })
}

/// A slot's part given on the command line: `SLOT=VALUE[/TOL]` split at the `=`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SlotEntry {
    /// The slot's name.
    pub slot: String,
    /// The value as written, e.g. `47k` or `47k/5%`.
    pub text: String,
}

impl SlotEntry {
    /// `SLOT=VALUE` split at its first `=`, both sides trimmed; `None` without one.
    pub fn parse(entry: &str) -> Option<SlotEntry> {
        entry.split_once('=').map(|(s, v)| SlotEntry {
            slot: s.trim().to_string(),
            text: v.trim().to_string(),
        })
    }
}

fn slot_names(circuit: &dyn Circuit) -> Vec<&'static str> {
    circuit.slots().iter().map(|s| s.name).collect()
}

/// A part of `kind` for a value and tolerance parsed for that slot; without a tolerance,
/// the stock's for that kind (`Stock::default_tolerance`, the cautious choice).
fn locked_part(stock: &Stock, kind: PartKind, value: f64, tolerance: Option<f64>) -> Part {
    Part::locked(
        kind,
        value,
        tolerance.unwrap_or_else(|| stock.default_tolerance(kind)),
    )
}

/// The parts of the spec's `[lock]` table and of `--lock` entries, by slot index: each value
/// parsed once with its slot's unit. A `--lock` entry replaces the spec's lock of its slot;
/// a slot given twice on the command line is refused. The spec's entries are reported as spec
/// errors with their lines, all of them at once.
pub fn resolve_locks(
    spec: &Spec,
    circuit: &dyn Circuit,
    stock: &Stock,
    flags: &[SlotEntry],
) -> Result<Vec<(usize, Part)>, Error> {
    let mut out: Vec<(usize, Part)> = Vec::new();
    let mut errors: Vec<SpecError> = spec
        .ranges
        .iter()
        .filter(|r| circuit::slot_index(circuit, &r.slot).is_none())
        .map(|r| unknown_slot(circuit, "range", &r.slot, r.line))
        .collect();
    let mut more = 0;
    for lock in &spec.locks {
        // Past the cap only count, without working out a message (bounded work).
        if errors.len() >= MAX_LISTED_PROBLEMS {
            if circuit::slot_index(circuit, &lock.slot)
                .is_none_or(|i| lock.parse(circuit.slots()[i].kind).is_err())
            {
                more += 1;
            }
            continue;
        }
        match spec_lock(circuit, lock) {
            Ok((slot, kind, value, tolerance)) => {
                out.push((slot, locked_part(stock, kind, value, tolerance)));
            }
            Err(e) => errors.push(e),
        }
    }
    if !errors.is_empty() {
        return Err(Error::Spec(SpecErrors(errors, more)));
    }
    for (slot, part) in flag_parts(circuit, stock, flags, "--lock")? {
        out.retain(|(i, _)| *i != slot);
        out.push((slot, part));
    }
    Ok(out)
}

/// The error for a `[section]` entry naming a slot the stage does not have, with its line, the
/// nearest name and the stage's slots.
fn unknown_slot(
    circuit: &dyn Circuit,
    section: &str,
    slot: &str,
    line: Option<usize>,
) -> SpecError {
    let names = slot_names(circuit);
    let hint = spec::nearest(slot, &names)
        .map(|n| format!("did you mean `{n}`? "))
        .unwrap_or_default();
    SpecError {
        key: format!("{section}.{slot}"),
        line,
        message: format!(
            "the {} stage has no slot `{slot}`; {hint}its slots are {}",
            circuit.kind().name(),
            names.join(", ")
        ),
    }
}

/// One `[lock]` entry: its slot, kind, value and tolerance, or the spec error with its line.
fn spec_lock(
    circuit: &dyn Circuit,
    lock: &Lock,
) -> Result<(usize, PartKind, f64, Option<f64>), SpecError> {
    let error = |message: String| SpecError {
        key: format!("lock.{}", lock.slot),
        line: lock.line,
        message,
    };
    let Some(slot) = circuit::slot_index(circuit, &lock.slot) else {
        return Err(unknown_slot(circuit, "lock", &lock.slot, lock.line));
    };
    let kind = circuit.slots()[slot].kind;
    let (value, tolerance) = lock.parse(kind).map_err(error)?;
    Ok((slot, kind, value, tolerance))
}

/// `SLOT=VALUE[/TOL]` entries of one flag as parts by slot index; a slot given twice is an
/// error.
fn flag_parts(
    circuit: &dyn Circuit,
    stock: &Stock,
    entries: &[SlotEntry],
    flag: &'static str,
) -> Result<Vec<(usize, Part)>, Error> {
    let mut out: Vec<(usize, Part)> = Vec::new();
    for (n, e) in entries.iter().enumerate() {
        let Some(slot) = circuit::slot_index(circuit, &e.slot) else {
            let names = slot_names(circuit);
            let hint = spec::nearest(&e.slot, &names)
                .map(|n| format!("did you mean `{n}`? "))
                .unwrap_or_default();
            return Err(Error::Slot(SlotError::Unknown {
                flag,
                slot: e.slot.clone(),
                circuit: circuit.kind().name(),
                hint,
                slots: names.join(", "),
            }));
        };
        if let Some(first) = entries[..n].iter().find(|f| f.slot == e.slot) {
            return Err(Error::Slot(SlotError::Twice {
                flag,
                slot: e.slot.clone(),
                first: first.text.clone(),
                second: e.text.clone(),
            }));
        }
        let kind = circuit.slots()[slot].kind;
        let (value, tolerance) = spec::parse_lock_value(&e.text, kind.unit()).map_err(|why| {
            Error::Slot(SlotError::Value {
                flag,
                slot: e.slot.clone(),
                text: e.text.clone(),
                why,
            })
        })?;
        out.push((slot, locked_part(stock, kind, value, tolerance)));
    }
    Ok(out)
}

/// How a pick runs.
#[derive(Debug, Clone)]
pub struct Options {
    /// How many builds to rank.
    pub top: usize,
    /// The exact search engine.
    pub engine: Engine,
    /// The walk engine's plan (the circuit's own, or the generic one).
    pub plan: PlanChoice,
    /// Monte Carlo yield of every reported build, when given.
    pub yield_options: Option<YieldOptions>,
    /// When to stop before the search is proven complete (a time limit, Ctrl-C); the
    /// builds are then the best found, marked as not proven.
    pub stop: Stop,
    /// Slot names in which every two ranked builds differ (`--distinct`); empty: none.
    pub distinct: Vec<String>,
}

impl Default for Options {
    fn default() -> Options {
        Options {
            top: 5,
            engine: Engine::Walk,
            plan: PlanChoice::Best,
            yield_options: None,
            stop: Stop::NEVER,
            distinct: Vec::new(),
        }
    }
}

/// The slot indices of `--distinct` names (each once; a name the circuit lacks is refused
/// as `--lock` and `--set` refuse it).
pub fn distinct_slots(circuit: &dyn Circuit, names: &[String]) -> Result<Vec<usize>, Error> {
    let mut out = Vec::new();
    for name in names {
        let Some(slot) = circuit::slot_index(circuit, name) else {
            let names = slot_names(circuit);
            let hint = spec::nearest(name, &names)
                .map(|n| format!("did you mean `{n}`? "))
                .unwrap_or_default();
            return Err(Error::Slot(SlotError::Unknown {
                flag: "--distinct",
                slot: name.clone(),
                circuit: circuit.kind().name(),
                hint,
                slots: names.join(", "),
            }));
        };
        if !out.contains(&slot) {
            out.push(slot);
        }
    }
    Ok(out)
}

/// What a pick found.
#[derive(Debug, Clone)]
pub struct Picked {
    /// The best builds, best first, each with every figure (noise, DC budget, yield).
    pub builds: Vec<Ranked>,
    /// What the search did.
    pub stats: Stats,
    /// The search ran to its exact end: the builds are the best there are. False when a
    /// time limit or an interrupt stopped it (they are the best found so far).
    pub proven: bool,
    /// Why no build meets the spec, when none does.
    pub diagnosis: Option<diagnose::Diagnosis>,
}

/// The exact top builds of `spec` from `stock` with `locks` fixed, every reported figure
/// complete; with none, the diagnosis. `progress` hears from the search now and then.
pub fn pick(
    spec: &Spec,
    stock: &Stock,
    locks: &[(usize, Part)],
    options: &Options,
    progress: &mut dyn FnMut(Progress),
) -> Result<Picked, Error> {
    let circuit = circuit::circuit_of(spec);
    let distinct = distinct_slots(circuit, &options.distinct)?;
    let req = Request {
        spec,
        stage: circuit,
        stock,
        locks,
        top: options.top.max(1),
        max_nodes: None,
        plan: options.plan,
        stop: options.stop.clone(),
        distinct: &distinct,
    };
    // The search and the diagnosis's relaxed searches share their candidate tables.
    let (outcome, proven, diagnosis) = search::with_tables_kept(|| -> Result<_, Error> {
        let mut outcome = search::run(&req, options.engine, &mut *progress)?;
        let total = outcome.builds.len();
        for (done, r) in outcome.builds.iter_mut().enumerate() {
            progress(Progress::Figures { done, total });
            analysis::complete(
                spec,
                circuit,
                &r.build,
                &mut r.evaluation,
                options.yield_options.as_ref(),
            );
        }
        let proven = !outcome.stats.truncated;
        let diagnosis = if outcome.builds.is_empty() {
            Some(diagnose::diagnose(&req, &mut *progress)?)
        } else {
            None
        };
        Ok((outcome, proven, diagnosis))
    })?;
    Ok(Picked {
        builds: outcome.builds,
        stats: outcome.stats,
        proven,
        diagnosis,
    })
}

/// The full judgement of one given build (`stockfit check`): every slot from `--set`
/// entries. A value found in an inventory takes that line's ratings, cost and polarity
/// (`Stock::find_piece`); the parts are not locked (a checked build is a build, not a board
/// repair).
pub fn check(
    spec: &Spec,
    stock: &Stock,
    entries: &[SlotEntry],
    yield_options: Option<&YieldOptions>,
) -> Result<Ranked, Error> {
    let circuit = circuit::circuit_of(spec);
    let given = flag_parts(circuit, stock, entries, "--set")?;
    let missing: Vec<&str> = circuit
        .slots()
        .iter()
        .enumerate()
        .filter(|(i, _)| !given.iter().any(|(g, _)| g == i))
        .map(|(_, s)| s.name)
        .collect();
    if !missing.is_empty() {
        return Err(Error::Slot(SlotError::Missing {
            missing: missing.join(", "),
        }));
    }
    let mut parts: Vec<Option<Part>> = vec![None; circuit.slots().len()];
    for (i, mut p) in given {
        p.locked = false;
        let tol = entries
            .iter()
            .find(|e| circuit::slot_index(circuit, &e.slot) == Some(i))
            .and_then(|e| e.text.contains('/').then_some(p.pieces[0].tolerance));
        if let Some(piece) = stock.find_piece(p.kind, p.value, tol) {
            p = Part::single(p.kind, piece);
        }
        parts[i] = Some(p);
    }
    let build = Build {
        parts: parts.into_iter().flatten().collect(),
    };
    let mut evaluation = analysis::evaluate(spec, circuit, &build, None);
    analysis::complete(spec, circuit, &build, &mut evaluation, yield_options);
    Ok(Ranked { build, evaluation })
}

/// What a build takes from one inventory row.
#[derive(Debug, Clone, PartialEq)]
pub struct Taking {
    /// The inventory's 1-based data row.
    pub row: usize,
    /// Its line in the file.
    pub file_line: usize,
    /// What the line holds.
    pub kind: PartKind,
    /// Its value.
    pub value: f64,
    /// Its tolerance.
    pub tolerance: f64,
    /// Pieces on hand before.
    pub on_hand: u32,
    /// Pieces the build takes.
    pub pieces: u32,
    /// The slots they go to.
    pub slots: Vec<&'static str>,
}

/// The pieces a build takes from `inventory`, row by row in row order (`stockfit take`).
/// Locked parts are on the board already and take nothing. A piece of a pool of identical
/// lines (`stock::pool`) comes off the pool's rows in file order, each row giving what it has.
pub fn takings(inventory: &Inventory, circuit: &dyn Circuit, build: &Build) -> Vec<Taking> {
    let pools = crate::stock::pool::Pools::new(inventory);
    // The slot of each piece, by the pool the search drew it from, in slot order.
    let mut wanted: std::collections::BTreeMap<usize, Vec<&'static str>> = Default::default();
    for (part, slot) in build.parts.iter().zip(circuit.slots()) {
        if part.locked {
            continue;
        }
        for piece in &part.pieces {
            let Some(row) = piece.line else { continue };
            if inventory.lines.get(row.wrapping_sub(1)).is_none() {
                continue;
            }
            wanted
                .entry(pools.representative(row))
                .or_default()
                .push(slot.name);
        }
    }
    let mut rows: std::collections::BTreeMap<usize, Taking> = Default::default();
    for (pool, slots) in wanted {
        let mut next = slots.iter();
        for (row, pieces) in pools.draw(pool, slots.len() as u32) {
            let line = &inventory.lines[row - 1];
            let t = rows.entry(row).or_insert_with(|| Taking {
                row,
                file_line: line.file_line,
                kind: line.kind,
                value: line.value,
                tolerance: line.tolerance,
                on_hand: line.qty,
                pieces: 0,
                slots: Vec::new(),
            });
            t.pieces += pieces;
            for slot in next.by_ref().take(pieces as usize) {
                if !t.slots.contains(slot) {
                    t.slots.push(slot);
                }
            }
        }
    }
    rows.into_values().collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stock::Limits;
    use crate::vocab::Combine;

    const SPEC: &str = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\nband = [\"20 Hz\", \"20 kHz\"]\n";

    fn e24() -> Stock {
        let series = |s| Source::Series {
            series: s,
            tolerance: 0.01,
        };
        Stock::new(
            series(Series::E24),
            series(Series::E6),
            Limits {
                resistor_range: (100.0, 10e6),
                capacitor_range: (1e-9, 1e-3),
                combine: Combine::Single,
            },
        )
    }

    fn lock_errors(table: &str) -> Vec<SpecError> {
        let spec = Spec::from_toml(&format!("{SPEC}[lock]\n{table}")).unwrap();
        match resolve_locks(&spec, circuit::circuit_of(&spec), &e24(), &[]) {
            Err(Error::Spec(e)) => e.0,
            other => panic!("expected spec errors, got {other:?}"),
        }
    }

    #[test]
    fn spec_locks_are_checked_against_the_circuit_with_their_lines() {
        let e = lock_errors("r_fb = \"100k\"\nr_inn = \"10k\"\n");
        assert_eq!(e.len(), 1);
        assert_eq!((e[0].line, e[0].key.as_str()), (Some(9), "lock.r_inn"));
        let m = e[0].to_string();
        assert!(m.contains("no slot `r_inn`; did you mean `r_in`?"), "{m}");
        assert!(m.contains("r_in, r_fb"), "{m}");
        // Every bad entry at once, each with its unit judged by its slot's kind.
        let e = lock_errors("c_in = \"4k7\"\nr_in = \"10 uF\"\n");
        assert_eq!(e.len(), 2);
        assert!(e[0].to_string().contains("`lock.c_in`") && e[0].message.contains("resistance"));
        assert!(e[1].to_string().contains("line 9, `lock.r_in`"));
        assert!(e[1].message.contains("is a capacitance"));
    }

    #[test]
    fn flags_replace_spec_locks_and_a_slot_twice_is_refused() {
        let spec = Spec::from_toml(&format!("{SPEC}[lock]\nr_in = \"33k\"\n")).unwrap();
        let c = circuit::circuit_of(&spec);
        let flag = |s: &str| SlotEntry::parse(s).unwrap();
        let locks = resolve_locks(&spec, c, &e24(), &[flag("r_in=47k/5%")]).unwrap();
        assert_eq!(locks.len(), 1);
        assert_eq!((locks[0].1.value, locks[0].1.tolerance()), (47e3, 0.05));
        // Without a tolerance the lock takes the series's (1 %).
        let locks = resolve_locks(&spec, c, &e24(), &[]).unwrap();
        assert_eq!((locks[0].1.value, locks[0].1.tolerance()), (33e3, 0.01));
        let twice = resolve_locks(&spec, c, &e24(), &[flag("r_fb=1k"), flag("r_fb=2k")]);
        assert!(
            matches!(twice, Err(Error::Slot(SlotError::Twice { .. }))),
            "{twice:?}"
        );
        let unit = resolve_locks(&spec, c, &e24(), &[flag("c_in=4k7")]).unwrap_err();
        assert!(unit.to_string().contains("--lock c_in=4k7"), "{unit}");
    }
}
