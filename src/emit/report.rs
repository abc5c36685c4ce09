//! The family report: one self-contained HTML file (no external resources) with the board
//! previews, a drawing of the stackup's cross-section, the response plots, the comparison
//! table, the modelling assumptions and the cautions.

use super::plot::xml;
use crate::emit::cautions::CAUTIONS;
use crate::emit::json::probe_json;
use crate::model::stackup::{Layer, Stackup};
use crate::physics::predicted::{ASSUMPTIONS, Predicted};
use std::fmt::Write;
use svg::node::element::{Rectangle, Text};

/// Curve colours (our own palette).
pub const COLOURS: [&str; 8] = [
    "#c8553d", "#3a7ca5", "#4f9d69", "#8e6bbf", "#d9a521", "#b5651d", "#2a9d8f", "#6c757d",
];

/// A drawing of the stackup's cross-section, thicknesses to scale (thin layers drawn at a
/// minimum height so they stay visible), with each layer's role for the probe, the signal
/// layer's being `signal_role`.
pub fn stackup_svg(st: &Stackup, signal_layer: usize, signal_role: &str) -> String {
    let total: f64 = st.thickness_mm();
    let (w, h) = (560.0, 260.0);
    let (x0, bar) = (20.0, 240.0);
    let scale = (h - 40.0) / total;
    let mut rows = Vec::new();
    let mut n = 0;
    for l in st.layers() {
        match l {
            Layer::Copper(c) => {
                n += 1;
                let role = if n == signal_layer {
                    signal_role
                } else {
                    "shield"
                };
                rows.push((
                    c.thickness_mm,
                    format!("L{n} copper {:.4} mm ({role})", c.thickness_mm),
                    "#c8553d",
                ));
            }
            Layer::Dielectric(d) => rows.push((
                d.thickness_mm,
                format!("{} {:.3} mm, εr {:.2}", d.name, d.thickness_mm, d.er),
                "#d8cfa0",
            )),
        }
    }
    let mut doc = super::plot::drawing(w, h, "stackup-drawing");
    let mut y = 20.0;
    for (t, label, colour) in rows {
        let hh = (t * scale).max(4.0);
        doc = doc
            .add(
                Rectangle::new()
                    .set("x", x0)
                    .set("y", format!("{y:.1}"))
                    .set("width", bar)
                    .set("height", format!("{hh:.1}"))
                    .set("fill", colour)
                    .set("stroke", "#555")
                    .set("stroke-width", 0.5),
            )
            .add(
                Text::new(label)
                    .set("x", x0 + bar + 12.0)
                    .set("y", format!("{:.1}", y + hh / 2.0 + 4.0)),
            );
        y += hh;
    }
    doc.to_string()
}

/// A loop's electric sentence in its section: the E-rejection and the error budget, or a
/// balanced loop's two outputs and its sum's electric factor.
fn electric_sentence(r: &crate::physics::Response) -> String {
    if let Some(b) = &r.balanced {
        let ef = |f: f64| b.e_factor_near(f);
        return format!(
            "Balanced: two outputs through an ideal 180° hybrid, the figures above those of their \
             difference Δ, which holds no electric pickup to first order; their sum Σ's electric \
             factor (uniform E along the axis) {:.1} dB(1/m) near 100 MHz, {:.1} dB(1/m) at the \
             upper usable frequency.",
            ef(100e6),
            ef(r.upper_hz)
        );
    }
    format!(
        "E-rejection (worst case: electric field across the loop's axis, E/H = η0) {:.1} dB at \
         100 MHz, {:.1} dB at the upper usable frequency; error budget ({} dB) {}.",
        r.e_rejection_db(100e6, crate::physics::electric::ETA0),
        r.e_rejection_db(r.upper_hz, crate::physics::electric::ETA0),
        crate::physics::electric::BUDGET_DB,
        match r.budget_hz {
            Some(b) => format!("reached at {:.0} MHz", b / 1e6),
            None if r.winding.is_some() => "not reached below the small-loop limit".to_string(),
            None => "not reached below the first null".to_string(),
        }
    )
}

fn num(v: f64, d: usize) -> String {
    format!("{v:.d$}")
}

/// The comparison table's column heads.
const COMPARISON_HEADS: [&str; 12] = [
    "probe",
    "shape",
    "size",
    "L (nH)",
    "corner (MHz)",
    "upper (MHz)",
    "PF 10 MHz",
    "PF 100 MHz",
    "PF 1 GHz",
    "A_eff (mm²)",
    "E-rej. 100 MHz (dB)",
    "resolution (mm)",
];

/// What the comparison table's probe factors mean.
const COMPARISON_NOTE: &str = "PF in dB(S/m), uniform field normal to the loop, into 50 Ω: \
     H[dBµA/m] = V[dBµV] + PF (for a field confined under the tip, as over a trace, its \
     area-average over the loop's own effective area is higher by the handle's share, given in \
     each probe's notes). Values above a probe's upper usable frequency are shown \
     for comparison only. A_eff: effective area of the shield's outer current. E-rej.: E-rejection \
     in the worst orientation (electric field across the loop's axis, E/H = η0). Resolution: −6 dB \
     full width across a trace, at the stated height. A balanced loop's figures are those of its \
     outputs' difference Δ through an ideal 180° hybrid; its sum's electric factor is in its \
     section below.";

/// One probe's row of the comparison table, from the same numbers as `predict --json`.
fn comparison_cells(x: &Predicted) -> [String; 12] {
    let j = probe_json(x);
    let v = |k: &str, scale: f64, d: usize| num(j[k].as_f64().unwrap_or(f64::NAN) / scale, d);
    [
        x.probe.name.clone(),
        if x.probe.kind == crate::model::probe::ProbeKind::Balanced {
            format!("{} (balanced, Δ)", x.probe.shape_name())
        } else {
            x.probe.shape_name().to_string()
        },
        x.probe.size_text(),
        v("inductance_nh", 1.0, 2),
        v("corner_hz", 1e6, 1),
        v("upper_hz", 1e6, 0),
        v("pf_10mhz_db_s_per_m", 1.0, 2),
        v("pf_100mhz_db_s_per_m", 1.0, 2),
        v("pf_1ghz_db_s_per_m", 1.0, 2),
        v("effective_area_mm2", 1.0, 2),
        match x.response.as_loop() {
            // A balanced loop's difference holds no electric pickup to first order.
            Some(r) if r.balanced.is_some() => "none (1st order)".to_string(),
            r => num(
                r.map_or(f64::NAN, |r| {
                    r.e_rejection_db(100e6, crate::physics::electric::ETA0)
                }),
                1,
            ),
        },
        v("resolution_mm", 1.0, 2),
    ]
}

/// The electric probes' comparison table's column heads.
const ELECTRIC_HEADS: [&str; 11] = [
    "probe",
    "electrode",
    "collecting area (mm²)",
    "self-capacitance (pF)",
    "corner (MHz)",
    "upper (MHz)",
    "EF 10 MHz",
    "EF 100 MHz",
    "EF 1 GHz",
    "to the trace (fF)",
    "resolution (mm)",
];

/// What the electric probes' table means.
const ELECTRIC_NOTE: &str = "EF: electric probe factor in dB(1/m), the probe held flat, the field \
     normal to its face, into 50 Ω: E[dBµV/m] = V[dBµV] + EF. It falls 20 dB a decade up to the \
     corner, where the electrode's own capacitance shunts the load, and levels off above it. \
     Values above a probe's upper usable frequency are shown for comparison only. To the \
     trace: capacitance from a 50 Ω microstrip below the electrode centred over it; \
     resolution: −6 dB full width of that coupling across the trace; both at the stated height.";

/// One electric probe's row, from the same numbers as `predict --json`.
fn electric_cells(x: &Predicted) -> [String; 11] {
    let j = probe_json(x);
    let v = |k: &str, scale: f64, d: usize| num(j[k].as_f64().unwrap_or(f64::NAN) / scale, d);
    let ef = |f: f64| {
        x.response
            .as_electric()
            .map_or(f64::NAN, |r| r.factor_db_at(f))
    };
    [
        x.probe.name.clone(),
        x.probe.size_text(),
        v("collecting_area_mm2", 1.0, 2),
        v("self_capacitance_pf", 1.0, 3),
        v("corner_hz", 1e6, 0),
        v("upper_hz", 1e6, 0),
        num(ef(10e6), 2),
        num(ef(100e6), 2),
        num(ef(1e9), 2),
        v("coupling_capacitance_ff", 1.0, 2),
        v("resolution_mm", 1.0, 2),
    ]
}

/// The loops and the electric probes of a family.
fn by_kind(all: &[Predicted]) -> (Vec<&Predicted>, Vec<&Predicted>) {
    all.iter().partition(|x| x.response.as_loop().is_some())
}

/// A Markdown table of `rows` under `heads`, with its note.
fn markdown_table(heads: &[&str], rows: &[Vec<String>], note: &str) -> String {
    let mut o = format!(
        "| {} |\n|{}\n",
        heads.join(" | "),
        "---|".repeat(heads.len())
    );
    for r in rows {
        let _ = writeln!(o, "| {} |", r.join(" | "));
    }
    let _ = writeln!(o, "\n{note}");
    o
}

/// The comparison tables of a family (Markdown), from the predictions: the loops', then the
/// electric probes' when the family has any.
pub fn comparison_markdown(all: &[Predicted]) -> String {
    let (loops, electric) = by_kind(all);
    let mut o = String::new();
    if !loops.is_empty() {
        let rows: Vec<Vec<String>> = loops.iter().map(|x| comparison_cells(x).to_vec()).collect();
        o.push_str(&markdown_table(&COMPARISON_HEADS, &rows, COMPARISON_NOTE));
    }
    if !electric.is_empty() {
        if !o.is_empty() {
            o.push('\n');
        }
        let rows: Vec<Vec<String>> = electric
            .iter()
            .map(|x| electric_cells(x).to_vec())
            .collect();
        o.push_str(&markdown_table(&ELECTRIC_HEADS, &rows, ELECTRIC_NOTE));
    }
    o
}

/// An HTML table of `rows` under `heads`, with its note.
fn html_table(o: &mut String, id: &str, heads: &[&str], rows: &[Vec<String>], note: &str) {
    let _ = write!(o, "<table id=\"{id}\"><tr>");
    for h in heads {
        let _ = write!(o, "<th>{}</th>", xml(h));
    }
    o.push_str("</tr>\n");
    for r in rows {
        o.push_str("<tr>");
        for c in r {
            let _ = write!(o, "<td>{}</td>", xml(c));
        }
        o.push_str("</tr>\n");
    }
    let _ = writeln!(o, "</table>\n<p>{}</p>", xml(note));
}

/// An electric probe's section of the report.
fn electric_section(
    o: &mut String,
    x: &Predicted,
    r: &crate::physics::electric_probe::ElectricResponse,
    preview: &str,
    colour: &str,
) {
    let _ = writeln!(
        o,
        "<div class=\"probe\"><div class=\"preview\">{}</div><div><h3>{}</h3><p>Electric-field probe, {}; line w = {:.3} mm ({} Ω target).<br>Collecting radius {:.3} mm (the disc and half its clearance), area {:.2} mm²; self-capacitance {:.3} pF (both faces, εr {:.2} under them); corner {:.0} MHz; upper usable {:.0} MHz ({}).<br>Electric probe factor {:.1} dB(1/m) at 10 MHz, {:.1} dB(1/m) at 100 MHz (the probe held flat, E normal to its face, into 50 Ω).<br>Over a 50 Ω microstrip {} mm over its plane (w = {:.2} mm), face {} mm above it: {:.2} fF to the electrode, resolution {}.</p><div class=\"plot\">{}</div></div></div>",
        preview,
        xml(&x.probe.name),
        xml(&x.probe.size_text()),
        x.solved.trace_width,
        x.probe.target_z0,
        r.r_eff_m * 1e3,
        r.area_eff_m2 * 1e6,
        r.c_self * 1e12,
        r.er_outer,
        r.corner_hz / 1e6,
        r.upper_hz / 1e6,
        xml(r.upper_rule),
        r.factor_db_at(10e6),
        r.factor_db_at(100e6),
        r.options.trace_h_mm,
        r.trace.width,
        r.options.height_mm,
        r.coupling_f * 1e15,
        match r.resolution_m {
            Some(w) => format!("{:.2} mm (−6 dB)", w * 1e3),
            None => "beyond the profile (no −6 dB point)".to_string(),
        },
        super::plot::electric_factor_plot(
            &format!("{} electric probe factor", x.probe.name),
            &[(x.probe.name.as_str(), colour, r)]
        )
    );
}

/// The HTML report. `previews` are the probes' composited SVG previews, in the same order.
pub fn html(family: &str, all: &[Predicted], previews: &[String]) -> String {
    let mut o = String::new();
    let _ = write!(
        o,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{t} — probe family report</title>\n<style>\
         body{{font-family:sans-serif;margin:24px;max-width:1100px;color:#222}}\
         table{{border-collapse:collapse}}td,th{{border:1px solid #bbb;padding:4px 8px;text-align:right}}\
         th{{background:#eee}}td:first-child,td:nth-child(2),td:nth-child(3){{text-align:left}}\
         .caution{{border:2px solid #b00;padding:8px 12px;background:#fff4f4}}\
         .probe{{display:flex;gap:24px;align-items:flex-start;margin:16px 0;border-top:1px solid #ccc;padding-top:12px}}\
         .preview svg{{width:260px;height:auto}}</style></head><body>\n",
        t = xml(family)
    );
    let _ = writeln!(o, "<h1>{} — probe family report</h1>", xml(family));
    let _ = writeln!(o, "<p class=\"caution\">{}</p>", xml(CAUTIONS));
    let (loops, electric) = by_kind(all);
    o.push_str("<h2>Comparison</h2>\n");
    if !loops.is_empty() {
        let rows: Vec<Vec<String>> = loops.iter().map(|x| comparison_cells(x).to_vec()).collect();
        html_table(
            &mut o,
            "comparison",
            &COMPARISON_HEADS,
            &rows,
            COMPARISON_NOTE,
        );
    }
    if !electric.is_empty() {
        let rows: Vec<Vec<String>> = electric
            .iter()
            .map(|x| electric_cells(x).to_vec())
            .collect();
        html_table(
            &mut o,
            "comparison-electric",
            &ELECTRIC_HEADS,
            &rows,
            ELECTRIC_NOTE,
        );
    }
    let colour = |x: &Predicted| {
        let i = all.iter().position(|y| std::ptr::eq(y, x)).unwrap_or(0);
        COLOURS[i % COLOURS.len()]
    };
    if let Some(first) = all.first() {
        let curves: Vec<(&str, &str, &crate::physics::Response)> = all
            .iter()
            .filter_map(|x| {
                x.response
                    .as_loop()
                    .map(|r| (x.probe.name.as_str(), colour(x), r))
            })
            .collect();
        if !curves.is_empty() {
            let _ = writeln!(
                o,
                "<h2>Probe factors</h2>\n<div class=\"plot\">{}</div>",
                super::plot::probe_factor_plot("Probe factor of the family", &curves)
            );
        }
        let curves: Vec<_> = all
            .iter()
            .filter_map(|x| {
                x.response
                    .as_electric()
                    .map(|r| (x.probe.name.as_str(), colour(x), r))
            })
            .collect();
        if !curves.is_empty() {
            let _ = writeln!(
                o,
                "<h2>Electric probe factors</h2>\n<div class=\"plot\">{}</div>",
                super::plot::electric_factor_plot("Electric probe factor of the family", &curves)
            );
        }
        let _ = writeln!(
            o,
            "<h2>Stackup</h2>\n<div class=\"stackup\">{}</div>",
            stackup_svg(
                &first.probe.stackup,
                first.probe.signal_layer,
                match (loops.is_empty(), electric.is_empty()) {
                    (false, true) => "loop trace",
                    (true, false) => "line to the electrode",
                    _ => "loop trace, or line to the electrode",
                }
            )
        );
    }
    o.push_str("<h2>Probes</h2>\n");
    for (i, x) in all.iter().enumerate() {
        let preview = previews.get(i).map(String::as_str).unwrap_or("");
        let r = match &x.response {
            crate::physics::predicted::ProbeResponse::Loop(r) => r,
            crate::physics::predicted::ProbeResponse::Electric(r) => {
                electric_section(&mut o, x, r, preview, colour(x));
                continue;
            }
        };
        let _ = writeln!(
            o,
            "<div class=\"probe\"><div class=\"preview\">{}</div><div><h3>{}</h3><p>{}{} loop, {}; trace w = {:.3} mm ({} Ω target).<br>Effective area {:.2} mm² ({:.3} of the centreline's; {:.2} mm² with the handle's share of a uniform field); inductance {:.2} nH ({}outer {:.2} + {} {:.2}); gap {:.3} pF; corner {:.1} MHz; upper usable {:.0} MHz ({}).<br>{}<br>Resolution {:.2} mm across a trace {} mm over its plane, tip {} mm above it; mutual {:.3} nH.</p><div class=\"plot\">{}</div></div></div>",
            preview,
            xml(&x.probe.name),
            x.probe.loop_label(),
            x.probe.shape_name(),
            xml(&x.probe.size_text()),
            x.solved.trace_width,
            x.probe.target_z0,
            r.area_eff_m2 * 1e6,
            r.area_eff_m2 / r.area_m2,
            r.area_uniform_m2() * 1e6,
            r.l_total * 1e9,
            r.winding
                .as_ref()
                .map_or(String::new(), |w| format!("{}² × ", w.turns)),
            r.l_outer * 1e9,
            if r.winding.is_some() {
                "winding's line"
            } else {
                "stub"
            },
            r.l_stub * 1e9,
            r.c_gap * 1e12,
            r.corner_hz / 1e6,
            r.upper_hz / 1e6,
            xml(r.upper_rule),
            xml(&electric_sentence(r)),
            r.resolution_m * 1e3,
            r.options.trace_h_mm,
            r.options.height_mm,
            r.mutual * 1e9,
            super::plot::probe_factor_plot(
                &format!("{} probe factor", x.probe.name),
                &[(x.probe.name.as_str(), COLOURS[i % COLOURS.len()], r)]
            )
        );
    }
    o.push_str("<h2>Modelling assumptions</h2>\n<ul>\n");
    for a in ASSUMPTIONS {
        let _ = writeln!(o, "<li>{}</li>", xml(a));
    }
    if all
        .iter()
        .any(|x| x.probe.kind == crate::model::probe::ProbeKind::Balanced)
    {
        for a in crate::physics::predicted::BALANCED_ASSUMPTIONS {
            let _ = writeln!(o, "<li>{}</li>", xml(a));
        }
    }
    if all.iter().any(|x| x.probe.turns > 1) {
        for a in crate::physics::predicted::WINDING_ASSUMPTIONS {
            let _ = writeln!(o, "<li>{}</li>", xml(a));
        }
    }
    o.push_str("</ul>\n");
    let data = serde_json::json!({ "probes": all.iter().map(probe_json).collect::<Vec<_>>() });
    let _ = writeln!(
        o,
        "<script type=\"application/json\" id=\"predictions\">{}</script>",
        serde_json::to_string(&data)
            .expect("plain JSON")
            .replace("</", "<\\/")
    );
    // After load, record how many previews, plots and drawings have a rendered size, so a
    // headless browser's DOM shows what was really drawn.
    o.push_str(
        "<script>window.addEventListener('load',function(){function n(s){var c=0;document.querySelectorAll(s).forEach(function(e){var r=e.getBoundingClientRect();if(r.width>10&&r.height>10){c++;}});return c;}\
         document.body.setAttribute('data-rendered','previews='+n('.preview svg')+' plots='+n('.plot svg')+' stackup='+n('.stackup svg'));});</script>\n",
    );
    o.push_str("</body></html>\n");
    o
}
