//! Schematic layout of a stage: where each slot's symbol sits and how the wires run, as plain
//! data in drawing coordinates. Each stage module gives its own (`Drawing::schematic_layout`), so
//! a new stage brings its drawing; `report::schematic` draws it, and a test there checks that
//! the drawing's connections are exactly the stage's netlist (`Drawing::spice_elements`).
//!
//! Coordinates are SVG pixels, x to the right and y down, on a 10 px grid by habit. The fixed
//! parts of every stage (op-amp, source, load, supply and ground symbols) have fixed shapes;
//! the layout only says where they go, and [`opamp_pins`] says where the op-amp's pins end so
//! that a layout can run its wires to them.

/// A point, in pixels (x right, y down).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct P(pub i32, pub i32);

/// Where a part's label goes, seen from the middle of its span.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// Above the span.
    Above,
    /// Below the span.
    Below,
    /// Left of the span.
    Left,
    /// Right of the span.
    Right,
}

/// One slot's symbol: drawn between `from` and `to` (a horizontal or vertical span, at least
/// [`MIN_SPAN`] long so that a two-piece realisation fits as two symbols).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Placed {
    /// Index of the slot.
    pub slot: usize,
    /// One end of the symbol.
    pub from: P,
    /// The other end of the symbol.
    pub to: P,
    /// Where the part's label goes.
    pub label: Side,
    /// For a capacitor: the name `Circuit::cap_bias` gives the node at `from` (its `a_node` or
    /// `b_node`, e.g. "source side"), so that the drawing can put a polarised part's "+" at the
    /// end the analysis found positive. `None` for a resistor.
    pub from_side: Option<&'static str>,
}

/// The whole drawing of a stage.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Layout {
    /// Width and height of the drawing.
    pub size: (i32, i32),
    /// End of the op-amp's upper input pin; see [`opamp_pins`].
    pub opamp: P,
    /// The + input is the upper pin (otherwise the − input is).
    pub plus_on_top: bool,
    /// The stage's input terminal (`Node::Input`); the source hangs below it to ground.
    pub source: P,
    /// The load side of the output coupling (`Node::Out`); the load hangs below it to ground.
    pub load: P,
    /// A supply symbol (`Node::Supply`) above each point.
    pub supplies: &'static [P],
    /// A ground symbol (`Node::Ground`) below each point.
    pub grounds: &'static [P],
    /// Wires as polylines of horizontal and vertical segments. A point that lies on a wire
    /// joins it (a T junction, marked with a dot); wires that merely cross do not connect.
    pub wires: &'static [&'static [P]],
    /// Junction dots: every point where three or more wires or part ends meet.
    pub dots: &'static [P],
    /// One entry per slot, in slot order.
    pub parts: &'static [Placed],
    /// A second source, for a differential input: its symbol hangs below this point (the
    /// input's − leg) as the first hangs below `source`. `None` for one input.
    pub minus_source: Option<P>,
}

/// Shortest span of a placed part: room for two symbols in series.
pub const MIN_SPAN: i32 = 100;

/// Where the op-amp's pins end, for the op-amp whose upper input pin ends at `at`: inputs 40 px
/// apart, output 130 px to the right at mid-height; the supply pin leaves the triangle's upper
/// edge and the ground pin its lower edge, 50 px right of the inputs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct OpAmpPins {
    /// End of the upper input pin.
    pub upper: P,
    /// End of the lower input pin (40 px below the upper).
    pub lower: P,
    /// End of the output pin (130 px right, at mid-height).
    pub out: P,
    /// End of the supply pin (50 px right, 40 px above the upper input).
    pub supply: P,
    /// End of the ground pin (50 px right, 80 px below the upper input).
    pub ground: P,
}

/// The pins of the op-amp placed at `at` (see [`OpAmpPins`]).
pub const fn opamp_pins(at: P) -> OpAmpPins {
    OpAmpPins {
        upper: at,
        lower: P(at.0, at.1 + 40),
        out: P(at.0 + 130, at.1 + 20),
        supply: P(at.0 + 50, at.1 - 40),
        ground: P(at.0 + 50, at.1 + 80),
    }
}

impl Layout {
    /// Where this layout's op-amp pins end.
    pub fn pins(&self) -> OpAmpPins {
        opamp_pins(self.opamp)
    }

    /// The + and − input pins.
    pub fn plus_minus(&self) -> (P, P) {
        let p = self.pins();
        if self.plus_on_top {
            (p.upper, p.lower)
        } else {
            (p.lower, p.upper)
        }
    }
}
