//! Schematic of one build as SVG: the stage drawn from its own layout (`Drawing::schematic_layout`)
//! with the chosen values, reference designators, supply, ground, source and load, and the "+"
//! of every polarised capacitor on the side the DC analysis found positive.
//!
//! Symbols follow IEC 60617 (from memory): a resistor is a plain rectangle; a capacitor two
//! parallel plates; a polarised capacitor a hollow (+) plate and a filled (−) plate with a "+"
//! beside the positive one; the op-amp a triangle with its − and + inputs marked; ground three
//! shortening bars; the supply a bar with its voltage. Designators are those of the SPICE
//! netlist and the BOM (`report::designators`). Hand-written SVG: plain lines, rectangles and
//! `<text>`, no fonts or scripts, so that it renders the same in a browser and in an image tool.

use super::common::escape;
use super::designators::{self, OPAMP};
use crate::analysis::Evaluation;
use crate::build::{Arrangement, Build, Part};
use crate::circuit::layout::{Layout, Placed, Side, P};
use crate::circuit::Circuit;
use crate::spec::Spec;
use crate::value::{format, Unit};
use crate::vocab::PartKind;
use std::fmt::Write;

const FONT: &str = "font-family=\"sans-serif\"";
const WIRE: &str = "stroke=\"#222\" stroke-width=\"1.6\" fill=\"none\"";
const INK: &str = "#222";
const GREY: &str = "#666";
/// Half the length of a symbol along its span.
const HALF: i32 = 16;
/// Room below the layout for the symbol note.
const FOOTER: i32 = 26;

struct Canvas {
    out: String,
}

impl Canvas {
    fn line(&mut self, a: (f64, f64), b: (f64, f64)) {
        let _ = writeln!(
            self.out,
            "<line x1=\"{:.1}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" {WIRE}/>",
            a.0, a.1, b.0, b.1
        );
    }

    fn polyline(&mut self, pts: &[P]) {
        let text: Vec<String> = pts.iter().map(|p| format!("{},{}", p.0, p.1)).collect();
        let _ = writeln!(
            self.out,
            "<polyline points=\"{}\" {WIRE} stroke-linejoin=\"round\"/>",
            text.join(" ")
        );
    }

    fn dot(&mut self, p: (f64, f64)) {
        let _ = writeln!(
            self.out,
            "<circle cx=\"{:.1}\" cy=\"{:.1}\" r=\"3.5\" fill=\"{INK}\"/>",
            p.0, p.1
        );
    }

    /// One line of text; `anchor` is start, middle or end; `class` picks the look.
    fn text(&mut self, at: (f64, f64), anchor: &str, look: Look, text: &str) {
        let (size, weight, color) = match look {
            Look::Designator => (13.0, "bold", INK),
            Look::Value => (13.0, "normal", INK),
            Look::Note => (11.5, "normal", GREY),
            Look::Sign => (15.0, "bold", INK),
            Look::Plus => (15.0, "bold", "#b00"),
        };
        // The polarity marks carry a class, so that tests (and a reader's stylesheet) find them.
        let class = match look {
            Look::Plus => " class=\"polarity\"",
            _ => "",
        };
        let _ = writeln!(
            self.out,
            "<text{class} x=\"{:.1}\" y=\"{:.1}\" {FONT} font-size=\"{size}\" font-weight=\"{weight}\" fill=\"{color}\" text-anchor=\"{anchor}\">{}</text>",
            at.0,
            at.1,
            escape(text)
        );
    }

    /// A text line made of a bold designator and a plain value.
    fn labelled(&mut self, at: (f64, f64), anchor: &str, designator: &str, value: &str) {
        let _ = writeln!(
            self.out,
            "<text x=\"{:.1}\" y=\"{:.1}\" {FONT} font-size=\"13\" fill=\"{INK}\" text-anchor=\"{anchor}\"><tspan font-weight=\"bold\">{}</tspan> {}</text>",
            at.0,
            at.1,
            escape(designator),
            escape(value)
        );
    }
}

#[derive(Clone, Copy)]
enum Look {
    Designator,
    Value,
    Note,
    Sign,
    Plus,
}

/// A frame along a span: position `t` along the axis from `from`, offset `s` across it.
#[derive(Clone, Copy)]
struct Frame {
    from: (f64, f64),
    /// Unit vector along the span.
    u: (f64, f64),
    /// Unit vector across (down for a horizontal span, right for a vertical one).
    n: (f64, f64),
}

impl Frame {
    fn of(a: P, b: P) -> Frame {
        let (dx, dy) = ((b.0 - a.0) as f64, (b.1 - a.1) as f64);
        let len = (dx * dx + dy * dy).sqrt().max(1.0);
        let u = (dx / len, dy / len);
        let n = if u.1.abs() < 1e-9 {
            (0.0, 1.0)
        } else {
            (1.0, 0.0)
        };
        Frame {
            from: (a.0 as f64, a.1 as f64),
            u,
            n,
        }
    }
    fn at(&self, t: f64, s: f64) -> (f64, f64) {
        (
            self.from.0 + self.u.0 * t + self.n.0 * s,
            self.from.1 + self.u.1 * t + self.n.1 * s,
        )
    }
}

/// One piece's symbol centred at `t` on the frame (offset `s`), occupying t ± HALF, with its
/// leads; `plus_toward_from` is `Some` for a polarised capacitor; `plus_side` is which side of
/// the axis (±1) gets the "+" mark.
fn symbol(
    c: &mut Canvas,
    f: &Frame,
    kind: PartKind,
    t: f64,
    s: f64,
    plus_toward_from: Option<bool>,
    plus_side: f64,
) {
    let h = HALF as f64;
    match kind {
        PartKind::Resistor => {
            // IEC 60617 resistor: a rectangle 32 × 12.
            let p = [
                f.at(t - h, s - 6.0),
                f.at(t + h, s - 6.0),
                f.at(t + h, s + 6.0),
                f.at(t - h, s + 6.0),
            ];
            let pts: Vec<String> = p.iter().map(|q| format!("{:.1},{:.1}", q.0, q.1)).collect();
            let _ = writeln!(
                c.out,
                "<polygon points=\"{}\" stroke=\"{INK}\" stroke-width=\"1.8\" fill=\"white\"/>",
                pts.join(" ")
            );
        }
        PartKind::Capacitor => {
            // Two plates 4 px either side of the centre, leads up to them.
            c.line(f.at(t - h, s), f.at(t - 4.0, s));
            c.line(f.at(t + 4.0, s), f.at(t + h, s));
            let plate = |c: &mut Canvas, at: f64, filled: bool, hollow: bool| {
                // A plate is a 3 px thick bar 26 long across the axis.
                let w = if hollow { 4.0 } else { 3.0 };
                let q = [
                    f.at(at - w / 2.0, s - 13.0),
                    f.at(at + w / 2.0, s - 13.0),
                    f.at(at + w / 2.0, s + 13.0),
                    f.at(at - w / 2.0, s + 13.0),
                ];
                let pts: Vec<String> = q.iter().map(|p| format!("{:.1},{:.1}", p.0, p.1)).collect();
                let fill = if filled { INK } else { "white" };
                let _ = writeln!(
                    c.out,
                    "<polygon points=\"{}\" stroke=\"{INK}\" stroke-width=\"1.2\" fill=\"{fill}\"/>",
                    pts.join(" ")
                );
            };
            match plus_toward_from {
                None => {
                    plate(c, t - 4.0, true, false);
                    plate(c, t + 4.0, true, false);
                }
                Some(toward_from) => {
                    let (pos, neg) = if toward_from {
                        (t - 5.0, t + 5.0)
                    } else {
                        (t + 5.0, t - 5.0)
                    };
                    plate(c, pos, false, true);
                    plate(c, neg, true, false);
                    let dir = if toward_from { -1.0 } else { 1.0 };
                    let at = f.at(pos + dir * 9.0, s + plus_side * 17.0);
                    c.text((at.0, at.1 + 5.0), "middle", Look::Plus, "+");
                }
            }
        }
    }
}

/// Value text of one piece: "470 kΩ", "10 µF 25 V".
fn piece_value(kind: PartKind, piece: &crate::build::Piece) -> String {
    let unit = match kind {
        PartKind::Resistor => Unit::Ohm,
        PartKind::Capacitor => Unit::Farad,
    };
    let mut s = format(piece.value, unit);
    if kind == PartKind::Capacitor {
        if let Some(v) = piece.voltage {
            let _ = write!(s, " {}", format(v, Unit::Volt));
        }
    }
    s
}

/// The grey lines under the pieces: for a pair its combined value and tolerance, then the
/// slot ("= 47.2 kΩ · 1 %", "r_fb"); for a single piece "r_in · 1 %". Short lines, so that
/// neighbouring labels keep apart.
fn slot_notes(name: &str, part: &Part) -> Vec<String> {
    let tol = format(part.tolerance(), Unit::Percent);
    let locked = if part.locked { " · locked" } else { "" };
    if part.arrangement == Arrangement::Single {
        vec![format!("{name} · {tol}{locked}")]
    } else {
        vec![
            format!("= {} · {tol}", format(part.value, part.unit())),
            format!("{name}{locked}"),
        ]
    }
}

/// Offset of the two branches of a parallel pair from the span's axis: clear of each other's
/// body (a resistor is 6 px either side of its axis, a capacitor plate 13 px).
fn branch(kind: PartKind) -> f64 {
    match kind {
        PartKind::Resistor => 14.0,
        PartKind::Capacitor => 22.0,
    }
}

/// Draw one slot: its pieces along the span as the arrangement says, and its label.
fn slot(
    c: &mut Canvas,
    placed: &Placed,
    name: &str,
    part: &Part,
    names: &[String],
    plus_toward_from: Option<bool>,
) {
    let f = Frame::of(placed.from, placed.to);
    let len = ((placed.to.0 - placed.from.0).abs() + (placed.to.1 - placed.from.1).abs()) as f64;
    let h = HALF as f64;
    // The "+" goes on the side away from the label (`n` points down or right).
    let horizontal = f.n.1 > 0.5;
    let label_side = match (placed.label, horizontal) {
        (Side::Below, true) | (Side::Right, false) => 1.0,
        _ => -1.0,
    };
    let plus_side = -label_side;
    let polar = |k: usize| part.pieces.get(k).is_some_and(|p| p.polarized);
    let pt = |k: usize| if polar(k) { plus_toward_from } else { None };
    let bs = branch(part.kind);
    match (part.arrangement, part.pieces.len()) {
        (Arrangement::Parallel, 2) => {
            let (a, b) = (0.2 * len, 0.8 * len);
            c.line(f.at(0.0, 0.0), f.at(a, 0.0));
            c.line(f.at(b, 0.0), f.at(len, 0.0));
            c.line(f.at(a, -bs), f.at(a, bs));
            c.line(f.at(b, -bs), f.at(b, bs));
            c.dot(f.at(a, 0.0));
            c.dot(f.at(b, 0.0));
            let m = len / 2.0;
            for (k, s) in [(0usize, -bs), (1, bs)] {
                c.line(f.at(a, s), f.at(m - h, s));
                c.line(f.at(m + h, s), f.at(b, s));
                // Each branch's "+" on its outer side, clear of the other branch.
                symbol(c, &f, part.kind, m, s, pt(k), s.signum());
            }
        }
        (Arrangement::Series, 2) => {
            let (t1, t2) = (0.3 * len, 0.7 * len);
            c.line(f.at(0.0, 0.0), f.at(t1 - h, 0.0));
            c.line(f.at(t1 + h, 0.0), f.at(t2 - h, 0.0));
            c.line(f.at(t2 + h, 0.0), f.at(len, 0.0));
            symbol(c, &f, part.kind, t1, 0.0, pt(0), plus_side);
            symbol(c, &f, part.kind, t2, 0.0, pt(1), plus_side);
        }
        _ => {
            let m = len / 2.0;
            c.line(f.at(0.0, 0.0), f.at(m - h, 0.0));
            c.line(f.at(m + h, 0.0), f.at(len, 0.0));
            symbol(c, &f, part.kind, m, 0.0, pt(0), plus_side);
        }
    }

    // Label: one line per piece, then the grey notes.
    let mut lines: Vec<(String, String)> = part
        .pieces
        .iter()
        .zip(names)
        .map(|(p, d)| (d.clone(), piece_value(part.kind, p)))
        .collect();
    if lines.is_empty() {
        lines.push(("?".into(), format(part.value, part.unit())));
    }
    let notes = slot_notes(name, part);
    let n = (lines.len() + notes.len()) as f64;
    let step = 15.0;
    let mid = f.at(len / 2.0, 0.0);
    // Clear of the symbol: a resistor is 6 px either side of the axis, a plate 13 px.
    let body = match part.kind {
        PartKind::Resistor => 6.0,
        PartKind::Capacitor => 13.0,
    };
    let reach = if part.arrangement == Arrangement::Parallel {
        // The outer branch's "+" sits outward, toward the label: leave it room.
        let plus = if part.polarized() { 14.0 } else { 0.0 };
        bs + body + 6.0 + plus
    } else {
        body + 7.0
    };
    // Baseline of the first line and the anchor.
    let (x, y0, anchor) = match placed.label {
        Side::Above => (mid.0, mid.1 - reach - step * (n - 1.0) - 2.0, "middle"),
        Side::Below => (mid.0, mid.1 + reach + 12.0, "middle"),
        Side::Left => (mid.0 - reach, mid.1 - step * (n - 1.0) / 2.0 + 4.0, "end"),
        Side::Right => (mid.0 + reach, mid.1 - step * (n - 1.0) / 2.0 + 4.0, "start"),
    };
    for (i, (d, v)) in lines.iter().enumerate() {
        c.labelled((x, y0 + step * i as f64), anchor, d, v);
    }
    for (i, note) in notes.iter().enumerate() {
        let row = (lines.len() + i) as f64;
        c.text((x, y0 + step * row - 1.0), anchor, Look::Note, note);
    }
}

fn ground(c: &mut Canvas, p: P) {
    let (x, y) = (p.0 as f64, p.1 as f64);
    c.line((x, y), (x, y + 10.0));
    for (dy, w) in [(10.0, 11.0), (15.0, 7.0), (20.0, 3.0)] {
        c.line((x - w, y + dy), (x + w, y + dy));
    }
}

fn supply(c: &mut Canvas, p: P, volts: f64) {
    let (x, y) = (p.0 as f64, p.1 as f64);
    c.line((x, y), (x, y - 12.0));
    let _ = writeln!(
        c.out,
        "<line x1=\"{:.1}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"{INK}\" stroke-width=\"2.6\"/>",
        x - 11.0,
        y - 12.0,
        x + 11.0,
        y - 12.0
    );
    c.text(
        (x, y - 18.0),
        "middle",
        Look::Designator,
        &format!("+{}", format(volts, Unit::Volt)),
    );
}

/// A split supply's negative rail: a bar below the point, labelled with its (negative)
/// voltage.
fn negative_supply(c: &mut Canvas, p: P, volts: f64) {
    let (x, y) = (p.0 as f64, p.1 as f64);
    c.line((x, y), (x, y + 12.0));
    let _ = writeln!(
        c.out,
        "<line x1=\"{:.1}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"{INK}\" stroke-width=\"2.6\"/>",
        x - 11.0,
        y + 12.0,
        x + 11.0,
        y + 12.0
    );
    c.text(
        (x, y + 30.0),
        "middle",
        Look::Designator,
        &format(volts, Unit::Volt).replace('-', "−"),
    );
}

fn opamp(c: &mut Canvas, layout: &Layout, gbw: Option<f64>) {
    let pins = layout.pins();
    let (x, y) = (pins.upper.0 as f64, pins.upper.1 as f64);
    let x0 = x + 20.0;
    let apex = (x0 + 90.0, y + 20.0);
    let _ = writeln!(
        c.out,
        "<polygon points=\"{:.1},{:.1} {:.1},{:.1} {:.1},{:.1}\" stroke=\"{INK}\" stroke-width=\"1.8\" fill=\"white\"/>",
        x0,
        y - 30.0,
        x0,
        y + 70.0,
        apex.0,
        apex.1
    );
    c.line((x, y), (x0, y));
    c.line((x, y + 40.0), (x0, y + 40.0));
    c.line(apex, (pins.out.0 as f64, pins.out.1 as f64));
    let (top, bottom) = if layout.plus_on_top {
        ("+", "−")
    } else {
        ("−", "+")
    };
    c.text((x0 + 10.0, y + 5.0), "middle", Look::Sign, top);
    c.text((x0 + 10.0, y + 45.0), "middle", Look::Sign, bottom);
    c.text((x0 + 44.0, y + 25.0), "middle", Look::Designator, OPAMP);
    // Power pins from the triangle's edges (at 30 px in, a third of its length).
    let px = x0 + 30.0;
    c.line((px, y - 30.0 + 50.0 / 3.0), (px, pins.supply.1 as f64));
    c.line((px, y + 70.0 - 50.0 / 3.0), (px, pins.ground.1 as f64));
    if let Some(g) = gbw {
        c.text(
            (px + 12.0, y + 76.0),
            "start",
            Look::Note,
            &format!("op-amp, GBW {}", format(g, Unit::Hertz)),
        );
    }
}

/// The little sine in a source circle.
fn source(c: &mut Canvas, p: P, spec: &Spec) {
    source_named(c, p, spec, "in", true);
}

/// A source symbol below `p`, its terminal labelled `name`; `notes` adds the source's
/// resistance and DC level beside it.
fn source_named(c: &mut Canvas, p: P, spec: &Spec, name: &str, notes: bool) {
    let (x, y) = (p.0 as f64, p.1 as f64);
    let cy = y + 36.0;
    c.line((x, y), (x, cy - 16.0));
    let _ = writeln!(
        c.out,
        "<circle cx=\"{x:.1}\" cy=\"{cy:.1}\" r=\"16\" stroke=\"{INK}\" stroke-width=\"1.8\" fill=\"white\"/>"
    );
    let _ = writeln!(
        c.out,
        "<path d=\"M {:.1} {cy:.1} q 4.5 -9 9 0 t 9 0\" {WIRE}/>",
        x - 9.0
    );
    c.line((x, cy + 16.0), (x, y + 72.0));
    ground(c, P(p.0, p.1 + 72));
    c.text((x, y - 8.0), "middle", Look::Note, name);
    if !notes {
        c.text((x + 22.0, cy - 2.0), "start", Look::Value, "source, − leg");
        return;
    }
    let mut lines = vec!["source".to_string()];
    if spec.source_resistance > 0.0 {
        lines.push(format!("R_S {}", format(spec.source_resistance, Unit::Ohm)));
    }
    if spec.source_dc != 0.0 {
        lines.push(format!("DC {}", format(spec.source_dc, Unit::Volt)));
    }
    for (i, l) in lines.iter().enumerate() {
        let look = if i == 0 { Look::Value } else { Look::Note };
        c.text((x + 22.0, cy - 2.0 + 14.0 * i as f64), "start", look, l);
    }
}

fn load(c: &mut Canvas, p: P, spec: &Spec) {
    let (x, y) = (p.0 as f64, p.1 as f64);
    let f = Frame::of(P(p.0, p.1 + 24), P(p.0, p.1 + 56));
    c.line((x, y), (x, y + 24.0));
    symbol(c, &f, PartKind::Resistor, 16.0, 0.0, None, 1.0);
    c.line((x, y + 56.0), (x, y + 76.0));
    ground(c, P(p.0, p.1 + 76));
    c.text((x, y - 8.0), "middle", Look::Note, "out");
    c.labelled(
        (x + 16.0, y + 40.0),
        "start",
        "R_L",
        &format(spec.load, Unit::Ohm),
    );
    c.text((x + 16.0, y + 54.0), "start", Look::Note, "load");
}

/// The schematic of `build` as an SVG document.
pub fn svg(spec: &Spec, stage: &dyn Circuit, build: &Build, evaluation: &Evaluation) -> String {
    let layout = stage.drawing().schematic_layout();
    let slots = stage.slots();
    let names = designators::designators(stage, build);
    let (w, h) = (layout.size.0, layout.size.1 + FOOTER);
    let mut c = Canvas { out: String::new() };
    let _ = writeln!(
        c.out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\">"
    );
    let _ = writeln!(
        c.out,
        "<rect x=\"0\" y=\"0\" width=\"{w}\" height=\"{h}\" fill=\"white\"/>"
    );
    let title = if spec.split() {
        format!(
            "{} stage, split supply {}",
            stage.kind().name(),
            super::common::supply_text(spec)
        )
    } else {
        format!(
            "{} stage, single supply +{}",
            stage.kind().name(),
            format(spec.supply, Unit::Volt)
        )
    };
    c.text((16.0, 24.0), "start", Look::Designator, &title);

    for wire in layout.wires {
        c.polyline(wire);
    }
    for d in layout.dots {
        c.dot((d.0 as f64, d.1 as f64));
    }
    for p in layout.parts {
        let (Some(part), Some(def)) = (build.parts.get(p.slot), slots.get(p.slot)) else {
            continue;
        };
        let polarity = p.from_side.and_then(|side| {
            evaluation
                .caps
                .iter()
                .find(|r| r.slot == def.name)
                .map(|r| r.positive_side == side)
        });
        let empty = Vec::new();
        let ds = names.get(p.slot).unwrap_or(&empty);
        slot(&mut c, p, def.name, part, ds, polarity);
    }
    opamp(&mut c, layout, spec.amplifier.gbw);
    let pins = layout.pins();
    supply(&mut c, pins.supply, spec.supply);
    if spec.split() {
        negative_supply(&mut c, pins.ground, spec.supply_low);
    } else {
        ground(&mut c, pins.ground);
    }
    for &p in layout.supplies {
        supply(&mut c, p, spec.supply);
    }
    for &p in layout.grounds {
        ground(&mut c, p);
    }
    match layout.minus_source {
        Some(m) => {
            source_named(&mut c, layout.source, spec, "in+", true);
            source_named(&mut c, m, spec, "in−", false);
        }
        None => source(&mut c, layout.source, spec),
    }
    load(&mut c, layout.load, spec);
    c.text(
        (16.0, (h - 10) as f64),
        "start",
        Look::Note,
        "IEC 60617 symbols (polarised capacitor: hollow + plate); designators as in the BOM and the SPICE netlist.",
    );
    c.out.push_str("</svg>\n");
    c.out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::evaluate;
    use crate::build::Piece;
    use crate::circuit::{circuit_for, layout::MIN_SPAN, DcPoint, Node};
    use crate::vocab::StageKind;
    use std::collections::{BTreeSet, HashMap};

    /// Union-find over points.
    struct Nets {
        parent: HashMap<P, P>,
    }
    impl Nets {
        fn find(&mut self, p: P) -> P {
            let q = *self.parent.entry(p).or_insert(p);
            if q == p {
                return p;
            }
            let r = self.find(q);
            self.parent.insert(p, r);
            r
        }
        fn join(&mut self, a: P, b: P) {
            let (ra, rb) = (self.find(a), self.find(b));
            if ra != rb {
                self.parent.insert(ra, rb);
            }
        }
    }

    fn on_segment(p: P, a: P, b: P) -> bool {
        let (x0, x1) = (a.0.min(b.0), a.0.max(b.0));
        let (y0, y1) = (a.1.min(b.1), a.1.max(b.1));
        (a.0 == b.0 && p.0 == a.0 && p.1 >= y0 && p.1 <= y1)
            || (a.1 == b.1 && p.1 == a.1 && p.0 >= x0 && p.0 <= x1)
    }

    /// The drawing's connections are the netlist's: every slot sits between the nets of its
    /// SPICE element's nodes, the fixed nodes are where the layout puts their symbols and pins,
    /// distinct nodes are distinct nets, and every junction of three or more has its dot
    /// (common drafting practice) and no dot sits elsewhere.
    #[test]
    fn layouts_connect_as_the_netlists_do() {
        for stage in crate::circuit::all() {
            let kind = stage.topology();
            let l = stage.drawing().schematic_layout();
            let (plus, minus) = l.plus_minus();
            let pins = l.pins();
            let mut terminals: Vec<P> = vec![plus, minus, pins.out, l.source, l.load];
            terminals.extend(l.minus_source);
            terminals.extend(l.supplies);
            terminals.extend(l.grounds);
            let terminals_fixed = terminals.clone();
            for p in l.parts {
                terminals.push(p.from);
                terminals.push(p.to);
                let span = (p.to.0 - p.from.0).abs() + (p.to.1 - p.from.1).abs();
                assert!(
                    p.from.0 == p.to.0 || p.from.1 == p.to.1,
                    "{kind:?} slot {}",
                    p.slot
                );
                assert!(span >= MIN_SPAN, "{kind:?} slot {} span {span}", p.slot);
                for q in [p.from, p.to] {
                    assert!(q.0 > 0 && q.0 < l.size.0 && q.1 > 0 && q.1 < l.size.1);
                }
            }
            let mut nets = Nets {
                parent: HashMap::new(),
            };
            let segments: Vec<(P, P)> = l
                .wires
                .iter()
                .flat_map(|w| w.windows(2).map(|s| (s[0], s[1])))
                .collect();
            for &(a, b) in &segments {
                assert!(
                    a.0 == b.0 || a.1 == b.1,
                    "{kind:?}: wire {a:?}–{b:?} is slanted"
                );
                nets.join(a, b);
            }
            // Ground symbols are one node, and so are supply symbols (drawn apart, as usual).
            for w in l.grounds.windows(2).chain(l.supplies.windows(2)) {
                nets.join(w[0], w[1]);
            }
            let all: Vec<P> = terminals
                .iter()
                .copied()
                .chain(segments.iter().flat_map(|s| [s.0, s.1]))
                .collect();
            for &p in &all {
                for &(a, b) in &segments {
                    if on_segment(p, a, b) {
                        nets.join(p, a);
                    }
                }
            }
            // Degree at each point: wire ends and part ends count 1, a wire passing through 2.
            let mut degree: HashMap<P, usize> = HashMap::new();
            for &p in all.iter().collect::<BTreeSet<_>>() {
                let mut d = 0;
                for &(a, b) in &segments {
                    if p == a || p == b {
                        d += 1;
                    } else if on_segment(p, a, b) {
                        d += 2;
                    }
                }
                d += l.parts.iter().filter(|x| x.from == p || x.to == p).count();
                d += terminals_fixed.iter().filter(|x| **x == p).count();
                degree.insert(p, d);
            }
            for (p, d) in &degree {
                let dotted = l.dots.contains(p);
                assert_eq!(d >= &3, dotted, "{kind:?}: point {p:?} has degree {d}");
            }

            // Fixed nodes (`Node` has no Hash: a small list).
            let mut node_net: Vec<(Node, P)> = Vec::new();
            fn bind(list: &mut Vec<(Node, P)>, n: Node, r: P) {
                match list.iter().find(|(m, _)| *m == n) {
                    Some((_, q)) => assert_eq!(*q, r, "{n:?} drawn on two nets"),
                    None => list.push((n, r)),
                }
            }
            for (n, p) in [
                (Node::PlusInput, plus),
                (Node::MinusInput, minus),
                (Node::AmpOut, pins.out),
                (Node::Input, l.source),
                (Node::Out, l.load),
            ] {
                let r = nets.find(p);
                bind(&mut node_net, n, r);
            }
            for &p in l.supplies {
                let r = nets.find(p);
                bind(&mut node_net, Node::Supply, r);
            }
            for &p in l.grounds {
                let r = nets.find(p);
                bind(&mut node_net, Node::Ground, r);
            }
            assert_eq!(l.parts.len(), stage.slots().len(), "{kind:?}");
            for e in stage.drawing().spice_elements() {
                let placed = l.parts.iter().find(|p| p.slot == e.slot).unwrap();
                let mut got = vec![nets.find(placed.from), nets.find(placed.to)];
                let name = stage.slots()[e.slot].name;
                // Known nodes first, then an internal node takes the end that is left.
                let known = |n: Node, list: &Vec<(Node, P)>| {
                    list.iter().find(|(m, _)| *m == n).map(|(_, r)| *r)
                };
                let mut unknown = Vec::new();
                for n in [e.a, e.b] {
                    match known(n, &node_net) {
                        Some(r) => {
                            let i = got.iter().position(|g| *g == r);
                            assert!(i.is_some(), "{kind:?} {name}: not on the net of {n:?}");
                            got.remove(i.unwrap());
                        }
                        None => unknown.push(n),
                    }
                }
                for (n, r) in unknown.into_iter().zip(got) {
                    bind(&mut node_net, n, r);
                }
            }
            // Nodes the stage joins by a wire (`Drawing::links`) share a net, and no others.
            let links = stage.drawing().links();
            for (a, b) in links {
                let net = |n: Node| node_net.iter().find(|(m, _)| *m == n).map(|(_, r)| *r);
                assert_eq!(net(*a), net(*b), "{kind:?}: {a:?} and {b:?} not wired");
                assert!(net(*a).is_some(), "{kind:?}: {a:?} not drawn");
            }
            let distinct: BTreeSet<P> = node_net.iter().map(|(_, r)| *r).collect();
            assert_eq!(
                distinct.len() + links.len(),
                node_net.len(),
                "{kind:?}: two nodes share a net"
            );
        }
    }

    /// Every capacitor's `from_side` is one of the two sides its `cap_bias` names, so a
    /// polarised part's "+" always finds its end.
    #[test]
    fn capacitor_sides_match_the_bias_analysis() {
        let spec = Spec::from_toml(SPEC_INV).unwrap();
        for stage in crate::circuit::all() {
            let kind = stage.topology();
            let v = vec![10e3; stage.slots().len()];
            let dc = DcPoint {
                v_plus: 1.0,
                v_minus: 1.0,
                v_out: 1.0,
                divider_current: 0.0,
            };
            for b in stage.cap_bias(&spec, &v, &dc) {
                let p = stage
                    .drawing()
                    .schematic_layout()
                    .parts
                    .iter()
                    .find(|p| p.slot == b.slot)
                    .unwrap();
                let side = p.from_side.expect("a capacitor names its from side");
                assert!(side == b.a_node || side == b.b_node, "{kind:?} {side}");
            }
            for p in stage.drawing().schematic_layout().parts {
                let is_cap = stage.slots()[p.slot].kind == PartKind::Capacitor;
                assert_eq!(p.from_side.is_some(), is_cap);
            }
        }
    }

    const SPEC_INV: &str = r#"
        [stage]
        kind = "inverting"
        supply = "9 V"
        gain = -10
        load = "10k"
        band = ["20 Hz", "20 kHz"]
        headroom = "1 V"
        [amplifier]
        gbw = "1 MHz"
        input_bias_current = "10 nA"
        input_offset_voltage = "1 mV"
        [stock]
        resistors = "E24"
        capacitors = "E6"
    "#;

    fn polar(value: f64, volts: f64) -> Piece {
        let mut p = Piece::plain(value, 0.2);
        p.polarized = true;
        p.voltage = Some(volts);
        p
    }

    #[test]
    fn every_designator_value_and_plus_is_drawn() {
        let spec = Spec::from_toml(SPEC_INV).unwrap();
        let stage = circuit_for(StageKind::Inverting);
        let r = |v| Piece::plain(v, 0.01);
        let build = Build {
            parts: vec![
                Part::single(PartKind::Resistor, r(10e3)),
                Part::pair(PartKind::Resistor, Arrangement::Series, r(82e3), r(18e3)),
                Part::single(PartKind::Resistor, r(220e3)),
                Part::pair(PartKind::Resistor, Arrangement::Parallel, r(220e3), r(1e6)),
                Part::single(PartKind::Capacitor, polar(10e-6, 25.0)),
                Part::pair(
                    PartKind::Capacitor,
                    Arrangement::Parallel,
                    polar(10e-6, 16.0),
                    polar(4.7e-6, 16.0),
                ),
            ],
        };
        let e = evaluate(&spec, stage, &build, None);
        let svg = svg(&spec, stage, &build, &e);
        for d in [
            "R1", "R2", "R3", "R4", "R5", "R6", "C1", "C2", "C3", "U1", "R_L",
        ] {
            assert!(
                svg.contains(&format!(">{d}</tspan>")) || svg.contains(&format!(">{d}</text>")),
                "{d}"
            );
        }
        for v in [
            "10 kΩ",
            "82 kΩ",
            "18 kΩ",
            "220 kΩ",
            "1 MΩ",
            "10 µF 25 V",
            "4.7 µF 16 V",
        ] {
            assert!(svg.contains(v), "{v}");
        }
        assert!(svg.contains("= 100 kΩ · 1 %"));
        // One "+" per polarised piece: C1, C2, C3.
        let plus = svg.matches("class=\"polarity\"").count();
        assert_eq!(plus, 3, "{svg}");
        assert!(svg.contains("+9 V"));
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    }

    #[test]
    fn plus_follows_the_analysis_polarity() {
        // c_in sits between the source (0 V DC) and V− (≈ the divider, 4.5 V): + toward r_in,
        // which is the `to` end of the layout's c_in; so the "+" lies right of the centre.
        let spec = Spec::from_toml(SPEC_INV).unwrap();
        let stage = circuit_for(StageKind::Inverting);
        let r = |v| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let c = |v| Part::single(PartKind::Capacitor, polar(v, 25.0));
        let build = Build {
            parts: vec![r(10e3), r(100e3), r(200e3), r(200e3), c(10e-6), c(10e-6)],
        };
        let e = evaluate(&spec, stage, &build, None);
        assert_eq!(e.caps[0].positive_side, "r_in side");
        let svg = svg(&spec, stage, &build, &e);
        let placed = stage.drawing().schematic_layout().parts[crate::circuit::inverting::C_IN];
        let centre = (placed.from.0 + placed.to.0) as f64 / 2.0;
        let first_plus = svg
            .lines()
            .find(|l| l.contains("class=\"polarity\""))
            .unwrap()
            .to_string();
        let x: f64 = first_plus
            .split("x=\"")
            .nth(1)
            .and_then(|s| s.split('"').next())
            .and_then(|s| s.parse().ok())
            .unwrap();
        assert!(x > centre, "{first_plus}");
    }
}
