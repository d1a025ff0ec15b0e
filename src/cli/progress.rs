//! The progress bar on a terminal: shown once the work has run for a second, fed by the
//! library's progress callback through every phase (the search's top slot, its node counts at
//! any depth, the diagnosis, the MILP engine's solves), ticking on its own so the clock moves
//! between reports, cleared when the work ends.

use indicatif::{ProgressBar, ProgressStyle};
use std::time::{Duration, Instant};
use stockfit::circuit::Circuit;
use stockfit::search::Progress;

/// Which phase the bar is drawing, so a change of phase restyles it.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Phase {
    Search,
    Diagnosis,
    Figures,
    Milp,
}

/// A progress bar that appears only on a terminal, and only for work that takes a while.
pub struct Bar<'a> {
    show: bool,
    started: Instant,
    bar: Option<(ProgressBar, Phase)>,
    circuit: &'a dyn Circuit,
    top: usize,
}

/// "1.2 M" for large counts, the count itself below ten thousand.
fn count(n: u64) -> String {
    match n {
        0..=9_999 => n.to_string(),
        10_000..=999_999 => format!("{:.0} k", n as f64 / 1e3),
        _ => format!("{:.1} M", n as f64 / 1e6),
    }
}

fn best(top: usize, best: f64) -> String {
    match (best.is_finite(), top) {
        (true, 1) => format!("best {best:.4} points"),
        (true, _) => format!("{}{} best {best:.4} points", top, ordinal(top)),
        (false, 1) => "none passes yet".to_string(),
        (false, _) => format!("fewer than {top} pass yet"),
    }
}

fn ordinal(n: usize) -> &'static str {
    match (n % 10, n % 100) {
        (_, 11..=13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    }
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

    /// The bar for `phase`, made (or restyled) on the first report of that phase.
    fn bar(&mut self, phase: Phase) -> &ProgressBar {
        if self.bar.as_ref().is_some_and(|(_, p)| *p != phase) {
            if let Some((b, _)) = self.bar.take() {
                b.finish_and_clear();
            }
        }
        let started = self.started;
        let (b, _) = self.bar.get_or_insert_with(|| {
            let (b, template) = match phase {
                // The message last: `wide_msg` takes the width left and is cut to it, so
                // the bar stays one line on a narrow terminal.
                Phase::Search => (
                    ProgressBar::new(0),
                    "searching {prefix} {pos}/{len} {bar:12} [{elapsed}] {wide_msg}",
                ),
                Phase::Diagnosis => (
                    ProgressBar::new(0),
                    "nothing passes; trying each requirement alone {pos}/{len} {bar:12} [{elapsed}] {wide_msg}",
                ),
                Phase::Figures => (
                    ProgressBar::new(0),
                    "noise, DC budget and yield of each build {pos}/{len} {bar:12} [{elapsed}]",
                ),
                Phase::Milp => (ProgressBar::new_spinner(), "{spinner} [{elapsed}] {wide_msg}"),
            };
            // The clock counts from the start of the work, not from the bar.
            let b = b.with_elapsed(started.elapsed());
            if let Ok(style) = ProgressStyle::with_template(template) {
                b.set_style(style);
            }
            // The clock and spinner move between reports too.
            b.enable_steady_tick(Duration::from_millis(200));
            (b, phase)
        });
        b
    }

    /// What the library reports.
    pub fn update(&mut self, p: Progress) {
        if !self.show || self.started.elapsed() < Duration::from_secs(1) {
            return;
        }
        let top = self.top;
        match p {
            Progress::Walk { slot, done, total } => {
                let name = self.circuit.slots()[slot].name;
                let b = self.bar(Phase::Search);
                b.set_prefix(name.to_string());
                b.set_length(total as u64);
                b.set_position(done as u64);
            }
            Progress::Nodes {
                nodes,
                judged,
                best: b_,
            } => {
                let b = self.bar(Phase::Search);
                b.set_message(format!(
                    "{} nodes · {} judged · {}",
                    count(nodes),
                    count(judged),
                    best(top, b_)
                ));
            }
            Progress::Diagnosis { tried, total, key } => {
                let b = self.bar(Phase::Diagnosis);
                b.set_message(key.to_string());
                b.set_length(total as u64);
                b.set_position(tried as u64);
            }
            Progress::Figures { done, total } => {
                let b = self.bar(Phase::Figures);
                b.set_length(total as u64);
                b.set_position(done as u64);
            }
            Progress::Milp { solved, best: b_ } => {
                let b = self.bar(Phase::Milp);
                b.set_message(format!("MILP: {solved} models solved, {}", best(top, b_)));
            }
        }
    }

    /// Clear the bar.
    pub fn finish(&mut self) {
        if let Some((b, _)) = self.bar.take() {
            b.finish_and_clear();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_read_as_a_person_would() {
        assert_eq!(count(512), "512");
        assert_eq!(count(45_300), "45 k");
        assert_eq!(count(2_140_000), "2.1 M");
        assert_eq!(best(5, 2.19123), "5th best 2.1912 points");
        assert_eq!(best(1, f64::INFINITY), "none passes yet");
        assert_eq!(best(3, f64::INFINITY), "fewer than 3 pass yet");
        assert_eq!(best(1, 0.5), "best 0.5000 points");
        assert_eq!(ordinal(2), "nd");
        assert_eq!(ordinal(12), "th");
        assert_eq!(ordinal(21), "st");
    }
}
