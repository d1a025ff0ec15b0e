//! Command-line front end: clap arguments → a validated request → the library → output.
//! All file reading, printing, progress bars and exit codes live here. This file only
//! declares and dispatches; the files depend on each other one way (failure → args, files,
//! output, progress → run → take).

mod args;
mod failure;
mod files;
mod output;
mod progress;
mod run;
mod take;

pub use args::Arguments;
use failure::{EXIT_BAD_INPUT, EXIT_OK};

use clap::Parser;

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
    let result = match args.command {
        args::Command::Take(t) => take::take(&t),
        command => run::run(command),
    };
    match result {
        Ok(code) => code,
        Err(f) => {
            eprintln!("error: {:#}", f.error);
            f.code
        }
    }
}
