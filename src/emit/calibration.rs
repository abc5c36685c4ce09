//! Files of a calibration: probe-factor tables (the `convert` format), the detail table, plots
//! and notes.

use super::plot::{Series, hz_label, log_plot};
use crate::calib::calibrate::Calibration;
use crate::calib::gate::Verdict;
use crate::model::fixture::Fixture;
use crate::model::probe::Probe;
use crate::physics::Response;
use std::fmt::Write;

/// `# `-comment lines (the CSV readers skip them), one per line of `header`.
pub fn comments(header: &[String]) -> String {
    let mut o = String::new();
    for h in header {
        for l in h.lines() {
            let _ = writeln!(o, "# {l}");
        }
    }
    o
}

/// The probe-factor table `freq_hz,pf_db_s_per_m`: measured (`measured`) or predicted at the
/// measured frequencies, after `header` as comment lines.
pub fn pf_csv(c: &Calibration, measured: bool, header: &[String]) -> String {
    factor_csv(
        header,
        "pf_db_s_per_m",
        c.points
            .iter()
            .map(|p| (p.f, if measured { p.pf_db } else { p.pf_pred_db })),
    )
}

/// A factor table, `freq_hz,<column>`, after `header` as comment lines.
fn factor_csv(header: &[String], column: &str, rows: impl Iterator<Item = (f64, f64)>) -> String {
    let mut o = comments(header);
    let _ = writeln!(o, "freq_hz,{column}");
    for (f, v) in rows {
        let _ = writeln!(o, "{f},{v:.4}");
    }
    o
}

/// The detail table: both S21 and both probe factors, their difference and the band flag,
/// after `header` as comment lines.
pub fn detail_csv(c: &Calibration, header: &[String]) -> String {
    let mut o = comments(header);
    o.push_str(
        "freq_hz,s21_db,s21_predicted_db,pf_db_s_per_m,pf_predicted_db_s_per_m,difference_db,in_band,line_current_db\n",
    );
    for p in &c.points {
        detail_row(
            &mut o,
            p.f,
            [p.s21_db, p.s21_pred_db, p.pf_db, p.pf_pred_db, p.diff_db()],
            p.in_band,
            p.current_db,
        );
    }
    o
}

/// One row of a detail table: the frequency, five values (both S21, both factors, their
/// difference), the band flag and the line's level under the probe.
fn detail_row(o: &mut String, f: f64, v: [f64; 5], in_band: bool, line_db: f64) {
    let _ = writeln!(
        o,
        "{f},{:.4},{:.4},{:.4},{:.4},{:.4},{in_band},{line_db:.4}",
        v[0], v[1], v[2], v[3], v[4]
    );
}

/// The probe-factor plot (measured and predicted) and the difference plot.
pub fn plots(name: &str, c: &Calibration, r: &Response) -> (String, String) {
    let pf = log_plot(
        &format!(
            "{name}: probe factor from {} mm over the test line (uniform H)",
            c.height_mm
        ),
        "probe factor dB(S/m)",
        "calibration-plot",
        &[
            Series {
                label: "measured (from S21)".into(),
                colour: "#1f5fa8",
                points: c.points.iter().map(|p| (p.f, p.pf_db)).collect(),
                corner_hz: None,
                above_hz: Some(r.upper_hz),
            },
            Series {
                label: format!("predicted (corner {})", hz_label(r.corner_hz)),
                colour: "#c0392b",
                points: c.points.iter().map(|p| (p.f, p.pf_pred_db)).collect(),
                corner_hz: Some(r.corner_hz),
                above_hz: Some(r.upper_hz),
            },
        ],
    );
    let diff = log_plot(
        &format!("{name}: measured − predicted probe factor"),
        "difference dB",
        "calibration-plot",
        &[Series {
            label: "measured − predicted".into(),
            colour: "#1f5fa8",
            points: c.points.iter().map(|p| (p.f, p.diff_db())).collect(),
            corner_hz: None,
            above_hz: Some(r.upper_hz),
        }],
    );
    (pf, diff)
}

/// The calibration notes (Markdown).
pub fn notes(
    p: &Probe,
    r: &Response,
    fx: &Fixture,
    c: &Calibration,
    source: &str,
    files: &[String],
    verdict: &Verdict,
) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "# Calibration of {} on {}\n", p.name, fx.name);
    for w in warnings(fx) {
        let _ = writeln!(o, "> **Note:** {w}\n");
    }
    let _ = writeln!(
        o,
        "Measured probe factor from `{source}` (S{}{}: VNA port {} on the line's input, port {} \
         on the probe), probe tip {} mm above the line's copper, loop plane containing the \
         line's axis, on the centre mark. Written by loopwright {}.\n",
        c.ports.1,
        c.ports.0,
        c.ports.0,
        c.ports.1,
        c.height_mm,
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(o, "## Field reference\n");
    let _ = writeln!(
        o,
        "The probe factors here (`pf_db_s_per_m`) are **H / V_probe with H a uniform field \
         normal to the loop**, in dB(S/m): the same reference as loopwright's predicted probe \
         factor. The test line's field is known as its area-average over the loop's own \
         effective area; the factor derived from it is converted to the uniform reference by \
         20·log10|1 − ω²·L_out·C_gap| (a uniform field rings up the loop–gap resonance, the \
         line's does not) and by −{:.2} dB, the handle's share of a uniform field (the line's \
         field does not reach the handle). Field strength = reading (dBµV) + probe factor \
         gives dBµA/m of uniform field; for a field confined under the tip, as over a trace, \
         add {:.2} dB for its area-average over the loop.\n",
        r.local_field_db(),
        r.local_field_db()
    );
    let _ = writeln!(
        o,
        "- Line model: strip {:.3} mm wide, {:.3} mm over its plane, as a uniform current \
         sheet with its image (quasi-static); the line driven and terminated in {} Ω (the \
         file's reference resistance).",
        c.line.width * 1e3,
        c.line.h * 1e3,
        crate::model::probe::num(c.line.r_port)
    );
    let _ = writeln!(
        o,
        "- Line current under the probe: {}.{}",
        c.current_source,
        launch_summary(c)
    );
    let k = &c.coupling;
    let _ = writeln!(
        o,
        "- Loop centreline apex {:.3} mm above the line. Mutual inductance line → probe: \
         {:.2} pH (sheet), {:.2} pH (thin filament).",
        k.apex_m * 1e3,
        k.mutual * 1e12,
        k.mutual_filament * 1e12
    );
    let _ = writeln!(
        o,
        "- Area-average Hx per ampere: {:.3} A/m per A ({:.2} dB(1/m)); at the loop's centre \
         {:.3} A/m per A. A probe factor referred to the centre field would be {:+.2} dB from \
         these.",
        k.h_avg_per_amp,
        20.0 * k.h_avg_per_amp.log10(),
        k.h_centre_per_amp,
        20.0 * (k.h_centre_per_amp / k.h_avg_per_amp).log10()
    );
    let _ = writeln!(
        o,
        "- PF[dB(S/m)] = 20·log10(H_avg/I) + 20·log10|I/(V_inc/R_ref)| − 20·log10(R_ref) − \
         |S21|[dB] + 20·log10|1 − ω²·L_out·C_gap| − 20·log10(A_uniform/A_eff).\n"
    );
    let _ = writeln!(o, "## Result\n");
    let n_in = c.points.iter().filter(|q| q.in_band).count();
    let _ = writeln!(
        o,
        "- {} points from {} to {}; {n_in} at or below the predicted upper usable frequency \
         {} (corner {}).",
        c.points.len(),
        hz_label(c.points[0].f),
        hz_label(c.points[c.points.len() - 1].f),
        hz_label(r.upper_hz),
        hz_label(r.corner_hz)
    );
    if c.skipped_dc > 0 {
        let _ = writeln!(o, "- {} point(s) at 0 Hz skipped.", c.skipped_dc);
    }
    match c.in_band_diff() {
        Some((mean, max)) => {
            let _ = writeln!(
                o,
                "- Measured − predicted up to the upper usable frequency: mean {mean:+.2} dB, \
                 largest {max:.2} dB."
            );
        }
        None => {
            let _ = writeln!(
                o,
                "- No point lies at or below the predicted upper usable frequency."
            );
        }
    }
    let _ = writeln!(o, "\n## Plausibility gate\n");
    for l in verdict.lines() {
        let _ = writeln!(o, "- {}", l.trim_start());
    }
    let _ = writeln!(
        o,
        "\nThe gate compares the measured factor with the prediction up to the upper usable \
         frequency: level (median difference), slope (dB per decade) and ripple (distance from \
         that slope). Within the limits the difference is what the model leaves out (the sheet \
         model's field, the height's tolerance, losses not de-embedded, the probe's own \
         tolerances); beyond them a setup error (frequency unit, ports, probe, height, a pad or \
         cable left in) is far more likely, and the calibration is refused with a diagnosis \
         (docs/response.md). Use the measured table for conversion; keep the prediction as the \
         check.\n"
    );
    let _ = writeln!(o, "## Files\n");
    for f in files {
        let _ = writeln!(o, "- `{f}`");
    }
    let _ = writeln!(
        o,
        "\n## Cautions\n\n{}\n\n{}",
        crate::emit::cautions::CAL_CAUTIONS,
        crate::emit::cautions::CAUTIONS
    );
    o
}

/// The current's departure from V_inc/R_ref at a few frequencies, as text ("" when none).
fn launch_summary(c: &Calibration) -> String {
    let worst = c
        .points
        .iter()
        .fold(0.0f64, |m, p| m.max(p.current_db.abs()));
    if worst < 5e-4 {
        return " It equals V_inc/R_ref at every point.".into();
    }
    let mut picks: Vec<&crate::calib::calibrate::CalPoint> = Vec::new();
    for target in [1e8, 3e8, 1e9, 3e9] {
        if let Some(p) = c
            .points
            .iter()
            .filter(|p| p.f <= target * 1.05)
            .min_by(|a, b| {
                (a.f.ln() - target.ln())
                    .abs()
                    .total_cmp(&(b.f.ln() - target.ln()).abs())
            })
            && !picks.iter().any(|q| q.f == p.f)
        {
            picks.push(p);
        }
    }
    let list: Vec<String> = picks
        .iter()
        .map(|p| format!("{:+.2} dB at {}", p.current_db, hz_label(p.f)))
        .collect();
    format!(
        " Relative to V_inc/R_ref (a uniform matched line) it is {}; the largest departure is \
         {worst:.2} dB (column `line_current_db` of the detail table). The measured probe \
         factor includes this correction; a uniform-line calibration would be off by as much.",
        list.join(", ")
    )
}

/// What the calibration's model does not cover for this fixture.
pub fn warnings(fx: &Fixture) -> Vec<String> {
    let mut w = Vec::new();
    if let crate::model::fixture::FixtureLine::Cpwg { .. } = fx.line {
        w.push(
            "the fixture is grounded coplanar: part of the return current flows in the coplanar \
             ground, which the line model (strip over a plane) leaves out, so the field above \
             the line is overestimated. Prefer a microstrip fixture for calibration."
                .to_string(),
        );
    }
    w
}

/// An electric probe's factor table `freq_hz,ef_db_per_m`: measured (`measured`) or predicted
/// at the measured frequencies, after `header` as comment lines.
pub fn ef_csv(
    c: &crate::calib::electric::ElectricCalibration,
    measured: bool,
    header: &[String],
) -> String {
    factor_csv(
        header,
        "ef_db_per_m",
        c.points
            .iter()
            .map(|p| (p.f, if measured { p.ef_db } else { p.ef_pred_db })),
    )
}

/// An electric probe's detail table: both S21, both factors, their difference, the band flag
/// and the line voltage under the probe, after `header` as comment lines.
pub fn ef_detail_csv(c: &crate::calib::electric::ElectricCalibration, header: &[String]) -> String {
    let mut o = comments(header);
    o.push_str(
        "freq_hz,s21_db,s21_predicted_db,ef_db_per_m,ef_predicted_db_per_m,difference_db,in_band,line_voltage_db\n",
    );
    for p in &c.points {
        detail_row(
            &mut o,
            p.f,
            [p.s21_db, p.s21_pred_db, p.ef_db, p.ef_pred_db, p.diff_db()],
            p.in_band,
            p.line_voltage_db,
        );
    }
    o
}

/// An electric probe's calibration plot: measured and predicted factor.
pub fn ef_plot(
    name: &str,
    c: &crate::calib::electric::ElectricCalibration,
    r: &crate::physics::electric_probe::ElectricResponse,
) -> String {
    log_plot(
        &format!(
            "{name}: electric probe factor from {} mm over the test line (held flat)",
            c.on.height_mm
        ),
        "electric probe factor dB(1/m)",
        "calibration-plot",
        &[
            Series {
                label: "measured (from S21)".into(),
                colour: "#1f5fa8",
                points: c.points.iter().map(|p| (p.f, p.ef_db)).collect(),
                corner_hz: None,
                above_hz: Some(r.upper_hz),
            },
            Series {
                label: "predicted".into(),
                colour: "#c0392b",
                points: c.points.iter().map(|p| (p.f, p.ef_pred_db)).collect(),
                corner_hz: None,
                above_hz: Some(r.upper_hz),
            },
        ],
    )
}

/// An electric probe's calibration notes (Markdown).
pub fn ef_notes(
    p: &Probe,
    r: &crate::physics::electric_probe::ElectricResponse,
    fx: &Fixture,
    c: &crate::calib::electric::ElectricCalibration,
    source: &str,
    files: &[String],
    verdict: &Verdict,
) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "# Calibration of {} on {}\n", p.name, fx.name);
    for w in warnings(fx) {
        let _ = writeln!(o, "> **Note:** {w}\n");
    }
    let _ = writeln!(
        o,
        "Measured electric probe factor from `{source}` (S{}{}: VNA port {} on the line's input, \
         port {} on the probe), the probe held flat with its face {} mm above the line's copper \
         and its electrode centred over the line. Written by loopwright {}.\n",
        c.ports.1,
        c.ports.0,
        c.ports.0,
        c.ports.1,
        c.on.height_mm,
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(o, "## Field reference\n");
    let _ = writeln!(
        o,
        "The factors here (`ef_db_per_m`) are **E / V_probe with E the field normal to the \
         probe's face averaged over the electrode's collecting area** (radius {:.3} mm, {:.2} \
         mm²), into 50 Ω: E[dBµV/m] = V_probe[dBµV] + EF. Over the line that field is \
         C_c·V_line/(ε0·A_eff) with C_c = {:.2} fF from the fixture's own cross-section (2-D \
         field solution, the face above it): {:.1} V/m per volt on the line. The line voltage \
         under the probe: {}. The line's own loading of the electrode (C_c beside the \
         electrode's {:.3} pF) is taken off, so the factor is the one the probe has over any \
         trace that loads it less.\n",
        r.r_eff_m * 1e3,
        r.area_eff_m2 * 1e6,
        c.on.coupling_f * 1e15,
        c.on.e_per_volt,
        c.current_source,
        r.c_self * 1e12
    );
    let _ = writeln!(o, "## Plausibility\n");
    for l in verdict.lines() {
        let _ = writeln!(o, "- {l}");
    }
    let _ = writeln!(o, "\n## Files\n");
    for f in files {
        let _ = writeln!(o, "- `{f}`");
    }
    let _ = writeln!(o, "\n## Cautions\n\n{}", crate::emit::cautions::CAUTIONS);
    o
}
