//! Test-only checks of the analysis against textbook formulas: the full-power bandwidth and the
//! combined corner of equal first-order high-pass sections.

use crate::analysis::{evaluate, response};
use crate::build::{Build, Part, Piece};
use crate::circuit::{circuit_for, OpAmp};
use crate::spec::Spec;
use crate::vocab::PartKind;
use approx::assert_relative_eq;
use std::f64::consts::PI;

const INVERTING: &str = r#"
[stage]
kind = "inverting"
supply = "24 V"
gain = -10
load = "10k"
band = ["20 Hz", "20 kHz"]
# Ideal resistors: the textbook formulas have no stray capacitance.
stray_capacitance = 0
output_peak = "10 V"

[amplifier]
slew_rate = "0.5 V/us"
"#;

fn r(v: f64) -> Part {
    Part::single(PartKind::Resistor, Piece::plain(v, 0.01))
}

fn c(v: f64) -> Part {
    Part::single(PartKind::Capacitor, Piece::plain(v, 0.2))
}

/// r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out.
fn inverting(r_in: f64, c_in: f64, c_out: f64) -> Build {
    Build {
        parts: vec![
            r(r_in),
            r(10.0 * r_in),
            r(100e3),
            r(100e3),
            c(c_in),
            c(c_out),
        ],
    }
}

#[test]
fn full_power_bandwidth() {
    // Full-power bandwidth f_p = SR / (2π V_p) (any op-amp text): a sine V_p·sin(2πft) has
    // the steepest slope 2πf·V_p, which the slew rate must reach. 0.5 V/µs at 10 V peak gives
    // 7.96 kHz (the classic worked example, from memory: "about 8 kHz").
    let spec = Spec::from_toml(INVERTING).unwrap();
    let build = inverting(10e3, 10e-6, 10e-6);
    let eval = evaluate(&spec, circuit_for(spec.stage), &build, None);
    let check = eval.checks.iter().find(|c| c.name == "slew_rate").unwrap();
    let fp = 0.5e6 / (2.0 * PI * 10.0);
    assert_relative_eq!(check.value, fp, max_relative = 1e-12);
    assert!((check.value - 7958.0).abs() < 1.0);
    assert!(!check.pass, "8 kHz does not reach a 20 kHz band");
    // Calculus, numerically: the steepest finite-difference slope of the sine at f_p is SR.
    let n = 100_000;
    let dt = 1.0 / (fp * n as f64);
    let slope = (0..n)
        .map(|i| {
            let t = i as f64 * dt;
            ((10.0 * (2.0 * PI * fp * (t + dt)).sin() - 10.0 * (2.0 * PI * fp * t).sin()) / dt)
                .abs()
        })
        .fold(0.0, f64::max);
    assert_relative_eq!(slope, 0.5e6, max_relative = 1e-6);
}

#[test]
fn equal_high_pass_sections_combine() {
    // n equal first-order high-pass sections, buffered: |H|² = (x²/(1 + x²))ⁿ with x = f/fc;
    // |H|² = 1/2 at f = fc / √(2^(1/n) − 1) (derivation; the cascaded-RC corner of filter
    // texts, from memory). Inverting stage, ideal op-amp: the input network (R_in, C_in) and
    // the output network (R_L, C_out) are the two sections.
    let spec = Spec::from_toml(INVERTING).unwrap();
    let stage = circuit_for(spec.stage);
    let ideal = OpAmp { gbw: None };
    let fc = 1.0 / (2.0 * PI * 10e3 * 1e-6);
    let combined = |n: f64| fc / (2f64.powf(1.0 / n) - 1.0).sqrt();

    // R_in·C_in = R_L·C_out = 10 kΩ · 1 µF: two equal sections, 1.554·fc.
    let two = inverting(10e3, 1e-6, 1e-6).values();
    let corner = response::low_corner(stage, &spec, &two, &ideal).unwrap();
    assert_relative_eq!(corner, combined(2.0), max_relative = 1e-8);
    assert_relative_eq!(
        corner / fc,
        1.0 / (2f64.sqrt() - 1.0).sqrt(),
        max_relative = 1e-8
    );

    // A 1 F output capacitor leaves one section: n = 1 gives fc itself.
    let one = inverting(10e3, 1e-6, 1.0).values();
    let corner = response::low_corner(stage, &spec, &one, &ideal).unwrap();
    assert_relative_eq!(corner, combined(1.0), max_relative = 1e-6);
}
