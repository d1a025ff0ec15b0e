//! Capacitor voltage ratings and dielectrics judged the safe way.
//!
//! **Ratings.** Under the default rule (`[stock] rating_rule = "supply"`) a capacitor's rating
//! must cover the most voltage it can see when a node it touches sits on a rail — at power-up,
//! before the bias settles, or with the output latched to a rail — as well as its worst-case
//! DC over the derating (80 %, common practice). A node of the stage lies between ground and
//! the supply; the source's end sits at the source's DC. So a capacitor between two stage nodes
//! can see the whole supply, and one from the source to a stage node the most of
//! |V_src| and |V_supply − V_src| (common practice). `rating_rule = "bias"` keeps the quiescent
//! rule alone: worst-case DC / 0.8.
//!
//! **Dielectrics.** Class-2 ceramics (`stock::dielectric`) change their capacitance with the
//! voltage across them and distort a signal through them (common practice), so they are kept
//! out of the signal path unless `[stock] class2_in_signal_path = true`; then the reports name
//! them in the cautions. A capacitor the circuit lists off the signal path (a bias bypass,
//! `Circuit::off_signal_path`) may be any dielectric.

use super::check::{Bound, Check, CAP_DERATING};
use crate::build::{Build, Part};
use crate::circuit::{Circuit, Node};
use crate::spec::{RatingRule, Spec};
use crate::stock::dielectric::is_class2;
use crate::value::Unit;
use crate::vocab::PartKind;

/// The most voltage capacitor `slot` can see with a node it touches on a rail, V (module docs).
pub fn rail_exposure(spec: &Spec, stage: &dyn Circuit, slot: usize) -> f64 {
    let touches_source = stage
        .drawing()
        .spice_elements()
        .iter()
        .filter(|e| e.slot == slot)
        .any(|e| e.a == Node::Input || e.b == Node::Input);
    if touches_source {
        let s = spec.source_dc;
        s.abs().max((spec.supply - s).abs())
    } else {
        spec.supply
    }
}

/// The least rating capacitor `slot` needs with a worst-case DC of `dc_abs` volts across it.
pub fn rating_needed(spec: &Spec, stage: &dyn Circuit, slot: usize, dc_abs: f64) -> f64 {
    let by_dc = dc_abs / CAP_DERATING;
    match spec.stock.rating_rule {
        RatingRule::Bias => by_dc,
        RatingRule::Supply => by_dc.max(rail_exposure(spec, stage, slot)),
    }
}

/// The label of a capacitor's rating check.
pub fn rating_label(spec: &Spec, slot: &str, worst: &str) -> String {
    match spec.stock.rating_rule {
        RatingRule::Bias => format!("{slot} voltage rating vs {worst} DC / 0.8"),
        RatingRule::Supply => {
            format!("{slot} rating vs rail and {worst} DC / 0.8")
        }
    }
}

/// True when any piece of `part` is a class-2 ceramic.
pub fn is_class2_part(part: &Part) -> bool {
    part.kind == PartKind::Capacitor
        && part
            .pieces
            .iter()
            .any(|p| p.dielectric.as_deref().is_some_and(is_class2))
}

/// The capacitor slots of `build` in the signal path that hold a class-2 ceramic.
pub fn class2_in_signal_path(stage: &dyn Circuit, build: &Build) -> Vec<usize> {
    let off = stage.off_signal_path();
    build
        .parts
        .iter()
        .enumerate()
        .filter(|(i, p)| !off.contains(i) && is_class2_part(p))
        .map(|(i, _)| i)
        .collect()
}

/// The dielectric checks (`dielectric_<slot>`, yes/no): one per signal-path capacitor holding a
/// class-2 ceramic, failing unless the spec allows them there.
pub fn dielectric_checks(spec: &Spec, stage: &dyn Circuit, build: &Build) -> Vec<Check> {
    if spec.stock.class2_in_signal_path {
        return Vec::new();
    }
    let slots = stage.slots();
    class2_in_signal_path(stage, build)
        .into_iter()
        .map(|i| {
            Check::new(
                &format!("dielectric_{}", slots[i].name),
                format!(
                    "{} no class-2 ceramic in the signal path (class2_in_signal_path)",
                    slots[i].name
                ),
                0.0,
                Bound::Min,
                1.0,
                Unit::Percent,
            )
        })
        .collect()
}

/// The build's own cautions: each class-2 ceramic the spec lets into the signal path, named.
pub fn build_cautions(spec: &Spec, stage: &dyn Circuit, build: &Build) -> Vec<String> {
    if !spec.stock.class2_in_signal_path {
        return Vec::new();
    }
    let slots = stage.slots();
    class2_in_signal_path(stage, build)
        .into_iter()
        .map(|i| {
            let d = build.parts[i]
                .pieces
                .iter()
                .filter_map(|p| p.dielectric.as_deref())
                .find(|d| is_class2(d))
                .unwrap_or("class 2");
            format!(
                "{} is a class-2 ceramic ({d}) in the signal path: its capacitance falls with the DC across it and with temperature, and it can distort the signal; confirm the part's voltage coefficient in its datasheet, or use film or C0G.",
                slots[i].name
            )
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::build::Piece;

    fn spec(extra: &str) -> Spec {
        Spec::from_toml(&format!(
            "[stage]\nkind = \"non-inverting\"\nsupply = 24\ngain = 10\nload = 10000\nband = [20, 20000]\nsource_dc = -2\n[stock]\n{extra}"
        ))
        .unwrap()
    }

    #[test]
    fn the_rail_rule_covers_the_supply_and_the_source_end() {
        // 24 V rail: a capacitor between stage nodes can see 24 V; c_in, from the source at
        // −2 V to the + input, up to 24 − (−2) = 26 V (common practice, module docs).
        let s = spec("");
        let stage = crate::circuit::circuit_for(s.stage);
        let c_in = crate::circuit::slot_index(stage, "c_in").unwrap();
        let c_out = crate::circuit::slot_index(stage, "c_out").unwrap();
        assert_eq!(rating_needed(&s, stage, c_out, 12.0), 24.0);
        assert_eq!(rating_needed(&s, stage, c_in, 14.0), 26.0);
        // A DC stress above the rail still needs its derating: 24 V / 0.8 = 30 V.
        assert!((rating_needed(&s, stage, c_out, 24.0) - 30.0).abs() < 1e-12);
        // The bias rule: 12 V / 0.8 = 15 V, so a 16 V part passes it but not the rail rule.
        let b = spec("rating_rule = \"bias\"");
        assert!((rating_needed(&b, stage, c_out, 12.0) - 15.0).abs() < 1e-12);
    }

    #[test]
    fn class_two_in_the_signal_path_fails_unless_allowed() {
        let s = spec("");
        let stage = crate::circuit::circuit_for(s.stage);
        let r = |v: f64| Part::single(PartKind::Resistor, Piece::plain(v, 0.01));
        let mut x7r = Piece::plain(1e-6, 0.1);
        x7r.dielectric = Some("X7R".into());
        let mut film = Piece::plain(1e-6, 0.1);
        film.dielectric = Some("film".into());
        let c = |p: &Piece| Part::single(PartKind::Capacitor, p.clone());
        let build = Build {
            parts: vec![
                c(&x7r),
                r(100e3),
                r(100e3),
                r(50e3),
                r(5.6e3),
                c(&film),
                c(&film),
            ],
        };
        let checks = dielectric_checks(&s, stage, &build);
        assert_eq!(checks.len(), 1);
        assert_eq!(checks[0].name, "dielectric_c_in");
        assert!(!checks[0].pass);
        assert!(build_cautions(&s, stage, &build).is_empty());
        let allowed = spec("class2_in_signal_path = true");
        assert!(dielectric_checks(&allowed, stage, &build).is_empty());
        let cautions = build_cautions(&allowed, stage, &build);
        assert_eq!(cautions.len(), 1);
        assert!(cautions[0].starts_with("c_in is a class-2 ceramic (X7R)"));
    }
}
