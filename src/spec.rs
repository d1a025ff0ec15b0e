//! The requirement as typed values, validated once at load.
//!
//! A spec is TOML with the sections `[stage]`, `[amplifier]`, `[stock]`, `[goals]` and `[lock]`.
//! Every value may be written as the trade writes it (`"9 V"`, `"4k7"`, `"20 Hz"`, `"1%"`) or as
//! a plain number in SI base units, under the same rules either way. Every problem found is
//! collected (the first [`MAX_LISTED_PROBLEMS`] described, the rest counted), each with its key
//! and the line it is on — from the TOML parser's spans — so that a hand-typed spec is fixed in
//! one round. Stage and amplifier figures outside a plausible range are refused with what was
//! likely meant (`slew_rate = 0.5` is 0.5 V/s). [`Spec::from_bytes`] takes
//! the bytes of a file: a byte-order mark is skipped, non-UTF-8 text is located, and more than
//! [`MAX_SPEC_BYTES`] is refused before parsing.

use crate::series::Series;
use crate::stock::inventory::{more_problems, LineIndex, MAX_LISTED_PROBLEMS};
use crate::value::{self, Unit};
use crate::vocab::{Combine, Goal, PartKind, StageKind};
use serde::Deserialize;
use std::collections::HashMap;
use std::fmt;
use toml::Value;

/// How requirements are judged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ToleranceMode {
    /// Each part at the end of its tolerance that hurts (default).
    Worst,
    /// Nominal values only.
    Nominal,
}

/// How a capacitor's voltage rating is judged (`[stock] rating_rule`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum RatingRule {
    /// At least the full rail it can see (at power-up, or with the output latched to a rail)
    /// and the worst-case DC over the derating (default; see `analysis::rating`).
    Supply,
    /// The worst-case quiescent DC over the derating alone.
    Bias,
}

/// How the + input is biased (`[stage] bias`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum BiasNetwork {
    /// The divider drives the bias node directly (default).
    Divider,
    /// The divider with a bypass capacitor to ground and, in the non-inverting stage, a series
    /// resistor into the + input (`circuit::decoupled`).
    Decoupled,
}

/// An `amplifier = "FILE#NAME"` reference to an entry of a file of op-amps, resolved by the
/// caller that reads files ([`Spec::resolve_amplifier`]).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct AmplifierFile {
    /// The file's path as written (relative to the spec's folder).
    pub path: String,
    /// The entry's name (a table of the file).
    pub name: String,
    /// 1-based line of the `amplifier` key in the spec.
    pub line: Option<usize>,
}

/// Where the parts of one kind come from.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub enum SourceSpec {
    /// Every value of an IEC 60063 series, at the stock's tolerance for that kind.
    Series(Series),
    /// An inventory CSV, path as written (relative to the spec file's folder).
    File(String),
}

impl SourceSpec {
    /// A series name (`E24`) or else a CSV path.
    pub fn parse(text: &str) -> SourceSpec {
        match Series::parse(text) {
            Some(s) => SourceSpec::Series(s),
            None => SourceSpec::File(text.trim().to_string()),
        }
    }
}

/// The amplifier's figures, from its datasheet. Absent figures are ideal (zero error,
/// infinite bandwidth).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Amplifier {
    /// Gain-bandwidth product, Hz.
    pub gbw: Option<f64>,
    /// Input bias current magnitude, A (its sign is taken as unknown).
    pub input_bias_current: f64,
    /// Input offset current magnitude, A.
    pub input_offset_current: f64,
    /// Input offset voltage magnitude, V.
    pub input_offset_voltage: f64,
    /// Slew rate, V/s.
    pub slew_rate: Option<f64>,
    /// Input voltage noise density, V/√Hz (white).
    pub noise_voltage: Option<f64>,
    /// Input current noise density, A/√Hz (white).
    pub noise_current: Option<f64>,
    /// Power-supply rejection ratio, dB (a positive number): supply ripple referred to the
    /// input is the ripple divided by 10^(PSRR/20). `None`: perfect rejection.
    pub psrr: Option<f64>,
    /// Most output current the amplifier may deliver, A (peak): load and feedback network at the
    /// worst-case peak swing (`analysis::amplifier`).
    pub output_current_max: Option<f64>,
    /// How close each input may come to the (low, high) rail, V (`analysis::amplifier`).
    pub input_common_mode: Option<(f64, f64)>,
}

/// Weights of the ranking terms (points), one per [`Goal`]. See README "Goals".
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Goals {
    weights: [f64; Goal::ALL.len()],
}

impl Goals {
    /// The weight of a goal.
    pub fn weight(&self, goal: Goal) -> f64 {
        self.weights[goal.index()]
    }

    /// Set the weight of a goal.
    pub fn set(&mut self, goal: Goal, weight: f64) {
        self.weights[goal.index()] = weight;
    }
}

impl Default for Goals {
    fn default() -> Goals {
        Goals {
            weights: Goal::ALL.map(Goal::default_weight),
        }
    }
}

/// The parts source and the limits on what to take from it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StockSpec {
    /// Where resistors come from (`resistors` key; default E24).
    pub resistors: SourceSpec,
    /// Where capacitors come from (`capacitors` key; default E6).
    pub capacitors: SourceSpec,
    /// Lowest and highest value of any resistor slot, Ω (a pair's combined value too).
    pub resistor_range: (f64, f64),
    /// Lowest and highest value of any capacitor slot, F (a pair's combined value too).
    pub capacitor_range: (f64, f64),
    /// Tolerance of series resistors (inventories carry their own).
    pub resistor_tolerance: f64,
    /// Tolerance of series capacitors.
    pub capacitor_tolerance: f64,
    /// How a slot may be realised (one piece, or a series or parallel pair).
    pub combine: Combine,
    /// How Monte Carlo draws a part inside its tolerance.
    pub distribution: crate::vocab::Distribution,
    /// How capacitor voltage ratings are judged (`rating_rule`; default the full supply).
    pub rating_rule: RatingRule,
    /// Whether class-2 ceramics (X7R, Y5V, …) may sit in the signal path
    /// (`class2_in_signal_path`; default no).
    pub class2_in_signal_path: bool,
}

impl StockSpec {
    /// The limits the stock applies to its sources.
    pub fn limits(&self) -> crate::stock::Limits {
        crate::stock::Limits {
            resistor_range: self.resistor_range,
            capacitor_range: self.capacitor_range,
            combine: self.combine,
        }
    }
}

/// A slot fixed to a value (already on the board), as the `[lock]` table writes it. The value
/// is parsed once its slot's kind is known (`pick::resolve_locks`, with the circuit): the
/// spec does not know the circuits' slots, and a unit cannot be guessed from a name.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Lock {
    /// The slot's name as written.
    pub slot: String,
    /// The value as written.
    pub value: LockValue,
    /// 1-based line of the entry in the spec text, for messages about it later.
    #[serde(skip)]
    pub line: Option<usize>,
}

/// A `[lock]` value: text such as `"47k"` or `"47k/5%"`, or a bare number in base units.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub enum LockValue {
    /// Text, with an optional `/TOL`.
    Text(String),
    /// A bare number (Ω or F).
    Number(f64),
}

impl Lock {
    /// The value and tolerance for a slot of `kind` (`None`: the stock's tolerance for it), or
    /// what is wrong with the value as a part of that kind.
    pub fn parse(&self, kind: PartKind) -> Result<(f64, Option<f64>), String> {
        let unit = kind.unit();
        let parsed = match &self.value {
            LockValue::Text(t) => parse_lock_value(t, unit),
            LockValue::Number(x) => plausible(*x, unit).map(|x| (x, None)),
        };
        match parsed {
            Ok((value, tolerance)) if value > 0.0 && value.is_finite() => Ok((value, tolerance)),
            Ok((value, _)) => Err(format!("found {value}, expected a value greater than zero")),
            Err(m) => Err(m),
        }
    }
}

/// A validated requirement.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Spec {
    /// Which stage to design.
    pub stage: StageKind,
    /// The supply's positive rail, V (> 0): the single supply, or the upper rail of a split
    /// pair.
    pub supply: f64,
    /// The supply's negative rail, V: 0 (ground) for a single supply, below 0 for a split
    /// pair (`supply = ["-12 V", "12 V"]` or `"±12 V"`).
    pub supply_low: f64,
    /// Mid-band gain from the source EMF to the load, V/V: negative for inverting, ≥ 1 for
    /// non-inverting.
    pub gain: f64,
    /// How far |gain| may stray from the asked |gain|, as a fraction (< 1).
    /// The worst-case gain window, ±fraction of |gain|: the spec's, or
    /// [`DEFAULT_GAIN_TOLERANCE`] when it gives none (so it is always set once loaded).
    pub gain_tolerance: Option<f64>,
    /// True when `gain_tolerance` is the default, not the spec's (reports say so).
    pub gain_tolerance_default: bool,
    /// What the search derives from the spec before it starts (limits every passing build
    /// keeps); empty as loaded. Never read by the analysis, so it changes no figure.
    #[serde(skip)]
    pub derived: Derived,
    /// Least worst-case input resistance the stage may show to the source, Ω.
    pub input_resistance_min: Option<f64>,
    /// Load resistance after the output coupling capacitor, to ground, Ω.
    pub load: f64,
    /// Pass band (low, high), Hz.
    pub band: (f64, f64),
    /// Most loss at each band edge against the ideal mid-band gain, dB (a positive number).
    pub band_loss_max: Option<f64>,
    /// Highest worst-case corner 1/(2πRC) allowed for each coupling network, Hz.
    pub corner_low_max: Option<f64>,
    /// Headroom the output needs to the (low, high) rail, V.
    pub headroom: (f64, f64),
    /// DC level of the source, V (may be negative).
    pub source_dc: f64,
    /// The source's own resistance, in series with the input, Ω (≥ 0).
    pub source_resistance: f64,
    /// Peak input signal that must pass without clipping at worst case, V.
    pub input_peak: Option<f64>,
    /// Peak output signal the stage must reach without clipping at worst case, V.
    pub output_peak: Option<f64>,
    /// Whether requirements are judged at worst case or at nominal values.
    pub tolerance_mode: ToleranceMode,
    /// Most current the bias divider may draw from the supply (battery life), A.
    pub bias_current_max: Option<f64>,
    /// Most worst-case output DC error of a DC-coupled stage (the op-amp's bias, offset
    /// current and offset voltage through the stage, source at 0 V), V.
    pub output_offset_max: Option<f64>,
    /// Least worst-case common-mode rejection of a difference stage at DC, dB.
    pub cmrr_min: Option<f64>,
    /// Most input-referred noise over the band, V rms (worst case): the output noise over
    /// the band divided by the mid-band |gain| (`analysis::noise`).
    pub input_noise_max: Option<f64>,
    /// Capacitance across each resistor (pads, leads, the body), F: in the response, the
    /// corners, the worst case, the noise and the netlist. [`DEFAULT_STRAY_CAPACITANCE`]
    /// without the key; 0 leaves it out.
    pub stray_capacitance: f64,
    /// The source's series capacitance (a piezo, electret or capacitive sensor), F: in series
    /// with the source resistance, so it makes a high-pass with the input.
    pub source_capacitance: Option<f64>,
    /// The op-amp's datasheet figures.
    pub amplifier: Amplifier,
    /// Where the figures come from when the spec names an entry of an op-amp file
    /// (`amplifier = "FILE#NAME"`); `amplifier` holds them once resolved.
    pub amplifier_file: Option<AmplifierFile>,
    /// How the + input is biased (`bias`).
    pub bias: BiasNetwork,
    /// Supply ripple, V rms at `ripple_frequency` (`supply_ripple`).
    pub supply_ripple: Option<f64>,
    /// Frequency of the supply ripple, Hz (default 100 Hz: full-wave rectified 50 Hz mains).
    pub ripple_frequency: f64,
    /// Most worst-case ripple at the load, V rms (`ripple_out_max`).
    pub ripple_out_max: Option<f64>,
    /// Where the parts come from and what may be taken.
    pub stock: StockSpec,
    /// Weights of the ranking terms.
    pub goals: Goals,
    /// Slots fixed to a value: one per `[lock]` entry, sorted by slot name.
    pub locks: Vec<Lock>,
    /// Per-slot value ranges: one per `[range]` entry, sorted by slot name (the slot names
    /// are checked against the stage with the locks, `pick::resolve_locks`).
    pub ranges: Vec<SlotLimit>,
}

/// One `[range]` entry: the slot's nominal value within `[low, high]`, on top of the stock's
/// `resistor_range` / `capacitor_range`. A locked slot keeps its lock.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SlotLimit {
    /// The slot's name as written.
    pub slot: String,
    /// Least nominal value, Ω or F.
    pub low: f64,
    /// Greatest nominal value, Ω or F.
    pub high: f64,
    /// 1-based line of the entry in the spec.
    pub line: Option<usize>,
}

impl SlotLimit {
    /// Whether a nominal value lies in the range (10⁻⁹ relative slack, so that a series value
    /// computed as 2.2 × 10⁵ still meets "220k").
    pub fn admits(&self, value: f64) -> bool {
        value >= self.low * (1.0 - 1e-9) && value <= self.high * (1.0 + 1e-9)
    }
}

impl Spec {
    /// The `[range]` entry of a slot, if any.
    pub fn slot_limit(&self, slot: &str) -> Option<&SlotLimit> {
        self.ranges.iter().find(|r| r.slot == slot)
    }
}

impl Spec {
    /// The bias point that leaves the same swing to both rails' limits.
    pub fn bias_target(&self) -> f64 {
        if self.split() {
            // A DC-coupled stage's output DC is the signal's own: ground is its target.
            return 0.0;
        }
        (self.headroom.0 + self.supply - self.headroom.1) / 2.0
    }

    /// True on a split supply (a negative rail below ground).
    pub fn split(&self) -> bool {
        self.supply_low < 0.0
    }

    /// The lowest and highest output the headroom allows: (V− + headroom low, V+ − headroom
    /// high), with V− = 0 on a single supply.
    pub fn output_limits(&self) -> (f64, f64) {
        (
            self.supply_low + self.headroom.0,
            self.supply - self.headroom.1,
        )
    }

    /// The output peak the spec asks for: `output_peak`, or `input_peak` × |gain|.
    pub fn required_output_peak(&self) -> Option<f64> {
        self.output_peak
            .or(self.input_peak.map(|v| v * self.gain.abs()))
    }

    /// The output peak a build must carry when its highest |gain| is `gain_mag`: `output_peak`,
    /// or `input_peak` × `gain_mag`. The slew-rate check and the SNR read it at the build's
    /// worst-case highest |gain|, where the required input peak swings the output furthest
    /// (issue 12, part 8), not at the target gain.
    pub fn output_peak_at(&self, gain_mag: f64) -> Option<f64> {
        self.output_peak.or(self.input_peak.map(|v| v * gain_mag))
    }

    /// True when requirements are judged at worst case ([`ToleranceMode::Worst`]).
    pub fn worst_case(&self) -> bool {
        self.tolerance_mode == ToleranceMode::Worst
    }
}

/// Limits that follow from the spec as a whole, which the search derives once (see
/// `search::dfs::search`) and its relaxations read.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Derived {
    /// The highest worst-case |gain| any passing build can have: above it the amplifier's
    /// gain–bandwidth product loses too much at the band's top (`Circuit::gain_limit`).
    pub gain_max: Option<f64>,
    /// The least tolerance of any resistor a build can have (the stock's pieces and the
    /// locked parts; a pair's is between its pieces'), 0 when not derived: at worst case a
    /// gain resistor's ends are at least this far from its nominal value.
    pub resistor_tolerance_min: f64,
}

/// One problem in a spec, with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct SpecError {
    /// `section.key`, or the section alone.
    pub key: String,
    /// 1-based line in the spec text, where it can be found.
    pub line: Option<usize>,
    /// What is wrong and what was expected.
    pub message: String,
}

impl fmt::Display for SpecError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "line {line}, `{}`: {}", self.key, self.message),
            None => write!(f, "`{}`: {}", self.key, self.message),
        }
    }
}

/// Every problem found in a spec: the first [`MAX_LISTED_PROBLEMS`] in full (`.0`), and how
/// many more were found but not described (`.1`).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub struct SpecErrors(pub Vec<SpecError>, pub usize);

impl SpecErrors {
    /// A spec with one problem.
    pub fn one(error: SpecError) -> SpecErrors {
        SpecErrors(vec![error], 0)
    }
}

impl fmt::Display for SpecErrors {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let n = self.0.len() + self.1;
        write!(
            f,
            "{n} problem{} in the spec:",
            if n == 1 { "" } else { "s" }
        )?;
        for e in &self.0 {
            write!(f, "\n  {e}")?;
        }
        if self.1 > 0 {
            write!(f, "\n  {}", more_problems(self.1))?;
        }
        Ok(())
    }
}

const STAGE_KEYS: &[&str] = &[
    "kind",
    "supply",
    "gain",
    "gain_db",
    "gain_tolerance",
    "input_resistance_min",
    "load",
    "band",
    "band_loss_max",
    "corner_low_max",
    "headroom",
    "source_dc",
    "source_resistance",
    "input_peak",
    "output_peak",
    "tolerance_mode",
    "bias_current_max",
    "coupling",
    "bias_compensation",
    "output_offset_max",
    "cmrr_min",
    "input_noise_max",
    "stray_capacitance",
    "source_capacitance",
    "bias",
    "supply_ripple",
    "ripple_frequency",
    "ripple_out_max",
];
const AMPLIFIER_KEYS: &[&str] = &[
    "gbw",
    "input_bias_current",
    "input_offset_current",
    "input_offset_voltage",
    "slew_rate",
    "noise_voltage",
    "noise_current",
    "psrr",
    "output_current_max",
    "input_common_mode",
];
const STOCK_KEYS: &[&str] = &[
    "resistors",
    "capacitors",
    "resistor_range",
    "capacitor_range",
    "resistor_tolerance",
    "capacitor_tolerance",
    "combine",
    "distribution",
    "rating_rule",
    "class2_in_signal_path",
];
const GOAL_KEYS: [&str; Goal::ALL.len()] = {
    let mut keys = [""; Goal::ALL.len()];
    let mut i = 0;
    while i < keys.len() {
        keys[i] = Goal::ALL[i].key();
        i += 1;
    }
    keys
};
const SECTIONS: &[&str] = &["stage", "amplifier", "stock", "goals", "lock", "range"];
/// The keys of each section, for an unknown key that another section knows (`gbw` under
/// `[stage]`: "belongs in `[amplifier]`").
const KEYS_BY_SECTION: &[(&str, &[&str])] = &[
    ("stage", STAGE_KEYS),
    ("amplifier", AMPLIFIER_KEYS),
    ("stock", STOCK_KEYS),
    ("goals", &GOAL_KEYS),
];

/// Where each section and key of a spec starts, from the TOML parser's spans. Built once per
/// spec, so that locating an error is a hash lookup and a bisection in the line starts; the
/// text re-scan per error that this replaces was quadratic (60 000 unknown keys, minutes).
struct Positions {
    lines: LineIndex,
    /// Section (top-level key) → (byte offset of its first mention, its keys' offsets).
    sections: HashMap<String, (usize, HashMap<String, usize>)>,
}

impl Positions {
    /// Every top-level key and every key of a table below it, however TOML writes them: under
    /// a `[section]` header, as a dotted key (`stage.load = …`), quoted (`"load" = …`) or in an
    /// inline table (`stage = { load = … }`). A key's place is the span of the key itself (of
    /// its first mention for a dotted or implicit table), else of its value.
    fn new(doc: &toml_edit::ImDocument<&str>, lines: LineIndex) -> Positions {
        let root = doc.as_table();
        let start = |key: Option<&toml_edit::Key>, item: &toml_edit::Item| {
            key.and_then(toml_edit::Key::span)
                .or_else(|| item.span())
                .map(|s| s.start)
        };
        let mut sections = HashMap::new();
        for (name, item) in root.iter() {
            let Some(at) = start(root.key(name), item) else {
                continue;
            };
            let mut keys = HashMap::new();
            if let Some(table) = item.as_table_like() {
                for (key, value) in table.iter() {
                    let key_span = table.get_key_value(key).map(|(k, _)| k);
                    if let Some(at) = start(key_span, value) {
                        keys.insert(key.to_string(), at);
                    }
                }
            }
            sections.insert(name.to_string(), (at, keys));
        }
        Positions { lines, sections }
    }

    /// 1-based line of `key` inside `[section]`, or of the section itself when `key` is `None`.
    fn line_of(&self, section: &str, key: Option<&str>) -> Option<usize> {
        let (at, keys) = self.sections.get(section)?;
        let at = match key {
            None => *at,
            Some(key) => *keys.get(key)?,
        };
        Some(self.lines.line_of(at))
    }
}

/// 1-based line of `key` in `[section]` of a spec's text (however TOML writes it), for the
/// binary to point at the key that named a file it could not read; `None` when the text does
/// not parse or has no such key.
pub fn key_line(text: &str, section: &str, key: &str) -> Option<usize> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let doc = toml_edit::ImDocument::parse(text).ok()?;
    Positions::new(&doc, LineIndex::lf(text.as_bytes())).line_of(section, Some(key))
}

/// Reads TOML fields, collecting errors with their lines: the first [`MAX_LISTED_PROBLEMS`]
/// in full, the rest only counted, so a spec of thousands of bad keys costs little more than
/// reading it.
struct Reader {
    positions: Positions,
    errors: Vec<SpecError>,
    /// Problems past the listed ones.
    more: usize,
}

impl Reader {
    /// Line of `key` inside `[section]` (or of the section itself when `key` is `None`).
    fn line_of(&self, section: &str, key: Option<&str>) -> Option<usize> {
        self.positions.line_of(section, key)
    }

    /// True when no more problems are listed, only counted.
    fn full(&self) -> bool {
        self.errors.len() >= MAX_LISTED_PROBLEMS
    }

    fn error(&mut self, section: &str, key: Option<&str>, message: String) {
        if self.full() {
            self.more += 1;
            return;
        }
        let line = self.line_of(section, key);
        let key = match key {
            Some(k) => format!("{section}.{k}"),
            None => section.to_string(),
        };
        self.errors.push(SpecError { key, line, message });
    }

    /// Unknown keys are errors, with the nearest known key suggested.
    fn check_keys(&mut self, section: &str, table: &toml::Table, known: &[&str]) {
        for key in table.keys() {
            if !known.contains(&key.as_str()) {
                if self.full() {
                    self.more += 1;
                    continue;
                }
                let elsewhere = KEYS_BY_SECTION
                    .iter()
                    .find(|(s, keys)| *s != section && keys.contains(&key.as_str()));
                let hint = match (elsewhere, nearest(key, known)) {
                    (Some((s, _)), _) => format!("; `{key}` belongs in `[{s}]`"),
                    (None, Some(k)) => format!("; did you mean `{k}`?"),
                    (None, None) => format!("; known keys: {}", known.join(", ")),
                };
                self.error(section, Some(key), format!("unknown key{hint}"));
            }
        }
    }

    fn quantity(
        &mut self,
        section: &str,
        table: &toml::Table,
        key: &str,
        unit: Unit,
    ) -> Option<f64> {
        let v = table.get(key)?;
        match scalar(v, unit).and_then(|x| judge(section, key, unit, v, x)) {
            Ok(x) => Some(x),
            Err(msg) => {
                self.error(section, Some(key), msg);
                None
            }
        }
    }

    fn required(
        &mut self,
        section: &str,
        table: &toml::Table,
        key: &str,
        unit: Unit,
    ) -> Option<f64> {
        if !table.contains_key(key) {
            self.error(
                section,
                None,
                format!(
                    "missing `{key}` ({} in {})",
                    unit.quantity(),
                    unit_hint(unit)
                ),
            );
            return None;
        }
        self.quantity(section, table, key, unit)
    }

    fn positive(
        &mut self,
        section: &str,
        table: &toml::Table,
        key: &str,
        unit: Unit,
    ) -> Option<f64> {
        let v = self.quantity(section, table, key, unit)?;
        if v <= 0.0 {
            self.error(
                section,
                Some(key),
                format!("must be greater than zero, found {v}"),
            );
            return None;
        }
        Some(v)
    }

    /// A pair `[low, high]`, or one value used for both when `single_ok`.
    fn pair(
        &mut self,
        section: &str,
        table: &toml::Table,
        key: &str,
        unit: Unit,
        single_ok: bool,
    ) -> Option<(f64, f64)> {
        let v = table.get(key)?;
        match v {
            Value::Array(items) if items.len() == 2 => {
                let one = |v: &Value| scalar(v, unit).and_then(|x| judge(section, key, unit, v, x));
                let (a, b) = (one(&items[0]), one(&items[1]));
                match (a, b) {
                    (Ok(a), Ok(b)) => Some((a, b)),
                    (Err(m), _) | (_, Err(m)) => {
                        self.error(section, Some(key), m);
                        None
                    }
                }
            }
            Value::Array(items) => {
                self.error(
                    section,
                    Some(key),
                    format!(
                        "found a list of {} value(s), expected two values [low, high] of {}",
                        items.len(),
                        unit_hint(unit)
                    ),
                );
                None
            }
            other if single_ok => match scalar(other, unit) {
                Ok(x) => Some((x, x)),
                Err(m) => {
                    self.error(section, Some(key), m);
                    None
                }
            },
            other => {
                self.error(
                    section,
                    Some(key),
                    format!(
                        "found {}, expected a pair [low, high] of {}",
                        found(other),
                        unit_hint(unit)
                    ),
                );
                None
            }
        }
    }

    fn text(&mut self, section: &str, table: &toml::Table, key: &str) -> Option<String> {
        match table.get(key)? {
            Value::String(s) => Some(s.clone()),
            other => {
                self.error(
                    section,
                    Some(key),
                    format!("found {}, expected a quoted string", found(other)),
                );
                None
            }
        }
    }

    /// A `true`/`false` key, false when absent.
    fn flag(&mut self, section: &str, table: &toml::Table, key: &str) -> bool {
        match table.get(key) {
            None => false,
            Some(Value::Boolean(b)) => *b,
            Some(other) => {
                self.error(
                    section,
                    Some(key),
                    format!("found {}, expected true or false", found(other)),
                );
                false
            }
        }
    }

    fn number(&mut self, section: &str, table: &toml::Table, key: &str) -> Option<f64> {
        let v = match table.get(key)? {
            Value::Integer(i) => *i as f64,
            Value::Float(f) => *f,
            other => {
                self.error(
                    section,
                    Some(key),
                    format!(
                        "found {}, expected a plain number such as 0.5",
                        found(other)
                    ),
                );
                return None;
            }
        };
        if !v.is_finite() || v < 0.0 {
            self.error(
                section,
                Some(key),
                format!("found {v}, expected a finite number ≥ 0"),
            );
            return None;
        }
        Some(v)
    }
}

fn unit_hint(unit: Unit) -> &'static str {
    match unit {
        Unit::Ohm => "ohms, e.g. \"47k\" or \"4k7\"",
        Unit::Farad => "farads, e.g. \"100 nF\" or \"4u7\"",
        Unit::Volt => "volts, e.g. \"9 V\"",
        Unit::Ampere => "amperes, e.g. \"10 nA\"",
        Unit::Hertz => "hertz, e.g. \"20 Hz\" or \"1 MHz\"",
        Unit::VoltPerSecond => "volts per second, e.g. \"0.5 V/us\"",
        Unit::Watt => "watts, e.g. \"0.25 W\"",
        Unit::Percent => "percent, e.g. \"1%\"",
        Unit::Decibel => "decibels, e.g. \"0.5 dB\"",
        Unit::VoltPerRootHz => "V/√Hz, e.g. \"10 nV/rtHz\"",
        Unit::AmpPerRootHz => "A/√Hz, e.g. \"1 pA/rtHz\"",
    }
}

/// A TOML value as a quantity: a string in engineering form, or a plain number.
fn scalar(v: &Value, unit: Unit) -> Result<f64, String> {
    match v {
        Value::String(s) => value::parse(s, unit).map_err(|e| e.to_string()),
        Value::Integer(i) => plain(*i as f64, unit),
        Value::Float(f) => plain(*f, unit),
        other => Err(format!(
            "found {}, expected {}",
            found(other),
            unit_hint(unit)
        )),
    }
    .and_then(|x| plausible(x, unit))
}

/// A figure of the stage or the amplifier and the magnitudes it plausibly has. Outside them
/// the number was most likely typed in another unit or with the wrong prefix (`slew_rate =
/// 0.5` is 0.5 V/s, meant as 0.5 V/µs; `load = "1m"` is 1 mΩ, meant as 1 MΩ), so it is
/// refused with the likely intent rather than run through the analysis (`noise_voltage =
/// 1e308` printed "inf V rms"). Zero is left to each key's own rule (an ideal amplifier
/// figure, or "must be greater than zero"); the magnitude is judged, signs have their rules.
struct Figure {
    section: &'static str,
    key: &'static str,
    /// Smallest and largest plausible magnitude, SI base units.
    lo: f64,
    hi: f64,
    /// What the key is, for the message ("any op-amp's slew rate").
    what: &'static str,
    /// The unit the figure is usually written in (scale to base units, as it is typed): a
    /// number that is plausible in it was most likely meant in it.
    usual: Option<(f64, &'static str)>,
}

/// The plausible ranges, generous bounds around what op-amp gain stages are built with
/// (common practice, from memory; no datasheet is the source). Resistances and capacitances in
/// `[stock]`, `input_resistance_min` and `source_resistance` have the shared part bounds
/// ([`crate::vocab::PLAUSIBLE_OHMS`]) and are not listed.
const FIGURES: &[Figure] = &[
    // Op-amps run from under 1 V (nanopower parts) to a few hundred volts (high-voltage ones).
    Figure {
        section: "stage",
        key: "supply",
        lo: 0.5,
        hi: 1e3,
        what: "an op-amp's supply",
        usual: None,
    },
    // An op-amp drives loudspeakers and headphones down to a few ohms; below 1 Ω is a shunt.
    Figure {
        section: "stage",
        key: "load",
        lo: 1.0,
        hi: 1e12,
        what: "a load an op-amp drives",
        usual: None,
    },
    // Seismic and sensor stages reach below 1 Hz; op-amp stages end below 1 GHz.
    Figure {
        section: "stage",
        key: "band",
        lo: 1e-3,
        hi: 1e9,
        what: "the band of an op-amp stage",
        usual: None,
    },
    Figure {
        section: "stage",
        key: "corner_low_max",
        lo: 1e-3,
        hi: 1e9,
        what: "a corner of an op-amp stage",
        usual: None,
    },
    // Beyond 40 dB (1 % of the amplitude) the band's edge is no longer in the band.
    Figure {
        section: "stage",
        key: "band_loss_max",
        lo: 0.0,
        hi: 40.0,
        what: "a loss at the band's edge",
        usual: None,
    },
    // Signals from a microvolt (a sensor) to the highest supplies.
    Figure {
        section: "stage",
        key: "input_peak",
        lo: 1e-6,
        hi: 1e3,
        what: "a signal peak",
        usual: None,
    },
    Figure {
        section: "stage",
        key: "output_peak",
        lo: 1e-6,
        hi: 1e3,
        what: "a signal peak",
        usual: None,
    },
    Figure {
        section: "stage",
        key: "source_dc",
        lo: 0.0,
        hi: 1e3,
        what: "a source's DC level",
        usual: None,
    },
    // A divider under 1 nA needs resistors beyond any stock; over 1 A it is a heater.
    Figure {
        section: "stage",
        key: "bias_current_max",
        lo: 1e-9,
        hi: 1.0,
        what: "a bias divider's current",
        usual: Some((1e-6, "uA")),
    },
    // From nanopower parts (a few kHz) to the fastest (tens of GHz).
    Figure {
        section: "amplifier",
        key: "gbw",
        lo: 100.0,
        hi: 100e9,
        what: "any op-amp's gain-bandwidth product",
        usual: Some((1e6, "MHz")),
    },
    // fA (CMOS) to µA (bipolar, current-feedback inputs).
    Figure {
        section: "amplifier",
        key: "input_bias_current",
        lo: 0.0,
        hi: 1e-3,
        what: "any op-amp's input bias current",
        usual: Some((1e-9, "nA")),
    },
    Figure {
        section: "amplifier",
        key: "input_offset_current",
        lo: 0.0,
        hi: 1e-3,
        what: "any op-amp's input offset current",
        usual: Some((1e-9, "nA")),
    },
    // Datasheet maxima run from microvolts to a few tens of millivolts.
    Figure {
        section: "amplifier",
        key: "input_offset_voltage",
        lo: 0.0,
        hi: 0.1,
        what: "any op-amp's input offset voltage",
        usual: Some((1e-3, "mV")),
    },
    // 0.0001 V/µs (nanopower) to 100 000 V/µs; datasheets give V/µs, the bare unit is V/s.
    Figure {
        section: "amplifier",
        key: "slew_rate",
        lo: 100.0,
        hi: 1e11,
        what: "any op-amp's slew rate",
        usual: Some((1e6, "V/us")),
    },
    // About 1 nV/√Hz (the quietest) to a few hundred nV/√Hz (nanopower).
    Figure {
        section: "amplifier",
        key: "noise_voltage",
        lo: 0.0,
        hi: 10e-6,
        what: "any op-amp's voltage noise density",
        usual: Some((1e-9, "nV/rtHz")),
    },
    // fA/√Hz (CMOS) to tens of pA/√Hz (current-feedback inputs).
    Figure {
        section: "amplifier",
        key: "noise_current",
        lo: 0.0,
        hi: 10e-9,
        what: "any op-amp's current noise density",
        usual: Some((1e-12, "pA/rtHz")),
    },
];

/// The unit a number without a unit is read in.
fn base_symbol(unit: Unit) -> &'static str {
    match unit {
        Unit::VoltPerSecond => "V/s",
        other => other.symbol(),
    }
}

/// Refuses a figure outside its plausible range ([`FIGURES`]), saying what was likely meant.
/// `raw` is the TOML value as written.
fn judge(section: &str, key: &str, unit: Unit, raw: &Value, x: f64) -> Result<f64, String> {
    let Some(f) = FIGURES
        .iter()
        .find(|f| f.section == section && f.key == key)
    else {
        return Ok(x);
    };
    let m = x.abs();
    if m == 0.0 || (f.lo..=f.hi).contains(&m) {
        return Ok(x);
    }
    let fits = |v: f64| (f.lo..=f.hi).contains(&v);
    let (number, bare) = match raw {
        Value::Integer(i) => (i.to_string(), true),
        Value::Float(v) => (value::number_text(*v), true),
        Value::String(t) => (value::number_text(x), t.trim().parse::<f64>().is_ok()),
        _ => (value::number_text(x), false),
    };
    let written = match raw {
        Value::String(t) => format!("{t:?} is {}", value::format(x, unit)),
        _ => format!("{number} {}", base_symbol(unit)),
    };
    let range = if f.lo == 0.0 {
        format!("up to {}", value::format(f.hi, unit))
    } else {
        format!(
            "{} to {}",
            value::format(f.lo, unit),
            value::format(f.hi, unit)
        )
    };
    let side = if m < f.lo { "below" } else { "above" };
    let mut text = format!("{written}, far {side} {} (plausible: {range})", f.what);
    let mega = match raw {
        Value::String(t) if m < f.lo && t.contains('m') && fits(m * 1e9) => {
            Some(t.replacen('m', "M", 1))
        }
        _ => None,
    };
    if let Some(mega) = mega {
        text.push_str(&format!(
            "; a small `m` is milli: write `M` for mega, e.g. {mega:?}"
        ));
    } else if let Some((_, usual)) = f.usual.filter(|(scale, _)| fits(m * scale)) {
        text.push_str(&format!("; did you mean \"{number} {usual}\"?"));
        if bare {
            text.push_str(&format!(
                " A number without a unit is in {}",
                base_symbol(unit)
            ));
        }
    }
    Err(text)
}

/// What a TOML value is, for "found …, expected …" messages.
fn found(v: &Value) -> String {
    match v {
        Value::String(s) => format!("the text {s:?}"),
        Value::Integer(i) => format!("the number {i}"),
        Value::Float(f) => format!("the number {f}"),
        Value::Boolean(b) => format!("`{b}` (true/false)"),
        Value::Datetime(d) => format!("the date {d}"),
        Value::Array(items) => format!("a list of {} value(s)", items.len()),
        Value::Table(_) => "a table".to_string(),
    }
}

/// Resistances and capacitances outside what a gain stage is built from are taken for a value
/// of the other kind typed in the wrong place: `"100n"` as a resistance is 100 nΩ, `"4k7"` as a
/// capacitance 4.7 kF. The bounds are [`crate::vocab::PLAUSIBLE_OHMS`] and
/// [`crate::vocab::PLAUSIBLE_FARADS`], shared with the inventory loader.
fn plausible(x: f64, unit: Unit) -> Result<f64, String> {
    use crate::vocab::implausible;
    let kind = match unit {
        Unit::Ohm => PartKind::Resistor,
        Unit::Farad => PartKind::Capacitor,
        _ => return Ok(x),
    };
    match implausible(kind, x) {
        Some(why) if x > 0.0 => Err(why),
        _ => Ok(x),
    }
}

/// A bare TOML number, by the same rules as the same number quoted (`value::from_number`).
fn plain(x: f64, unit: Unit) -> Result<f64, String> {
    value::from_number(x, unit).map_err(|e| e.to_string())
}

/// Nearest known key by edit distance, when it is close enough to be a typo.
pub fn nearest<'k>(key: &str, known: &[&'k str]) -> Option<&'k str> {
    known
        .iter()
        .map(|k| (levenshtein(key, k), *k))
        .filter(|(d, k)| *d <= 3.max(k.len() / 3))
        .min()
        .map(|(_, k)| k)
}

/// Optimal-string-alignment distance: edits plus adjacent transpositions, so that the typo
/// `laod` is one step from `load`.
fn levenshtein(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (d[i - 1][j] + 1)
                .min(d[i][j - 1] + 1)
                .min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = best;
        }
    }
    d[a.len()][b.len()]
}

/// The `[amplifier]` keys of `amp_t` (a spec's section, or an entry of an op-amp file read
/// under the name `amplifier`).
fn read_amplifier(r: &mut Reader, amp_t: &toml::Table) -> Amplifier {
    let a = "amplifier";
    Amplifier {
        gbw: r.positive(a, amp_t, "gbw", Unit::Hertz),
        input_bias_current: r
            .quantity(a, amp_t, "input_bias_current", Unit::Ampere)
            .map(f64::abs)
            .unwrap_or(0.0),
        input_offset_current: r
            .quantity(a, amp_t, "input_offset_current", Unit::Ampere)
            .map(f64::abs)
            .unwrap_or(0.0),
        input_offset_voltage: r
            .quantity(a, amp_t, "input_offset_voltage", Unit::Volt)
            .map(f64::abs)
            .unwrap_or(0.0),
        slew_rate: r.positive(a, amp_t, "slew_rate", Unit::VoltPerSecond),
        noise_voltage: r
            .quantity(a, amp_t, "noise_voltage", Unit::VoltPerRootHz)
            .map(f64::abs),
        noise_current: r
            .quantity(a, amp_t, "noise_current", Unit::AmpPerRootHz)
            .map(f64::abs),
        psrr: r.positive(a, amp_t, "psrr", Unit::Decibel),
        output_current_max: r.positive(a, amp_t, "output_current_max", Unit::Ampere),
        input_common_mode: r
            .pair(a, amp_t, "input_common_mode", Unit::Volt, true)
            .filter(|&(lo, hi)| {
                let ok = lo >= 0.0 && hi >= 0.0;
                if !ok {
                    r.error(
                        a,
                        Some("input_common_mode"),
                        "how close each input may come to each rail cannot be negative".into(),
                    );
                }
                ok
            }),
    }
}

fn section<'t>(root: &'t toml::Table, name: &str, r: &mut Reader) -> Option<&'t toml::Table> {
    match root.get(name) {
        None => None,
        Some(Value::Table(t)) => Some(t),
        Some(other) => {
            r.error(
                name,
                None,
                format!("found {}, expected a table `[{name}]`", found(other)),
            );
            None
        }
    }
}

/// A lock entry `VALUE` or `VALUE/TOLERANCE` (e.g. `4k7`, `4k7/5%`).
pub fn parse_lock_value(text: &str, unit: Unit) -> Result<(f64, Option<f64>), String> {
    let (v, t) = match text.split_once('/') {
        // `V/us` is a unit, not a tolerance; locks are resistances and capacitances only.
        Some((v, t)) => (v, Some(t)),
        None => (text, None),
    };
    let value = value::parse(v, unit).map_err(|e| e.to_string())?;
    if value <= 0.0 {
        return Err(format!(
            "found {text:?}; a {} must be greater than zero",
            unit.quantity()
        ));
    }
    let value = plausible(value, unit).map_err(|why| format!("found {text:?}: {why}"))?;
    let tol = match t {
        Some(t) => {
            let tol = value::parse(t, Unit::Percent).map_err(|e| e.to_string())?;
            if !(0.0..1.0).contains(&tol) {
                return Err(format!(
                    "found the tolerance {t:?}, expected one from 0 % to below 100 %, e.g. \"47k/5%\""
                ));
            }
            Some(tol)
        }
        None => None,
    };
    Ok((value, tol))
}

impl Spec {
    /// Parse and validate a spec from the bytes of a file: a UTF-8 byte-order mark is skipped,
    /// text that is not UTF-8 is refused with the line of the first bad byte, and more than
    /// [`MAX_SPEC_BYTES`] is refused before anything is parsed.
    pub fn from_bytes(bytes: &[u8]) -> Result<Spec, SpecErrors> {
        if bytes.len() > MAX_SPEC_BYTES {
            return Err(SpecErrors::one(SpecError {
                key: "spec".into(),
                line: None,
                message: format!(
                    "the file is {} bytes, more than the {MAX_SPEC_BYTES} a spec may have; is this the right file?",
                    bytes.len()
                ),
            }));
        }
        let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
        match std::str::from_utf8(bytes) {
            Ok(text) => Spec::from_toml(text),
            Err(e) => {
                let good = &bytes[..e.valid_up_to()];
                let lines = LineIndex::lf(good);
                let line = lines.line_of(good.len());
                let column = good.len() - lines.start_of(line) + 1;
                Err(SpecErrors::one(SpecError {
                    key: "spec".into(),
                    line: Some(line),
                    message: format!(
                        "found the byte 0x{:02X} at column {column}, which is not UTF-8 text; save the spec as UTF-8",
                        bytes[e.valid_up_to()]
                    ),
                }))
            }
        }
    }

    /// Parse and validate a spec. Slot names in `[lock]` are checked against the stage's slots
    /// (from the stage registry) here, so that a misspelt slot is reported with its line.
    pub fn from_toml(text: &str) -> Result<Spec, SpecErrors> {
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        if text.len() > MAX_SPEC_BYTES {
            return Spec::from_bytes(text.as_bytes());
        }
        let blank = text
            .lines()
            .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'));
        if blank {
            return Err(SpecErrors::one(SpecError {
                key: "spec".into(),
                line: Some(1),
                message: "the spec is empty; expected at least a `[stage]` section with kind, \
                          supply, gain, load and band"
                    .into(),
            }));
        }
        let lines = LineIndex::lf(text.as_bytes());
        let doc = match toml_edit::ImDocument::parse(text) {
            Ok(doc) => doc,
            Err(e) => {
                let line = e.span().map(|s| lines.line_of(s.start));
                // TOML ends lines with LF or CRLF only; a file saved with classic Mac line ends
                // (CR alone) fails on its first line with a puzzling message.
                let lone_cr = text
                    .as_bytes()
                    .windows(2)
                    .any(|w| w[0] == b'\r' && w[1] != b'\n')
                    || text.ends_with('\r');
                let hint = if lone_cr {
                    " (the file has carriage returns without line feeds: save it with LF or CRLF line ends)"
                } else {
                    ""
                };
                return Err(SpecErrors::one(SpecError {
                    key: "toml".into(),
                    line,
                    message: format!("not valid TOML: {}{hint}", e.message().trim_end()),
                }));
            }
        };
        let positions = Positions::new(&doc, lines);
        // The values as `toml::Value`s, from the same parse.
        let root = match toml::Table::deserialize(toml_edit::de::Deserializer::from(doc)) {
            Ok(root) => root,
            Err(e) => {
                return Err(SpecErrors::one(SpecError {
                    key: "toml".into(),
                    line: e.span().map(|s| positions.lines.line_of(s.start)),
                    message: format!("not valid TOML: {}", e.message().trim_end()),
                }))
            }
        };
        let mut r = Reader {
            positions,
            errors: Vec::new(),
            more: 0,
        };
        for key in root.keys() {
            if !SECTIONS.contains(&key.as_str()) {
                let hint = nearest(key, SECTIONS)
                    .map(|k| format!("; did you mean `[{k}]`?"))
                    .unwrap_or_else(|| format!("; sections are {}", SECTIONS.join(", ")));
                r.error(key, None, format!("unknown section{hint}"));
            }
        }
        let empty = toml::Table::new();
        let stage_t = match section(&root, "stage", &mut r) {
            Some(t) => t,
            None => {
                if !root.contains_key("stage") {
                    r.error("stage", None, "missing the `[stage]` section".into());
                }
                &empty
            }
        };
        r.check_keys("stage", stage_t, STAGE_KEYS);
        // `amplifier = "FILE#NAME"` names an entry of a file of op-amps instead of a section.
        let amplifier_file = match root.get("amplifier") {
            Some(Value::String(t)) => {
                let line = r.line_of("amplifier", None);
                match t.rsplit_once('#') {
                    Some((path, name)) if !path.trim().is_empty() && !name.trim().is_empty() => {
                        Some(AmplifierFile {
                            path: path.trim().to_string(),
                            name: name.trim().to_string(),
                            line,
                        })
                    }
                    _ => {
                        r.error(
                            "amplifier",
                            None,
                            format!("found {t:?}, expected \"FILE#NAME\" (an entry of a file of op-amps, e.g. \"opamps.toml#quiet-cmos\") or an `[amplifier]` section"),
                        );
                        None
                    }
                }
            }
            _ => None,
        };
        let amp_t = if matches!(root.get("amplifier"), Some(Value::String(_))) {
            &empty
        } else {
            section(&root, "amplifier", &mut r).unwrap_or(&empty)
        };
        r.check_keys("amplifier", amp_t, AMPLIFIER_KEYS);
        let stock_t = section(&root, "stock", &mut r).unwrap_or(&empty);
        r.check_keys("stock", stock_t, STOCK_KEYS);
        let goals_t = section(&root, "goals", &mut r).unwrap_or(&empty);
        r.check_keys("goals", goals_t, &GOAL_KEYS);
        let lock_t = section(&root, "lock", &mut r).unwrap_or(&empty);
        let range_t = section(&root, "range", &mut r).unwrap_or(&empty);

        let s = "stage";
        let kind = match r.text(s, stage_t, "kind") {
            Some(k) => match StageKind::parse(&k) {
                Some(kind) => Some(kind),
                None => {
                    r.error(
                        s,
                        Some("kind"),
                        format!("unknown stage {k:?}; expected \"inverting\", \"non-inverting\" or \"difference\""),
                    );
                    None
                }
            },
            None => {
                if !stage_t.contains_key("kind") {
                    r.error(
                        s,
                        None,
                        "missing `kind` (\"inverting\", \"non-inverting\" or \"difference\")"
                            .into(),
                    );
                }
                None
            }
        };
        let rails = supply_rails(&mut r, s, stage_t);
        let supply = rails.map(|(_, hi)| hi);
        // `gain_db`, the alternative to `gain`: 20·log10 |gain| (IEC 60027-3's field
        // quantity level), the sign the stage's kind gives (negative for inverting).
        let gain_db = match stage_t.get("gain_db") {
            None => None,
            Some(Value::Integer(i)) => Some(*i as f64),
            Some(Value::Float(f)) if f.is_finite() => Some(*f),
            Some(other) => {
                r.error(
                    s,
                    Some("gain_db"),
                    format!(
                        "found {}, expected a plain number of decibels such as 20 (for ×10)",
                        found(other)
                    ),
                );
                None
            }
        };
        if gain_db.is_some() && stage_t.contains_key("gain") {
            r.error(
                s,
                Some("gain_db"),
                "give `gain` or `gain_db`, not both".into(),
            );
        }
        let gain = match stage_t.get("gain") {
            None if stage_t.contains_key("gain_db") => gain_db.map(|db| {
                let magnitude = 10f64.powf(db / 20.0);
                if kind == Some(StageKind::Inverting) {
                    -magnitude
                } else {
                    magnitude
                }
            }),
            None => {
                r.error(
                    s,
                    None,
                    "missing `gain` (a number, negative for inverting) or `gain_db`".into(),
                );
                None
            }
            Some(Value::Integer(i)) => Some(*i as f64),
            Some(Value::Float(f)) if f.is_finite() => Some(*f),
            Some(Value::String(t)) => match t.trim().parse::<f64>() {
                Ok(g) if g.is_finite() => Some(g),
                _ => {
                    r.error(
                        s,
                        Some("gain"),
                        format!("found {t:?}, expected a plain number such as -10 or 4.7 (V/V)"),
                    );
                    None
                }
            },
            Some(other) => {
                r.error(
                    s,
                    Some("gain"),
                    format!(
                        "found {}, expected a plain number such as -10 or 4.7 (V/V)",
                        found(other)
                    ),
                );
                None
            }
        };
        // A closed-loop gain of at least the open-loop gain the analysis takes (10^6,
        // `stage::OPEN_LOOP_GAIN`) cannot be built; below 1/1000 a stage is an attenuator nobody
        // builds with an op-amp (common practice).
        let gain = gain.filter(|&g| {
            let ok = g == 0.0 || (1e-3..1e6).contains(&g.abs());
            if !ok {
                r.error(
                    s,
                    Some("gain"),
                    format!(
                        "found {}, far outside the gain of one op-amp stage (plausible: a \
                         magnitude from 0.001 to below 1000000 V/V, the open-loop gain); the \
                         gain is a plain ratio, not dB",
                        value::number_text(g)
                    ),
                );
            }
            ok
        });
        // Without one, a documented default: a gain that misses its target by a factor must
        // never pass (see DEFAULT_GAIN_TOLERANCE).
        let gain_tolerance_default = !stage_t.contains_key("gain_tolerance");
        let gain_tolerance = r
            .positive(s, stage_t, "gain_tolerance", Unit::Percent)
            .filter(|&t| {
                // ±100 % or more allows no gain at all: no requirement left.
                if t >= 1.0 {
                    r.error(
                        s,
                        Some("gain_tolerance"),
                        format!(
                            "found {}, expected a tolerance below 100 %, e.g. \"5%\"",
                            value::format(t, Unit::Percent)
                        ),
                    );
                }
                t < 1.0
            })
            .or(gain_tolerance_default.then_some(DEFAULT_GAIN_TOLERANCE));
        let input_resistance_min = r.positive(s, stage_t, "input_resistance_min", Unit::Ohm);
        let load = r.required(s, stage_t, "load", Unit::Ohm);
        let band = r.pair(s, stage_t, "band", Unit::Hertz, false);
        if !stage_t.contains_key("band") {
            r.error(
                s,
                None,
                "missing `band` ([low, high] in hertz, e.g. [\"20 Hz\", \"20 kHz\"])".into(),
            );
        }
        let band_loss_max = r.positive(s, stage_t, "band_loss_max", Unit::Decibel);
        let corner_low_max = r.positive(s, stage_t, "corner_low_max", Unit::Hertz);
        let headroom = r
            .pair(s, stage_t, "headroom", Unit::Volt, true)
            .unwrap_or((0.0, 0.0));
        let source_dc = r
            .quantity(s, stage_t, "source_dc", Unit::Volt)
            .unwrap_or(0.0);
        let source_resistance = r
            .quantity(s, stage_t, "source_resistance", Unit::Ohm)
            .unwrap_or(0.0);
        let input_peak = r.positive(s, stage_t, "input_peak", Unit::Volt);
        let output_peak = r.positive(s, stage_t, "output_peak", Unit::Volt);
        let bias_current_max = r.positive(s, stage_t, "bias_current_max", Unit::Ampere);
        let output_offset_max = r.positive(s, stage_t, "output_offset_max", Unit::Volt);
        let cmrr_min = r.positive(s, stage_t, "cmrr_min", Unit::Decibel);
        let coupling = r.text(s, stage_t, "coupling");
        let bias_compensation = match stage_t.get("bias_compensation") {
            None => None,
            Some(Value::Boolean(b)) => Some(*b),
            Some(other) => {
                r.error(
                    s,
                    Some("bias_compensation"),
                    format!("found {}, expected true or false", found(other)),
                );
                None
            }
        };
        let input_noise_max = r.positive(s, stage_t, "input_noise_max", Unit::Volt);
        let stray_capacitance = r
            .quantity(s, stage_t, "stray_capacitance", Unit::Farad)
            .unwrap_or(DEFAULT_STRAY_CAPACITANCE);
        if !(0.0..=1e-9).contains(&stray_capacitance) {
            r.error(
                s,
                Some("stray_capacitance"),
                "expected 0 to 1 nF across each resistor, e.g. \"0.2 pF\"".into(),
            );
        }
        let source_capacitance = r.positive(s, stage_t, "source_capacitance", Unit::Farad);
        let bias = match r.text(s, stage_t, "bias").as_deref() {
            None | Some("divider") => BiasNetwork::Divider,
            Some("decoupled") => BiasNetwork::Decoupled,
            Some(other) => {
                r.error(
                    s,
                    Some("bias"),
                    format!("found {other:?}, expected \"divider\" (the default) or \"decoupled\" (the divider bypassed to ground, with a series resistor into the + input of a non-inverting stage)"),
                );
                BiasNetwork::Divider
            }
        };
        let supply_ripple = r.positive(s, stage_t, "supply_ripple", Unit::Volt);
        let ripple_frequency = r
            .positive(s, stage_t, "ripple_frequency", Unit::Hertz)
            .unwrap_or(DEFAULT_RIPPLE_FREQUENCY);
        let ripple_out_max = r.positive(s, stage_t, "ripple_out_max", Unit::Volt);
        if ripple_out_max.is_some() && supply_ripple.is_none() {
            r.error(
                s,
                Some("ripple_out_max"),
                "needs `supply_ripple` (the ripple on the supply, V rms) to judge the ripple at the output".into(),
            );
        }
        let tolerance_mode = match r.text(s, stage_t, "tolerance_mode").as_deref() {
            None => ToleranceMode::Worst,
            Some("worst") | Some("worst-case") | Some("worst_case") => ToleranceMode::Worst,
            Some("nominal") => ToleranceMode::Nominal,
            Some(other) => {
                r.error(
                    s,
                    Some("tolerance_mode"),
                    format!("found {other:?}, expected \"worst\" or \"nominal\""),
                );
                ToleranceMode::Worst
            }
        };

        let amplifier = read_amplifier(&mut r, amp_t);

        let st = "stock";
        let mut source = |key: &str, default: Series| -> SourceSpec {
            let Some(t) = r.text(st, stock_t, key) else {
                return SourceSpec::Series(default);
            };
            // `"E25"` is a typo for a series, not the name of a CSV file.
            let name = t.trim();
            let series_like = name.len() > 1
                && name.starts_with(['E', 'e'])
                && name[1..].bytes().all(|b| b.is_ascii_digit());
            match SourceSpec::parse(name) {
                SourceSpec::File(_) if series_like || name.is_empty() => {
                    r.error(
                        st,
                        Some(key),
                        format!(
                            "found {t:?}, expected a series (E3, E6, E12, E24, E48, E96 or \
                             E192, IEC 60063) or the path of an inventory CSV"
                        ),
                    );
                    SourceSpec::Series(default)
                }
                other => other,
            }
        };
        let resistors = source("resistors", Series::E24);
        let capacitors = source("capacitors", Series::E6);
        let resistor_range = r
            .pair(st, stock_t, "resistor_range", Unit::Ohm, false)
            .unwrap_or(DEFAULT_RESISTOR_RANGE);
        let capacitor_range = r
            .pair(st, stock_t, "capacitor_range", Unit::Farad, false)
            .unwrap_or(DEFAULT_CAPACITOR_RANGE);
        for (key, (lo, hi)) in [
            ("resistor_range", resistor_range),
            ("capacitor_range", capacitor_range),
        ] {
            if !(lo > 0.0 && hi >= lo) {
                r.error(st, Some(key), "expected 0 < low ≤ high".into());
            }
        }
        let resistor_tolerance = r
            .quantity(st, stock_t, "resistor_tolerance", Unit::Percent)
            .unwrap_or(DEFAULT_RESISTOR_TOLERANCE);
        let capacitor_tolerance = r
            .quantity(st, stock_t, "capacitor_tolerance", Unit::Percent)
            .unwrap_or_else(|| match &capacitors {
                SourceSpec::Series(series) => series.tolerance().max(0.05),
                SourceSpec::File(_) => 0.2,
            });
        for (key, t) in [
            ("resistor_tolerance", resistor_tolerance),
            ("capacitor_tolerance", capacitor_tolerance),
        ] {
            if !(0.0..1.0).contains(&t) {
                r.error(
                    st,
                    Some(key),
                    "expected a tolerance from 0 % to below 100 %".into(),
                );
            }
        }
        let distribution = match r.text(st, stock_t, "distribution").as_deref() {
            None | Some("uniform") => crate::vocab::Distribution::Uniform,
            Some("normal") => crate::vocab::Distribution::Normal,
            Some(other) => {
                r.error(
                    st,
                    Some("distribution"),
                    format!("found {other:?}, expected \"uniform\" or \"normal\""),
                );
                crate::vocab::Distribution::Uniform
            }
        };
        let rating_rule = match r.text(st, stock_t, "rating_rule").as_deref() {
            None | Some("supply") => RatingRule::Supply,
            Some("bias") => RatingRule::Bias,
            Some(other) => {
                r.error(
                    st,
                    Some("rating_rule"),
                    format!("found {other:?}, expected \"supply\" (the default: a capacitor's rating covers the rail it can see) or \"bias\" (the worst-case DC over the derating)"),
                );
                RatingRule::Supply
            }
        };
        let class2_in_signal_path = r.flag(st, stock_t, "class2_in_signal_path");
        let combine = match r.text(st, stock_t, "combine") {
            None => Combine::Single,
            Some(c) => Combine::parse(&c).unwrap_or_else(|| {
                r.error(
                    st,
                    Some("combine"),
                    format!(
                        "found {c:?}, expected \"single\", \"series\", \"parallel\" or \"both\""
                    ),
                );
                Combine::Single
            }),
        };

        let g = "goals";
        let mut goals = Goals::default();
        for goal in Goal::ALL {
            if let Some(w) = r.number(g, goals_t, goal.key()) {
                goals.set(goal, w);
            }
        }

        let mut locks = Vec::new();
        for (slot, v) in lock_t {
            let value = match v {
                Value::String(t) => LockValue::Text(t.clone()),
                Value::Integer(i) => LockValue::Number(*i as f64),
                Value::Float(f) => LockValue::Number(*f),
                other => {
                    r.error(
                        "lock",
                        Some(slot),
                        format!(
                            "found {}, expected a value such as \"47k\" or \"47k/5%\"",
                            found(other)
                        ),
                    );
                    continue;
                }
            };
            let line = r.line_of("lock", Some(slot));
            locks.push(Lock {
                slot: slot.clone(),
                value,
                line,
            });
        }

        // `[range]`: a pair per slot, in ohms for `r_…` slots and farads for `c_…` slots (the
        // slot naming rule); a name of neither kind is left for the stage to refuse with its
        // list of slots.
        let mut ranges = Vec::new();
        for slot in range_t.keys() {
            let unit = if slot.starts_with("c_") {
                Unit::Farad
            } else {
                Unit::Ohm
            };
            let line = r.line_of("range", Some(slot));
            if !slot.starts_with("r_") && !slot.starts_with("c_") {
                ranges.push(SlotLimit {
                    slot: slot.clone(),
                    low: f64::NAN,
                    high: f64::NAN,
                    line,
                });
                continue;
            }
            if let Some((low, high)) = r.pair("range", range_t, slot, unit, false) {
                if !(low > 0.0 && high >= low) {
                    r.error(
                        "range",
                        Some(slot),
                        "expected [low, high] with 0 < low ≤ high".into(),
                    );
                    continue;
                }
                ranges.push(SlotLimit {
                    slot: slot.clone(),
                    low,
                    high,
                    line,
                });
            }
        }

        // Cross-field rules, once every field is read.
        let split = rails.is_some_and(|(lo, _)| lo < 0.0);
        let kind = kind.and_then(|k| {
            resolve_kind(
                &mut r,
                k,
                split,
                coupling.as_deref(),
                bias_compensation,
                &amplifier,
            )
        });
        if let Some(k) = kind {
            if !k.split_supply() {
                for key in ["output_offset_max", "cmrr_min", "bias_compensation"] {
                    if stage_t.contains_key(key) {
                        r.error(
                            s,
                            Some(key),
                            "applies to the DC-coupled stages on a split supply only".into(),
                        );
                    }
                }
            } else if k != StageKind::Difference && stage_t.contains_key("cmrr_min") {
                r.error(
                    s,
                    Some("cmrr_min"),
                    "applies to `kind = \"difference\"` only".into(),
                );
            }
            if k.split_supply() && bias_current_max.is_some() {
                r.error(
                    s,
                    Some("bias_current_max"),
                    "a DC-coupled stage has no bias divider to limit".into(),
                );
            }
        }
        if let (Some(kind), Some(g)) = (kind, gain) {
            match kind {
                StageKind::Difference if g <= 0.0 => r.error(
                    s,
                    Some("gain"),
                    format!(
                        "a difference stage's gain R2/R1 is positive (output = gain · (V+ − V−)); found {g}"
                    ),
                ),
                StageKind::InvertingDc | StageKind::InvertingDcCompensated if g >= 0.0 => {
                    r.error(
                        s,
                        Some("gain"),
                        format!(
                            "an inverting stage has a negative gain; found {g} (did you mean {}?)",
                            -g
                        ),
                    )
                }
                StageKind::NonInvertingDc | StageKind::NonInvertingDcCompensated if g < 1.0 => r
                    .error(
                        s,
                        Some("gain"),
                        format!("a non-inverting stage has a gain of at least 1; found {g}"),
                    ),
                StageKind::Inverting if g >= 0.0 => r.error(
                    s,
                    Some("gain"),
                    format!(
                        "an inverting stage has a negative gain; found {g} (did you mean {}?)",
                        -g
                    ),
                ),
                StageKind::NonInverting if g < 1.0 => r.error(
                    s,
                    Some("gain"),
                    format!("a non-inverting stage has a gain of at least 1; found {g}"),
                ),
                _ => {}
            }
        }
        if let Some((v_lo, v)) = rails {
            if v <= 0.0 {
                r.error(
                    s,
                    Some("supply"),
                    format!("a single supply must be positive, found {v} V"),
                );
            } else if headroom.0 < 0.0 || headroom.1 < 0.0 {
                r.error(s, Some("headroom"), "headroom cannot be negative".into());
            } else if headroom.0 + headroom.1 >= v - v_lo {
                r.error(
                    s,
                    Some("headroom"),
                    format!(
                        "headroom {} + {} leaves no output swing on a {} supply",
                        value::format(headroom.0, Unit::Volt),
                        value::format(headroom.1, Unit::Volt),
                        value::format(v - v_lo, Unit::Volt)
                    ),
                );
            }
        }
        if let Some(l) = load {
            if l <= 0.0 {
                r.error(s, Some("load"), "must be greater than zero".into());
            }
        }
        if let Some((lo, hi)) = band {
            if !(lo > 0.0 && hi > lo) {
                r.error(
                    s,
                    Some("band"),
                    "expected [low, high] with 0 < low < high".into(),
                );
            }
            if let Some(c) = corner_low_max {
                if c > lo * 1000.0 {
                    r.error(
                        s,
                        Some("corner_low_max"),
                        "is far above the band's low edge; did you mean a lower corner?".into(),
                    );
                }
            }
        }
        if source_resistance < 0.0 {
            r.error(s, Some("source_resistance"), "cannot be negative".into());
        }
        if input_peak.is_some() && output_peak.is_some() {
            r.error(
                s,
                Some("output_peak"),
                "give `input_peak` or `output_peak`, not both".into(),
            );
        }

        if !r.errors.is_empty() {
            // In the order of the file, as an editor shows them (the checks run key by key, the
            // unknown keys first); problems without a line last.
            r.errors.sort_by_key(|e| e.line.unwrap_or(usize::MAX));
            return Err(SpecErrors(r.errors, r.more));
        }
        // Every field read above is Some when no error was recorded.
        let (Some(stage), Some(supply), Some(gain), Some(load), Some(band)) =
            (kind, supply, gain, load, band)
        else {
            return Err(SpecErrors::one(SpecError {
                key: "stage".into(),
                line: None,
                message: "incomplete stage section".into(),
            }));
        };
        Ok(Spec {
            stage,
            supply,
            supply_low: rails.map_or(0.0, |(lo, _)| lo),
            gain,
            gain_tolerance,
            gain_tolerance_default,
            derived: Derived::default(),
            input_resistance_min,
            load,
            band,
            band_loss_max,
            corner_low_max,
            headroom,
            source_dc,
            source_resistance,
            input_peak,
            output_peak,
            tolerance_mode,
            bias_current_max,
            output_offset_max,
            cmrr_min,
            input_noise_max,
            stray_capacitance,
            source_capacitance,
            amplifier,
            amplifier_file,
            bias,
            supply_ripple,
            ripple_frequency,
            ripple_out_max,
            stock: StockSpec {
                resistors,
                capacitors,
                resistor_range,
                capacitor_range,
                resistor_tolerance,
                capacitor_tolerance,
                combine,
                distribution,
                rating_rule,
                class2_in_signal_path,
            },
            goals,
            locks,
            ranges,
        })
    }
}

/// The supply's rails (low, high), V: a single value is (0, V); a pair `[low, high]` or a
/// text `"±12 V"` (`"+-12 V"`, `"+/-12 V"`) is a split supply, its low rail below ground and
/// its high rail above. Errors are recorded at the `supply` key.
fn supply_rails(r: &mut Reader, s: &str, stage_t: &toml::Table) -> Option<(f64, f64)> {
    let v = stage_t.get("supply");
    let symmetric = match v {
        Some(Value::String(t)) => {
            let t = t.trim();
            ["±", "+-", "+/-"]
                .iter()
                .find_map(|p| t.strip_prefix(p))
                .map(str::to_string)
        }
        _ => None,
    };
    if let Some(rest) = symmetric {
        match scalar(&Value::String(rest.clone()), Unit::Volt)
            .and_then(|x| judge(s, "supply", Unit::Volt, &Value::String(rest), x))
        {
            Ok(x) if x > 0.0 => Some((-x, x)),
            Ok(x) => {
                r.error(
                    s,
                    Some("supply"),
                    format!("a split supply ±V needs V > 0, found {x} V"),
                );
                None
            }
            Err(m) => {
                r.error(s, Some("supply"), m);
                None
            }
        }
    } else if let Some(Value::Array(_)) = v {
        let (lo, hi) = r.pair(s, stage_t, "supply", Unit::Volt, false)?;
        if !(lo <= 0.0 && hi > 0.0) {
            r.error(
                s,
                Some("supply"),
                format!(
                    "a split supply is [negative rail, positive rail] around ground, e.g. \
                     [\"-12 V\", \"12 V\"]; found [{} , {}]",
                    value::format(lo, Unit::Volt),
                    value::format(hi, Unit::Volt)
                ),
            );
            return None;
        }
        Some((lo, hi))
    } else {
        r.required(s, stage_t, "supply", Unit::Volt)
            .map(|v| (0.0, v))
    }
}

/// The circuit a spec's `kind` names with its supply and `coupling`: on a split supply (or
/// with `coupling = "dc"`) the inverting and non-inverting kinds are their DC-coupled forms,
/// with a bias-compensation resistor when `bias_compensation` says so or, without the key,
/// when it helps (the bias current exceeds the offset current, so the resistor removes more
/// than it adds: common practice). An AC-coupled stage needs a single supply, a DC-coupled
/// one a split supply.
fn resolve_kind(
    r: &mut Reader,
    kind: StageKind,
    split: bool,
    coupling: Option<&str>,
    compensation: Option<bool>,
    amplifier: &Amplifier,
) -> Option<StageKind> {
    let s = "stage";
    let dc = match coupling.map(|c| c.trim().to_ascii_lowercase()) {
        None => split || kind.split_supply(),
        Some(c) if c == "dc" => true,
        Some(c) if c == "ac" => false,
        Some(other) => {
            r.error(
                s,
                Some("coupling"),
                format!("found {other:?}, expected \"ac\" or \"dc\""),
            );
            return None;
        }
    };
    if dc && !split {
        r.error(
            s,
            Some("supply"),
            "a DC-coupled stage runs on a split supply: give `supply = [\"-12 V\", \"12 V\"]` \
             or `\"±12 V\"` (or `coupling = \"ac\"` for the single-supply stage)"
                .into(),
        );
        return None;
    }
    if !dc {
        if kind.split_supply() {
            r.error(
                s,
                Some("coupling"),
                format!("a `{}` stage is DC-coupled", kind.name()),
            );
            return None;
        }
        if split {
            r.error(
                s,
                Some("supply"),
                "the AC-coupled stages run on a single supply; give one value, or \
                 `coupling = \"dc\"` for the DC-coupled stage on the split supply"
                    .into(),
            );
            return None;
        }
        return Some(kind);
    }
    let named = match kind {
        StageKind::InvertingDcCompensated | StageKind::NonInvertingDcCompensated => Some(true),
        StageKind::InvertingDc | StageKind::NonInvertingDc => Some(false),
        _ => None,
    };
    let compensated = compensation
        .or(named)
        .unwrap_or(amplifier.input_bias_current > amplifier.input_offset_current);
    Some(kind.dc_coupled(compensated))
}

/// Largest spec file read (1 MiB): a hand-written spec is a few hundred bytes, so anything
/// near this is the wrong file, and refusing it early keeps memory bounded.
pub const MAX_SPEC_BYTES: usize = 1 << 20;

/// Default ripple frequency: 100 Hz, a full-wave rectifier on 50 Hz mains (common practice).
pub const DEFAULT_RIPPLE_FREQUENCY: f64 = 100.0;

/// The figures of entry `name` of a file of op-amps: TOML with one table per amplifier, each
/// with the keys of `[amplifier]`, under the same rules. Errors name the entry and key
/// (`quiet.gbw`) and the line in the file; a missing entry lists the names the file has.
pub fn amplifier_from_file(text: &str, name: &str) -> Result<Amplifier, SpecErrors> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if text.len() > MAX_SPEC_BYTES {
        return Err(SpecErrors::one(SpecError {
            key: "file".into(),
            line: None,
            message: format!(
                "the file is more than the {MAX_SPEC_BYTES} bytes an op-amp file may have"
            ),
        }));
    }
    let lines = LineIndex::lf(text.as_bytes());
    let doc = toml_edit::ImDocument::parse(text).map_err(|e| {
        SpecErrors::one(SpecError {
            key: "toml".into(),
            line: e.span().map(|s| lines.line_of(s.start)),
            message: format!("not valid TOML: {}", e.message().trim_end()),
        })
    })?;
    let mut positions = Positions::new(&doc, lines);
    let root = toml::Table::deserialize(toml_edit::de::Deserializer::from(doc)).map_err(|e| {
        SpecErrors::one(SpecError {
            key: "toml".into(),
            line: None,
            message: format!("not valid TOML: {}", e.message().trim_end()),
        })
    })?;
    let names: Vec<&str> = root
        .iter()
        .filter(|(_, v)| v.is_table())
        .map(|(k, _)| k.as_str())
        .collect();
    let Some(entry) = root.get(name) else {
        let list = if names.is_empty() {
            "the file has no amplifier tables".to_string()
        } else {
            format!("the file has {}", names.join(", "))
        };
        let hint = nearest(name, &names)
            .map(|n| format!("did you mean `{n}`? "))
            .unwrap_or_default();
        return Err(SpecErrors::one(SpecError {
            key: name.to_string(),
            line: None,
            message: format!("no amplifier named {name:?}; {hint}{list}"),
        }));
    };
    let Value::Table(t) = entry else {
        return Err(SpecErrors::one(SpecError {
            key: name.to_string(),
            line: positions.line_of(name, None),
            message: format!(
                "found {}, expected a table `[{name}]` of amplifier figures",
                found(entry)
            ),
        }));
    };
    // Read under the section name `amplifier`, so the figures are judged as in a spec, then
    // name the entry in the errors.
    if let Some(at) = positions.sections.get(name).cloned() {
        positions.sections.insert("amplifier".into(), at);
    }
    let mut r = Reader {
        positions,
        errors: Vec::new(),
        more: 0,
    };
    r.check_keys("amplifier", t, AMPLIFIER_KEYS);
    let amplifier = read_amplifier(&mut r, t);
    if r.errors.is_empty() && r.more == 0 {
        return Ok(amplifier);
    }
    for e in &mut r.errors {
        if let Some(rest) = e.key.strip_prefix("amplifier") {
            e.key = format!("{name}{rest}");
        }
    }
    Err(SpecErrors(r.errors, r.more))
}

impl Spec {
    /// Fill `amplifier` from the text of the op-amp file `amplifier_file` names (the caller
    /// reads the file); nothing to do without one.
    pub fn resolve_amplifier(&mut self, text: &str) -> Result<(), SpecErrors> {
        if let Some(f) = &self.amplifier_file {
            self.amplifier = amplifier_from_file(text, &f.name)?;
        }
        Ok(())
    }
}

/// Default resistor range: below ~100 Ω the feedback network loads the op-amp output, above
/// 10 MΩ leakage and bias currents dominate (common practice).
pub const DEFAULT_RESISTOR_RANGE: (f64, f64) = (100.0, 10e6);
/// Default capacitor range: 1 nF to 1 mF.
pub const DEFAULT_CAPACITOR_RANGE: (f64, f64) = (1e-9, 1e-3);
/// The worst-case gain window when the spec gives none: ±20 % of |gain|. Wide enough for 5 %
/// resistors (their worst-case ratio spread is about ±10.5 %) plus the rounding of a ratio to
/// a series, tight enough that a gain that misses its target by a factor — −10 for −100 —
/// never passes (common practice: a stage's gain is asked within a few tens of percent at
/// most; give `gain_tolerance` for anything tighter).
pub const DEFAULT_GAIN_TOLERANCE: f64 = 0.2;
/// Default capacitance across each resistor: 0.2 pF, about what a through-hole or 0805 part
/// and its pads show (common practice, from memory). A 10 MΩ feedback resistor with it has a
/// pole near 80 kHz.
pub const DEFAULT_STRAY_CAPACITANCE: f64 = 0.2e-12;
/// Default tolerance of series resistors: 1 % metal film is the everyday part today (common
/// practice), tighter than the 5 % IEC 60063 associates with E24.
pub const DEFAULT_RESISTOR_TOLERANCE: f64 = 0.01;

#[cfg(test)]
mod tests {
    use super::*;

    const MINIMAL: &str = r#"
[stage]
kind = "inverting"
supply = "9 V"
gain = -10
load = "10k"
band = ["20 Hz", "20 kHz"]
"#;

    #[test]
    fn minimal_spec_gets_defaults() {
        let spec = Spec::from_toml(MINIMAL).unwrap();
        assert_eq!(spec.stage, StageKind::Inverting);
        assert_eq!(spec.supply, 9.0);
        assert_eq!(spec.load, 10e3);
        assert_eq!(spec.band, (20.0, 20e3));
        assert_eq!(spec.stock.resistors, SourceSpec::Series(Series::E24));
        assert_eq!(spec.headroom, (0.0, 0.0));
        assert_eq!(spec.tolerance_mode, ToleranceMode::Worst);
        // Equal headroom: the best bias point is mid-supply.
        assert_eq!(spec.bias_target(), 4.5);
    }

    #[test]
    fn asymmetric_headroom_moves_the_bias_target() {
        let text = MINIMAL.replace("band =", "headroom = [\"0.2 V\", \"1.4 V\"]\nband =");
        let spec = Spec::from_toml(&text).unwrap();
        // Output may span 0.2 V … 7.6 V; centre 3.9 V (common practice).
        assert!((spec.bias_target() - 3.9).abs() < 1e-12);
    }

    #[test]
    fn wrong_sign_gain_is_explained() {
        let text = MINIMAL.replace("gain = -10", "gain = 10");
        let err = Spec::from_toml(&text).unwrap_err();
        assert_eq!(err.0.len(), 1);
        assert_eq!(err.0[0].key, "stage.gain");
        assert_eq!(err.0[0].line, Some(5));
        assert!(err.0[0].message.contains("negative"), "{}", err);
    }

    #[test]
    fn non_inverting_gain_below_one_is_an_error() {
        let text = MINIMAL
            .replace("\"inverting\"", "\"non-inverting\"")
            .replace("gain = -10", "gain = 0.5");
        let err = Spec::from_toml(&text).unwrap_err();
        assert!(err.to_string().contains("at least 1"), "{err}");
    }

    #[test]
    fn headroom_that_leaves_no_swing() {
        let text = MINIMAL.replace("band =", "headroom = \"5 V\"\nband =");
        let err = Spec::from_toml(&text).unwrap_err();
        assert!(err.to_string().contains("no output swing"), "{err}");
    }

    #[test]
    fn unknown_keys_suggest_the_nearest() {
        let text = MINIMAL.replace("load =", "laod =");
        let err = Spec::from_toml(&text).unwrap_err();
        let msg = err.to_string();
        assert!(msg.contains("did you mean `load`"), "{msg}");
        assert!(msg.contains("missing `load`"), "{msg}");
    }

    #[test]
    fn errors_are_collected() {
        let text = MINIMAL
            .replace("\"9 V\"", "\"9 Hz\"")
            .replace("\"10k\"", "\"10 uF\"");
        let err = Spec::from_toml(&text).unwrap_err();
        assert_eq!(err.0.len(), 2, "{err}");
        assert_eq!(err.0[0].line, Some(4));
        assert_eq!(err.0[1].line, Some(6));
    }

    #[test]
    fn locks_parse_value_and_tolerance() {
        let text = format!("{MINIMAL}\n[lock]\nr_in = \"4k7/5%\"\nc_out = \"10u\"\n");
        let spec = Spec::from_toml(&text).unwrap();
        assert_eq!(spec.locks.len(), 2);
        let r_in = spec.locks.iter().find(|l| l.slot == "r_in").unwrap();
        assert_eq!(r_in.parse(PartKind::Resistor), Ok((4700.0, Some(0.05))));
        let c_out = spec.locks.iter().find(|l| l.slot == "c_out").unwrap();
        assert_eq!(c_out.parse(PartKind::Capacitor), Ok((10e-6, None)));
    }

    #[test]
    fn syntax_errors_have_a_line() {
        let err = Spec::from_toml("[stage]\nkind = \n").unwrap_err();
        assert_eq!(err.0[0].line, Some(2));
    }

    /// (line, key) of each error, for compact assertions.
    fn places(text: &str) -> Vec<(Option<usize>, String)> {
        match Spec::from_toml(text) {
            Ok(_) => panic!("expected errors for {text:?}"),
            Err(e) => e.0.into_iter().map(|e| (e.line, e.key)).collect(),
        }
    }

    fn message(text: &str) -> String {
        Spec::from_toml(text).unwrap_err().to_string()
    }

    /// Issue 12, part 8: problems are listed in the file's order, whichever check found them.
    #[test]
    fn problems_are_listed_in_line_order() {
        let text = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"1m\"\n\
                    band = [\"40 Hz\", \"20 kHz\"]\nbogus = 1\n\n[stock]\nnope = 2\n";
        let lines: Vec<Option<usize>> = places(text).into_iter().map(|(l, _)| l).collect();
        assert_eq!(lines, [Some(5), Some(7), Some(10)], "{}", message(text));
    }

    /// An amplifier key under `[stage]` (and any key of another section) says where it goes.
    #[test]
    fn a_key_of_another_section_points_there() {
        let text = "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"1k\"\n\
                    band = [\"40 Hz\", \"20 kHz\"]\ngbw = \"1 MHz\"\n\n[amplifier]\ncombine = true\n";
        assert_eq!(
            places(text),
            [
                (Some(7), "stage.gbw".to_string()),
                (Some(10), "amplifier.combine".to_string())
            ]
        );
        let m = message(text);
        assert!(m.contains("`gbw` belongs in `[amplifier]`"), "{m}");
        assert!(m.contains("`combine` belongs in `[stock]`"), "{m}");
    }

    #[test]
    fn key_line_finds_a_key_however_written() {
        let text =
            "# a spec\n[stage]\nkind = 1\n\n[stock]\nresistors = \"E24\"\ncapacitors = \"a.csv\"\n";
        assert_eq!(key_line(text, "stock", "capacitors"), Some(7));
        assert_eq!(
            key_line("stock.capacitors = 'a.csv'\n", "stock", "capacitors"),
            Some(1)
        );
        assert_eq!(key_line(text, "stock", "combine"), None);
        assert_eq!(key_line("[[[", "stock", "capacitors"), None);
    }

    #[test]
    fn empty_and_comment_only_specs_are_one_located_error() {
        for text in ["", "  \n\n", "# nothing yet\n", "\u{feff}"] {
            assert_eq!(places(text), [(Some(1), "spec".to_string())], "{text:?}");
        }
        assert!(message("").contains("empty"));
    }

    #[test]
    fn bom_and_crlf_are_accepted() {
        let crlf = MINIMAL.replace('\n', "\r\n");
        let plain = Spec::from_toml(MINIMAL).unwrap();
        assert_eq!(Spec::from_toml(&crlf).unwrap(), plain);
        assert_eq!(Spec::from_toml(&format!("\u{feff}{crlf}")).unwrap(), plain);
        let mut bytes = b"\xEF\xBB\xBF".to_vec();
        bytes.extend_from_slice(crlf.as_bytes());
        assert_eq!(Spec::from_bytes(&bytes).unwrap(), plain);
        // Line numbers count CRLF lines like LF lines.
        let bad = crlf.replace("\"10k\"", "\"10 uF\"");
        assert_eq!(places(&bad), [(Some(6), "stage.load".to_string())]);
    }

    #[test]
    fn lone_carriage_returns_get_a_hint() {
        let text = MINIMAL.replace('\n', "\r");
        assert!(
            message(&text).contains("carriage returns"),
            "{}",
            message(&text)
        );
        // TOML 1.0 ends lines at LF or CRLF only, so the parser refuses a lone CR where it
        // stands: the error is on the line it ends, counted in LF lines.
        let text = MINIMAL.replacen("gain = -10\n", "gain = -10\r", 1);
        assert_eq!(places(&text), [(Some(5), "toml".to_string())]);
    }

    #[test]
    fn invalid_utf8_names_line_and_column() {
        let mut bytes = MINIMAL.as_bytes().to_vec();
        // Line 5 is `load = "10k"`; put a Latin-1 µ (0xB5) in it.
        let at = MINIMAL.find("10k").unwrap();
        bytes[at] = 0xB5;
        let e = Spec::from_bytes(&bytes).unwrap_err();
        assert_eq!(e.0[0].line, Some(6));
        assert!(e.0[0].message.contains("0xB5"), "{e}");
        assert!(e.0[0].message.contains("column 9"), "{e}");
    }

    #[test]
    fn oversized_specs_are_refused_before_parsing() {
        let big = vec![b'#'; MAX_SPEC_BYTES + 1];
        let e = Spec::from_bytes(&big).unwrap_err();
        assert!(e.to_string().contains("more than"), "{e}");
    }

    #[test]
    fn wrong_toml_types_say_what_was_found() {
        let m = message(&MINIMAL.replace("load = \"10k\"", "load = true"));
        assert!(m.contains("line 6, `stage.load`: found `true`"), "{m}");
        let m = message(&MINIMAL.replace("kind = \"inverting\"", "kind = 3"));
        assert!(
            m.contains("found the number 3, expected a quoted string"),
            "{m}"
        );
        let m = message(&format!("{MINIMAL}[goals]\ncost = \"x\"\n"));
        assert!(m.contains("`goals.cost`: found the text \"x\""), "{m}");
        let m = message(&MINIMAL.replace("gain = -10", "gain = [1]"));
        assert!(m.contains("found a list of 1 value(s)"), "{m}");
        let m = message("stage = 3\n");
        assert!(
            m.contains("found the number 3, expected a table `[stage]`"),
            "{m}"
        );
    }

    #[test]
    fn arrays_of_the_wrong_length() {
        let text = MINIMAL.replace("[\"20 Hz\", \"20 kHz\"]", "[1, 2, 3]");
        assert_eq!(places(&text), [(Some(7), "stage.band".to_string())]);
        assert!(message(&text).contains("found a list of 3 value(s), expected two"));
        let text = format!("{MINIMAL}[stock]\nresistor_range = [\"1k\"]\n");
        assert_eq!(
            places(&text),
            [(Some(9), "stock.resistor_range".to_string())]
        );
        let text = MINIMAL.replace("band = [\"20 Hz\", \"20 kHz\"]", "band = \"20 Hz\"");
        assert!(message(&text).contains("expected a pair [low, high]"));
    }

    #[test]
    fn values_of_the_wrong_kind_or_unit() {
        // A capacitance where a resistance goes, and the other way round.
        let m = message(&MINIMAL.replace("\"10k\"", "\"100n\""));
        assert!(
            m.contains("line 6, `stage.load`") && m.contains("capacitance"),
            "{m}"
        );
        let m = message(&MINIMAL.replace("\"9 V\"", "\"9 Hz\""));
        assert!(m.contains("is a frequency, expected a voltage"), "{m}");
        let m = message(&MINIMAL.replace("\"10k\"", "\"4,7k\""));
        assert!(m.contains("decimal comma") && m.contains("4k7"), "{m}");
        let m = message(&MINIMAL.replace("\"10k\"", "\"-10k\""));
        assert!(m.contains("negative"), "{m}");
    }

    #[test]
    fn lock_values_keep_their_line_and_parse_with_their_kind() {
        // The slot names and units are the circuit's (pick::resolve_locks checks them).
        let ok = Spec::from_toml(&format!("{MINIMAL}\n[lock]\nr_fb = \"100k\"\n")).unwrap();
        assert_eq!(ok.locks[0].line, Some(10));
        let lock = |t: &str| Lock {
            slot: "x".into(),
            value: LockValue::Text(t.into()),
            line: None,
        };
        assert!(lock("4k7")
            .parse(PartKind::Capacitor)
            .unwrap_err()
            .contains("resistance"));
        assert!(lock("10 uF")
            .parse(PartKind::Resistor)
            .unwrap_err()
            .contains("is a capacitance"));
        assert!(lock("4k7/200%")
            .parse(PartKind::Resistor)
            .unwrap_err()
            .contains("below 100 %"));
        let m = message(&format!("{MINIMAL}[lock]\nr_in = true\n"));
        assert!(
            m.contains("line 9, `lock.r_in`") && m.contains("true"),
            "{m}"
        );
    }

    #[test]
    fn keys_are_located_however_toml_writes_them() {
        // Dotted key at the top level.
        let text = "stage.kind = \"inverting\"\nstage.supply = \"9 V\"\nstage.gain = -10\n\
                    stage.load = \"10 uF\"\nstage.band = [\"20 Hz\", \"20 kHz\"]\n";
        assert_eq!(places(text), [(Some(4), "stage.load".to_string())]);
        // Inline table.
        let text = "stage = { kind = \"inverting\", supply = \"9 V\", gain = -10, laod = \"1k\", \
                    load = \"10k\", band = [\"20 Hz\", \"20 kHz\"] }\n";
        assert_eq!(places(text), [(Some(1), "stage.laod".to_string())]);
        // Quoted key and a dotted key inside a section.
        let text = MINIMAL
            .replace("load = ", "\"load\" = ")
            .replace("\"10k\"", "\"1 V\"");
        assert_eq!(places(&text), [(Some(6), "stage.load".to_string())]);
        let text = format!("{MINIMAL}stock.resistors = \"E12\"\n");
        assert_eq!(places(&text), [(Some(8), "stage.stock".to_string())]);
        // A key name inside a value or a comment is not the key.
        let text = MINIMAL
            .replace("band =", "# load = here\nband =")
            .replace("\"9 V\"", "\"9\"");
        assert!(Spec::from_toml(&text).is_ok());
    }

    #[test]
    fn several_problems_are_reported_together_in_line_order() {
        let text = "[stage]\nkind = \"inverting\"\nsupply = true\ngain = -10\nload = \"10 uF\"\n\
                    band = [1]\n[amplifier]\ngbw = \"fast\"\n[stock]\ncombine = \"twice\"\n";
        let got = places(text);
        let lines: Vec<Option<usize>> = got.iter().map(|(l, _)| *l).collect();
        assert_eq!(
            lines,
            [Some(3), Some(5), Some(6), Some(8), Some(10)],
            "{got:?}"
        );
    }

    #[test]
    fn an_unknown_series_is_not_taken_for_a_file() {
        let text = format!("{MINIMAL}[stock]\nresistors = \"E25\"\ncapacitors = \"\"\n");
        assert_eq!(
            places(&text),
            [
                (Some(9), "stock.resistors".to_string()),
                (Some(10), "stock.capacitors".to_string())
            ]
        );
        assert!(message(&text).contains("E192"));
        let ok = Spec::from_toml(&format!(
            "{MINIMAL}[stock]\nresistors = \"e96\"\ncapacitors = \"my-stock.csv\"\n"
        ))
        .unwrap();
        assert_eq!(ok.stock.resistors, SourceSpec::Series(Series::E96));
        assert_eq!(ok.stock.capacitors, SourceSpec::File("my-stock.csv".into()));
    }

    #[test]
    fn sixty_thousand_unknown_keys_are_capped_and_located_from_the_parser() {
        // 60 000 unknown keys (660 kB, under MAX_SPEC_BYTES): the first hundred are described
        // with their lines, the rest counted. Their places come from the parser's spans in one
        // pass; a re-scan of the text per key took minutes here.
        let mut text = format!("{MINIMAL}[amplifier]\n");
        for i in 0..60_000 {
            text.push_str(&format!("x{i:05} = 1\n"));
        }
        assert!(text.len() < MAX_SPEC_BYTES);
        let e = Spec::from_toml(&text).unwrap_err();
        assert_eq!((e.0.len(), e.1), (MAX_LISTED_PROBLEMS, 59_900));
        // MINIMAL has 7 lines and `[amplifier]` is line 8, so key i is on line 9 + i.
        assert_eq!(e.0[0].key, "amplifier.x00000");
        assert_eq!(e.0[0].line, Some(9));
        assert_eq!(e.0[99].key, "amplifier.x00099");
        assert_eq!(e.0[99].line, Some(108));
        let m = e.to_string();
        assert!(m.starts_with("60000 problems in the spec:"), "{m}");
        assert!(m.ends_with("\n  … and 59900 more problems"), "{m}");
        assert_eq!(m.lines().count(), 1 + MAX_LISTED_PROBLEMS + 1);
    }

    #[test]
    fn keys_in_tables_of_several_headers_and_dotted_tables() {
        // `[stage]` after `[stage.x]`, and a key whose table is implied by a dotted key.
        let text = format!("[goals.x]\na = 1\n{MINIMAL}[goals]\ncost = \"x\"\n");
        let got = places(&text);
        assert!(got.contains(&(Some(1), "goals.x".to_string())), "{got:?}");
        assert!(
            got.contains(&(Some(11), "goals.cost".to_string())),
            "{got:?}"
        );
    }

    /// MINIMAL with `entry` in `[stage]` (in place of the key's line, or before `band`), or
    /// with a section of its own when `entry` starts with one.
    fn with(entry: &str) -> String {
        if entry.starts_with('[') {
            return format!("{MINIMAL}{entry}\n");
        }
        let key = entry.split(" = ").next().unwrap_or_default();
        match MINIMAL
            .lines()
            .find(|l| l.starts_with(&format!("{key} = ")))
        {
            Some(line) => MINIMAL.replace(line, entry),
            None => MINIMAL.replace("band =", &format!("{entry}\nband =")),
        }
    }

    /// The 1-based line of `text` on which `key = …` is written.
    fn line_with(text: &str, key: &str) -> Option<usize> {
        let start = format!("{key} = ");
        text.lines()
            .position(|l| l.starts_with(&start))
            .map(|i| i + 1)
    }

    #[test]
    fn a_bare_number_follows_the_rules_of_the_same_number_quoted() {
        // A bare `-20e-9` was taken (as its magnitude) where `"-20e-9"` was refused.
        for (section, key, number, ok) in [
            ("[amplifier]\n", "input_bias_current", "-20e-9", false),
            ("[amplifier]\n", "input_offset_current", "-1e-9", false),
            ("[amplifier]\n", "noise_voltage", "-1", false),
            ("[amplifier]\n", "noise_current", "-1e-12", false),
            ("[amplifier]\n", "gbw", "-1e6", false),
            ("", "load", "-10000", false),
            ("", "gain_tolerance", "-5", false),
            ("", "bias_current_max", "-1e-4", false),
            // A voltage may be negative (an offset's sign is unknown; a DC level below ground).
            ("[amplifier]\n", "input_offset_voltage", "-0.002", true),
            ("", "source_dc", "-1", true),
            ("[amplifier]\n", "input_bias_current", "20e-9", true),
            ("", "gain_tolerance", "5", true),
        ] {
            let bare = Spec::from_toml(&with(&format!("{section}{key} = {number}")));
            let quoted = Spec::from_toml(&with(&format!("{section}{key} = \"{number}\"")));
            assert_eq!(bare.is_ok(), ok, "{key} = {number}: {bare:?}");
            assert_eq!(quoted.is_ok(), ok, "{key} = \"{number}\": {quoted:?}");
            if let (Ok(b), Ok(q)) = (&bare, &quoted) {
                assert_eq!(b, q, "{key} = {number}");
            }
            if let Err(e) = &bare {
                assert!(e.to_string().contains("cannot be negative"), "{e}");
            }
        }
        let m = message(&with("[amplifier]\nnoise_voltage = -1"));
        assert!(
            m.contains("line 9, `amplifier.noise_voltage`: -1 is negative"),
            "{m}"
        );
    }

    #[test]
    fn tolerances_stay_below_100_percent() {
        for entry in [
            "gain_tolerance = \"100%\"",
            "gain_tolerance = 100",
            "gain_tolerance = 1e308",
            "gain_tolerance = \"150 %\"",
            "[stock]\nresistor_tolerance = \"100%\"",
            "[stock]\ncapacitor_tolerance = 1e308",
        ] {
            let m = message(&with(entry));
            assert!(m.contains("below 100 %"), "{entry}: {m}");
        }
        let ok = Spec::from_toml(&with("gain_tolerance = \"99.5%\"")).unwrap();
        assert_eq!(ok.gain_tolerance, Some(0.995));
        assert_eq!(
            places(&with("gain_tolerance = \"100%\"")),
            [(Some(7), "stage.gain_tolerance".to_string())]
        );
    }

    #[test]
    fn implausible_figures_are_refused_with_the_likely_intent() {
        // (entry, key, what the message says, what was likely meant — which must load).
        let cases = [
            ("supply = 9000", "stage.supply", "far above", None),
            ("supply = \"9m\"", "stage.supply", "far below", None),
            ("gain = -1e6", "stage.gain", "not dB", None),
            ("gain = -0.0001", "stage.gain", "0.001", None),
            (
                "load = \"1m\"",
                "stage.load",
                "a small `m` is milli",
                Some("\"1M\""),
            ),
            ("load = 0.5", "stage.load", "far below", None),
            ("band = [20, 2e10]", "stage.band", "far above", None),
            ("band = [\"0.1 mHz\", 20]", "stage.band", "far below", None),
            (
                "corner_low_max = 1e12",
                "stage.corner_low_max",
                "far above",
                None,
            ),
            (
                "band_loss_max = 1e308",
                "stage.band_loss_max",
                "far above",
                None,
            ),
            ("input_peak = 1e-9", "stage.input_peak", "far below", None),
            ("output_peak = 5000", "stage.output_peak", "far above", None),
            ("source_dc = -1e4", "stage.source_dc", "far above", None),
            (
                "bias_current_max = 100",
                "stage.bias_current_max",
                "did you mean",
                Some("\"100 uA\""),
            ),
            (
                "[amplifier]\ngbw = 3",
                "amplifier.gbw",
                "did you mean",
                Some("\"3 MHz\""),
            ),
            (
                "[amplifier]\ngbw = \"1m\"",
                "amplifier.gbw",
                "a small `m` is milli",
                Some("\"1M\""),
            ),
            (
                "[amplifier]\ngbw = 1e12",
                "amplifier.gbw",
                "far above",
                None,
            ),
            (
                "[amplifier]\ninput_bias_current = 20",
                "amplifier.input_bias_current",
                "did you mean",
                Some("\"20 nA\""),
            ),
            (
                "[amplifier]\ninput_offset_current = 5",
                "amplifier.input_offset_current",
                "did you mean",
                Some("\"5 nA\""),
            ),
            (
                "[amplifier]\ninput_offset_voltage = 2",
                "amplifier.input_offset_voltage",
                "did you mean",
                Some("\"2 mV\""),
            ),
            (
                "[amplifier]\nslew_rate = 0.5",
                "amplifier.slew_rate",
                "did you mean",
                Some("\"0.5 V/us\""),
            ),
            (
                "[amplifier]\nslew_rate = 1e12",
                "amplifier.slew_rate",
                "far above",
                None,
            ),
            (
                "[amplifier]\nnoise_voltage = 1e308",
                "amplifier.noise_voltage",
                "far above",
                None,
            ),
            (
                "[amplifier]\nnoise_voltage = 10",
                "amplifier.noise_voltage",
                "did you mean",
                Some("\"10 nV/rtHz\""),
            ),
            (
                "[amplifier]\nnoise_current = 1",
                "amplifier.noise_current",
                "did you mean",
                Some("\"1 pA/rtHz\""),
            ),
        ];
        for (entry, key, says, meant) in cases {
            let text = with(entry);
            let line = line_with(&text, key.split('.').nth(1).unwrap_or_default());
            assert_eq!(
                places(&text),
                [(line, key.to_string())],
                "{entry}: {}",
                message(&text)
            );
            let m = message(&text);
            assert!(m.contains(says) && m.contains("plausible"), "{entry}: {m}");
            if let Some(meant) = meant {
                assert!(m.contains(meant), "{entry}: {m}");
                let (lhs, _) = entry.split_once(" = ").unwrap();
                let fixed = with(&format!("{lhs} = {meant}"));
                assert!(
                    Spec::from_toml(&fixed).is_ok(),
                    "{meant}: {}",
                    message(&fixed)
                );
            }
        }
        // The message quotes the number as written and the unit a bare number is in.
        let m = message(&with("[amplifier]\nslew_rate = 0.5"));
        assert!(
            m.contains("0.5 V/s, far below any op-amp's slew rate")
                && m.contains("did you mean \"0.5 V/us\"? A number without a unit is in V/s"),
            "{m}"
        );
        // Ideal figures and the edges of each range load.
        for entry in [
            "[amplifier]\nnoise_voltage = 0",
            "[amplifier]\ninput_bias_current = 0",
            "[amplifier]\nslew_rate = \"0.0001 V/us\"",
            "[amplifier]\ngbw = \"100 GHz\"",
            "load = \"1\"",
            "supply = \"0.5 V\"",
            "band_loss_max = \"40 dB\"",
        ] {
            let text = with(entry);
            assert!(
                Spec::from_toml(&text).is_ok(),
                "{entry}: {}",
                message(&text)
            );
        }
    }

    #[test]
    fn nearest_key() {
        assert_eq!(
            nearest("gain_tolerence", STAGE_KEYS),
            Some("gain_tolerance")
        );
        assert_eq!(nearest("suply", STAGE_KEYS), Some("supply"));
        assert_eq!(nearest("zzzzzzzzzzzz", &["a", "b"]), None);
    }
}

#[cfg(test)]
mod split_supply_tests {
    use super::*;

    fn stage(kind: &str, supply: &str, extra: &str) -> Result<Spec, SpecErrors> {
        Spec::from_toml(&format!(
            "[stage]\nkind = \"{kind}\"\nsupply = {supply}\ngain = -10\nload = \"10k\"\n\
             band = [\"1 Hz\", \"1 kHz\"]\n{extra}"
        ))
    }

    fn message(r: Result<Spec, SpecErrors>) -> String {
        r.expect_err("refused").to_string()
    }

    #[test]
    fn supply_pairs_and_plus_minus_forms() {
        for text in [
            "\"±12 V\"",
            "\"+-12 V\"",
            "\"+/-12\"",
            "[\"-12 V\", \"12 V\"]",
        ] {
            let s = stage("inverting", text, "").unwrap();
            assert_eq!((s.supply_low, s.supply), (-12.0, 12.0), "{text}");
            assert!(s.split());
            assert_eq!(s.stage, StageKind::InvertingDc);
        }
        let s = stage("inverting", "[\"-5 V\", \"15 V\"]", "headroom = [1, 2]").unwrap();
        assert_eq!(s.output_limits(), (-4.0, 13.0));
        // A single value keeps its meaning: rails 0 and V, the AC-coupled stage.
        let s = stage("inverting", "9", "").unwrap();
        assert_eq!(
            (s.supply_low, s.supply, s.stage),
            (0.0, 9.0, StageKind::Inverting)
        );
    }

    #[test]
    fn the_supply_and_the_coupling_must_agree() {
        assert!(message(stage("inverting", "9", "coupling = \"dc\"")).contains("split supply"));
        assert!(
            message(stage("inverting", "\"±9 V\"", "coupling = \"ac\"")).contains("single supply")
        );
        assert!(message(stage("difference", "9", "")).contains("split supply"));
        assert!(message(stage("inverting", "\"±9 V\"", "coupling = \"xy\""))
            .contains("\"ac\" or \"dc\""));
        // The rails around ground, low first.
        assert!(
            message(stage("inverting", "[12, -12]", "")).contains("[negative rail, positive rail]")
        );
        assert!(message(stage("inverting", "\"±0 V\"", "")).contains("V > 0"));
        // Headroom counts the whole span.
        assert!(message(stage("inverting", "\"±5 V\"", "headroom = 5")).contains("no output swing"));
        assert!(stage("inverting", "\"±5 V\"", "headroom = 4.9").is_ok());
    }

    #[test]
    fn split_supply_keys_belong_to_their_stages() {
        assert!(
            message(stage("inverting", "9", "output_offset_max = \"1 mV\""))
                .contains("split supply")
        );
        assert!(message(stage("inverting", "\"±9 V\"", "cmrr_min = 60")).contains("difference"));
        assert!(
            message(stage("inverting", "\"±9 V\"", "bias_current_max = 1e-3")).contains("divider")
        );
        assert!(message(stage("difference", "\"±9 V\"", "")).contains("positive"));
        let d = Spec::from_toml(
            "[stage]\nkind = \"difference\"\nsupply = \"±9 V\"\ngain = 2\nload = 1e4\nband = [1, 1000]\ncmrr_min = \"60 dB\"\n",
        )
        .unwrap();
        assert_eq!((d.stage, d.cmrr_min), (StageKind::Difference, Some(60.0)));
        assert_eq!(
            stage("inverting", "\"±9 V\"", "bias_compensation = true")
                .unwrap()
                .stage,
            StageKind::InvertingDcCompensated
        );
        assert!(
            message(stage("inverting", "\"±9 V\"", "bias_compensation = 1"))
                .contains("true or false")
        );
    }
}
