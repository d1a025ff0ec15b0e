//! The terminal streams: everything the binary prints goes through here, so that a failed
//! write to standard output is noticed (exit 2) and text from files never reaches the terminal
//! as control sequences.
//!
//! Standard output: the first write error is remembered and later output is dropped; at the
//! end of the run [`finish`] flushes and reports it, so `stockfit … > /dev/full` is exit 2
//! with a message instead of a silent 0. A closed pipe (EPIPE: the reader of `stockfit … |
//! head` has exited) is not an error: the output is dropped quietly and the run keeps its
//! own exit code, as command-line tools commonly do (common practice; Rust ignores SIGPIPE,
//! so the error arrives as EPIPE rather than as a signal).
//!
//! Standard error: messages are written with their control characters escaped
//! (`report::sanitise`), since they quote file names and cells, and a failed write to it is
//! ignored — there is nowhere left to report it (`eprintln!` would panic).

use std::fmt;
use std::io::{self, Write};
use std::path::Path;
use std::sync::Mutex;
use stockfit::report::sanitise;

/// What became of standard output: nothing yet, the reader went away, or a write failed.
#[derive(Debug)]
enum State {
    Fine,
    Closed,
    Failed(io::Error),
}

static STDOUT: Mutex<State> = Mutex::new(State::Fine);

fn note_error(state: &mut State, e: io::Error) {
    if !matches!(state, State::Fine) {
        return;
    }
    *state = if e.kind() == io::ErrorKind::BrokenPipe {
        State::Closed
    } else {
        State::Failed(e)
    };
}

/// Writes to standard output unless an earlier write failed; remembers the first failure.
pub fn print(args: fmt::Arguments) {
    let mut state = STDOUT.lock().unwrap_or_else(|p| p.into_inner());
    if !matches!(*state, State::Fine) {
        return;
    }
    if let Err(e) = io::stdout().lock().write_fmt(args) {
        note_error(&mut state, e);
    }
}

/// Flushes standard output; the first write error of the run, if any, except a closed pipe.
pub fn finish() -> Result<(), io::Error> {
    let mut state = STDOUT.lock().unwrap_or_else(|p| p.into_inner());
    if matches!(*state, State::Fine) {
        if let Err(e) = io::stdout().lock().flush() {
            note_error(&mut state, e);
        }
    }
    match std::mem::replace(&mut *state, State::Closed) {
        State::Failed(e) => Err(e),
        State::Fine | State::Closed => Ok(()),
    }
}

/// Writes a message to standard error with the control characters of what it quotes shown
/// escaped (line feeds kept); a failure to write is ignored.
pub fn eprint(args: fmt::Arguments) {
    let text = args.to_string();
    let _ = writeln!(
        io::stderr().lock(),
        "{}",
        sanitise::escape_controls_but_newlines(&text)
    );
}

/// A file name for a message or a report line: its control characters shown escaped.
pub fn shown(path: &Path) -> String {
    sanitise::escape_controls(&path.display().to_string()).into_owned()
}

/// `println!` through [`print`].
macro_rules! say {
    () => { $crate::cli::console::print(format_args!("\n")) };
    ($($t:tt)*) => { $crate::cli::console::print(format_args!("{}\n", format_args!($($t)*))) };
}

/// `print!` through [`print`].
macro_rules! say_raw {
    ($($t:tt)*) => { $crate::cli::console::print(format_args!($($t)*)) };
}

/// `eprintln!` through [`eprint`].
macro_rules! tell {
    ($($t:tt)*) => { $crate::cli::console::eprint(format_args!($($t)*)) };
}

pub(crate) use {say, say_raw, tell};
