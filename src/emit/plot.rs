//! Response plots (SVG): probe factor against frequency on a logarithmic axis.

use crate::physics::Response;
use std::fmt::Write;

fn f(v: f64) -> String {
    let s = format!("{v:.2}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

fn hz_label(hz: f64) -> String {
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

/// One or more probe-factor curves on one log-frequency plot: (label, colour, response).
pub fn probe_factor_plot(title: &str, curves: &[(&str, &str, &Response)]) -> String {
    let (w, h) = (640.0, 400.0);
    let (l, r, t, b) = (70.0, 20.0, 40.0, 60.0);
    let mut fmin = f64::INFINITY;
    let mut fmax = 0.0f64;
    let mut ymin = f64::INFINITY;
    let mut ymax = f64::NEG_INFINITY;
    for (_, _, resp) in curves {
        for &(fr, db) in &resp.probe_factor {
            fmin = fmin.min(fr);
            fmax = fmax.max(fr);
            ymin = ymin.min(db);
            ymax = ymax.max(db);
        }
    }
    let (d0, d1) = (
        fmin.log10().floor(),
        fmax.log10().ceil().max(fmin.log10().floor() + 1.0),
    );
    let (y0, y1) = (
        (ymin / 10.0).floor() * 10.0,
        (ymax / 10.0).ceil() * 10.0 + 0.0,
    );
    let y1 = if y1 <= y0 { y0 + 10.0 } else { y1 };
    let px = |fr: f64| l + (fr.log10() - d0) / (d1 - d0) * (w - l - r);
    let py = |db: f64| t + (y1 - db) / (y1 - y0) * (h - t - b);
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {w} {h}" width="{w}" height="{h}" font-family="sans-serif" font-size="12" class="response-plot">"#
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
    // Grid: decades and their 2–9 minor lines; every 10 dB.
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
    let mut y = y0;
    while y <= y1 + 1e-9 {
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
        y += 10.0;
    }
    let _ = write!(
        s,
        r#"<text x="{}" y="{}" text-anchor="middle">frequency (Hz, logarithmic)</text>"#,
        (l + w - r) / 2.0,
        h - 18.0
    );
    let _ = write!(
        s,
        r#"<text x="16" y="{}" text-anchor="middle" transform="rotate(-90 16 {})">probe factor dB(S/m)</text>"#,
        (t + h - b) / 2.0,
        (t + h - b) / 2.0
    );
    for (i, (label, colour, resp)) in curves.iter().enumerate() {
        let pts: Vec<String> = resp
            .probe_factor
            .iter()
            .map(|&(fr, db)| format!("{:.1},{:.1}", px(fr), py(db)))
            .collect();
        let _ = write!(
            s,
            r#"<polyline fill="none" stroke="{colour}" stroke-width="2" points="{}"/>"#,
            pts.join(" ")
        );
        // Corner marker.
        let xc = px(resp.corner_hz.clamp(fmin, fmax));
        let _ = write!(
            s,
            r#"<line x1="{xc:.1}" y1="{t}" x2="{xc:.1}" y2="{}" stroke="{colour}" stroke-dasharray="4 3" stroke-width="1"/>"#,
            h - b
        );
        let ly = t + 16.0 + 16.0 * i as f64;
        let _ = write!(
            s,
            r#"<line x1="{}" y1="{ly}" x2="{}" y2="{ly}" stroke="{colour}" stroke-width="2"/><text x="{}" y="{}">{} (corner {}, upper {})</text>"#,
            w - r - 300.0,
            w - r - 280.0,
            w - r - 275.0,
            ly + 4.0,
            xml(label),
            hz_label(resp.corner_hz),
            hz_label(resp.upper_hz)
        );
    }
    s.push_str("</svg>\n");
    s
}

/// Escapes text for XML.
pub fn xml(t: &str) -> String {
    t.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}
