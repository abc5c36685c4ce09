//! Response plots (SVG): probe factor against frequency on a logarithmic axis.

use crate::physics::Response;
use std::fmt::Write;

fn f(v: f64) -> String {
    let s = format!("{v:.2}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// A frequency with its unit (Hz, kHz, MHz, GHz), two decimals at most.
pub fn hz_label(hz: f64) -> String {
    if hz >= 1e9 {
        format!("{} GHz", f(hz / 1e9))
    } else if hz >= 1e6 {
        format!("{} MHz", f(hz / 1e6))
    } else if hz >= 1e3 {
        format!("{} kHz", f(hz / 1e3))
    } else {
        format!("{} Hz", f(hz))
    }
}

/// One curve of a log-frequency plot.
#[derive(Debug, Clone)]
pub struct Series<'a> {
    /// Legend text.
    pub label: String,
    /// Stroke colour.
    pub colour: &'a str,
    /// Points (Hz, value).
    pub points: Vec<(f64, f64)>,
    /// A vertical dashed marker at this frequency (a probe's corner), if any.
    pub marker_hz: Option<f64>,
}

/// A grid step for a value span: 1, 2 or 5 times a power of ten, giving 4 to 10 lines.
fn step_for(span: f64) -> f64 {
    let raw = (span / 6.0).max(1e-9);
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|s| span / s <= 10.0)
        .unwrap_or(10.0 * p)
}

/// Curves on one log-frequency plot with a linear value axis (`y_label`, with its unit).
/// `class` is the SVG's class attribute (the report counts its plots by it).
pub fn log_plot(title: &str, y_label: &str, class: &str, curves: &[Series]) -> String {
    let (w, h) = (640.0, 400.0);
    let (l, r, t, b) = (70.0, 20.0, 40.0, 60.0);
    let mut fmin = f64::INFINITY;
    let mut fmax = 0.0f64;
    let mut ymin = f64::INFINITY;
    let mut ymax = f64::NEG_INFINITY;
    for c in curves {
        for &(fr, v) in &c.points {
            fmin = fmin.min(fr);
            fmax = fmax.max(fr);
            ymin = ymin.min(v);
            ymax = ymax.max(v);
        }
    }
    if !(fmin.is_finite() && fmax > 0.0 && ymin.is_finite() && ymax.is_finite()) {
        (fmin, fmax, ymin, ymax) = (1e6, 1e9, 0.0, 10.0);
    }
    let step = if ymax - ymin >= 20.0 {
        10.0
    } else {
        step_for((ymax - ymin).max(0.5))
    };
    let (d0, d1) = (
        fmin.log10().floor(),
        fmax.log10().ceil().max(fmin.log10().floor() + 1.0),
    );
    let (y0, y1) = ((ymin / step).floor() * step, (ymax / step).ceil() * step);
    let y1 = if y1 <= y0 { y0 + step } else { y1 };
    let px = |fr: f64| l + (fr.log10() - d0) / (d1 - d0) * (w - l - r);
    let py = |v: f64| t + (y1 - v) / (y1 - y0) * (h - t - b);
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {w} {h}" width="{w}" height="{h}" font-family="sans-serif" font-size="12" class="{class}">"#
    );
    let _ = write!(
        s,
        r##"<rect x="0" y="0" width="{w}" height="{h}" fill="#ffffff"/>"##
    );
    let _ = write!(
        s,
        r#"<text x="{}" y="22" text-anchor="middle" font-size="14">{}</text>"#,
        w / 2.0,
        xml(title)
    );
    // Grid: decades and their 2–9 minor lines; every `step` on the value axis.
    let mut d = d0;
    while d <= d1 + 1e-9 {
        let x = px(10f64.powf(d));
        let _ = write!(
            s,
            r##"<line x1="{x:.1}" y1="{t}" x2="{x:.1}" y2="{}" stroke="#999" stroke-width="0.8"/>"##,
            h - b
        );
        let _ = write!(
            s,
            r#"<text x="{x:.1}" y="{}" text-anchor="middle">{}</text>"#,
            h - b + 16.0,
            hz_label(10f64.powf(d))
        );
        if d < d1 {
            for m in 2..10 {
                let xm = px(m as f64 * 10f64.powf(d));
                let _ = write!(
                    s,
                    r##"<line x1="{xm:.1}" y1="{t}" x2="{xm:.1}" y2="{}" stroke="#ddd" stroke-width="0.6"/>"##,
                    h - b
                );
            }
        }
        d += 1.0;
    }
    let n_lines = ((y1 - y0) / step).round() as i64;
    for k in 0..=n_lines {
        let y = y0 + k as f64 * step;
        let yy = py(y);
        let _ = write!(
            s,
            r##"<line x1="{l}" y1="{yy:.1}" x2="{}" y2="{yy:.1}" stroke="#ccc" stroke-width="0.6"/>"##,
            w - r
        );
        let _ = write!(
            s,
            r#"<text x="{}" y="{:.1}" text-anchor="end">{}</text>"#,
            l - 6.0,
            yy + 4.0,
            f(y)
        );
    }
    let _ = write!(
        s,
        r#"<text x="{}" y="{}" text-anchor="middle">frequency (Hz, logarithmic)</text>"#,
        (l + w - r) / 2.0,
        h - 18.0
    );
    let _ = write!(
        s,
        r#"<text x="16" y="{}" text-anchor="middle" transform="rotate(-90 16 {})">{}</text>"#,
        (t + h - b) / 2.0,
        (t + h - b) / 2.0,
        xml(y_label)
    );
    for (i, c) in curves.iter().enumerate() {
        let pts: Vec<String> = c
            .points
            .iter()
            .map(|&(fr, v)| format!("{:.1},{:.1}", px(fr), py(v)))
            .collect();
        let colour = c.colour;
        let _ = write!(
            s,
            r#"<polyline fill="none" stroke="{colour}" stroke-width="2" points="{}"/>"#,
            pts.join(" ")
        );
        if let Some(m) = c.marker_hz {
            let xc = px(m.clamp(fmin, fmax));
            let _ = write!(
                s,
                r#"<line x1="{xc:.1}" y1="{t}" x2="{xc:.1}" y2="{}" stroke="{colour}" stroke-dasharray="4 3" stroke-width="1"/>"#,
                h - b
            );
        }
        // Legend at the top right, sized to its text (about 6.6 px per character at 12 px).
        let ly = t + 16.0 + 16.0 * i as f64;
        let tx = (w - r - 8.0 - 6.6 * c.label.chars().count() as f64).max(l + 30.0);
        let _ = write!(
            s,
            r#"<line x1="{:.1}" y1="{ly}" x2="{:.1}" y2="{ly}" stroke="{colour}" stroke-width="2"/><text x="{tx:.1}" y="{}">{}</text>"#,
            tx - 25.0,
            tx - 5.0,
            ly + 4.0,
            xml(&c.label),
        );
    }
    s.push_str("</svg>\n");
    s
}

/// One or more probe-factor curves on one log-frequency plot: (label, colour, response).
pub fn probe_factor_plot(title: &str, curves: &[(&str, &str, &Response)]) -> String {
    let series: Vec<Series> = curves
        .iter()
        .map(|(label, colour, resp)| Series {
            label: format!(
                "{label} (corner {}, upper {})",
                hz_label(resp.corner_hz),
                hz_label(resp.upper_hz)
            ),
            colour,
            points: resp.probe_factor.clone(),
            marker_hz: Some(resp.corner_hz),
        })
        .collect();
    log_plot(title, "probe factor dB(S/m)", "response-plot", &series)
}

/// Escapes text for XML.
pub fn xml(t: &str) -> String {
    t.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}
