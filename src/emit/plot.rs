//! Response plots (SVG): probe factor against frequency on a logarithmic axis.

use crate::physics::Response;
use svg::Document;
use svg::node::element::{Line, Polyline, Rectangle, Text};

fn f(v: f64) -> String {
    if v.abs() >= 1e6 {
        return format!("{v:.3e}");
    }
    crate::math::trimmed(v, 2)
}

pub use crate::math::hz_label;

/// One curve of a log-frequency plot.
#[derive(Debug, Clone)]
pub struct Series<'a> {
    /// Legend text.
    pub label: String,
    /// Stroke colour.
    pub colour: &'a str,
    /// Points (Hz, value).
    pub points: Vec<(f64, f64)>,
    /// The probe's low-frequency corner, drawn as a vertical dashed line in the curve's
    /// colour (the only meaning of a dashed line in loopwright's plots).
    pub corner_hz: Option<f64>,
    /// The upper usable frequency: points above it are drawn dotted (the only meaning of a
    /// dotted line).
    pub above_hz: Option<f64>,
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

/// At most this many points of one curve are drawn: beyond, each pixel column keeps its lowest
/// and highest point (so peaks stay), which bounds the plot's size whatever the data.
const MAX_DRAWN: usize = 2000;

/// The points of a curve to draw: finite ones with a positive frequency, thinned to the lowest
/// and highest point per pixel column (`column` maps a frequency to it) when there are more
/// than [`MAX_DRAWN`].
fn drawn(points: &[(f64, f64)], column: impl Fn(f64) -> i64) -> Vec<(f64, f64)> {
    let ok: Vec<(f64, f64)> = points
        .iter()
        .copied()
        .filter(|&(fr, v)| fr.is_finite() && fr > 0.0 && v.is_finite())
        .collect();
    if ok.len() <= MAX_DRAWN {
        return ok;
    }
    let mut out: Vec<(f64, f64)> = Vec::new();
    let mut i = 0;
    while i < ok.len() {
        let c = column(ok[i].0);
        let mut j = i;
        let (mut lo, mut hi) = (i, i);
        while j < ok.len() && column(ok[j].0) == c {
            if ok[j].1 < ok[lo].1 {
                lo = j;
            }
            if ok[j].1 > ok[hi].1 {
                hi = j;
            }
            j += 1;
        }
        out.push(ok[lo.min(hi)]);
        if lo != hi {
            out.push(ok[lo.max(hi)]);
        }
        i = j;
    }
    out
}

/// An empty drawing of `w` × `h` px on a white ground, 12 px sans-serif text, with its class
/// attribute (the report counts its drawings by it).
pub fn drawing(w: f64, h: f64, class: &str) -> Document {
    Document::new()
        .set("viewBox", (0, 0, w, h))
        .set("width", w)
        .set("height", h)
        .set("font-family", "sans-serif")
        .set("font-size", 12)
        .set("class", class)
        .add(
            Rectangle::new()
                .set("x", 0)
                .set("y", 0)
                .set("width", w)
                .set("height", h)
                .set("fill", "#ffffff"),
        )
}

/// Curves on one log-frequency plot with a linear value axis (`y_label`, with its unit).
/// `class` is the SVG's class attribute (the report counts its plots by it). Its size is
/// bounded whatever the data: at most about a dozen grid lines on each axis and
/// [`MAX_DRAWN`] points per curve; points that are not finite are left out.
pub fn log_plot(title: &str, y_label: &str, class: &str, curves: &[Series]) -> String {
    // The legend sits below the plot area, a row per curve and one for the line styles in
    // use, so that it never covers the data.
    let styles = style_note(curves);
    let rows = curves.len() + usize::from(!styles.is_empty());
    let (w, h) = (640.0, 400.0 + LEGEND_ROW * rows as f64);
    let (l, r, t, b) = (70.0, 20.0, 40.0, 60.0 + LEGEND_ROW * rows as f64);
    let mut fmin = f64::INFINITY;
    let mut fmax = 0.0f64;
    let mut ymin = f64::INFINITY;
    let mut ymax = f64::NEG_INFINITY;
    for c in curves {
        for &(fr, v) in &c.points {
            if !(fr.is_finite() && fr > 0.0 && v.is_finite()) {
                continue;
            }
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
        step_for(ymax - ymin).max(10.0)
    } else {
        step_for((ymax - ymin).max(0.5))
    };
    let (d0, d1) = (
        fmin.log10().floor(),
        fmax.log10().ceil().max(fmin.log10().floor() + 1.0),
    );
    // One grid line per decade, or per several when the span is wide.
    let dstep = ((d1 - d0) / 12.0).ceil().max(1.0);
    let (y0, y1) = ((ymin / step).floor() * step, (ymax / step).ceil() * step);
    let y1 = if y1 <= y0 { y0 + step } else { y1 };
    let px = |fr: f64| l + (fr.log10() - d0) / (d1 - d0) * (w - l - r);
    let py = |v: f64| t + (y1 - v) / (y1 - y0) * (h - t - b);
    let line = |x1: String, y1: String, x2: String, y2: String, stroke: &str, width: f64| {
        Line::new()
            .set("x1", x1)
            .set("y1", y1)
            .set("x2", x2)
            .set("y2", y2)
            .set("stroke", stroke)
            .set("stroke-width", width)
    };
    let text = |x: String, y: String, anchor: Option<&str>, body: &str| {
        let t = Text::new(body).set("x", x).set("y", y);
        match anchor {
            Some(a) => t.set("text-anchor", a),
            None => t,
        }
    };
    let mut doc = drawing(w, h, class)
        .add(text((w / 2.0).to_string(), "22".into(), Some("middle"), title).set("font-size", 14));
    // Grid: decades and their 2–9 minor lines; every `step` on the value axis.
    let (top, bottom) = (t.to_string(), (h - b).to_string());
    let mut d = d0;
    while d <= d1 + 1e-9 {
        let x = format!("{:.1}", px(10f64.powf(d)));
        doc = doc
            .add(line(
                x.clone(),
                top.clone(),
                x.clone(),
                bottom.clone(),
                "#999",
                0.8,
            ))
            .add(text(
                x,
                (h - b + 16.0).to_string(),
                Some("middle"),
                &hz_label(10f64.powf(d)),
            ));
        if d < d1 && dstep == 1.0 {
            for m in 2..10 {
                let xm = format!("{:.1}", px(m as f64 * 10f64.powf(d)));
                doc = doc.add(line(
                    xm.clone(),
                    top.clone(),
                    xm,
                    bottom.clone(),
                    "#ddd",
                    0.6,
                ));
            }
        }
        d += dstep;
    }
    let n_lines = ((y1 - y0) / step).round() as i64;
    for k in 0..=n_lines {
        let y = y0 + k as f64 * step;
        let yy = py(y);
        let ys = format!("{yy:.1}");
        doc = doc
            .add(line(
                l.to_string(),
                ys.clone(),
                (w - r).to_string(),
                ys,
                "#ccc",
                0.6,
            ))
            .add(text(
                (l - 6.0).to_string(),
                format!("{:.1}", yy + 4.0),
                Some("end"),
                &f(y),
            ));
    }
    let mid = (t + h - b) / 2.0;
    doc = doc
        .add(text(
            ((l + w - r) / 2.0).to_string(),
            (h - b + 36.0).to_string(),
            Some("middle"),
            "frequency (logarithmic)",
        ))
        .add(
            text("16".into(), mid.to_string(), Some("middle"), y_label)
                .set("transform", format!("rotate(-90 16 {mid})")),
        );
    let polyline = |pts: &[(f64, f64)], colour: &str| {
        let pts: Vec<String> = pts
            .iter()
            .map(|&(fr, v)| format!("{:.1},{:.1}", px(fr), py(v)))
            .collect();
        Polyline::new()
            .set("fill", "none")
            .set("stroke", colour)
            .set("stroke-width", 2)
            .set("points", pts.join(" "))
    };
    let legend_y = |row: usize| h - b + 58.0 + LEGEND_ROW * row as f64;
    for (i, c) in curves.iter().enumerate() {
        let pts = drawn(&c.points, |fr| px(fr).round() as i64);
        let colour = c.colour;
        // Solid up to the upper usable frequency, dotted from the last point at or below it.
        let split = c
            .above_hz
            .map_or(pts.len(), |a| pts.partition_point(|p| p.0 <= a));
        doc = doc.add(polyline(&pts[..split], colour));
        if split < pts.len() {
            doc = doc.add(
                polyline(&pts[split.saturating_sub(1)..], colour).set("stroke-dasharray", "1 3"),
            );
        }
        if let Some(m) = c.corner_hz {
            let xc = format!("{:.1}", px(m.clamp(fmin, fmax)));
            doc = doc.add(
                line(xc.clone(), top.clone(), xc, bottom.clone(), colour, 1.0)
                    .set("stroke-dasharray", "6 4"),
            );
        }
        let ly = legend_y(i);
        doc = doc
            .add(line(
                format!("{:.1}", l),
                ly.to_string(),
                format!("{:.1}", l + 20.0),
                ly.to_string(),
                colour,
                2.0,
            ))
            .add(text(
                format!("{:.1}", l + 26.0),
                (ly + 4.0).to_string(),
                None,
                &c.label,
            ));
    }
    if !styles.is_empty() {
        doc = doc.add(text(
            format!("{l:.1}"),
            (legend_y(curves.len()) + 4.0).to_string(),
            None,
            &styles,
        ));
    }
    format!("{doc}\n")
}

/// Height of one legend row, px.
const LEGEND_ROW: f64 = 18.0;

/// What the line styles in use mean, in one line (empty when only solid curves are drawn).
fn style_note(curves: &[Series]) -> String {
    let mut parts = Vec::new();
    if curves.iter().any(|c| c.corner_hz.is_some()) {
        parts.push("dashed vertical: low-frequency corner");
    }
    let above = curves.iter().any(|c| {
        c.above_hz
            .is_some_and(|a| c.points.iter().any(|p| p.0 > a && p.1.is_finite()))
    });
    if above {
        parts.push("dotted: above the upper usable frequency");
    }
    parts.join("; ")
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
            corner_hz: Some(resp.corner_hz),
            above_hz: Some(resp.upper_hz),
        })
        .collect();
    log_plot(title, "probe factor dB(S/m)", "response-plot", &series)
}

/// One or more electric probe factor curves on one log-frequency plot: (label, colour,
/// response).
pub fn electric_factor_plot(
    title: &str,
    curves: &[(
        &str,
        &str,
        &crate::physics::electric_probe::ElectricResponse,
    )],
) -> String {
    let series: Vec<Series> = curves
        .iter()
        .map(|(label, colour, resp)| Series {
            label: format!(
                "{label} (self-capacitance corner {}, upper {})",
                hz_label(resp.corner_hz),
                hz_label(resp.upper_hz)
            ),
            colour,
            points: resp.factor.clone(),
            corner_hz: None,
            above_hz: Some(resp.upper_hz),
        })
        .collect();
    log_plot(
        title,
        "electric probe factor dB(1/m)",
        "response-plot",
        &series,
    )
}

/// Escapes text for XML.
pub fn xml(t: &str) -> String {
    t.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn series(points: Vec<(f64, f64)>) -> Series<'static> {
        Series {
            label: "x".into(),
            colour: "#000",
            points,
            corner_hz: None,
            above_hz: None,
        }
    }

    // The reliability audit's case: one absurd value (1e8 on a dB axis) once made one grid
    // line per 10 dB (a 1.34 GB file). Whatever the values, the plot stays small.
    #[test]
    fn plot_size_is_bounded_whatever_the_data() {
        for extreme in [1e8, 1e12, 1e300, -1e300, f64::INFINITY, f64::NAN] {
            let s = log_plot(
                "t",
                "dB",
                "c",
                &[series(vec![(1e6, 40.0), (2e6, extreme), (3e6, 41.0)])],
            );
            assert!(s.len() < 20_000, "{extreme}: {} bytes", s.len());
            assert!(!s.contains("inf") && !s.contains("NaN"), "{extreme}");
        }
        // Frequencies over 300 decades and a million points.
        let many: Vec<(f64, f64)> = (0..1_000_000)
            .map(|i| (10f64.powf(-150.0 + 300.0 * i as f64 / 1e6), (i % 97) as f64))
            .collect();
        let s = log_plot("t", "dB", "c", &[series(many)]);
        assert!(s.len() < 200_000, "{} bytes", s.len());
    }

    // Thinning keeps each pixel column's extremes: a one-sample peak survives.
    #[test]
    fn thinning_keeps_peaks() {
        let mut pts: Vec<(f64, f64)> = (1..=100_000).map(|i| (i as f64 * 1e3, 0.0)).collect();
        pts[54_321].1 = 99.0;
        let d = drawn(&pts, |fr| (fr.log10() * 100.0).round() as i64);
        assert!(d.len() <= 2 * 600, "{}", d.len());
        assert!(d.contains(&(54_322e3, 99.0)));
        assert!(d.windows(2).all(|w| w[0].0 < w[1].0));
    }
}
