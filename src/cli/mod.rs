//! Command-line front end: clap arguments → a validated request → the library → output.
//! All file reading, printing, progress bars and exit codes live here.

mod args;
mod files;
mod output;
mod progress;
mod run;
mod take;

pub use args::Arguments;

use clap::Parser;

/// Exit codes (README, "Exit codes").
pub const EXIT_OK: i32 = 0;
pub const EXIT_NO_BUILD: i32 = 1;
pub const EXIT_BAD_INPUT: i32 = 2;

/// An error that ends the run with an exit code. Messages are complete sentences naming what
/// to change.
#[derive(Debug)]
pub struct Failure {
    pub code: i32,
    pub error: anyhow::Error,
}

impl Failure {
    pub fn input(error: impl Into<anyhow::Error>) -> Failure {
        Failure {
            code: EXIT_BAD_INPUT,
            error: error.into(),
        }
    }
}

impl<E: Into<anyhow::Error>> From<E> for Failure {
    fn from(e: E) -> Failure {
        Failure::input(e)
    }
}

pub fn main() -> i32 {
    let args = match Arguments::try_parse() {
        Ok(a) => a,
        Err(e) => {
            // clap prints help and version to stdout (exit 0) and usage errors to stderr (2).
            let _ = e.print();
            return if e.use_stderr() {
                EXIT_BAD_INPUT
            } else {
                EXIT_OK
            };
        }
    };
    match run::run(args) {
        Ok(code) => code,
        Err(f) => {
            eprintln!("error: {:#}", f.error);
            f.code
        }
    }
}
