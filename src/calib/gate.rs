//! The plausibility gate of a calibration, and the diagnosis of a refused one.
//!
//! A calibration is a measurement and a model that must agree within what the model leaves out
//! (docs/response.md, "Plausibility gate"). Over the usable band (the measured points at or
//! below the probe's predicted upper usable frequency) the difference measured − predicted
//! probe factor is summarised by its **level** (median, dB), its **slope** (least-squares dB per
//! decade of frequency) and its **ripple** (largest distance from that straight line, dB).
//! Past [`LEVEL_LIMIT_DB`], [`SLOPE_LIMIT_DB_PER_DECADE`] or [`RIPPLE_LIMIT_DB`] the
//! calibration is refused, and [`Bench::diagnose`] tests single causes one at a time (the
//! frequency unit, the ports, another probe of the spec, a forgotten attenuator, the probe's
//! height, a cable's loss slope): each is applied to the data and the gate run again; the causes
//! that bring the data within the limits are named, best fit first.

use crate::calib::touchstone::Network;
use crate::model::probe::Probe;
use crate::physics::Response;
use crate::physics::coupling::{TestLine, line_to_uniform_db, pf_from_s21, probe_coupling};
use crate::solve::probe::SolvedProbe;

/// Largest |level| (median of measured − predicted over the band) accepted, dB. The reasons
/// are in docs/response.md: the model's known errors at the usual heights add up to about
/// 3 dB, so 6 dB is twice that; the setup errors the gate exists for are 10 dB and more.
pub const LEVEL_LIMIT_DB: f64 = 6.0;
/// Largest |slope| of measured − predicted accepted, dB per decade (docs/response.md).
pub const SLOPE_LIMIT_DB_PER_DECADE: f64 = 3.0;
/// Largest ripple (distance from the fitted straight line) accepted, dB (docs/response.md).
pub const RIPPLE_LIMIT_DB: f64 = 3.0;
/// The band must span this many decades for a slope to be fitted; a narrower band is judged
/// by its level and ripple only.
pub const MIN_SLOPE_SPAN_DECADES: f64 = 0.3;
/// The probes of one spec differ from each other by a few dB, so the level limit alone cannot
/// tell them apart: a calibration whose |level| exceeds this (half the level limit) is also
/// refused when another probe of the spec fits the data with less than half its misfit.
pub const SIBLING_LEVEL_DB: f64 = 3.0;
/// Attenuator values a bench usually holds, dB (common practice, no source): a fitted
/// attenuation within [`PAD_MATCH_DB`] of one is the more likely explanation of a level offset.
pub const USUAL_PADS_DB: [f64; 6] = [3.0, 6.0, 10.0, 20.0, 30.0, 40.0];
/// How close a fitted attenuation must be to a usual pad to count as one, dB.
pub const PAD_MATCH_DB: f64 = 1.5;

/// The difference measured − predicted over a band, summarised.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Shape {
    /// Median difference, dB.
    pub level_db: f64,
    /// Least-squares slope, dB per decade (None: the band spans less than
    /// [`MIN_SLOPE_SPAN_DECADES`] or holds fewer than 3 points).
    pub slope_db_per_decade: Option<f64>,
    /// Largest distance from the fitted line (or from the level when no slope), dB.
    pub ripple_db: f64,
    /// Largest |difference|, dB.
    pub largest_db: f64,
    /// Points in the band.
    pub points: usize,
    /// Band edges, Hz.
    pub f_lo: f64,
    /// Upper band edge, Hz.
    pub f_hi: f64,
}

/// The shape of `(Hz, dB)` points; None when there are none.
pub fn shape(points: &[(f64, f64)]) -> Option<Shape> {
    if points.is_empty() {
        return None;
    }
    let mut d: Vec<f64> = points.iter().map(|p| p.1).collect();
    d.sort_by(|a, b| a.total_cmp(b));
    let n = d.len();
    let level = if n % 2 == 1 {
        d[n / 2]
    } else {
        0.5 * (d[n / 2 - 1] + d[n / 2])
    };
    let x: Vec<f64> = points.iter().map(|p| p.0.log10()).collect();
    let (x_lo, x_hi) = x
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let largest = points.iter().fold(0.0f64, |m, p| m.max(p.1.abs()));
    let (slope, ripple) = if n >= 3 && x_hi - x_lo >= MIN_SLOPE_SPAN_DECADES {
        let xm = x.iter().sum::<f64>() / n as f64;
        let ym = points.iter().map(|p| p.1).sum::<f64>() / n as f64;
        let sxy: f64 = x
            .iter()
            .zip(points)
            .map(|(x, p)| (x - xm) * (p.1 - ym))
            .sum();
        let sxx: f64 = x.iter().map(|x| (x - xm).powi(2)).sum();
        let b = sxy / sxx;
        let r = x
            .iter()
            .zip(points)
            .fold(0.0f64, |m, (x, p)| m.max((p.1 - ym - b * (x - xm)).abs()));
        (Some(b), r)
    } else {
        (
            None,
            points
                .iter()
                .fold(0.0f64, |m, p| m.max((p.1 - level).abs())),
        )
    };
    Some(Shape {
        level_db: level,
        slope_db_per_decade: slope,
        ripple_db: ripple,
        largest_db: largest,
        points: n,
        f_lo: points.iter().map(|p| p.0).fold(f64::INFINITY, f64::min),
        f_hi: points.iter().map(|p| p.0).fold(0.0, f64::max),
    })
}

impl Shape {
    /// The largest of |level|, |slope| and ripple, each divided by its limit: at most 1 passes.
    pub fn misfit(&self) -> f64 {
        let s = self.slope_db_per_decade.unwrap_or(0.0).abs() / SLOPE_LIMIT_DB_PER_DECADE;
        (self.level_db.abs() / LEVEL_LIMIT_DB)
            .max(s)
            .max(self.ripple_db / RIPPLE_LIMIT_DB)
    }

    /// Within every limit.
    pub fn passes(&self) -> bool {
        self.misfit() <= 1.0
    }

    /// The limits it exceeds, as text.
    pub fn failures(&self) -> Vec<String> {
        let mut o = Vec::new();
        if self.level_db.abs() > LEVEL_LIMIT_DB {
            o.push(format!(
                "level {:+.2} dB (limit ±{LEVEL_LIMIT_DB} dB)",
                self.level_db
            ));
        }
        if let Some(s) = self.slope_db_per_decade
            && s.abs() > SLOPE_LIMIT_DB_PER_DECADE
        {
            o.push(format!(
                "slope {s:+.2} dB/decade (limit ±{SLOPE_LIMIT_DB_PER_DECADE} dB/decade)"
            ));
        }
        if self.ripple_db > RIPPLE_LIMIT_DB {
            o.push(format!(
                "ripple {:.2} dB (limit {RIPPLE_LIMIT_DB} dB)",
                self.ripple_db
            ));
        }
        o
    }

    /// One line: level, slope, ripple, band.
    pub fn summary(&self) -> String {
        let slope = match self.slope_db_per_decade {
            Some(s) => format!("slope {s:+.2} dB/decade"),
            None => "slope not fitted (band under 0.3 decade)".into(),
        };
        format!(
            "level {:+.2} dB, {slope}, ripple {:.2} dB, largest {:.2} dB over {} points from {} \
             to {}",
            self.level_db,
            self.ripple_db,
            self.largest_db,
            self.points,
            crate::math::hz_label(self.f_lo),
            crate::math::hz_label(self.f_hi)
        )
    }
}

/// The gate's limits as one phrase.
pub fn limits_text() -> String {
    format!(
        "|level| ≤ {LEVEL_LIMIT_DB} dB, |slope| ≤ {SLOPE_LIMIT_DB_PER_DECADE} dB/decade, ripple ≤ \
         {RIPPLE_LIMIT_DB} dB"
    )
}

/// A single cause the diagnosis tests.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cause {
    /// The option line names the wrong frequency unit.
    Unit,
    /// The transmission read is not the probe's (ports named wrong, or probe and load swapped).
    Ports,
    /// The data belong to another probe of the spec.
    Probe,
    /// An attenuator was left in the path.
    Attenuator,
    /// The probe stood at another height.
    Height,
    /// A cable's loss (rising as √f) was not de-embedded.
    CableLoss,
}

impl Cause {
    /// Its short name.
    pub fn name(self) -> &'static str {
        match self {
            Cause::Unit => "frequency unit",
            Cause::Ports => "ports",
            Cause::Probe => "probe",
            Cause::Attenuator => "attenuator",
            Cause::Height => "height",
            Cause::CableLoss => "cable loss",
        }
    }
}

/// One tested cause: what it changes and how the data then look.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// The cause.
    pub cause: Cause,
    /// What would have to be true, as text.
    pub detail: String,
    /// The gate's view of the data with that change.
    pub shape: Shape,
    /// Order among equally good fits (lower first): the more usual mistake first.
    prior: u8,
}

impl Finding {
    /// Explains the data: the changed data pass the gate.
    pub fn explains(&self) -> bool {
        self.shape.passes()
    }
}

/// One probe of the spec the data might belong to.
#[derive(Debug, Clone, Copy)]
pub struct Candidate<'a> {
    /// The probe.
    pub probe: &'a Probe,
    /// Its solved values.
    pub solved: &'a SolvedProbe,
    /// Its response.
    pub response: &'a Response,
}

/// Everything a calibration rests on, to be re-run with one thing changed.
pub struct Bench<'a> {
    /// The spec's probes.
    pub family: Vec<Candidate<'a>>,
    /// The one named.
    pub chosen: usize,
    /// The line as the model sees it (its port impedance the file's reference).
    pub line: TestLine,
    /// The measured network.
    pub net: &'a Network,
    /// (line port, probe port) as named.
    pub ports: (usize, usize),
    /// Stated tip height, mm.
    pub height_mm: f64,
    /// The line current under the probe per V_inc/R_ref at a frequency (Hz): 1 on a uniform
    /// matched line.
    pub current: &'a dyn Fn(f64) -> f64,
}

/// A change to try.
struct Trial<'b> {
    probe: usize,
    height_mm: f64,
    scale: f64,
    ports: (usize, usize),
    loss_db: &'b dyn Fn(f64) -> f64,
}

impl Bench<'_> {
    /// Measured − predicted probe factor over the band, with one change: frequencies scaled,
    /// another probe, height or port pair, and `loss_db(f)` taken out of the measured |S|.
    fn diffs(&self, t: &Trial) -> Vec<(f64, f64)> {
        let c = &self.family[t.probe];
        let coupling = probe_coupling(c.probe, c.solved, c.response, t.height_mm, &self.line);
        let s = self.net.param(t.ports.1, t.ports.0);
        let mut out = Vec::new();
        for (k, &f0) in self.net.freqs.iter().enumerate() {
            let f = f0 * t.scale;
            if !(super::calibrate::F_RANGE.0..=c.response.upper_hz).contains(&f) {
                continue;
            }
            let mag = s[k].0.hypot(s[k].1);
            if !(mag > 0.0 && mag.is_finite()) {
                continue;
            }
            let mag = mag * 10f64.powf((t.loss_db)(f) / 20.0);
            let pf = pf_from_s21(
                mag,
                coupling.h_avg_per_amp * (self.current)(f),
                self.net.r_ref,
            ) + line_to_uniform_db(c.response, f);
            let pred = crate::physics::probe_factor_at(c.probe, c.solved, c.response, f);
            out.push((f, pf - pred));
        }
        out
    }

    fn stated(&self) -> Trial<'static> {
        Trial {
            probe: self.chosen,
            height_mm: self.height_mm,
            scale: 1.0,
            ports: self.ports,
            loss_db: &|_| 0.0,
        }
    }

    /// The gate's view of the data as stated.
    pub fn shape(&self) -> Option<Shape> {
        shape(&self.diffs(&self.stated()))
    }

    /// The data against every other probe of the spec, at the stated height.
    pub fn probe_findings(&self) -> Vec<Finding> {
        let mut out = Vec::new();
        for (k, c) in self.family.iter().enumerate() {
            if k == self.chosen {
                continue;
            }
            let t = Trial {
                probe: k,
                ..self.stated()
            };
            if let Some(s) = shape(&self.diffs(&t)) {
                out.push(Finding {
                    cause: Cause::Probe,
                    detail: format!(
                        "the data are {}'s, not {}'s",
                        c.probe.name, self.family[self.chosen].probe.name
                    ),
                    shape: s,
                    prior: 2,
                });
            }
        }
        out.sort_by(|a, b| a.shape.misfit().total_cmp(&b.shape.misfit()));
        out
    }

    /// Tests each single cause; returns every finding, those that explain the data first, best
    /// fit first.
    pub fn diagnose(&self) -> Vec<Finding> {
        let mut out = Vec::new();
        let stated = self.diffs(&self.stated());
        let base = shape(&stated);
        // The frequency unit, off by powers of 10³.
        for e in [-3i32, -2, -1, 1, 2, 3] {
            let scale = 1e3f64.powi(e);
            let t = Trial {
                scale,
                ..self.stated()
            };
            if let Some(s) = shape(&self.diffs(&t)) {
                let unit = self.net.unit_hz * scale;
                let name = unit_name(unit);
                out.push(Finding {
                    cause: Cause::Unit,
                    detail: format!(
                        "the frequencies are {name}, not {}: the file's option line names the \
                         wrong unit (frequencies ×{scale:e})",
                        unit_name(self.net.unit_hz)
                    ),
                    shape: s,
                    prior: 0,
                });
            }
        }
        // The ports: another pair of a multi-port file, or the line's own through path.
        let (lp, pp) = self.ports;
        let mut pairs = Vec::new();
        for a in 1..=self.net.ports {
            for b in 1..=self.net.ports {
                if a == b || (a, b) == (lp, pp) || (b, a) == (lp, pp) || pairs.contains(&(b, a)) {
                    continue;
                }
                pairs.push((a, b));
            }
        }
        // Keeping the named line port first, then the named probe port.
        pairs.sort_by_key(|&(a, b)| (a != lp, b != pp));
        for (a, b) in pairs {
            let t = Trial {
                ports: (a, b),
                ..self.stated()
            };
            if let Some(s) = shape(&self.diffs(&t)) {
                out.push(Finding {
                    cause: Cause::Ports,
                    detail: format!(
                        "the probe's transmission is S{b}{a}: --line-port {a} --probe-port {b}, \
                         not S{pp}{lp}"
                    ),
                    shape: s,
                    prior: 1,
                });
            }
        }
        let s = self.net.param(pp, lp);
        let through: Vec<(f64, f64)> = stated
            .iter()
            .filter_map(|&(f, _)| {
                let k = self.net.freqs.iter().position(|&g| g == f)?;
                Some((f, 20.0 * s[k].0.hypot(s[k].1).log10()))
            })
            .collect();
        if let Some(s) = shape(&through) {
            out.push(Finding {
                cause: Cause::Ports,
                detail: format!(
                    "S{pp}{lp} is a line's through path (0 dB expected; it reads {:+.2} dB), not \
                     the probe's: the probe and the line's far-end load are swapped, or the \
                     ports name the line's two ends",
                    s.level_db
                ),
                shape: s,
                prior: 1,
            });
        }
        out.extend(self.probe_findings());
        // A forgotten attenuator: a flat loss, so a positive level.
        if let Some(base) = base
            && base.level_db > 0.0
        {
            let n = base.level_db;
            let loss = move |_: f64| n;
            let t = Trial {
                loss_db: &loss,
                ..self.stated()
            };
            if let Some(s) = shape(&self.diffs(&t)) {
                let pad = USUAL_PADS_DB
                    .iter()
                    .copied()
                    .find(|p| (p - n).abs() <= PAD_MATCH_DB);
                out.push(Finding {
                    cause: Cause::Attenuator,
                    detail: match pad {
                        Some(p) => format!(
                            "an attenuator of {n:.1} dB was left between the probe and the VNA \
                             (a {p} dB pad?)"
                        ),
                        None => format!(
                            "an attenuation of {n:.1} dB was left in the path (not a usual pad \
                             value)"
                        ),
                    },
                    shape: s,
                    prior: if pad.is_some() { 3 } else { 6 },
                });
            }
        }
        // The height: the one that levels the data (the level falls as the height rises).
        let level_at = |h: f64| {
            let t = Trial {
                height_mm: h,
                ..self.stated()
            };
            shape(&self.diffs(&t)).map(|s| s.level_db)
        };
        if let (Some(l0), Some(l1)) = (level_at(0.0), level_at(100.0)) {
            let h = if l0 <= 0.0 {
                0.0
            } else if l1 >= 0.0 {
                100.0
            } else {
                let (mut a, mut b) = (0.0, 100.0);
                for _ in 0..50 {
                    let m = 0.5 * (a + b);
                    match level_at(m) {
                        Some(l) if l > 0.0 => a = m,
                        _ => b = m,
                    }
                }
                0.5 * (a + b)
            };
            let t = Trial {
                height_mm: h,
                ..self.stated()
            };
            if let Some(s) = shape(&self.diffs(&t)) {
                out.push(Finding {
                    cause: Cause::Height,
                    detail: format!(
                        "the probe's tip stood {h:.2} mm above the line, not {} mm",
                        self.height_mm
                    ),
                    shape: s,
                    prior: 4,
                });
            }
        }
        // A cable's loss, k·√(f/1 GHz) dB, fitted by least squares.
        let sq = |f: f64| (f / 1e9).sqrt();
        let (num, den) = stated.iter().fold((0.0, 0.0), |(n, d), &(f, v)| {
            (n + v * sq(f), d + sq(f) * sq(f))
        });
        if den > 0.0 && num > 0.0 {
            let k = num / den;
            let loss = move |f: f64| k * sq(f);
            let t = Trial {
                loss_db: &loss,
                ..self.stated()
            };
            if let Some(s) = shape(&self.diffs(&t)) {
                out.push(Finding {
                    cause: Cause::CableLoss,
                    detail: format!(
                        "a cable's loss of {k:.2} dB at 1 GHz (rising as √f) was not taken out"
                    ),
                    shape: s,
                    prior: 5,
                });
            }
        }
        out.sort_by_key(|x| {
            (
                !x.explains(),
                (x.shape.misfit() * 20.0).round() as i64,
                x.prior,
            )
        });
        out
    }
}

/// The gate's outcome for one calibration.
#[derive(Debug, Clone, PartialEq)]
pub struct Verdict {
    /// The data as stated, over the band (None: no measured point lies in it).
    pub shape: Option<Shape>,
    /// Another probe of the spec that fits the data markedly better (see [`SIBLING_LEVEL_DB`]).
    pub better_probe: Option<Finding>,
    /// `--accept-deviation`, when it was given and the data needed it, dB.
    pub accepted_db: Option<f64>,
    /// The single causes tested, best fit first (empty when the gate passed).
    pub findings: Vec<Finding>,
}

impl Verdict {
    /// Within every limit.
    pub fn passed(&self) -> bool {
        self.shape.is_some_and(|s| s.passes()) && self.better_probe.is_none()
    }

    /// Builds the verdict on `shape` from the other probes' findings (best first).
    pub fn new(shape: Option<Shape>, probes: &[Finding]) -> Verdict {
        let better_probe = match (shape, probes.first()) {
            (Some(s), Some(f))
                if s.level_db.abs() > SIBLING_LEVEL_DB
                    && f.explains()
                    && f.shape.misfit() < 0.5 * s.misfit() =>
            {
                Some(f.clone())
            }
            _ => None,
        };
        Verdict {
            shape,
            better_probe,
            accepted_db: None,
            findings: Vec::new(),
        }
    }

    /// The gate's result in a few lines (notes, CSV comments, the command's output).
    pub fn lines(&self) -> Vec<String> {
        let mut o = Vec::new();
        match (&self.shape, self.passed()) {
            (Some(s), true) => o.push(format!(
                "plausibility gate passed: {} (limits {})",
                s.summary(),
                limits_text()
            )),
            (Some(s), false) => {
                let mut why = s.failures();
                if let Some(b) = &self.better_probe {
                    why.push(format!(
                        "level beyond ±{SIBLING_LEVEL_DB} dB and another probe of the spec fits \
                         with less than half the misfit: {}",
                        b.detail
                    ));
                }
                o.push(format!(
                    "plausibility gate FAILED ({}): {} (limits {})",
                    why.join("; "),
                    s.summary(),
                    limits_text()
                ))
            }
            (None, _) => o.push(
                "plausibility gate FAILED: no measured point lies at or below the probe's upper \
                 usable frequency"
                    .into(),
            ),
        }
        if let Some(a) = self.accepted_db {
            o.push(format!(
                "written anyway: --accept-deviation {a} dB accepts a largest |measured − \
                 predicted| of up to {a} dB; this factor disagrees with the model beyond its \
                 limits and its use is the user's responsibility"
            ));
        }
        o.extend(self.diagnosis());
        o
    }

    /// The diagnosis as lines: the causes that explain the data, or the closest ones.
    pub fn diagnosis(&self) -> Vec<String> {
        let mut o = Vec::new();
        if self.findings.is_empty() {
            return o;
        }
        let fits: Vec<&Finding> = self.findings.iter().filter(|f| f.explains()).collect();
        let (head, list): (&str, Vec<&Finding>) = if fits.is_empty() {
            (
                "no single cause tested explains the data; the closest:",
                self.findings.iter().take(3).collect(),
            )
        } else {
            ("single causes that explain the data, best fit first:", fits)
        };
        o.push(head.to_string());
        for (k, f) in list.iter().enumerate() {
            o.push(format!(
                "  {}. {}: {} (then {})",
                k + 1,
                f.cause.name(),
                f.detail,
                f.shape.summary()
            ));
        }
        o
    }
}

/// The name of a frequency unit, Hz.
fn unit_name(u: f64) -> String {
    [(1.0, "Hz"), (1e3, "kHz"), (1e6, "MHz"), (1e9, "GHz")]
        .iter()
        .find(|(v, _)| *v == u)
        .map(|(_, n)| n.to_string())
        .unwrap_or_else(|| format!("{u:e} Hz"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shape_of_a_straight_line_is_its_slope_with_no_ripple() {
        // 2 dB per decade from 1 MHz to 1 GHz around a 1 dB level.
        let p: Vec<(f64, f64)> = (0..31)
            .map(|i| {
                let x = 6.0 + i as f64 / 10.0;
                (10f64.powf(x), 1.0 + 2.0 * (x - 7.5))
            })
            .collect();
        let s = shape(&p).unwrap();
        assert!((s.level_db - 1.0).abs() < 1e-12);
        assert!((s.slope_db_per_decade.unwrap() - 2.0).abs() < 1e-12);
        assert!(s.ripple_db < 1e-12);
        assert!(s.passes());
        // A 7 dB level or a 4 dB/decade slope fails.
        let q: Vec<(f64, f64)> = p.iter().map(|&(f, v)| (f, v + 6.0)).collect();
        assert!(!shape(&q).unwrap().passes());
        let q: Vec<(f64, f64)> = p.iter().map(|&(f, v)| (f, 2.0 * v - 2.0)).collect();
        let s = shape(&q).unwrap();
        assert!((s.slope_db_per_decade.unwrap() - 4.0).abs() < 1e-12);
        assert!(!s.passes() && s.failures()[0].contains("slope"));
    }

    #[test]
    fn a_narrow_band_is_judged_without_a_slope() {
        let p = [(1e8, 0.0), (1.1e8, 1.0), (1.2e8, 2.0)];
        let s = shape(&p).unwrap();
        assert_eq!(s.slope_db_per_decade, None);
        assert_eq!(s.level_db, 1.0);
        assert_eq!(s.ripple_db, 1.0);
        assert!(shape(&[]).is_none());
    }
}
