//! How a run ends: the exit codes, and the error that carries one.

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
