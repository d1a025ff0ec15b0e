//! The plain data a circuit's equations speak: slot definitions, op-amp errors and the
//! single-pole amplifier, DC points, coupling networks, capacitor bias, netlist nodes and
//! elements, and the noise circuit.

use crate::spec::Spec;
use crate::vocab::PartKind;
use num_complex::Complex64;

/// One position in the circuit that a part fills. Names are the public contract (JSON,
/// `--lock`, `--set`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SlotDef {
    /// The slot's name (`r_in`, `c_out`, …).
    pub name: &'static str,
    /// Resistor or capacitor.
    pub kind: PartKind,
    /// What the part does, for reports.
    pub role: &'static str,
}

/// Op-amp input errors at one corner of the DC worst case. Currents flow into the inputs;
/// `vos` is added to the differential input (the amplifier drives V− to V+ + vos).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DcErrors {
    /// Current into the + input, A.
    pub ib_plus: f64,
    /// Current into the − input, A.
    pub ib_minus: f64,
    /// Input offset voltage, V.
    pub vos: f64,
}

impl DcErrors {
    /// An ideal op-amp: no bias currents, no offset.
    pub const NONE: DcErrors = DcErrors {
        ib_plus: 0.0,
        ib_minus: 0.0,
        vos: 0.0,
    };

    /// Nominal: both inputs draw the datasheet bias current, no offset (the sign of a bias
    /// current depends on the input transistors, so "nominal" takes it as flowing in).
    pub fn nominal(spec: &Spec) -> DcErrors {
        let ib = spec.amplifier.input_bias_current;
        DcErrors {
            ib_plus: ib,
            ib_minus: ib,
            vos: 0.0,
        }
    }

    /// The eight corners of (bias-current sign, offset-current sign, offset-voltage sign):
    /// I_b± = ±I_b ± I_os/2 and ±V_os.
    pub fn corners(spec: &Spec) -> Vec<DcErrors> {
        let a = &spec.amplifier;
        let mut out = Vec::with_capacity(8);
        for sb in [-1.0, 1.0] {
            for so in [-1.0, 1.0] {
                for sv in [-1.0, 1.0] {
                    let ib = sb * a.input_bias_current;
                    let half = so * a.input_offset_current / 2.0;
                    out.push(DcErrors {
                        ib_plus: ib + half,
                        ib_minus: ib - half,
                        vos: sv * a.input_offset_voltage,
                    });
                }
            }
        }
        out
    }
}

/// The DC operating point, capacitors open.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DcPoint {
    /// Voltage at the + input, V.
    pub v_plus: f64,
    /// Voltage at the − input, V.
    pub v_minus: f64,
    /// Voltage at the op-amp's output, V.
    pub v_out: f64,
    /// Current down the bias divider.
    pub divider_current: f64,
}

/// A coupling network: a capacitor and the resistance it works against, forming a high-pass
/// corner 1/(2πRC).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Network {
    /// Which network, for reports (`"input"`, `"output"`, …).
    pub name: &'static str,
    /// Index of its capacitor's slot.
    pub cap_slot: usize,
    /// The resistance the capacitor works against, Ω.
    pub resistance: f64,
    /// The capacitance, F.
    pub capacitance: f64,
}

impl Network {
    /// First-order corner 1/(2πRC) (any circuit-theory text).
    pub fn corner(&self) -> f64 {
        1.0 / (2.0 * std::f64::consts::PI * self.resistance * self.capacitance)
    }
}

/// DC across a capacitor: `volts` is V(`a_node`) − V(`b_node`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CapBias {
    /// Index of the capacitor's slot.
    pub slot: usize,
    /// V(`a_node`) − V(`b_node`), V.
    pub volts: f64,
    /// The end taken as positive, in words (`"op-amp side"`); a polarised part's + goes here
    /// when `volts` ≥ 0.
    pub a_node: &'static str,
    /// The other end, in words (`"load side"`).
    pub b_node: &'static str,
}

/// The op-amp's open-loop gain a(s): single pole, DC gain `A0`, unity-gain frequency GBW.
/// `None` GBW means ideal (infinite gain).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OpAmp {
    /// Gain-bandwidth product, Hz; `None` for an ideal amplifier.
    pub gbw: Option<f64>,
}

/// DC open-loop gain used with a finite GBW: 10^6 (120 dB), a typical figure (common practice);
/// the same number goes into the SPICE model so both see the same amplifier.
pub const OPEN_LOOP_GAIN: f64 = 1e6;

impl OpAmp {
    /// The amplifier the spec describes.
    pub fn of(spec: &Spec) -> OpAmp {
        OpAmp {
            gbw: spec.amplifier.gbw,
        }
    }

    /// 1/a(jω), zero for an ideal amplifier.
    pub fn inverse_gain(&self, f: f64) -> Complex64 {
        match self.gbw {
            None => Complex64::new(0.0, 0.0),
            Some(gbw) => {
                let pole = gbw / OPEN_LOOP_GAIN;
                Complex64::new(1.0, f / pole) / OPEN_LOOP_GAIN
            }
        }
    }

    /// Closed-loop factor 1/(1 + 1/(aβ)) that turns the ideal gain into the real one
    /// (feedback theory: A_cl = (1/β) · aβ/(1 + aβ)).
    pub fn loop_factor(&self, f: f64, beta: Complex64) -> Complex64 {
        let one = Complex64::new(1.0, 0.0);
        one / (one + self.inverse_gain(f) / beta)
    }
}

/// A node of the stage's SPICE netlist (`report::spice` gives each its name). The fixed
/// nodes are the same in every stage, so a deck written for one netlist runs on any.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Node {
    /// `0`.
    Ground,
    /// `vcc`, the single supply.
    Supply,
    /// The stage's input terminal: the source EMF node `in`, or the far side of the source
    /// resistance when the spec has one.
    Input,
    /// The op-amp's + input pin, `inp`.
    PlusInput,
    /// The op-amp's − input pin, `inn`.
    MinusInput,
    /// The op-amp's output, `amp_out`.
    AmpOut,
    /// The load side of the output coupling, `out` (the load sits from here to ground).
    Out,
    /// A node of the stage's own, named by the stage (lower case, unique in the stage, none
    /// of the fixed names).
    Internal(&'static str),
}

/// Where one slot sits in the circuit: its part goes between nodes `a` and `b`. A two-piece
/// realisation becomes two elements (series: through a middle node; parallel: both across
/// `a`–`b`); the netlist writer does that, numbering and value formatting.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SpiceElement {
    /// Index of the slot.
    pub slot: usize,
    /// One end of the part.
    pub a: Node,
    /// The other end of the part.
    pub b: Node,
}

/// Where a resistor's noise voltage sits (see `analysis::noise`).
#[derive(Debug, Clone, Copy)]
pub enum NoisePlace {
    /// In series with Z_f.
    Feedback,
    /// In series with Z_s.
    Shunt,
    /// In series with a branch of this impedance from the + input to AC ground.
    Plus(Complex64),
}

/// The impedances around the op-amp at one frequency — Z_f (output to −), Z_s (− to AC
/// ground), Z_p (+ to AC ground) — the output coupling H_out, and the resistors that make
/// noise, by name, value and place.
pub struct NoiseCircuit {
    /// Z_f: feedback impedance, output to − input, Ω.
    pub z_f: Complex64,
    /// Z_s: shunt impedance, − input to AC ground, Ω.
    pub z_s: Complex64,
    /// Z_p: impedance from the + input to AC ground, Ω.
    pub z_p: Complex64,
    /// H_out: transfer of the output coupling from the op-amp's output to the load.
    pub h_out: Complex64,
    /// The resistors that make noise: name (a slot, or `source_resistance`), value in Ω, place.
    pub resistors: Vec<(&'static str, f64, NoisePlace)>,
}

/// A capacitor's impedance 1/(jωC).
pub(crate) fn cap_z(c: f64, f: f64) -> Complex64 {
    Complex64::new(0.0, -1.0 / (2.0 * std::f64::consts::PI * f * c))
}

impl DcErrors {
    /// The op-amp errors at the centre of those the analysis judges: none at worst case (the
    /// mean of the eight sign corners, and the DC point is linear in the errors), the nominal
    /// bias current in nominal mode (the only corner judged then).
    pub fn centre(spec: &Spec) -> DcErrors {
        if spec.worst_case() {
            DcErrors::NONE
        } else {
            DcErrors::nominal(spec)
        }
    }
}
