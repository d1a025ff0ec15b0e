//! Every circuit's figures, written once over plain values and intervals, agree with its
//! equations to the last bit on plain values, and over intervals hold the figures of every
//! point inside them (the inclusion property of interval arithmetic, which the generic search
//! plan's exactness rests on).

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use stockfit::circuit::circuit_for;
use stockfit::interval::Iv;
use stockfit::spec::Spec;
use stockfit::vocab::{PartKind, StageKind};

fn spec(kind: StageKind, rs: f64) -> Spec {
    let gain = if kind.inverting() { -8.2 } else { 8.2 };
    // The split-supply stages on ±12 V (and a source DC, which their DC point carries).
    let supply = if kind.split_supply() {
        "\"±12 V\"\nsource_dc = 0.3"
    } else {
        "12"
    };
    let spec = Spec::from_toml(&format!(
        "[stage]\nkind = \"{}\"\nsupply = {supply}\ngain = {gain}\nload = 4700\nband = [30, 12000]\nsource_resistance = {rs}\n[amplifier]\ninput_bias_current = 40e-9\ninput_offset_current = 4e-9\ninput_offset_voltage = 1e-3\n",
        kind.name()
    ))
    .unwrap();
    assert_eq!(spec.stage, kind);
    spec
}

fn within(x: f64, i: Iv) -> bool {
    if x.is_infinite() {
        // The op-amp's own input (a non-inverting DC stage's input resistance).
        return i.lo <= x && x <= i.hi;
    }
    let eps = 1e-12 * x.abs().max(1e-30);
    i.lo - eps <= x && x <= i.hi + eps
}

#[test]
fn figures_agree_with_the_equations_and_hold_their_points() {
    let mut runner = TestRunner::new_with_rng(
        Config {
            cases: 400,
            failure_persistence: None,
            ..Config::default()
        },
        TestRng::deterministic_rng(RngAlgorithm::ChaCha),
    );
    let strategy = (
        0..StageKind::ALL.len(),
        prop::option::of(10.0f64..1e4),
        prop::collection::vec((0.0f64..1.0, 0.0f64..1.0, 0.0f64..1.0), 8),
    );
    let compared = std::cell::Cell::new(0u32);
    runner
        .run(&strategy, |(k, rs, draws)| {
            let kind = StageKind::ALL[k];
            let spec = spec(kind, rs.unwrap_or(0.0));
            let c = circuit_for(kind);
            // Per slot an interval [a, a·k] and a point inside it, log-uniform over the
            // kind's plausible span for a gain stage.
            let mut boxes = Vec::new();
            let mut point = Vec::new();
            for (slot, &(x, w, t)) in c.slots().iter().zip(&draws) {
                let (lo, hi) = match slot.kind {
                    PartKind::Resistor => (100.0f64, 1e7f64),
                    PartKind::Capacitor => (1e-10f64, 1e-4f64),
                };
                let a = lo * (hi / lo).powf(x);
                let b = a * (1.0 + 3.0 * w);
                boxes.push(Iv::new(a, b));
                point.push(a + t * (b - a));
            }
            let f = c.figures(&spec, &point);
            // Bit for bit the circuit's own equations (the score reads the figures).
            prop_assert_eq!(f.gain.to_bits(), c.mid_gain(&spec, &point).to_bits());
            prop_assert_eq!(
                f.input_resistance.to_bits(),
                c.input_resistance(&spec, &point).to_bits()
            );
            prop_assert_eq!(f.offset.to_bits(), c.offset_error(&spec, &point).to_bits());
            let nets = c.networks(&spec, &point);
            prop_assert_eq!(nets.len(), f.networks.len());
            for (n, g) in nets.iter().zip(&f.networks) {
                prop_assert_eq!(n.resistance.to_bits(), g.resistance.to_bits());
                prop_assert_eq!(n.capacitance.to_bits(), g.capacitance.to_bits());
            }
            let dc = c.dc(&spec, &point, &stockfit::circuit::DcErrors::centre(&spec));
            prop_assert!((dc.v_out - f.dc_out).abs() <= 1e-12 * dc.v_out.abs().max(1.0));
            // The interval figures hold the point's.
            let b = c.figure_bounds(&spec, &boxes);
            prop_assert!(within(f.gain, b.gain), "gain {} ∉ {:?}", f.gain, b.gain);
            prop_assert!(within(f.input_resistance, b.input_resistance));
            prop_assert!(
                within(f.offset, b.offset),
                "offset {} ∉ {:?}",
                f.offset,
                b.offset
            );
            prop_assert!(
                within(f.dc_out, b.dc_out),
                "dc {} ∉ {:?}",
                f.dc_out,
                b.dc_out
            );
            if let (Some(x), Some(i)) = (f.bias_current, b.bias_current) {
                prop_assert!(within(x, i));
            }
            if let (Some(x), Some(i)) = (f.cm_ratio, b.cm_ratio) {
                prop_assert!(within(x, i), "cm ratio {} ∉ {:?}", x, i);
            }
            prop_assert!(within(f.dc_error, b.dc_error));
            for (n, i) in f.networks.iter().zip(&b.networks) {
                prop_assert!(within(n.resistance, i.resistance));
                prop_assert!(within(n.capacitance, i.capacitance));
            }
            compared.set(compared.get() + 1);
            Ok(())
        })
        .unwrap();
    assert_eq!(compared.get(), 400, "every case was compared");
}
