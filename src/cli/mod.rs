//! Command-line front end: clap arguments → a validated request → the library → output.
//! All file reading, printing, progress bars and exit codes live here. This file only
//! declares and dispatches; the files depend on each other one way (console, failure, write
//! → args, files, lock → output, progress → run → take).

mod args;
mod console;
mod failure;
mod files;
mod lock;
mod output;
mod progress;
mod run;
mod take;
mod write;

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
    let code = match result {
        Ok(code) => code,
        Err(f) => {
            // The message quotes file names and cells: its control characters are escaped.
            console::eprint(format_args!("error: {:#}", f.error));
            f.code
        }
    };
    // Output that never arrived is a failed run, whatever the run itself decided (a closed
    // pipe excepted: see `console`).
    match console::finish() {
        Ok(()) => code,
        Err(e) => {
            console::eprint(format_args!("error: cannot write to standard output: {e}"));
            EXIT_BAD_INPUT
        }
    }
}
