//! The progress bar on a terminal: shown once a search has run for a second, fed by the
//! library's progress callback, cleared when the search ends.

use indicatif::{ProgressBar, ProgressStyle};
use std::time::{Duration, Instant};
use stockfit::circuit::Circuit;
use stockfit::search::Progress;

/// A progress bar that appears only on a terminal, and only for a search that takes a while.
pub struct Bar<'a> {
    show: bool,
    started: Instant,
    bar: Option<ProgressBar>,
    circuit: &'a dyn Circuit,
    top: usize,
}

impl<'a> Bar<'a> {
    /// A bar that draws when `show` (a terminal, no `--quiet`).
    pub fn new(show: bool, circuit: &'a dyn Circuit, top: usize) -> Bar<'a> {
        Bar {
            show,
            started: Instant::now(),
            bar: None,
            circuit,
            top,
        }
    }

    /// What the search reports.
    pub fn update(&mut self, p: Progress) {
        if !self.show {
            return;
        }
        if self.bar.is_none() && self.started.elapsed() > Duration::from_secs(1) {
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
            self.bar = Some(b);
        }
        let Some(b) = &self.bar else {
            return;
        };
        match p {
            Progress::Walk { slot, done, total } => {
                b.set_message(format!("{} candidates", self.circuit.slots()[slot].name));
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
                    "MILP: {solved} models solved, {}th best so far {best}",
                    self.top
                ));
                b.tick();
            }
        }
    }

    /// Clear the bar.
    pub fn finish(&mut self) {
        if let Some(b) = self.bar.take() {
            b.finish_and_clear();
        }
    }
}
