//! The shared vocabulary below the spec: part kinds and their units, how slots are realised
//! (`Combine`), how Monte Carlo draws a piece (`Distribution`), the circuit kinds (`StageKind`)
//! and the plausible values of each part kind.
//!
//! Everything from the build up to the reports speaks these words; this module imports only
//! `value`, so the top-level modules form a one-way graph (tests/module_graph.rs).

use crate::value::{self, Unit};
use serde::Serialize;
use std::fmt;

/// What a stock line holds. Only the two passive kinds a gain stage is built from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PartKind {
    /// A resistor; values in Ω.
    Resistor,
    /// A capacitor; values in F.
    Capacitor,
}

impl PartKind {
    /// Reads the `kind` cell: the full word or the short forms people type in a spreadsheet.
    pub(crate) fn from_cell(text: &str) -> Option<PartKind> {
        match text.to_ascii_lowercase().as_str() {
            "resistor" | "res" | "r" => Some(PartKind::Resistor),
            "capacitor" | "cap" | "c" => Some(PartKind::Capacitor),
            _ => None,
        }
    }
}

impl fmt::Display for PartKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            PartKind::Resistor => "resistor",
            PartKind::Capacitor => "capacitor",
        })
    }
}

impl PartKind {
    /// Both kinds, in the order tables are indexed by ([`PartKind::index`]).
    pub const ALL: [PartKind; 2] = [PartKind::Resistor, PartKind::Capacitor];

    /// The unit its values are in.
    pub fn unit(self) -> Unit {
        match self {
            PartKind::Resistor => Unit::Ohm,
            PartKind::Capacitor => Unit::Farad,
        }
    }

    /// 0 for resistors, 1 for capacitors: the index of per-kind arrays.
    pub fn index(self) -> usize {
        match self {
            PartKind::Resistor => 0,
            PartKind::Capacitor => 1,
        }
    }
}

/// Values this loader accepts as a resistor: 1 mΩ (a current-sense shunt) to 1 TΩ (an
/// electrometer feedback resistor) — common practice. Outside, the value is most likely a
/// capacitance typed on a resistor line (`100n` is 100 nΩ).
pub const PLAUSIBLE_OHMS: (f64, f64) = (1e-3, 1e12);
/// Values accepted as a capacitor: 1 fF to 100 mF (the largest aluminium electrolytic cans)
/// — common practice. Above, the value is most likely a resistance or a bare number typed on a
/// capacitor line (`4k7` is 4.7 kF, a bare `100` is 100 F).
pub const PLAUSIBLE_FARADS: (f64, f64) = (1e-15, 0.1);

/// Why `value` (SI units) cannot be a part of this kind, or `None` when it can.
pub fn implausible(kind: PartKind, value: f64) -> Option<String> {
    let (unit, (lo, hi), other) = match kind {
        PartKind::Resistor => (Unit::Ohm, PLAUSIBLE_OHMS, "a capacitance"),
        PartKind::Capacitor => (Unit::Farad, PLAUSIBLE_FARADS, "a resistance"),
    };
    if (lo..=hi).contains(&value) {
        return None;
    }
    let f = |v| value::format(v, unit);
    let hint = match kind {
        PartKind::Resistor if value < lo => {
            format!("; is this {other}? (a small `m` is milli: write `M` for mega)")
        }
        PartKind::Capacitor if value > hi => {
            format!("; is this {other}? A bare number is in farads: write `100n` or `4u7`")
        }
        _ => String::new(),
    };
    Some(format!(
        "{} is outside the {} of any {kind} ({} … {}){hint}",
        f(value),
        unit.quantity(),
        f(lo),
        f(hi)
    ))
}

/// Which stage to design.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StageKind {
    /// Inverting amplifier: gain −R_f/R_in, input through R_in to the virtual ground.
    Inverting,
    /// Non-inverting amplifier: gain 1 + R_f/R_g, input on the op-amp's + input.
    NonInverting,
    /// Split-supply, DC-coupled inverting amplifier (`circuit::split_supply`), + input to
    /// ground directly.
    InvertingDc,
    /// The same with a bias-compensation resistor from the + input to ground.
    InvertingDcCompensated,
    /// Split-supply, DC-coupled non-inverting amplifier (`circuit::split_supply`), the source
    /// straight on the + input.
    NonInvertingDc,
    /// The same with a bias-compensation resistor in series with the + input.
    NonInvertingDcCompensated,
    /// Four-resistor difference amplifier on a split supply (`circuit::difference`).
    Difference,
}

impl StageKind {
    /// Every stage kind.
    pub const ALL: [StageKind; 7] = [
        StageKind::Inverting,
        StageKind::NonInverting,
        StageKind::InvertingDc,
        StageKind::InvertingDcCompensated,
        StageKind::NonInvertingDc,
        StageKind::NonInvertingDcCompensated,
        StageKind::Difference,
    ];

    /// The spec's name of the stage (`"inverting"`, `"non-inverting"`).
    pub fn name(self) -> &'static str {
        match self {
            StageKind::Inverting => "inverting",
            StageKind::NonInverting => "non-inverting",
            StageKind::InvertingDc => "inverting-dc",
            StageKind::InvertingDcCompensated => "inverting-dc-compensated",
            StageKind::NonInvertingDc => "non-inverting-dc",
            StageKind::NonInvertingDcCompensated => "non-inverting-dc-compensated",
            StageKind::Difference => "difference",
        }
    }

    /// True for the stages that run on a split supply, DC-coupled (no divider, no coupling
    /// capacitors): the output's DC is the signal's own, centred on ground.
    pub fn split_supply(self) -> bool {
        !matches!(self, StageKind::Inverting | StageKind::NonInverting)
    }

    /// The DC-coupled kind a spec's `kind` names on a split supply (or with `coupling =
    /// "dc"`), with or without bias compensation; the kind itself when it has no such form.
    pub fn dc_coupled(self, compensated: bool) -> StageKind {
        match (self, self.inverting(), compensated) {
            (StageKind::Difference, _, _) => StageKind::Difference,
            (_, true, false) => StageKind::InvertingDc,
            (_, true, true) => StageKind::InvertingDcCompensated,
            (_, false, false) => StageKind::NonInvertingDc,
            (_, false, true) => StageKind::NonInvertingDcCompensated,
        }
    }

    /// True for the kinds whose gain is negative (the inverting ones).
    pub fn inverting(self) -> bool {
        matches!(
            self,
            StageKind::Inverting | StageKind::InvertingDc | StageKind::InvertingDcCompensated
        )
    }

    /// Reads a stage name, case-insensitive and trimmed, `_` taken as `-`; `None` if unknown.
    pub fn parse(text: &str) -> Option<StageKind> {
        let t = text.trim().to_ascii_lowercase().replace('_', "-");
        StageKind::ALL.into_iter().find(|k| k.name() == t)
    }
}

/// How a slot may be realised from stock.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Combine {
    /// One piece per slot.
    Single,
    /// One piece, or two pieces in series.
    Series,
    /// One piece, or two pieces in parallel.
    Parallel,
    /// One piece, or two pieces in series or in parallel.
    Both,
}

impl Combine {
    /// Reads the spec's `combine` word (`single`, `series`, `parallel`, `both`; case-insensitive,
    /// trimmed); `None` if unknown.
    pub fn parse(text: &str) -> Option<Combine> {
        match text.trim().to_ascii_lowercase().as_str() {
            "single" => Some(Combine::Single),
            "series" => Some(Combine::Series),
            "parallel" => Some(Combine::Parallel),
            "both" => Some(Combine::Both),
            _ => None,
        }
    }
}

/// How a piece's value spreads inside its tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Distribution {
    /// Evenly over ±tolerance.
    Uniform,
    /// Gaussian with σ = tolerance / 3, truncated at ±tolerance.
    Normal,
}

/// A goal of the ranking: each is one term of the objective (`objective/`, one file each), a
/// key of the spec's `[goals]` table and a default weight.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Goal {
    /// Points per 1 % of nominal gain error.
    GainError,
    /// Points per 100 mV of nominal output DC error.
    Offset,
    /// Points per piece.
    PartCount,
    /// Points per distinct stock line (or value).
    BomLines,
    /// Points per decade of capacitance (log10 of C in pF), summed over capacitors.
    Capacitance,
    /// Points per unit of currency, where costs are known.
    Cost,
    /// Points per dB of mid-band input-referred noise above the source's own thermal noise
    /// (`objective::noise`).
    Noise,
    /// Points per mA of the bias network's nominal current (`objective::divider_current`).
    DividerCurrent,
}

impl Goal {
    /// Every goal, in the order of the spec reference (and of `Goals`' weights).
    pub const ALL: [Goal; 8] = [
        Goal::GainError,
        Goal::Offset,
        Goal::PartCount,
        Goal::BomLines,
        Goal::Capacitance,
        Goal::Cost,
        Goal::Noise,
        Goal::DividerCurrent,
    ];

    /// The key in `[goals]`.
    pub const fn key(self) -> &'static str {
        match self {
            Goal::GainError => "gain_error",
            Goal::Offset => "offset",
            Goal::PartCount => "part_count",
            Goal::BomLines => "bom_lines",
            Goal::Capacitance => "capacitance",
            Goal::Cost => "cost",
            Goal::Noise => "noise",
            Goal::DividerCurrent => "divider_current",
        }
    }

    /// The weight without a `[goals]` entry. Calibrated so that, with 1 % parts (a ±2 % gain
    /// spread), a nominal error well inside the spread does not buy an extra piece or line:
    /// 0.1 % of gain error costs as much as one more piece (common practice: nobody solders a
    /// trim pair to win 0.05 %).
    pub fn default_weight(self) -> f64 {
        match self {
            Goal::GainError => 1.0,
            Goal::Offset => 0.5,
            Goal::PartCount | Goal::BomLines | Goal::Capacitance => 0.1,
            Goal::Cost => 1.0,
            // Two dB of noise cost as much as one more piece, or a decade of capacitance: a
            // decade of impedance level where a resistor's noise dominates (10 dB) is worth
            // the larger coupling capacitor it needs, the last dB above the op-amp's own
            // noise is not worth a capacitor ten times the size (common practice).
            Goal::Noise => 0.05,
            // A milliamp from the supply costs as much as one more piece (common practice).
            Goal::DividerCurrent => 0.1,
        }
    }

    /// Index into per-goal arrays.
    pub fn index(self) -> usize {
        self as usize
    }
}
