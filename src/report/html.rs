//! The one-page HTML report: spec, ranked builds, the best build's figures and checks with
//! margins, capacitor bias and polarity, the frequency-response plot, the schematic, the BOM
//! and the cautions, in one self-contained file (inline CSS and SVG; no scripts, fonts,
//! images or links to fetch), so that it opens the same offline, attached to a mail or printed.
//!
//! Every text that comes from the user's files (inventory notes and locations, dielectric
//! names) is HTML-escaped (`report::escape`).

use super::common::{escape, RenderError};
use super::{bom, plot, schematic, table};
use crate::analysis::{Bound, Check};
use crate::circuit::Circuit;
use crate::search::Ranked;
use crate::spec::Spec;
use crate::stock::Stock;
use crate::value::{format, format_sig, Unit};
use std::fmt::Write;

const STYLE: &str = r#"
body { font-family: "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; color: #222;
       max-width: 1120px; margin: 24px auto; padding: 0 16px; line-height: 1.4; }
h1 { font-size: 26px; margin: 0 0 4px 0; }
h2 { font-size: 19px; margin: 28px 0 8px 0; padding-bottom: 3px; border-bottom: 2px solid #d8d8d8; }
p.sub { color: #555; margin: 0 0 12px 0; }
table { border-collapse: collapse; font-size: 13.5px; margin: 4px 0 8px 0; }
th, td { border: 1px solid #ccc; padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #f0f2f4; font-weight: 600; }
td.part { white-space: nowrap; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.best td { background: #f3f9f1; }
tr.total td { font-weight: 600; background: #f6f6f6; }
.pass { color: #1d7a1d; font-weight: 600; }
.fail { color: #c01818; font-weight: 700; }
table.kv th { width: 210px; }
figure { margin: 8px 0 16px 0; }
figure svg { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { color: #555; font-size: 13px; margin-top: 4px; }
pre { background: #f7f7f7; border: 1px solid #e2e2e2; padding: 8px 10px; font-size: 12.5px;
      white-space: pre-wrap; }
ul.cautions li { margin-bottom: 6px; }
.note { color: #555; font-size: 13px; }
footer { color: #777; font-size: 12px; margin-top: 28px; }
"#;

fn gain_text(g: f64) -> String {
    let s = format_sig(g.abs(), Unit::Decibel, 4).replace(" dB", "");
    if g < 0.0 {
        format!("−{s}")
    } else {
        s
    }
}

fn opt(v: Option<f64>, unit: Unit) -> String {
    v.map_or_else(|| "—".to_string(), |x| format(x, unit))
}

/// Value, limit and margin of a check, as the terminal table shows them.
fn check_cells(c: &Check) -> (String, String, String) {
    let f = |v: f64| match c.unit {
        Unit::Percent if c.name.starts_with("gain") => gain_text(v),
        Unit::Percent => {
            if v >= 1.0 {
                "yes".into()
            } else {
                "no".into()
            }
        }
        unit => format_sig(v, unit, 4),
    };
    let margin = match c.unit {
        Unit::Percent if c.name.starts_with("gain") => {
            format_sig(c.margin / c.limit, Unit::Percent, 2)
        }
        Unit::Percent => String::new(),
        unit => format_sig(c.margin, unit, 3),
    };
    let op = match c.bound {
        Bound::Min => "≥",
        Bound::Max => "≤",
    };
    (f(c.value), format!("{op} {}", f(c.limit)), margin)
}

fn pass_cell(pass: bool) -> &'static str {
    if pass {
        "<td class=\"pass\">pass</td>"
    } else {
        "<td class=\"fail\">FAIL</td>"
    }
}

/// An SVG document made fit to sit inside HTML: no XML declaration, no namespace attribute
/// (HTML parsers put `<svg>` in its namespace themselves), a viewBox so that CSS can scale it.
fn inline_svg(svg: &str) -> String {
    let body = match svg.find("<svg") {
        Some(i) => &svg[i..],
        None => svg,
    };
    let mut s = body
        .replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1)
        .replacen(" xmlns:xlink=\"http://www.w3.org/1999/xlink\"", "", 1);
    let head_end = s.find('>').unwrap_or(0);
    if !s[..head_end].contains("viewBox") {
        let attr = |name: &str| {
            let key = format!("{name}=\"");
            s[..head_end].find(&key).and_then(|i| {
                let rest = &s[i + key.len()..head_end];
                rest.split('"').next().and_then(|v| v.parse::<f64>().ok())
            })
        };
        if let (Some(w), Some(h)) = (attr("width"), attr("height")) {
            s.insert_str(4, &format!(" viewBox=\"0 0 {w} {h}\""));
        }
    }
    s
}

fn spec_table(out: &mut String, spec: &Spec, stage: &dyn Circuit, stock_text: &str) {
    let mut rows: Vec<(&str, String)> = vec![
        (
            "stage",
            format!("{} — {}", stage.kind().name(), stage.topology()),
        ),
        ("supply", super::common::supply_text(spec)),
        (
            "gain",
            match spec.gain_tolerance {
                Some(t) => format!(
                    "{} V/V ± {}",
                    gain_text(spec.gain),
                    format(t, Unit::Percent)
                ),
                None => format!("{} V/V", gain_text(spec.gain)),
            },
        ),
    ];
    if let Some(r) = spec.input_resistance_min {
        rows.push(("input resistance", format!("≥ {}", format(r, Unit::Ohm))));
    }
    rows.push(("load", format(spec.load, Unit::Ohm)));
    rows.push((
        "band",
        format!(
            "{} – {}",
            format(spec.band.0, Unit::Hertz),
            format(spec.band.1, Unit::Hertz)
        ),
    ));
    if let Some(l) = spec.band_loss_max {
        rows.push((
            "loss at the band edges",
            format!("≤ {}", format_sig(l, Unit::Decibel, 3)),
        ));
    }
    if let Some(c) = spec.corner_low_max {
        rows.push((
            "low corner of each network",
            format!("≤ {}", format(c, Unit::Hertz)),
        ));
    }
    rows.push((
        "headroom to the rails",
        format!(
            "{} low, {} high (bias target {})",
            format(spec.headroom.0, Unit::Volt),
            format(spec.headroom.1, Unit::Volt),
            format_sig(spec.bias_target(), Unit::Volt, 4)
        ),
    ));
    rows.push((
        "source",
        format!(
            "{} DC, source resistance {}",
            format(spec.source_dc, Unit::Volt),
            format(spec.source_resistance, Unit::Ohm)
        ),
    ));
    if let Some(p) = spec.input_peak {
        rows.push(("input peak", format(p, Unit::Volt)));
    }
    if let Some(p) = spec.output_peak {
        rows.push(("output peak", format(p, Unit::Volt)));
    }
    rows.push((
        "tolerances",
        if spec.worst_case() {
            "worst case (every part at each end of its tolerance)".to_string()
        } else {
            "nominal values".to_string()
        },
    ));
    let a = &spec.amplifier;
    rows.push((
        "op-amp",
        format!(
            "GBW {}, input bias current {}, offset current {}, offset voltage {}, slew rate {}",
            opt(a.gbw, Unit::Hertz),
            format(a.input_bias_current, Unit::Ampere),
            format(a.input_offset_current, Unit::Ampere),
            format(a.input_offset_voltage, Unit::Volt),
            opt(a.slew_rate, Unit::VoltPerSecond)
        ),
    ));
    rows.push(("stock", stock_text.to_string()));
    out.push_str("<table class=\"kv\">\n");
    for (k, v) in rows {
        let _ = writeln!(
            out,
            "<tr><th>{}</th><td>{}</td></tr>",
            escape(k),
            escape(&v)
        );
    }
    out.push_str("</table>\n");
}

fn builds_table(out: &mut String, spec: &Spec, stage: &dyn Circuit, ranked: &[Ranked]) {
    let worst = if spec.worst_case() {
        "worst"
    } else {
        "nominal"
    };
    out.push_str("<table>\n<tr><th>#</th>");
    for s in stage.slots() {
        let _ = write!(out, "<th>{}</th>", escape(s.name));
    }
    let _ = writeln!(
        out,
        "<th>gain</th><th>{worst} |gain|</th><th>low −3 dB</th><th>{worst} swing</th><th>parts</th><th>lines</th><th>cost</th><th>yield</th><th>checks</th></tr>"
    );
    for (i, r) in ranked.iter().enumerate() {
        let m = &r.evaluation.metrics;
        let (lo, hi) = (
            m.gain_min.abs().min(m.gain_max.abs()),
            m.gain_min.abs().max(m.gain_max.abs()),
        );
        let class = if i == 0 { " class=\"best\"" } else { "" };
        let _ = write!(out, "<tr{class}><td class=\"num\">{}</td>", i + 1);
        for p in &r.build.parts {
            let mark = if p.locked { "*" } else { "" };
            let _ = write!(out, "<td class=\"part\">{}{mark}</td>", escape(&p.label()));
        }
        let _ = writeln!(
            out,
            "<td class=\"num\">{}</td><td class=\"num\">{} … {}</td><td class=\"num\">{}</td><td class=\"num\">±{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>{}</tr>",
            gain_text(m.gain),
            gain_text(lo),
            gain_text(hi),
            opt(m.low_corner_hz, Unit::Hertz),
            format(m.swing_peak_v, Unit::Volt),
            m.part_count,
            m.bom_lines,
            m.cost.map_or("—".to_string(), |c| format!("{c:.2}")),
            table::yield_text(r.evaluation.yield_report.as_ref().map(|y| y.overall)),
            pass_cell(r.evaluation.pass)
        );
    }
    out.push_str("</table>\n");
    if ranked
        .iter()
        .any(|r| r.build.parts.iter().any(|p| p.locked))
    {
        out.push_str("<p class=\"note\">* locked (already on the board)</p>\n");
    }
}

/// " Monte Carlo yield 98.2 % (10000 samples, seed 1, …)." as the terminal's yield columns
/// give it, or nothing without a yield (`--yield 0`).
fn yield_sentence(r: &Ranked) -> String {
    r.evaluation
        .yield_report
        .as_ref()
        .map_or(String::new(), |y| {
            format!(
                " Monte Carlo yield {} ({} samples, seed {}, {} distribution).",
                table::yield_text(Some(y.overall)),
                y.samples,
                y.seed,
                escape(&format!("{:?}", y.distribution).to_lowercase())
            )
        })
}

fn checks_table(out: &mut String, r: &Ranked) {
    out.push_str(
        "<table>\n<tr><th>requirement</th><th>value</th><th>limit</th><th>margin</th><th>yield</th><th>result</th></tr>\n",
    );
    for c in &r.evaluation.checks {
        let (v, l, m) = check_cells(c);
        let y = r
            .evaluation
            .yield_report
            .as_ref()
            .and_then(|y| y.check(&c.name));
        let _ = writeln!(
            out,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>{}</tr>",
            escape(&c.label),
            escape(&v),
            escape(&l),
            escape(&m),
            table::yield_text(y),
            pass_cell(c.pass)
        );
    }
    out.push_str("</table>\n");
}

fn caps_table(out: &mut String, stage: &dyn Circuit, r: &Ranked) {
    out.push_str(
        "<table>\n<tr><th>slot</th><th>part</th><th>DC across (range)</th><th>+ lead toward</th><th>rating needed</th><th>rating</th><th>kind</th></tr>\n",
    );
    for c in &r.evaluation.caps {
        let label = crate::circuit::slot_index(stage, &c.slot)
            .and_then(|i| r.build.parts.get(i))
            .map_or(String::new(), |p| p.label());
        let _ = writeln!(
            out,
            "<tr><td>{}</td><td>{}</td><td class=\"num\">{} ({} … {})</td><td>{}</td><td class=\"num\">≥ {}</td><td class=\"num\">{}</td><td>{}</td></tr>",
            escape(&c.slot),
            escape(&label),
            format_sig(c.volts.abs(), Unit::Volt, 3),
            format_sig(super::common::cap_range(c).0, Unit::Volt, 3),
            format_sig(super::common::cap_range(c).1, Unit::Volt, 3),
            escape(&c.positive_side),
            format_sig(c.rating_needed, Unit::Volt, 2),
            c.rating.map_or("not given".to_string(), |v| format(v, Unit::Volt)),
            if c.polarized { "<b>polarised</b>" } else { "non-polarised or unknown" }
        );
    }
    out.push_str("</table>\n");
}

fn bom_table(out: &mut String, rows: &[bom::BomRow]) {
    out.push_str(
        "<table>\n<tr><th>#</th><th>designators</th><th>slots</th><th>value</th><th>tolerance</th><th>qty</th><th>on hand</th><th>rating</th><th>polarised</th><th>dielectric</th><th>row</th><th>location</th><th>note</th><th>unit cost</th><th>line cost</th></tr>\n",
    );
    for (i, r) in rows.iter().enumerate() {
        let c = bom::cells(i + 1, r);
        let unit = match r.kind {
            crate::vocab::PartKind::Resistor => Unit::Ohm,
            crate::vocab::PartKind::Capacitor => Unit::Farad,
        };
        let _ = writeln!(
            out,
            "<tr><td class=\"num\">{}</td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td></tr>",
            c[0],
            escape(&c[1]),
            escape(&c[2]),
            escape(&format(r.value, unit)),
            escape(&c[6]),
            c[7],
            escape(&c[8]),
            escape(&c[9]),
            escape(&c[10]),
            escape(&c[11]),
            escape(&c[12]),
            escape(&c[13]),
            escape(&c[14]).replace('\n', "<br>"),
            escape(&c[15]),
            escape(&c[16]),
        );
    }
    let (cost, unknown) = bom::total(rows);
    let pieces: usize = rows.iter().map(|r| r.quantity).sum();
    let cost_text = if unknown == rows.len() {
        "—".to_string()
    } else {
        bom::money(cost)
    };
    let note = match unknown {
        0 => String::new(),
        n if n == rows.len() => "no costs in the stock".to_string(),
        n => format!("{n} line(s) without a cost, not counted"),
    };
    let _ = writeln!(
        out,
        "<tr class=\"total\"><td colspan=\"5\">total</td><td class=\"num\">{pieces}</td><td colspan=\"6\"></td><td>{}</td><td></td><td class=\"num\">{}</td></tr>",
        escape(&note),
        escape(&cost_text)
    );
    out.push_str("</table>\n");
}

/// The report page for `ranked` (best first; the best build gets the detail). `stock` is the
/// stock the builds came from (for the BOM's inventory columns), `stock_text` its description.
pub fn report(
    spec: &Spec,
    stage: &dyn Circuit,
    ranked: &[Ranked],
    stock: Option<&Stock>,
    stock_text: &str,
) -> Result<String, RenderError> {
    report_for(spec, stage, ranked, 0, stock, stock_text)
}

/// [`report`] with the detail, plot, schematic and BOM of ranked build `chosen` (0-based; the
/// best when out of range), for `pick --build N`.
pub fn report_for(
    spec: &Spec,
    stage: &dyn Circuit,
    ranked: &[Ranked],
    chosen: usize,
    stock: Option<&Stock>,
    stock_text: &str,
) -> Result<String, RenderError> {
    let chosen = if chosen < ranked.len() { chosen } else { 0 };
    let n = chosen + 1;
    let mut out = String::new();
    let title = format!(
        "stockfit report: {} stage, gain {}, {} supply",
        stage.kind().name(),
        gain_text(spec.gain),
        super::common::supply_text(spec)
    );
    let _ = writeln!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>{}</title>\n<style>{STYLE}</style>\n</head>\n<body>",
        escape(&title)
    );
    let _ = writeln!(out, "<h1>{}</h1>", escape(&title));
    let _ = writeln!(
        out,
        "<p class=\"sub\">{}</p>",
        escape(&table::heading(spec, stage, stock_text))
    );

    out.push_str("<h2>Spec</h2>\n");
    spec_table(&mut out, spec, stage, stock_text);

    let Some(best) = ranked.get(chosen) else {
        out.push_str("<h2>Builds</h2>\n<p>No build from this stock meets the spec.</p>\n");
        cautions(&mut out, &[]);
        out.push_str("</body>\n</html>\n");
        return Ok(out);
    };
    if ranked.len() > 1 {
        out.push_str("<h2>Ranked builds</h2>\n");
    } else {
        out.push_str("<h2>Build</h2>\n");
    }
    builds_table(&mut out, spec, stage, ranked);

    let verdict = if best.evaluation.pass {
        "<span class=\"pass\">meets every requirement</span>"
    } else {
        "<span class=\"fail\">does not meet every requirement</span>"
    };
    let _ = writeln!(
        out,
        "<h2>Build #{n} in detail</h2>\n<p>This build {verdict}.{}</p>",
        yield_sentence(best)
    );
    let figures = table::figures(spec, &best.evaluation);
    let figures = figures.split_once('\n').map_or(figures.as_str(), |x| x.1);
    let _ = writeln!(out, "<pre>{}</pre>", escape(figures.trim_end()));
    out.push_str("<h3>Checks</h3>\n");
    checks_table(&mut out, best);
    out.push_str("<h3>Capacitor DC bias and polarity</h3>\n");
    caps_table(&mut out, stage, best);

    out.push_str("<h2>Frequency response</h2>\n<figure>\n");
    let plot = plot::svg(spec, stage, &best.build, &best.evaluation)?;
    out.push_str(&inline_svg(&plot));
    let _ = writeln!(out, "<figcaption>Gain and phase of build #{n} against frequency: nominal curve, worst-case envelope over the tolerance corners, the band shaded, −3 dB corners and the loss at the band edges marked.</figcaption>\n</figure>");

    out.push_str("<h2>Schematic</h2>\n<figure>\n");
    let sch = schematic::svg(spec, stage, &best.build, &best.evaluation);
    out.push_str(&inline_svg(&sch));
    let _ = writeln!(out, "<figcaption>Build #{n} with its reference designators (as in the BOM and the SPICE netlist); a polarised capacitor's + lead is drawn toward the side the DC analysis found positive.</figcaption>\n</figure>");

    out.push_str("<h2>Bill of materials</h2>\n");
    let rows = bom::rows(stage, &best.build, stock);
    bom_table(&mut out, &rows);

    let mut own = super::common::build_cautions(&best.evaluation);
    own.extend(crate::analysis::rating::build_cautions(
        spec,
        stage,
        &best.build,
    ));
    cautions(&mut out, &own);
    let _ = writeln!(
        out,
        "<footer>Written by stockfit {}. Values are nominal unless marked worst case.</footer>\n</body>\n</html>",
        env!("CARGO_PKG_VERSION")
    );
    Ok(out)
}

fn cautions(out: &mut String, own: &[String]) {
    out.push_str("<h2>Cautions</h2>\n<ul class=\"cautions\">\n");
    for c in own
        .iter()
        .map(String::as_str)
        .chain(table::CAUTIONS.iter().copied())
    {
        let _ = writeln!(out, "<li>{}</li>", escape(c));
    }
    out.push_str("</ul>\n");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::evaluate;
    use crate::build::{Build, Part, Piece};
    use crate::circuit::circuit_for;
    use crate::stock::inventory::Inventory;
    use crate::stock::Source;
    use crate::vocab::PartKind;
    use crate::vocab::StageKind;
    use std::sync::Arc;

    const SPEC: &str = r#"
        [stage]
        kind = "non-inverting"
        supply = "12 V"
        gain = 4
        gain_tolerance = "3%"
        input_resistance_min = "47k"
        load = "10k"
        band = ["20 Hz", "20 kHz"]
        band_loss_max = "0.3 dB"
        headroom = "1.5 V"
        output_peak = "3.5 V"
        [amplifier]
        gbw = "4 MHz"
        input_bias_current = "80 nA"
        input_offset_current = "10 nA"
        input_offset_voltage = "1 mV"
        [stock]
        resistors = "E24"
        capacitors = "E6"
    "#;

    const INVENTORY: &str = "kind,value,tolerance,qty,voltage,power,polarized,dielectric,unit_cost,location,note\n\
R,100k,1%,50,,0.25W,,<b>film</b>,0.02,\"<script>alert(1)</script>\",\"see https://example.invalid/x?a=1&b=2\"\n\
R,30k,1%,50,,0.25W,,metal film,0.02,A2,\n\
R,10k,1%,50,,0.25W,,metal film,0.02,A3,\n\
C,4.7u,10%,10,50V,,,X7R,0.1,B1,\n\
C,100u,20%,10,25V,,yes,electrolytic,0.2,B2,\"=cmd|' /C calc'!A0\"\n";

    fn fixture() -> (Spec, Build, Stock) {
        let spec = Spec::from_toml(SPEC).unwrap();
        let inv = Arc::new(Inventory::parse_str(INVENTORY).unwrap());
        let stock = Stock::new(
            Source::Inventory(inv.clone()),
            Source::Inventory(inv.clone()),
            spec.stock.limits(),
        );
        let p = |row: usize, kind| {
            let l = inv.lines.iter().find(|l| l.row == row).unwrap();
            Part::single(
                kind,
                Piece {
                    value: l.value,
                    tolerance: l.tolerance,
                    line: Some(row),
                    voltage: l.voltage,
                    power: l.power,
                    polarized: l.polarized,
                    dielectric: l.dielectric.clone(),
                    unit_cost: l.unit_cost,
                },
            )
        };
        use PartKind::{Capacitor as C, Resistor as R};
        // c_in, r_bias_hi, r_bias_lo, r_fb, r_g, c_g, c_out
        let build = Build {
            parts: vec![
                p(4, C),
                p(1, R),
                p(1, R),
                p(2, R),
                p(3, R),
                p(5, C),
                p(5, C),
            ],
        };
        (spec, build, stock)
    }

    fn page() -> String {
        let (spec, build, stock) = fixture();
        let stage = circuit_for(StageKind::NonInverting);
        let evaluation = evaluate(&spec, stage, &build, Some(&stock));
        let ranked = vec![Ranked { build, evaluation }];
        report(&spec, stage, &ranked, Some(&stock), "inventory (5 lines)").unwrap()
    }

    #[test]
    fn page_has_every_section() {
        let html = page();
        for h in [
            "<h2>Spec</h2>",
            "<h2>Build</h2>",
            "<h3>Checks</h3>",
            "<h2>Frequency response</h2>",
            "<h2>Schematic</h2>",
            "<h2>Bill of materials</h2>",
            "<h2>Cautions</h2>",
        ] {
            assert!(html.contains(h), "{h}");
        }
        assert_eq!(html.matches("<svg").count(), 2);
        assert!(html.contains("viewBox"));
        assert!(html.contains(&escape(table::CAUTIONS[1])));
        assert!(html.contains("class=\"pass\"") || html.contains("class=\"fail\""));
    }

    #[test]
    fn user_text_is_escaped_and_the_page_self_contained() {
        let html = page();
        assert!(!html.contains("<script"), "a note ran as markup");
        assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
        assert!(html.contains("&lt;b&gt;film&lt;/b&gt;"));
        assert!(html.contains("example.invalid/x?a=1&amp;b=2"));
        // In HTML the BOM shows the note as typed (escaped), not neutralised for spreadsheets.
        assert!(html.contains("=cmd|&#39; /C calc&#39;!A0"));
        // Self-contained: nothing to fetch. The only URL is the user's own note, escaped.
        for scheme in ["http://", "https://"] {
            for (i, _) in html.match_indices(scheme) {
                let before = &html[i.saturating_sub(4)..i];
                assert_eq!(
                    before,
                    "see ",
                    "a reference at {i}: {}",
                    &html[i - 40..i + 40]
                );
            }
        }
        for tag in ["<script", "<link", "<img", "<iframe", "@import", "url("] {
            assert!(!html.contains(tag), "{tag}");
        }
    }

    #[test]
    fn inline_svg_drops_the_namespace_and_gains_a_viewbox() {
        let s = inline_svg(
            "<svg width=\"10\" height=\"20\" xmlns=\"http://www.w3.org/2000/svg\"><g/></svg>",
        );
        assert_eq!(
            s,
            "<svg viewBox=\"0 0 10 20\" width=\"10\" height=\"20\"><g/></svg>"
        );
    }
}
