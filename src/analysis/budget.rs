//! Output DC error budget by cause: how far each cause can move the output's DC point from
//! its ideal nominal (nominal parts, error-free op-amp), at worst case.
//!
//! The DC circuit is linear, so the output's shift is the sum of one shift per cause
//! (superposition): the divider's tolerances, the bias current, the offset current and the
//! offset voltage. Each item is that cause's largest shift over the resistors' tolerance box
//! (capacitors are open at DC and do not count) and both signs of the op-amp figure; the sum
//! bounds the output's deviation from nominal at every corner `analysis::evaluate` visits
//! (triangle inequality), and equals it when one corner is the worst for every cause.
//!
//! Everything goes through `Circuit::dc` and `DcErrors`, so a new stage needs nothing here.
//! The budget is always worst-case, whatever the spec's `tolerance_mode`: it says what each
//! cause *can* do.

use crate::build::Build;
use crate::circuit::{common, Circuit, DcErrors};
use crate::spec::{Spec, ToleranceMode};
use crate::vocab::PartKind;
use serde::Serialize;

/// One cause's worst-case share of the output DC error.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetItem {
    /// Stable identifier: `divider_tolerance`, `bias_current`, `offset_current`,
    /// `offset_voltage`.
    pub cause: String,
    /// What it is, for people.
    pub label: String,
    /// Largest shift of the output's DC, V (≥ 0).
    pub volts: f64,
}

/// The output DC error budget of a build.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DcBudget {
    /// Output DC with nominal parts and an error-free op-amp (the divider's voltage in our
    /// stages), V: the point the items deviate from.
    pub nominal_v: f64,
    /// One item per cause, each the largest output shift it alone can make.
    pub items: Vec<BudgetItem>,
    /// Sum of the items: a bound on |V_out − nominal_v| over every tolerance and error corner.
    pub total_v: f64,
}

/// The worst-case DC budget of a build, by cause:
/// * divider tolerance: the DC shift with an ideal op-amp over the resistors' tolerances;
/// * bias current: I_b into both inputs, I_b·|R_fb − R_p| in our stages (R_p = R_hi ∥ R_lo);
/// * offset current: ±I_os/2 into the inputs in opposite senses, (I_os/2)(R_fb + R_p);
/// * offset voltage: V_os times the DC noise gain, which is 1 in both our stages (c_in and
///   c_g block DC, so at DC the amplifier is a follower of its + input).
pub fn dc_budget(spec: &Spec, stage: &dyn Circuit, build: &Build) -> DcBudget {
    let mut worst = spec.clone();
    worst.tolerance_mode = ToleranceMode::Worst;
    let parts: Vec<_> = build.parts.iter().collect();
    let vertices = common::vertices_where(&worst, &parts, |p| p.kind == PartKind::Resistor);
    let none = DcErrors::NONE;
    let nominal = stage.dc(spec, &build.values(), &none).v_out;
    let a = &spec.amplifier;
    // One cause alone: its largest shift over the vertices, against the same vertex with an
    // error-free op-amp (superposition: the other causes add their own shifts).
    let shift = |e: &DcErrors| {
        vertices
            .iter()
            .map(|x| (stage.dc(spec, x, e).v_out - stage.dc(spec, x, &none).v_out).abs())
            .fold(0.0, f64::max)
    };
    let divider = vertices
        .iter()
        .map(|x| (stage.dc(spec, x, &none).v_out - nominal).abs())
        .fold(0.0, f64::max);
    let bias = shift(&DcErrors {
        ib_plus: a.input_bias_current,
        ib_minus: a.input_bias_current,
        vos: 0.0,
    });
    let offset_current = shift(&DcErrors {
        ib_plus: a.input_offset_current / 2.0,
        ib_minus: -a.input_offset_current / 2.0,
        vos: 0.0,
    });
    let offset_voltage = shift(&DcErrors {
        ib_plus: 0.0,
        ib_minus: 0.0,
        vos: a.input_offset_voltage,
    });
    let item = |cause: &str, label: &str, volts: f64| BudgetItem {
        cause: cause.to_string(),
        label: label.to_string(),
        volts,
    };
    let items = vec![
        item(
            "divider_tolerance",
            "bias divider's tolerances (ideal op-amp)",
            divider,
        ),
        item(
            "bias_current",
            "input bias current through the inputs' DC resistances",
            bias,
        ),
        item(
            "offset_current",
            "input offset current through the inputs' DC resistances",
            offset_current,
        ),
        item(
            "offset_voltage",
            "input offset voltage at DC noise gain",
            offset_voltage,
        ),
    ];
    DcBudget {
        nominal_v: nominal,
        total_v: items.iter().map(|i| i.volts).sum(),
        items,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::evaluate;
    use crate::build::{Part, Piece};
    use crate::circuit::circuit_for;
    use approx::assert_relative_eq;

    const INVERTING: &str = r#"
[stage]
kind = "inverting"
supply = "9 V"
gain = -4.7
load = "10k"
band = ["20 Hz", "20 kHz"]

[amplifier]
input_bias_current = "80 nA"
input_offset_current = "20 nA"
input_offset_voltage = "3 mV"
"#;

    fn r(v: f64, t: f64) -> Part {
        Part::single(PartKind::Resistor, Piece::plain(v, t))
    }

    fn c(v: f64) -> Part {
        Part::single(PartKind::Capacitor, Piece::plain(v, 0.2))
    }

    /// r_in, r_fb, r_bias_hi, r_bias_lo, c_in, c_out.
    fn inverting(t: f64) -> Build {
        Build {
            parts: vec![
                r(10e3, t),
                r(47e3, t),
                r(150e3, t),
                r(120e3, t),
                c(1e-6),
                c(10e-6),
            ],
        }
    }

    /// c_in, r_bias_hi, r_bias_lo, r_fb, r_g, c_g, c_out.
    fn non_inverting(t: f64) -> Build {
        Build {
            parts: vec![
                c(1e-6),
                r(220e3, t),
                r(180e3, t),
                r(100e3, t),
                r(10e3, t),
                c(22e-6),
                c(10e-6),
            ],
        }
    }

    fn specs() -> [Spec; 2] {
        let inv = Spec::from_toml(INVERTING).unwrap();
        let text = INVERTING
            .replace("\"inverting\"", "\"non-inverting\"")
            .replace("gain = -4.7", "gain = 11");
        [inv, Spec::from_toml(&text).unwrap()]
    }

    fn volts(b: &DcBudget, cause: &str) -> f64 {
        b.items.iter().find(|i| i.cause == cause).unwrap().volts
    }

    #[test]
    fn items_match_their_formulas_at_zero_tolerance() {
        // Any op-amp text, "bias current compensation": with I_b± = I_b ± I_os/2 the output
        // moves by I_b(R_fb − R_p) − (I_os/2)(R_fb + R_p) + V_os (DC noise gain 1).
        let [inv, non] = specs();
        for (s, b, r_fb, (hi, lo)) in [
            (&inv, inverting(0.0), 47e3f64, (150e3, 120e3)),
            (&non, non_inverting(0.0), 100e3, (220e3, 180e3)),
        ] {
            let rp = hi * lo / (hi + lo);
            let budget = dc_budget(s, circuit_for(s.stage), &b);
            assert_eq!(volts(&budget, "divider_tolerance"), 0.0);
            assert_relative_eq!(
                volts(&budget, "bias_current"),
                80e-9 * (r_fb - rp).abs(),
                max_relative = 1e-9
            );
            assert_relative_eq!(
                volts(&budget, "offset_current"),
                10e-9 * (r_fb + rp),
                max_relative = 1e-9
            );
            assert_relative_eq!(volts(&budget, "offset_voltage"), 3e-3, max_relative = 1e-9);
            assert_relative_eq!(budget.nominal_v, 9.0 * lo / (hi + lo), max_relative = 1e-12);
        }
    }

    #[test]
    fn divider_tolerance_of_an_equal_divider() {
        // V·R_lo/(R_hi + R_lo) with both at ±t: the worst is V(1 + t)/2, a shift of V·t/2
        // (circuit theory): 45 mV for 1 % on 9 V.
        let [inv, _] = specs();
        let mut b = inverting(0.01);
        b.parts[2] = r(100e3, 0.01);
        b.parts[3] = r(100e3, 0.01);
        let budget = dc_budget(&inv, circuit_for(inv.stage), &b);
        assert_relative_eq!(
            volts(&budget, "divider_tolerance"),
            0.045,
            max_relative = 1e-9
        );
    }

    #[test]
    fn total_bounds_the_evaluated_dc_range() {
        for s in specs() {
            let stage = circuit_for(s.stage);
            for (b, tight) in [
                (inverting(0.01), false),
                (non_inverting(0.05), false),
                (inverting(0.0), true),
                (non_inverting(0.0), true),
            ] {
                if b.parts.len() != stage.slots().len() {
                    continue;
                }
                let budget = dc_budget(&s, stage, &b);
                let m = evaluate(&s, stage, &b, None).metrics;
                let deviation = (m.output_dc_max_v - budget.nominal_v)
                    .abs()
                    .max((m.output_dc_min_v - budget.nominal_v).abs());
                assert!(
                    deviation <= budget.total_v * (1.0 + 1e-12),
                    "{deviation} > {}",
                    budget.total_v
                );
                if tight {
                    // Without tolerances one sign corner is the worst for every cause.
                    assert_relative_eq!(deviation, budget.total_v, max_relative = 1e-9);
                } else {
                    assert!(deviation > 0.5 * budget.total_v);
                }
            }
        }
    }

    #[test]
    fn nominal_mode_still_budgets_tolerances() {
        let [mut inv, _] = specs();
        inv.tolerance_mode = ToleranceMode::Nominal;
        let budget = dc_budget(&inv, circuit_for(inv.stage), &inverting(0.01));
        assert!(volts(&budget, "divider_tolerance") > 0.0);
    }
}
