//! clap-derive arguments: raw values, each fixed choice a `ValueEnum` and each count checked
//! against its range as it is parsed; `run` turns them into a validated request.

use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// The most builds `--top` ranks: every ranked build gets its noise, DC budget and yield
/// and a row in each report, so more is a slow run and an unreadable table, not a better pick.
pub const MAX_TOP: usize = 1000;
/// The most Monte Carlo samples `--yield` draws per build: 10⁶ give a standard error below
/// 0.05 % (σ ≤ 0.5/√n), far inside any tolerance the checks can resolve, in about a second
/// per build; more only costs time.
pub const MAX_YIELD: usize = 1_000_000;

/// `--engine`: which exact search runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum EngineArg {
    /// The walk search (the default, fast at any stock size).
    Walk,
    /// A mixed-integer linear program (the same builds, usually slower).
    Milp,
}

impl EngineArg {
    /// The library's engine.
    pub fn engine(self) -> stockfit::search::Engine {
        match self {
            EngineArg::Walk => stockfit::search::Engine::Walk,
            EngineArg::Milp => stockfit::search::Engine::Milp,
        }
    }
}

/// `--top`: 1 to [`MAX_TOP`].
fn parse_top(text: &str) -> Result<usize, String> {
    let n: usize = text
        .trim()
        .parse()
        .map_err(|_| format!("expected a whole number of builds, found {text:?}"))?;
    match n {
        0 => Err("ask for at least one build".into()),
        n if n > MAX_TOP => Err(format!(
            "at most {MAX_TOP} builds are ranked (each is analysed in full and reported)"
        )),
        n => Ok(n),
    }
}

/// `--build`: which ranked build, from 1.
fn parse_build(text: &str) -> Result<usize, String> {
    match text.trim().parse::<usize>() {
        Ok(0) => Err("builds are numbered from 1".into()),
        Ok(n) => Ok(n),
        Err(_) => Err(format!("expected a build number from 1, found {text:?}")),
    }
}

/// `--time-limit`: a positive number of seconds, at most a day.
fn parse_seconds(text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(s) if s > 0.0 && s <= 86_400.0 => Ok(s),
        _ => Err(format!(
            "expected a number of seconds above 0 and at most 86400, found {text:?}"
        )),
    }
}

/// `--yield`: 0 (no yield) to [`MAX_YIELD`] samples.
fn parse_yield(text: &str) -> Result<usize, String> {
    let n: usize = text
        .trim()
        .parse()
        .map_err(|_| format!("expected a whole number of samples, found {text:?}"))?;
    if n > MAX_YIELD {
        return Err(format!(
            "at most {MAX_YIELD} samples: they give a standard error below 0.05 %, and more only take time"
        ));
    }
    Ok(n)
}

#[derive(Debug, Parser)]
#[command(
    name = "stockfit",
    version,
    about = "Pick buildable parts for single-supply op-amp gain stages and prove the build meets its spec",
    long_about = None
)]
pub struct Arguments {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, clap::Args)]
pub struct Output {
    /// Write JSON to FILE, or to standard output with `-` (then nothing else is printed there).
    #[arg(long, value_name = "FILE|-")]
    pub json: Option<String>,
    /// Write a SPICE netlist of the best build (`pick`) or the checked build (`check`) to
    /// FILE: a plain circuit for ngspice, to `.include` from a deck that adds the analyses.
    #[arg(long, value_name = "FILE")]
    pub spice: Option<PathBuf>,
    /// Write the frequency-response plot (gain and phase, SVG) of the best build (`pick`) or
    /// the checked build (`check`) to FILE.
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<PathBuf>,
    /// Write the schematic (SVG) of that build, with designators, values and polarity, to FILE.
    #[arg(long, value_name = "FILE.svg")]
    pub schematic: Option<PathBuf>,
    /// Write that build's bill of materials (CSV, one row per stock line to fetch) to FILE.
    #[arg(long, value_name = "FILE.csv")]
    pub bom: Option<PathBuf>,
    /// Write a one-page, self-contained HTML report (spec, builds, checks, plot, schematic,
    /// BOM, cautions) to FILE.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// No progress bar.
    #[arg(long, short)]
    pub quiet: bool,
    /// The exact search to run: `walk` (the default) or `milp` (a mixed-integer linear
    /// program; the same builds, usually slower).
    #[arg(long, value_enum, default_value_t = EngineArg::Walk)]
    pub engine: EngineArg,
    /// Monte Carlo samples per reported build (0: no yield; at most 1 000 000).
    #[arg(long = "yield", value_name = "N", default_value_t = 10_000, value_parser = parse_yield)]
    pub yield_samples: usize,
    /// Seed of the Monte Carlo draws (the same seed gives the same yield).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Stop the search after SECONDS and report the best builds found so far, marked as not
    /// proven best (Ctrl-C does the same). Without it the search runs to its exact end.
    #[arg(long, value_name = "SECONDS", value_parser = parse_seconds)]
    pub time_limit: Option<f64>,
}

/// `stockfit take`: the pick's options, the inventory to take from, and the build to take.
#[derive(Debug, clap::Args)]
pub struct TakeArgs {
    /// The spec (TOML).
    pub spec: PathBuf,
    /// The inventory CSV to take the pieces from (both kinds of part come from it).
    #[arg(long, value_name = "FILE.csv")]
    pub stock: PathBuf,
    /// Which ranked build to take (1 = the best).
    #[arg(long, default_value_t = 1, value_parser = parse_build)]
    pub build: usize,
    /// Fix a slot to a value, e.g. `r_in=47k` (repeatable); a locked slot takes nothing.
    #[arg(long, value_name = "SLOT=VALUE")]
    pub lock: Vec<String>,
    /// How many builds to rank (as `pick`), so that --build can name any of them.
    #[arg(long, default_value_t = 5, value_parser = parse_top)]
    pub top: usize,
    /// Write the new inventory. Without it, only show what would be taken and the file's hash.
    #[arg(long)]
    pub yes: bool,
    /// The exact search to run: `walk` (the default) or `milp`.
    #[arg(long, value_enum, default_value_t = EngineArg::Walk)]
    pub engine: EngineArg,
    /// Take only if the inventory's SHA-256 is still this (as printed by an earlier dry run).
    #[arg(long, value_name = "HEX")]
    pub expect_hash: Option<String>,
    /// Replace the inventory even if it is read-only (the new list keeps its mode, so it
    /// stays read-only). Without it a read-only inventory is refused.
    #[arg(long)]
    pub allow_read_only: bool,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Rank the best builds of a spec from a stock.
    Pick {
        /// The spec (TOML).
        spec: PathBuf,
        /// Stock for this run: a series name (E24 …) for the resistors, or an inventory CSV for
        /// both kinds of part. Overrides the spec's [stock].
        #[arg(long, value_name = "SERIES|FILE.csv")]
        stock: Option<String>,
        /// Fix a slot to a value, e.g. `r_in=47k` or `r_in=47k/5%` (repeatable).
        #[arg(long, value_name = "SLOT=VALUE")]
        lock: Vec<String>,
        /// How many builds to rank (1 to 1000).
        #[arg(long, default_value_t = 5, value_parser = parse_top)]
        top: usize,
        /// Which ranked build the netlist, plot, schematic, BOM and the HTML report's detail
        /// are of, and the terminal's detail (1 = the best); the JSON holds every ranked build.
        #[arg(long, value_name = "N", value_parser = parse_build)]
        build: Option<usize>,
        /// Rank only builds that differ from each other in these slots (comma-separated names,
        /// e.g. `r_fb,r_g`): of builds alike there, only the best. Default: none.
        #[arg(long, value_name = "SLOTS", value_delimiter = ',')]
        distinct: Vec<String>,
        #[command(flatten)]
        output: Output,
    },
    /// Full report of one given build.
    Check {
        spec: PathBuf,
        /// The part of a slot, e.g. `r_fb=100k` (every slot once).
        #[arg(long, value_name = "SLOT=VALUE", required = true)]
        set: Vec<String>,
        /// Stock the set values are taken from, for their tolerances and ratings.
        #[arg(long, value_name = "SERIES|FILE.csv")]
        stock: Option<String>,
        #[command(flatten)]
        output: Output,
    },
    /// List the values of a standard series (IEC 60063).
    Series {
        /// E3, E6, E12, E24, E48, E96 or E192.
        name: String,
        #[arg(long, default_value = "1")]
        from: String,
        #[arg(long, default_value = "10")]
        to: String,
    },
    /// Validate and summarise an inventory CSV.
    Stock { file: PathBuf },
    /// Pick as `pick` does, then take the chosen build's pieces off the inventory CSV
    /// (a dry run without --yes).
    Take(TakeArgs),
    /// Run `pick` on a built-in example (a 9 V hydrophone preamp on E24/E6 stock).
    Demo {
        /// How many builds to rank (1 to 1000).
        #[arg(long, default_value_t = 5, value_parser = parse_top)]
        top: usize,
        #[command(flatten)]
        output: Output,
    },
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pick_arguments() {
        let a = Arguments::try_parse_from([
            "stockfit", "pick", "x.toml", "--lock", "r_in=47k", "--lock", "c_in=1u", "--top", "3",
            "--json", "-",
        ])
        .unwrap();
        match a.command {
            Command::Pick {
                lock,
                top,
                build,
                distinct,
                output,
                ..
            } => {
                assert_eq!(lock, vec!["r_in=47k", "c_in=1u"]);
                assert_eq!(top, 3);
                assert_eq!(build, None);
                assert!(distinct.is_empty());
                assert_eq!(output.json.as_deref(), Some("-"));
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn distinct_takes_a_comma_separated_list() {
        let a = Arguments::try_parse_from([
            "stockfit",
            "pick",
            "x.toml",
            "--distinct",
            "r_fb,r_g",
            "--distinct",
            "c_in",
            "--build",
            "2",
        ])
        .unwrap();
        match a.command {
            Command::Pick {
                distinct, build, ..
            } => {
                assert_eq!(distinct, vec!["r_fb", "r_g", "c_in"]);
                assert_eq!(build, Some(2));
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn spice_file_on_pick_and_check() {
        let a =
            Arguments::try_parse_from(["stockfit", "pick", "x.toml", "--spice", "a.cir"]).unwrap();
        match a.command {
            Command::Pick { output, .. } => {
                assert_eq!(output.spice, Some(PathBuf::from("a.cir")));
            }
            other => panic!("{other:?}"),
        }
        let a = Arguments::try_parse_from([
            "stockfit", "check", "x.toml", "--set", "r_in=10k", "--spice", "b.cir",
        ])
        .unwrap();
        match a.command {
            Command::Check { output, .. } => {
                assert_eq!(output.spice, Some(PathBuf::from("b.cir")));
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn report_files_on_pick_and_check() {
        let a = Arguments::try_parse_from([
            "stockfit",
            "pick",
            "x.toml",
            "--plot",
            "p.svg",
            "--schematic",
            "s.svg",
            "--bom",
            "b.csv",
            "--report",
            "r.html",
        ])
        .unwrap();
        match a.command {
            Command::Pick { output, .. } => {
                assert_eq!(output.plot, Some(PathBuf::from("p.svg")));
                assert_eq!(output.schematic, Some(PathBuf::from("s.svg")));
                assert_eq!(output.bom, Some(PathBuf::from("b.csv")));
                assert_eq!(output.report, Some(PathBuf::from("r.html")));
            }
            other => panic!("{other:?}"),
        }
        let a = Arguments::try_parse_from([
            "stockfit", "check", "x.toml", "--set", "r_in=10k", "--bom", "b.csv",
        ])
        .unwrap();
        match a.command {
            Command::Check { output, .. } => {
                assert_eq!(output.bom, Some(PathBuf::from("b.csv")));
                assert_eq!(output.plot, None);
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn take_arguments() {
        let a = Arguments::try_parse_from([
            "stockfit",
            "take",
            "x.toml",
            "--stock",
            "s.csv",
            "--build",
            "2",
            "--yes",
            "--expect-hash",
            "ab",
            "--lock",
            "r_in=10k",
        ])
        .unwrap();
        match a.command {
            Command::Take(t) => {
                assert_eq!(t.stock, PathBuf::from("s.csv"));
                assert_eq!((t.build, t.top, t.yes), (2, 5, true));
                assert_eq!(t.expect_hash.as_deref(), Some("ab"));
                assert_eq!(t.lock, vec!["r_in=10k"]);
            }
            other => panic!("{other:?}"),
        }
        let a = Arguments::try_parse_from(["stockfit", "take", "x.toml", "--stock", "s.csv"]);
        match a.unwrap().command {
            Command::Take(t) => {
                assert_eq!((t.build, t.yes, t.expect_hash), (1, false, None));
                assert!(!t.allow_read_only);
            }
            other => panic!("{other:?}"),
        }
        assert!(Arguments::try_parse_from(["stockfit", "take", "x.toml"]).is_err());
    }

    #[test]
    fn engine_option() {
        let a =
            Arguments::try_parse_from(["stockfit", "pick", "x.toml", "--engine", "milp"]).unwrap();
        match a.command {
            Command::Pick { output, .. } => assert_eq!(output.engine, EngineArg::Milp),
            other => panic!("{other:?}"),
        }
        let a = Arguments::try_parse_from(["stockfit", "pick", "x.toml"]).unwrap();
        match a.command {
            Command::Pick { output, .. } => assert_eq!(output.engine, EngineArg::Walk),
            other => panic!("{other:?}"),
        }
        let a = Arguments::try_parse_from([
            "stockfit", "take", "x.toml", "--stock", "s.csv", "--engine", "milp",
        ])
        .unwrap();
        match a.command {
            Command::Take(t) => assert_eq!(t.engine, EngineArg::Milp),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn the_definition_is_consistent() {
        // clap's own checks of the argument definitions (names, defaults, conflicts).
        use clap::CommandFactory;
        Arguments::command().debug_assert();
    }

    #[test]
    fn counts_are_checked_against_their_ranges() {
        let top = |n: &str| Arguments::try_parse_from(["stockfit", "pick", "x.toml", "--top", n]);
        assert!(top("1").is_ok() && top("1000").is_ok());
        for bad in ["0", "1001", "-1", "x"] {
            assert!(top(bad).is_err(), "--top {bad}");
        }
        let y = |n: &str| Arguments::try_parse_from(["stockfit", "pick", "x.toml", "--yield", n]);
        assert!(y("0").is_ok() && y("1000000").is_ok());
        assert!(y("1000001").is_err() && y("18446744073709551615").is_err());
        let b = |n: &str| {
            Arguments::try_parse_from([
                "stockfit", "take", "x.toml", "--stock", "s.csv", "--build", n,
            ])
        };
        assert!(b("1").is_ok() && b("0").is_err());
        let e = Arguments::try_parse_from(["stockfit", "pick", "x.toml", "--engine", "simplex"]);
        assert!(e.is_err());
    }

    #[test]
    fn check_needs_set() {
        assert!(Arguments::try_parse_from(["stockfit", "check", "x.toml"]).is_err());
    }
}
