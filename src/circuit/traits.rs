//! The traits a circuit implements, one per concern: its equations (`Circuit`: what the
//! analysis, the yield, the noise figures and the netlist need), its drawing (`Drawing`: the
//! netlist wiring and the schematic), and an optional hand-tuned search plan (`SearchPlan`).
//! Without a plan of its own a circuit is searched by the generic plan (`search::generic`),
//! which needs only the equations.

use super::layout;
use super::plan::{LogModel, WalkPlan};
use super::types::{
    CapBias, DcErrors, DcPoint, Network, NoiseCircuit, OpAmp, SlotDef, SpiceElement,
};
use crate::build::SlotValue;
use crate::interval::Iv;
use crate::objective::Figures;
use crate::spec::Spec;
use crate::vocab::StageKind;
use num_complex::Complex64;

/// The equations of a circuit. Every method takes the slot values in the circuit's slot
/// order (SI base units); nothing here knows about stock, search or reports.
pub trait Circuit: Send + Sync {
    /// Which kind of stage this circuit is.
    fn kind(&self) -> StageKind;
    /// The circuit's slots, in slot order (the order of every `v` below).
    fn slots(&self) -> &'static [SlotDef];
    /// One line describing the circuit, for reports.
    fn topology(&self) -> &'static str;

    /// Mid-band gain from source EMF to load with an ideal op-amp (capacitors shorted), V/V.
    fn mid_gain(&self, spec: &Spec, v: &[f64]) -> f64;
    /// True when `mid_gain`, `input_resistance` and `dc` read no capacitor (coupling
    /// capacitors: shorted at mid-band, open at DC), so the search may judge the DC checks
    /// (gain window, input resistance, swing, divider current) once the resistors are
    /// chosen (`analysis::dc_failure`). A filter whose passband gain is a capacitor ratio
    /// keeps the default, false.
    fn dc_from_resistors(&self) -> bool {
        false
    }
    /// Noise gain 1/β at mid-band, which sets the bandwidth with a finite GBW.
    fn noise_gain(&self, spec: &Spec, v: &[f64]) -> f64;
    /// Resistance the source sees at mid-band.
    fn input_resistance(&self, spec: &Spec, v: &[f64]) -> f64;
    /// Transfer function from source EMF to the load at frequency `f`.
    fn response(&self, spec: &Spec, v: &[f64], opamp: &OpAmp, f: f64) -> Complex64;
    /// The coupling networks, in the order reports list them.
    fn networks(&self, spec: &Spec, v: &[f64]) -> Vec<Network>;
    /// DC point with the given op-amp errors (capacitors open, no leakage).
    fn dc(&self, spec: &Spec, v: &[f64], e: &DcErrors) -> DcPoint;
    /// Nominal output DC error bound, V (see `common::offset_error`): what the `offset` goal counts.
    fn offset_error(&self, spec: &Spec, v: &[f64]) -> f64;
    /// The output's DC error with the source's DC at 0 V and the op-amp errors `e`, V: what
    /// `output_offset_max` judges. `None` for the AC-coupled stages, whose output DC is the
    /// bias point (judged by the swing) and never reaches the load.
    fn output_offset(&self, _spec: &Spec, _v: &[f64], _e: &DcErrors) -> Option<f64> {
        None
    }
    /// The differential and common-mode gains at DC (A_d, A_cm), ideal op-amp, for a stage
    /// with two inputs: its common-mode rejection is |A_d/A_cm|. `None` for one input.
    fn dc_gains(&self, _spec: &Spec, _v: &[f64]) -> Option<(f64, f64)> {
        None
    }
    /// The resistance each input of a two-input stage shows (−, +), Ω, the other input held
    /// at its DC level. `None` for one input (`input_resistance` says it).
    fn input_resistances(&self, _spec: &Spec, _v: &[f64]) -> Option<(f64, f64)> {
        None
    }
    /// Pairs of slots whose values a build wants alike (a difference stage's matched ratios),
    /// for the reports to say which parts come from one stock line.
    fn matched_pairs(&self) -> &'static [(usize, usize)] {
        &[]
    }
    /// DC across each capacitor at a DC point.
    fn cap_bias(&self, spec: &Spec, v: &[f64], dc: &DcPoint) -> Vec<CapBias>;
    /// Power in each resistor slot at a DC point carrying a sine of `out_peak` at the output.
    fn resistor_power(
        &self,
        spec: &Spec,
        v: &[f64],
        dc: &DcPoint,
        out_peak: f64,
    ) -> Vec<(usize, f64)>;
    /// The textbook values before any rounding to stock, where the stage can say.
    fn ideal(&self, spec: &Spec) -> Vec<Option<f64>>;

    /// The impedances around the op-amp at `f` and where each resistor's noise sits, for the
    /// noise analysis (`analysis::noise`; its module docs give the transfer of each place).
    fn noise_circuit(&self, spec: &Spec, v: &[f64], f: f64) -> NoiseCircuit;

    /// The scalar figures the objective's circuit terms and the generic plan read, at plain
    /// values: the same numbers as `mid_gain`, `input_resistance`, `offset_error` and
    /// `networks` give.
    fn figures(&self, spec: &Spec, v: &[f64]) -> Figures<f64>;

    /// The same figures over intervals of slot values: each interval holds the figure of
    /// every build whose values lie in the intervals (the generic plan's bounds).
    fn figure_bounds(&self, spec: &Spec, v: &[Iv]) -> Figures<Iv>;

    /// The coupling networks of [`Circuit::figure_bounds`] alone (the search's shared loss
    /// budget reads them at most nodes): the same intervals, without the other figures.
    fn network_bounds(&self, spec: &Spec, v: &[Iv]) -> crate::objective::Networks<Iv> {
        self.figure_bounds(spec, v).networks
    }

    /// The highest worst-case |gain| a build of this circuit can have and still pass the
    /// band-top requirements with the spec's amplifier (`None`: no limit known). A search
    /// relaxation: it must hold for every build the exact analysis passes.
    fn gain_limit(&self, _spec: &Spec) -> Option<f64> {
        None
    }

    /// The resistance the feedback network presents to the op-amp's output at mid-band, Ω
    /// (with the load, what the output must drive: `analysis::amplifier`). Default: |Z_f| at
    /// the band's centre, exact when the − input is a virtual ground and otherwise an
    /// underestimate (so the current is overestimated, the safe side).
    fn feedback_load(&self, spec: &Spec, v: &[f64]) -> f64 {
        let centre = (spec.band.0 * spec.band.1).sqrt();
        self.noise_circuit(spec, v, centre).z_f.norm()
    }

    /// The signal at the op-amp's inputs per volt of output signal at mid-band, with an ideal
    /// op-amp (the inputs' common-mode swing, `analysis::amplifier`). Default 1/(noise gain):
    /// exact for a non-inverting stage, and above the inverting stage's (virtual ground) 0.
    fn input_signal_per_output(&self, spec: &Spec, v: &[f64]) -> f64 {
        1.0 / self.noise_gain(spec, v)
    }

    /// Capacitor slots outside the signal path (a bias bypass to ground), where a class-2
    /// ceramic does no harm to the signal (`analysis::rating`). Default: none, every
    /// capacitor carries the signal.
    fn off_signal_path(&self) -> &'static [usize] {
        &[]
    }

    /// How the circuit is drawn: netlist wiring and schematic.
    fn drawing(&self) -> &dyn Drawing;

    /// The circuit's own, faster search plan, if it has one; `None` leaves it to the generic
    /// plan, which is exact too.
    fn plan(&self) -> Option<&dyn SearchPlan> {
        None
    }
}

/// How a circuit is drawn: between which netlist nodes each slot sits and where its symbol
/// goes on the schematic.
pub trait Drawing: Send + Sync {
    /// Between which netlist nodes each slot's part sits, every slot once, in slot order. The
    /// source, supply, op-amp (its pins are
    /// `PlusInput`, `MinusInput`, `AmpOut`) and load are the same for every stage and are
    /// added by the writer; the stage only wires its slots, so its netlist cannot drift from
    /// its equations without the ngspice test (tests/ngspice.rs) noticing.
    fn spice_elements(&self) -> &'static [SpiceElement];

    /// The schematic (`report::schematic` draws it): where each slot's symbol goes and how the
    /// wires run. A test there checks that its connections are exactly `spice_elements`.
    fn schematic_layout(&self) -> &'static layout::Layout;

    /// Nodes joined by a plain wire, for a stage without a part between them (a DC-coupled
    /// output straight to the load, an input pin straight to ground): the netlist writes a
    /// 0 V source between them (common SPICE practice for a named wire), the drawing a wire.
    fn links(&self) -> &'static [(super::types::Node, super::types::Node)] {
        &[]
    }

    /// The source section of the netlist when the stage's input is not the single source of
    /// the fixed nodes (a differential source): the lines that drive its input nodes. `None`
    /// keeps the writer's `V_SRC` at `in` (and `R_S`). `number` writes a value in SPICE
    /// notation (the writer's own, so that the drawing needs nothing from the reports).
    fn spice_source(&self, _spec: &Spec, _number: &dyn Fn(f64) -> String) -> Option<String> {
        None
    }
}

/// A hand-tuned search plan: how the search decomposes a circuit into groups of coupled slots,
/// each group's exact share of the circuit's objective terms, how each slot is walked, and the
/// log-linear model for the MILP engine. DEVELOPERS.md, "Adding a circuit", states the rules a
/// plan keeps; `tests/walk_plans.rs` and `tests/exact.rs` hold every plan to them.
pub trait SearchPlan: Send + Sync {
    /// Search plan: groups of coupled slots, decided in this order (any number of slots each,
    /// walked in the order given). Every slot is in exactly one group. The
    /// order may depend on the spec (a group whose share needs another group's parts comes
    /// after it).
    fn groups(&self, spec: &Spec) -> Vec<Vec<usize>>;
    /// Group `g`'s share of the objective's stage terms once it and every earlier group are
    /// assigned, `None` when a requirement is surely broken. Must never reject a build the
    /// exact analysis accepts (a relaxation), and the shares of all groups must add up to the
    /// objective's stage terms (gain and offset points). `parts` may also hold later slots
    /// that are locked; a group's share must not depend on them.
    fn group_partial(&self, spec: &Spec, g: usize, parts: &[Option<SlotValue>]) -> Option<f64>;
    /// How the search should walk the `k`-th slot of group `g`, given the parts assigned so
    /// far (earlier groups, earlier slots of this group, and locked slots): around which
    /// value, and a lower bound of the group's share for a candidate (see [`WalkPlan`]).
    fn walk<'s>(
        &'s self,
        spec: &'s Spec,
        g: usize,
        k: usize,
        parts: &[Option<SlotValue>],
    ) -> WalkPlan<'s>;

    /// The stage's requirements and objective as far as they are linear in the logarithms
    /// of the slot values, for the MILP engine (`search::milp`): rows that every build the
    /// exact analysis accepts satisfies, and objective terms whose sum never exceeds the
    /// stage terms (gain and offset points) of such a build. The default says nothing, which
    /// is valid and only makes the MILP engine judge more builds.
    fn log_model<'s>(&'s self, _spec: &'s Spec) -> LogModel<'s> {
        LogModel::default()
    }
}
