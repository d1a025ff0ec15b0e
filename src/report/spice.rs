//! SPICE netlist of one build: the stage's slots wired as the stage says (`Drawing::spice_elements`),
//! plus the source, supply, load and a behavioural op-amp with the analysis's own model, as a
//! plain circuit (comment title line, elements, one subcircuit, `.end`, no `.control`) that
//! ngspice reads on its own or through `.include` from a deck that adds the analyses.
//!
//! Fixed names, the same for every stage, so one deck fits every netlist:
//!
//! | node      | what                                                              |
//! |-----------|-------------------------------------------------------------------|
//! | `in`      | source EMF (`V_SRC in 0 DC <source_dc> AC 1`)                     |
//! | `in_rs`   | far side of `R_S`, the source resistance (only when it is not 0)  |
//! | `inp`     | op-amp + pin (bias current `I_BP` drawn here)                     |
//! | `inp_vos` | + pin after the offset source `V_OS` (what the amplifier sees)    |
//! | `inn`     | op-amp − pin (bias current `I_BN` drawn here)                     |
//! | `amp_out` | op-amp output                                                     |
//! | `out`     | load side of the output coupling; `R_L` from here to ground       |
//! | `vcc`     | the supply (`V_CC`); the positive rail of a split supply          |
//! | `vee`     | the negative rail of a split supply (`V_EE`; only then)           |
//! | `0`       | ground                                                            |
//!
//! Parts are numbered R1…, C1… piece by piece in slot order (common practice for reference
//! designators); a series pair goes through the node `<slot>_mid`, a parallel pair is two
//! elements across the same nodes. Numbers use SPICE scale factors with `meg` for 10^6
//! (SPICE reads `M` as milli).

use crate::build::{Arrangement, Build, Part};
use crate::circuit::{Circuit, Node, OPEN_LOOP_GAIN};
use crate::spec::Spec;
use crate::vocab::PartKind;
use std::fmt::Write;

/// Node names (see the module table).
pub mod node {
    /// Ground, `0`.
    pub const GROUND: &str = "0";
    /// The single supply, `vcc` (a split supply's positive rail).
    pub const SUPPLY: &str = "vcc";
    /// A split supply's negative rail, `vee`.
    pub const NEG_SUPPLY: &str = "vee";
    /// The source EMF, `in`.
    pub const IN: &str = "in";
    /// Far side of the source resistance, `in_rs` (only when it is not 0).
    pub const IN_RS: &str = "in_rs";
    /// Far side of the source capacitance, `in_cs` (only when the spec gives one).
    pub const IN_CS: &str = "in_cs";
    /// The op-amp's + pin, `inp`.
    pub const PLUS: &str = "inp";
    /// The + pin after the offset source, `inp_vos` (what the amplifier sees).
    pub const PLUS_VOS: &str = "inp_vos";
    /// The op-amp's − pin, `inn`.
    pub const MINUS: &str = "inn";
    /// The op-amp's output, `amp_out`.
    pub const AMP_OUT: &str = "amp_out";
    /// The load side of the output coupling, `out`.
    pub const OUT: &str = "out";
    /// Every fixed name; a stage's internal nodes must be none of these.
    pub const FIXED: &[&str] = &[
        GROUND, SUPPLY, NEG_SUPPLY, IN, IN_RS, PLUS, PLUS_VOS, MINUS, AMP_OUT, OUT,
    ];
}

/// Name of the offset-voltage source: a deck sets it to 0 (`alter v_os dc = 0`) to compare
/// the DC point with the tool's `output_dc_v`, which has the bias currents but no offset.
pub const OFFSET_SOURCE: &str = "V_OS";

/// Open-loop gain standing in for an ideal amplifier (no GBW in the spec): 10^9 leaves a
/// closed-loop error of noise gain / A0, below 10^-7 up to a noise gain of 100.
pub const IDEAL_OPEN_LOOP_GAIN: f64 = 1e9;

/// Bleeder across the second piece of a series capacitor pair: SPICE needs a DC path at every
/// node (common practice; ngspice stops with "singular matrix" otherwise). The first piece
/// still blocks DC, so no DC current flows; 1 TΩ across 1 nF acts below 2·10^-4 Hz
/// (1/(2π·R·C)), far under any band the analysis sees.
pub const BLEEDER_OHMS: f64 = 1e12;

/// Name of the op-amp subcircuit and of its clamp diodes' model.
const OPAMP: &str = "stockfit_opamp";
const CLAMP: &str = "stockfit_clamp";

/// A number in SPICE notation with 12 significant digits, trailing zeros trimmed, using the
/// scale factors T G meg k m u n p f (SPICE number fields, ngspice manual "scale factors",
/// from memory; the ngspice test reads every netlist back):
/// 4.7e6 → "4.7meg", 1e-7 → "100n", 0.15 → "150m", 12 → "12". Beyond 10^15 or below 10^-15,
/// a plain exponent ("1.5e-18").
pub fn number(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        // Zero (and, defensively, a non-finite value, which no valid spec produces) as plain.
        return if x == 0.0 { "0".into() } else { format!("{x}") };
    }
    let sign = if x < 0.0 { "-" } else { "" };
    // `{:.11e}` rounds the exact binary value correctly, carries included (999.9999999999996
    // → 1.00000000000e3), so the digits below need no rounding of their own.
    let sci = format!("{:.11e}", x.abs());
    let (mant, exp) = sci.split_once('e').unwrap_or((sci.as_str(), "0"));
    let exp: i32 = exp.parse().unwrap_or(0);
    let digits: String = mant.chars().filter(char::is_ascii_digit).collect();
    let trim = |int: &str, frac: &str| {
        let frac = frac.trim_end_matches('0');
        if frac.is_empty() {
            int.to_string()
        } else {
            format!("{int}.{frac}")
        }
    };
    if !(-15..15).contains(&exp) {
        return format!("{sign}{}e{exp}", trim(&digits[..1], &digits[1..]));
    }
    let e3 = exp.div_euclid(3) * 3;
    let suffix = match e3 {
        12 => "t",
        9 => "g",
        6 => "meg",
        3 => "k",
        0 => "",
        -3 => "m",
        -6 => "u",
        -9 => "n",
        -12 => "p",
        _ => "f",
    };
    let int_len = (exp - e3 + 1) as usize;
    format!(
        "{sign}{}{suffix}",
        trim(&digits[..int_len], &digits[int_len..])
    )
}

/// Netlists are ASCII: some SPICE programs reject other bytes even in comments. Our texts use
/// a few symbols; spell them out.
fn ascii(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '−' | '–' | '—' => out.push('-'),
            'Ω' => out.push_str("ohm"),
            'µ' | 'μ' => out.push('u'),
            '∥' => out.push_str("||"),
            '…' => out.push_str("..."),
            '·' | '×' => out.push('*'),
            '≤' => out.push_str("<="),
            '≥' => out.push_str(">="),
            '±' => out.push_str("+/-"),
            '→' => out.push_str("->"),
            '√' => out.push_str("sqrt"),
            c if c.is_ascii() => out.push(c),
            _ => out.push('?'),
        }
    }
    out
}

fn percent(fraction: f64) -> String {
    let p = fraction * 100.0;
    // 3 significant digits are plenty for a tolerance in a comment.
    let s = format!("{:.3}", p);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    format!("{s} %")
}

/// The netlist of a stage's node, given where the stage's input terminal is.
fn node_name(n: Node, input: &'static str) -> &'static str {
    match n {
        Node::Ground => node::GROUND,
        Node::Supply => node::SUPPLY,
        Node::Input => input,
        Node::PlusInput => node::PLUS,
        Node::MinusInput => node::MINUS,
        Node::AmpOut => node::AMP_OUT,
        Node::Out => node::OUT,
        Node::Internal(name) => name,
    }
}

fn part_text(part: &Part) -> String {
    let names: Vec<String> = part.pieces.iter().map(|p| number(p.value)).collect();
    match part.arrangement {
        Arrangement::Single => format!("{} ({})", names.join(""), percent(part.tolerance())),
        Arrangement::Series => format!(
            "{} in series = {} ({})",
            names.join(" + "),
            number(part.value),
            percent(part.tolerance())
        ),
        Arrangement::Parallel => format!(
            "{} in parallel = {} ({})",
            names.join(" || "),
            number(part.value),
            percent(part.tolerance())
        ),
    }
}

/// The SPICE netlist of `build` (a plain circuit; see the module docs for its names).
pub fn netlist(spec: &Spec, stage: &dyn Circuit, build: &Build) -> String {
    let mut out = String::new();
    let slots = stage.slots();
    let v = build.values();
    let amp = &spec.amplifier;
    let (lo, hi) = spec.output_limits();
    let split = spec.split();
    let after_rs = if spec.source_resistance > 0.0 {
        node::IN_RS
    } else {
        node::IN
    };
    let input = if spec.source_capacitance.is_some() {
        node::IN_CS
    } else {
        after_rs
    };

    // Header. The first line is the title of a standalone deck and a comment when the file
    // is `.include`d (an included file has no title line: ngspice would read it as an element).
    let _ = writeln!(
        out,
        "* stockfit netlist: {} stage, nominal mid-band gain {} V/V",
        stage.kind().name(),
        number(stage.mid_gain(spec, &v))
    );
    let _ = writeln!(out, "* {}", ascii(stage.topology()));
    let supply = if split {
        format!("{} .. {}", number(spec.supply_low), number(spec.supply))
    } else {
        number(spec.supply)
    };
    let _ = writeln!(
        out,
        "* spec: supply {} V, load {} ohm, band {} .. {} Hz, source {} V DC through {} ohm",
        supply,
        number(spec.load),
        number(spec.band.0),
        number(spec.band.1),
        number(spec.source_dc),
        number(spec.source_resistance)
    );
    let model = match amp.gbw {
        Some(gbw) => format!(
            "single pole, GBW {} Hz, A0 = {}",
            number(gbw),
            number(OPEN_LOOP_GAIN)
        ),
        None => format!(
            "ideal (no GBW in the spec): A0 = {}, no pole",
            number(IDEAL_OPEN_LOOP_GAIN)
        ),
    };
    let _ = writeln!(
        out,
        "* op-amp: {model}; Vos {} V, Ib {} A into each input; output held within {} .. {} V",
        number(amp.input_offset_voltage),
        number(amp.input_bias_current),
        number(lo),
        number(hi)
    );
    for (slot, part) in slots.iter().zip(&build.parts) {
        let _ = writeln!(out, "*   {} = {}", slot.name, part_text(part));
    }
    let _ = writeln!(out, "* caution: {}", ascii(super::table::CAUTIONS[0]));
    if split {
        let _ = writeln!(
            out,
            "* nodes: in (source EMF), amp_out (op-amp output), out (load), vcc and vee (rails), 0 (ground)"
        );
    } else {
        let _ = writeln!(
            out,
            "* nodes: in (source EMF), amp_out (op-amp output), out (load), vcc (supply), 0 (ground)"
        );
    }
    let _ = writeln!(
        out,
        "* a plain circuit: add analyses in a deck that .includes this file"
    );
    let _ = writeln!(out);

    // Source, source resistance, supply.
    let own_source = stage.drawing().spice_source(spec, &number);
    if let Some(lines) = &own_source {
        out.push_str(lines);
    } else {
        let _ = writeln!(
            out,
            "* source: EMF at in, AC 1 so that V(out) is the transfer function"
        );
        let _ = writeln!(
            out,
            "V_SRC {} 0 DC {} AC 1",
            node::IN,
            number(spec.source_dc)
        );
    }
    if spec.source_resistance > 0.0 && own_source.is_none() {
        let _ = writeln!(out, "* source_resistance");
        let _ = writeln!(
            out,
            "R_S {} {} {}",
            node::IN,
            node::IN_RS,
            number(spec.source_resistance)
        );
    }
    if let Some(c) = spec.source_capacitance {
        let _ = writeln!(out, "* source_capacitance (the sensor's own, in series)");
        let _ = writeln!(out, "C_S {after_rs} {} {}", node::IN_CS, number(c));
        // Not a part: a DC path across it, so that the node between it and c_in sits at the
        // source's DC level (as the analysis takes c_in's bias).
        let _ = writeln!(
            out,
            "R_CS {after_rs} {} {}",
            node::IN_CS,
            number(BLEEDER_OHMS)
        );
    }
    let _ = writeln!(out, "* supply");
    let _ = writeln!(out, "V_CC {} 0 DC {}", node::SUPPLY, number(spec.supply));
    if split {
        let _ = writeln!(
            out,
            "V_EE {} 0 DC {}",
            node::NEG_SUPPLY,
            number(spec.supply_low)
        );
    }
    let _ = writeln!(out);

    // The stage's slots, piece by piece.
    // One numbering for the netlist, the schematic and the BOM (`report::designators`).
    let designators = super::designators::designators(stage, build);
    let mut n_bleed = 0usize;
    for e in stage.drawing().spice_elements() {
        let (slot, part) = (&slots[e.slot], &build.parts[e.slot]);
        let (a, b) = (node_name(e.a, input), node_name(e.b, input));
        let mid = format!("{}_mid", slot.name);
        let count = part.pieces.len();
        for (k, piece) in part.pieces.iter().enumerate() {
            let (pa, pb) = match (part.arrangement, k) {
                (Arrangement::Series, 0) => (a, mid.as_str()),
                (Arrangement::Series, _) => (mid.as_str(), b),
                _ => (a, b),
            };
            let designator = &designators[e.slot][k];
            let which = match part.arrangement {
                Arrangement::Single => String::new(),
                Arrangement::Series => format!(" (series pair, piece {} of {count})", k + 1),
                Arrangement::Parallel => format!(" (parallel pair, piece {} of {count})", k + 1),
            };
            let polar = if piece.polarized { ", polarised" } else { "" };
            let _ = writeln!(
                out,
                "* {}{which}: {} {}{polar}: {}",
                slot.name,
                number(piece.value),
                percent(piece.tolerance),
                ascii(slot.role)
            );
            let _ = writeln!(out, "{designator} {pa} {pb} {}", number(piece.value));
        }
        if part.kind == PartKind::Resistor && spec.stray_capacitance > 0.0 {
            let _ = writeln!(
                out,
                "* {}: stray capacitance across the resistor (not a part)",
                slot.name
            );
            let _ = writeln!(
                out,
                "C_STRAY_{} {a} {b} {}",
                slot.name.to_uppercase(),
                number(spec.stray_capacitance)
            );
        }
        if part.arrangement == Arrangement::Series && part.kind == PartKind::Capacitor {
            n_bleed += 1;
            let _ = writeln!(
                out,
                "* {}: DC path for the pair's middle node (not a part; piece 1 blocks DC)",
                slot.name
            );
            let _ = writeln!(out, "R_DC{n_bleed} {mid} {b} {}", number(BLEEDER_OHMS));
        }
    }
    // Nodes the stage joins without a part: a 0 V source is a named wire.
    for (k, (a, b)) in stage.drawing().links().iter().enumerate() {
        if k == 0 {
            let _ = writeln!(
                out,
                "* wires: nodes the stage joins without a part (0 V sources)"
            );
        }
        let _ = writeln!(
            out,
            "V_WIRE{} {} {} DC 0",
            k + 1,
            node_name(*a, input),
            node_name(*b, input)
        );
    }
    let _ = writeln!(out, "* load");
    let _ = writeln!(out, "R_L {} 0 {}", node::OUT, number(spec.load));
    let _ = writeln!(out);

    // Op-amp errors as separate elements, so a deck can zero them one by one.
    let _ = writeln!(
        out,
        "* op-amp offset: V(inp_vos) = V(inp) + Vos, so the loop drives V(inn) to V(inp) + Vos"
    );
    let _ = writeln!(
        out,
        "* (the analysis's sign; its output_dc_v has no offset: alter v_os dc = 0 to compare)"
    );
    let _ = writeln!(
        out,
        "{OFFSET_SOURCE} {} {} DC {}",
        node::PLUS_VOS,
        node::PLUS,
        number(amp.input_offset_voltage)
    );
    let _ = writeln!(
        out,
        "* op-amp input bias currents, drawn into each input (the analysis's nominal sign)"
    );
    let _ = writeln!(
        out,
        "I_BP {} 0 DC {}",
        node::PLUS,
        number(amp.input_bias_current)
    );
    let _ = writeln!(
        out,
        "I_BN {} 0 DC {}",
        node::MINUS,
        number(amp.input_bias_current)
    );
    if split {
        let _ = writeln!(
            out,
            "* op-amp U1 (behavioural): +, -, output, positive rail, negative rail"
        );
        let _ = writeln!(
            out,
            "XU1 {} {} {} {} {} {OPAMP}",
            node::PLUS_VOS,
            node::MINUS,
            node::AMP_OUT,
            node::SUPPLY,
            node::NEG_SUPPLY
        );
    } else {
        let _ = writeln!(out, "* op-amp U1 (behavioural): +, -, output, supply");
        let _ = writeln!(
            out,
            "XU1 {} {} {} {} {OPAMP}",
            node::PLUS_VOS,
            node::MINUS,
            node::AMP_OUT,
            node::SUPPLY
        );
    }
    let _ = writeln!(out);

    // The amplifier of `circuit::OpAmp`: a(s) = A0 / (1 + s/ωp), ωp = 2π·GBW/A0, built as 1 S
    // into A0 Ω ∥ 1/(2π·GBW) F (R·C = A0/(2π·GBW) = 1/ωp), then an output buffer.
    if split {
        let _ = writeln!(out, ".subckt {OPAMP} inp inn out vcc vee");
    } else {
        let _ = writeln!(out, ".subckt {OPAMP} inp inn out vcc");
    }
    let (a0, pole_cap) = match amp.gbw {
        Some(gbw) => (
            OPEN_LOOP_GAIN,
            Some(1.0 / (2.0 * std::f64::consts::PI * gbw)),
        ),
        None => (IDEAL_OPEN_LOOP_GAIN, None),
    };
    match pole_cap {
        Some(_) => {
            let _ = writeln!(
                out,
                "* a(s) = A0 / (1 + s/wp), A0 = {}, wp = 2 pi GBW / A0: 1 S into A0 ohm || 1/(2 pi GBW)",
                number(a0)
            );
        }
        None => {
            let _ = writeln!(
                out,
                "* ideal amplifier: a = A0 = {}, no pole (the spec gives no GBW)",
                number(a0)
            );
        }
    }
    let _ = writeln!(out, "G_A 0 p inp inn 1");
    let _ = writeln!(out, "R_A p 0 {}", number(a0));
    if let Some(c) = pole_cap {
        let _ = writeln!(out, "C_A p 0 {}", number(c));
    }
    // The output range: diodes clamp the gain node to the headroom limits, the way classic
    // op-amp macromodels limit their swing (Boyle et al., IEEE JSSC 1974, from memory). A
    // diode's exponential converges where a hard min()/max() does not: ngspice's Newton
    // iteration stalls on a zero slope and its fallback (transient op) then settles on a wrong
    // point with large coupling capacitors. Off, each diode adds about 10^-12 S at p against
    // 1/R_A ≥ 10^-9 S, so the gain and pole move by < 0.1 % of A0 (nothing closed-loop).
    let _ = writeln!(
        out,
        "* output range: clamp diodes hold p within headroom .. V(vcc) - headroom (to within"
    );
    let _ = writeln!(
        out,
        "* the diodes' drop, tens of mV); off, they do not change the small-signal result"
    );
    if split {
        let _ = writeln!(out, "V_LO lo vee DC {}", number(spec.headroom.0));
    } else {
        let _ = writeln!(out, "V_LO lo 0 DC {}", number(spec.headroom.0));
    }
    let _ = writeln!(out, "V_HI hi vcc DC {}", number(-spec.headroom.1));
    let _ = writeln!(out, "D_LO lo p {CLAMP}");
    let _ = writeln!(out, "D_HI p hi {CLAMP}");
    let _ = writeln!(out, "E_OUT out 0 p 0 1");
    let _ = writeln!(out, ".ends {OPAMP}");
    // N = 0.05 makes the knee sharp (n·V_T ≈ 1.3 mV): about 45 mV of drop at 1 A.
    let _ = writeln!(out, ".model {CLAMP} D(IS=1e-15 N=0.05)");
    let _ = writeln!(out);
    let _ = writeln!(out, ".end");
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::build::Piece;
    use crate::circuit::{circuit_for, inverting, non_inverting};
    use crate::vocab::StageKind;
    use approx::assert_relative_eq;

    /// Reads a SPICE number back (ngspice manual, scale factors, from memory: case-insensitive,
    /// `m` is milli, `meg` is 10^6; letters after the factor are ignored).
    fn read(text: &str) -> f64 {
        let t = text.to_ascii_lowercase();
        let end = t
            .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == '+' || c == 'e'))
            .unwrap_or(t.len());
        // "1e-18" is all number; "4.7meg" splits at 'm'. An 'e' that starts no exponent would be
        // a bug in `number`, and the parse below fails the test then.
        let (num, rest) = t.split_at(end);
        let scale = if rest.starts_with("meg") {
            1e6
        } else {
            match rest.chars().next() {
                None => 1.0,
                Some('t') => 1e12,
                Some('g') => 1e9,
                Some('k') => 1e3,
                Some('m') => 1e-3,
                Some('u') => 1e-6,
                Some('n') => 1e-9,
                Some('p') => 1e-12,
                Some('f') => 1e-15,
                Some(c) => panic!("unexpected scale {c:?} in {text:?}"),
            }
        };
        num.parse::<f64>().unwrap() * scale
    }

    #[test]
    fn numbers_in_spice_notation() {
        // SPICE scale factors (ngspice manual, from memory); "M" would be milli, so "meg".
        let cases = [
            (4.7e6, "4.7meg"),
            (6.2e6, "6.2meg"),
            (1e6, "1meg"),
            (47e3, "47k"),
            (4.7e3, "4.7k"),
            (100.0, "100"),
            (12.0, "12"),
            (0.15, "150m"),
            (1e-3, "1m"),
            (1e-7, "100n"),
            (4.7e-6, "4.7u"),
            (2.2e-12, "2.2p"),
            (1.5e-15, "1.5f"),
            (1e12, "1t"),
            (3e9, "3g"),
            (0.0, "0"),
            (-4.7, "-4.7"),
            (1.5e-18, "1.5e-18"),
            (2e15, "2e15"),
            // Carry across a scale boundary (12 significant digits).
            (999.99999999999, "1k"),
            (1.0 / (2.0 * std::f64::consts::PI * 1e6), "159.154943092n"),
        ];
        for (x, want) in cases {
            assert_eq!(number(x), want, "{x}");
        }
    }

    #[test]
    fn numbers_read_back_and_never_use_capital_m() {
        // Every E192 step over 30 decades reads back within the 12 digits (IEC 60063 values
        // are 3 digits, so this is exact for stock parts).
        let mut x = 1.01e-16;
        while x < 1e16 {
            let s = number(x);
            assert!(!s.contains('M'), "{s}");
            assert!(s.is_ascii());
            assert_relative_eq!(read(&s), x, max_relative = 1e-11);
            x *= 10f64.powf(1.0 / 192.0);
        }
    }

    const SPEC: &str = r#"
[stage]
kind = "inverting"
supply = "9 V"
gain = -10
load = "10k"
band = ["20 Hz", "20 kHz"]
headroom = ["0.5 V", "1.5 V"]

[amplifier]
gbw = "1 MHz"
input_bias_current = "20 nA"
input_offset_voltage = "2 mV"

[stock]
resistors = "E24"
capacitors = "E6"
"#;

    fn spec(kind: &str, extra: &str, gbw: bool) -> Spec {
        let mut text = SPEC.replace("\"inverting\"", &format!("\"{kind}\""));
        if kind != "inverting" {
            text = text.replace("gain = -10", "gain = 11");
        }
        if !gbw {
            text = text.replace("gbw = \"1 MHz\"\n", "");
        }
        text = text.replace("[amplifier]", &format!("{extra}\n[amplifier]"));
        Spec::from_toml(&text).unwrap()
    }

    fn single(kind: PartKind, v: f64) -> Part {
        Part::single(
            kind,
            Piece::plain(
                v,
                if kind == PartKind::Resistor {
                    0.01
                } else {
                    0.1
                },
            ),
        )
    }

    fn inverting_build() -> Build {
        let r = |v| single(PartKind::Resistor, v);
        let c = |v| single(PartKind::Capacitor, v);
        // Slot order of the inverting stage: r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out.
        Build {
            parts: vec![r(10e3), r(100e3), r(4.7e6), r(6.2e6), c(1e-6), c(4.7e-6)],
        }
    }

    /// The element lines (not comments, not dot-lines), as token lists.
    fn elements(net: &str) -> Vec<Vec<String>> {
        net.lines()
            .filter(|l| !l.starts_with('*') && !l.starts_with('.') && !l.trim().is_empty())
            .map(|l| l.split_whitespace().map(str::to_string).collect())
            .collect()
    }

    fn find<'a>(els: &'a [Vec<String>], name: &str) -> &'a Vec<String> {
        els.iter()
            .find(|e| e[0] == name)
            .unwrap_or_else(|| panic!("no element {name}"))
    }

    #[test]
    fn plain_circuit_with_fixed_names() {
        let spec = spec("inverting", "", true);
        let stage = circuit_for(StageKind::Inverting);
        let net = netlist(&spec, stage, &inverting_build());
        assert!(net.is_ascii());
        // First line: a title for a standalone deck, a comment for `.include`.
        assert!(net.starts_with("* stockfit netlist: inverting stage"));
        assert!(!net.to_ascii_lowercase().contains(".control"));
        assert_eq!(net.trim_end().lines().last(), Some(".end"));
        assert!(net.contains(super::super::table::CAUTIONS[0]));
        let els = elements(&net);
        let nodes: Vec<&str> = els
            .iter()
            .filter(|e| !e[0].starts_with('X'))
            .flat_map(|e| [e[1].as_str(), e[2].as_str()])
            .collect();
        for n in ["in", "amp_out", "out", "vcc", "0", "inp", "inn"] {
            assert!(nodes.contains(&n), "node {n} missing:\n{net}");
        }
        assert_eq!(find(&els, "V_SRC")[1..6], ["in", "0", "DC", "0", "AC"]);
        assert_eq!(find(&els, "V_CC")[1..5], ["vcc", "0", "DC", "9"]);
        assert_eq!(find(&els, "R_L")[1..4], ["out", "0", "10k"]);
        assert_eq!(find(&els, "V_OS")[1..5], ["inp_vos", "inp", "DC", "2m"]);
        assert_eq!(find(&els, "I_BP")[1..5], ["inp", "0", "DC", "20n"]);
        assert_eq!(find(&els, "I_BN")[1..5], ["inn", "0", "DC", "20n"]);
        assert_eq!(
            find(&els, "XU1")[1..6],
            ["inp_vos", "inn", "amp_out", "vcc", "stockfit_opamp"]
        );
        // No source resistance: no R_S, and the stage starts at `in`.
        assert!(!net.contains("R_S "));
        // Single pole: A0 from the analysis, C = 1/(2π·GBW).
        assert_eq!(find(&els, "R_A")[3], "1meg");
        assert_eq!(find(&els, "C_A")[3], "159.154943092n");
        // Output range: clamp diodes to headroom.0 and V(vcc) − headroom.1, unity buffer.
        assert_eq!(find(&els, "V_LO")[1..5], ["lo", "0", "DC", "500m"]);
        assert_eq!(find(&els, "V_HI")[1..5], ["hi", "vcc", "DC", "-1.5"]);
        assert_eq!(find(&els, "D_LO")[1..4], ["lo", "p", "stockfit_clamp"]);
        assert_eq!(find(&els, "D_HI")[1..4], ["p", "hi", "stockfit_clamp"]);
        assert_eq!(find(&els, "E_OUT")[1..6], ["out", "0", "p", "0", "1"]);
        assert!(net.contains(".model stockfit_clamp D("));
    }

    #[test]
    fn every_slot_is_an_element_with_its_value() {
        let spec = spec("inverting", "", true);
        let stage = circuit_for(StageKind::Inverting);
        let build = inverting_build();
        let net = netlist(&spec, stage, &build);
        let els = elements(&net);
        // Slot order R1 r_in, R2 r_fb, R3 r_bias_hi, R4 r_bias_lo, C1 c_in, C2 c_out.
        let want = [
            ("R1", "n_in", "inn", "10k", "r_in"),
            ("R2", "inn", "amp_out", "100k", "r_fb"),
            ("R3", "vcc", "inp", "4.7meg", "r_bias_hi"),
            ("R4", "inp", "0", "6.2meg", "r_bias_lo"),
            ("C1", "in", "n_in", "1u", "c_in"),
            ("C2", "amp_out", "out", "4.7u", "c_out"),
        ];
        for (name, a, b, value, slot) in want {
            assert_eq!(find(&els, name)[1..4], [a, b, value], "{name}");
            // The comment right above the element names its slot.
            let lines: Vec<&str> = net.lines().collect();
            let at = lines
                .iter()
                .position(|l| l.starts_with(&format!("{name} ")))
                .unwrap();
            assert!(
                lines[at - 1].starts_with(&format!("* {slot}")),
                "{}",
                lines[at - 1]
            );
        }
        assert_eq!(
            els.iter()
                .filter(|e| e[0].starts_with('R') && e[0][1..].parse::<u32>().is_ok())
                .count(),
            4
        );
    }

    #[test]
    fn two_piece_slots_are_two_elements() {
        let spec = spec("inverting", "", true);
        let stage = circuit_for(StageKind::Inverting);
        let mut build = inverting_build();
        let rp = |v| Piece::plain(v, 0.01);
        let cp = |v| Piece::plain(v, 0.1);
        build.parts[inverting::R_FB] =
            Part::pair(PartKind::Resistor, Arrangement::Series, rp(82e3), rp(18e3));
        build.parts[inverting::R_IN] = Part::pair(
            PartKind::Resistor,
            Arrangement::Parallel,
            rp(20e3),
            rp(20e3),
        );
        build.parts[inverting::C_IN] = Part::pair(
            PartKind::Capacitor,
            Arrangement::Series,
            cp(2.2e-6),
            cp(2.2e-6),
        );
        let net = netlist(&spec, stage, &build);
        let els = elements(&net);
        // Parallel: both across the slot's nodes; series: through `<slot>_mid`.
        assert_eq!(find(&els, "R1")[1..4], ["n_in", "inn", "20k"]);
        assert_eq!(find(&els, "R2")[1..4], ["n_in", "inn", "20k"]);
        assert_eq!(find(&els, "R3")[1..4], ["inn", "r_fb_mid", "82k"]);
        assert_eq!(find(&els, "R4")[1..4], ["r_fb_mid", "amp_out", "18k"]);
        assert_eq!(find(&els, "R5")[1..4], ["vcc", "inp", "4.7meg"]);
        assert_eq!(find(&els, "C1")[1..4], ["in", "c_in_mid", "2.2u"]);
        assert_eq!(find(&els, "C2")[1..4], ["c_in_mid", "n_in", "2.2u"]);
        // The series capacitors' middle node gets its DC path across the second piece only.
        assert_eq!(find(&els, "R_DC1")[1..4], ["c_in_mid", "n_in", "1t"]);
        assert!(net.contains("*   r_fb = 82k + 18k in series = 100k (1 %)"));
    }

    #[test]
    fn source_resistance_and_ideal_amplifier() {
        let spec = spec(
            "non-inverting",
            "source_resistance = \"1k\"\nsource_dc = \"2.5 V\"",
            false,
        );
        let stage = circuit_for(StageKind::NonInverting);
        let r = |v| single(PartKind::Resistor, v);
        let c = |v| single(PartKind::Capacitor, v);
        let mut parts = vec![r(1e6); 7];
        parts[non_inverting::C_IN] = c(220e-9);
        parts[non_inverting::R_FB] = r(470e3);
        parts[non_inverting::R_G] = r(47e3);
        parts[non_inverting::C_G] = c(10e-6);
        parts[non_inverting::C_OUT] = c(10e-6);
        let build = Build { parts };
        let net = netlist(&spec, stage, &build);
        let els = elements(&net);
        assert_eq!(find(&els, "V_SRC")[1..5], ["in", "0", "DC", "2.5"]);
        assert_eq!(find(&els, "R_S")[1..4], ["in", "in_rs", "1k"]);
        // c_in is the first slot: C1 from the stage input (behind R_S) to +.
        assert_eq!(find(&els, "C1")[1..4], ["in_rs", "inp", "220n"]);
        assert_eq!(find(&els, "R3")[1..4], ["inn", "amp_out", "470k"]);
        assert_eq!(find(&els, "R4")[1..4], ["inn", "n_g", "47k"]);
        assert_eq!(find(&els, "C2")[1..4], ["n_g", "0", "10u"]);
        // Ideal: a large gain and no pole.
        assert_eq!(find(&els, "R_A")[3], "1g");
        assert!(!net.contains("C_A "));
        assert!(!net.to_ascii_lowercase().contains(".control"));
    }

    #[test]
    fn every_stage_wires_every_slot_once() {
        for stage in crate::circuit::all() {
            let kind = stage.topology();
            let els = stage.drawing().spice_elements();
            let mut seen: Vec<usize> = els.iter().map(|e| e.slot).collect();
            seen.sort_unstable();
            assert_eq!(
                seen,
                (0..stage.slots().len()).collect::<Vec<_>>(),
                "{kind:?}"
            );
            for e in els {
                for n in [e.a, e.b] {
                    if let Node::Internal(name) = n {
                        assert!(!node::FIXED.contains(&name), "{kind:?}: {name}");
                        assert!(
                            !name.ends_with("_mid"),
                            "{kind:?}: {name} could clash with a pair's middle node"
                        );
                        assert!(name
                            .chars()
                            .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_'));
                    }
                }
                assert_ne!(e.a, e.b, "{kind:?}: slot {} shorted", e.slot);
            }
        }
    }
}
