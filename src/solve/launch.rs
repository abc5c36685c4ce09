//! The probe's connector launch, solved: the connector's centre pad with its top-layer gap and
//! the ground relief under it, and the short top-layer link from the pad to the signal via.
//!
//! The centre pad's width is the connector's, so its impedance is set by what lies around it:
//! the gap to the top-layer ground and how deep the ground beneath it is relieved (a cut-out
//! in the copper layers under the pad, so that the pad is referenced to a plane further
//! down). Each relief depth, shallowest first, is tried: the first where a gap between the
//! fab's smallest space and the ground pads' inner edge reaches the target wins, and the gap
//! is solved there by the 2-D field solver. When no depth reaches the target, the nearest
//! (depth, gap) is taken and its impedance reported; the launch budget
//! (`physics::launch`) then shows what that mismatch costs.
//!
//! The link is grounded CPW over layer 2 with the probe's clearance; its width comes from
//! the conformal-mapping closed form (Ghione & Naldi) where that is inside its validity and
//! the field solver agrees with it to 1 %, and from the field solver otherwise (on the demo's
//! 1.6 mm build the closed form's 0.361 mm is 47.2 Ω by the field solver, 5.6 % apart):
//! never another width.

use crate::error::{Error, FieldError};
use crate::field::{Boundary, Conductor, CrossSection, Dielectric};
use crate::model::probe::Probe;
use crate::model::probe::WidthFrom;
use crate::model::stackup::Stackup;
use crate::solve::impedance::{
    Accuracy, Method, SolveLimits, Structure, analyse_with, solve_width,
};
use crate::solve::network::{Budget, Section, budget, coax_z0};
use crate::solve::probe::{SIGNAL_RING_MARGIN, SolvedProbe, VIA_WEB};
use std::f64::consts::PI;

/// The solved launch.
#[derive(Debug, Clone, PartialEq)]
pub struct SolvedLaunch {
    /// Gap from the centre pad to the top-layer ground, mm.
    pub pad_gap: f64,
    /// Copper layers relieved under the centre pad (0: none; 1: layer 2; 2: layers 2 and 3…).
    pub relief_depth: usize,
    /// The pad's Z0 as laid out, Ω (field solution).
    pub pad_z0: f64,
    /// The pad's effective permittivity.
    pub pad_eps_eff: f64,
    /// Top-layer link width, mm.
    pub link_width: f64,
    /// Its Z0, Ω.
    pub link_z0: f64,
    /// Its effective permittivity.
    pub link_eps_eff: f64,
    /// What solved the link.
    pub link_method: Method,
    /// Antipad diameter of the signal via on layer 1 and down to the loop's layer, mm: the via
    /// pad or the wider line end, plus the clearance on each side.
    pub antipad_d: f64,
    /// Antipad diameter on the copper layers between layer 1 and the loop's layer, around the
    /// via's barrel, mm: sized so that the barrel is a coaxial line of the target Z0 in its
    /// dielectrics (common practice for a controlled-impedance via), never below `antipad_d`
    /// and never so large that the ring of ground vias would stand beyond the stitching limit.
    pub barrel_antipad_d: f64,
    /// The same below the loop's layer, around the via's stub (open at the bottom land).
    pub stub_antipad_d: f64,
    /// Worst |S11| of the launch up to f_max, dB, and where (Hz).
    pub worst_s11: (f64, f64),
    /// Length of the link beyond the centre pad's inner end to the signal via's centre, mm:
    /// the clearance, half a via pad and 0.3 mm (our construction rule: the via's antipad
    /// stays clear of the pad).
    pub link_length: f64,
}

impl SolvedLaunch {
    /// The copper layers relieved under the centre pad (2, 3, …).
    pub fn relieved_layers(&self) -> std::ops::RangeInclusive<usize> {
        2..=1 + self.relief_depth
    }
}

/// The centre pad's cross-section: the pad on layer 1 with the top-layer ground `gap` from it
/// out to the handle's copper edge, layers 2…1+depth relieved `gap` beyond the pad's edges,
/// referenced to layer 2+depth (a plane across the handle), board edges at the handle's
/// edges, air above (the pad is bare: no mask). Copper layers inside the stack are layers of
/// the dielectric above them.
pub fn pad_cross_section(p: &Probe, gap: f64, depth: usize) -> CrossSection {
    let st: &Stackup = &p.stackup;
    let wp = p.connector.centre_pad_width;
    let half = p.handle.width / 2.0 - p.fab.copper_to_edge;
    let reference = 2 + depth;
    // Heights from the reference layer's top face up: walk from layer 1 down.
    let mut layers_top_down: Vec<Dielectric> = Vec::new();
    let mut relieved_at: Vec<(f64, f64)> = Vec::new(); // (depth from L1's bottom, thickness)
    let mut d = 0.0;
    for n in 1..reference {
        let diel = st.dielectric_below(n).expect("validated stackup");
        layers_top_down.push(Dielectric::new(diel.thickness_mm, diel.er));
        d += diel.thickness_mm;
        if n + 1 < reference {
            let t = st.copper(n + 1).map(|c| c.thickness_mm).unwrap_or(0.0);
            if t > 0.0 {
                layers_top_down.push(Dielectric::new(t, diel.er));
            }
            relieved_at.push((d, t));
            d += t;
        }
    }
    let top = d;
    let layers: Vec<Dielectric> = layers_top_down.into_iter().rev().collect();
    let t1 = st.copper(1).map(|c| c.thickness_mm).unwrap_or(0.0);
    let [left, right] = Conductor::coplanar_pair(0.0, top, wp, gap, half - wp / 2.0 - gap, t1);
    let mut conductors = vec![
        Conductor::finite_plane(-half, half, 0.0, 0.0),
        Conductor::trace(0.0, top, wp, t1, 0.0),
        left,
        right,
    ];
    let r = wp / 2.0 + gap;
    for (below_top, t) in relieved_at {
        let y = top - below_top - t;
        conductors.push(Conductor::ground(-half, -r, y, y + t));
        conductors.push(Conductor::ground(r, half, y, y + t));
    }
    CrossSection {
        layers,
        board: Some([-p.handle.width / 2.0, p.handle.width / 2.0]),
        conductors,
        coat: None,
        fences: vec![],
        boundary: Boundary::Open,
    }
}

/// The smallest and largest gap around the centre pad: the fab's smallest space, and the
/// ground pads' inner edge (the ground pads are part of the top-layer ground).
pub fn pad_gap_range(p: &Probe) -> (f64, f64) {
    let c = &p.connector;
    let g_max = c.ground_pad_offset - c.ground_pad_width / 2.0 - c.centre_pad_width / 2.0;
    (p.fab.min_space, g_max.max(p.fab.min_space))
}

/// Solves the launch of a probe whose loop trace is `trace_width` mm wide, whose handle
/// line is `z_line` Ω and whose stitching limit is `pitch_max` mm.
pub fn solve(
    p: &Probe,
    trace_width: f64,
    z_line: f64,
    pitch_max: f64,
) -> Result<SolvedLaunch, Error> {
    // The probes of a family share their launch: solve each distinct one once per process.
    // The key is every input the solve reads, exactly (floats by their bits).
    static CACHE: std::sync::Mutex<Vec<(String, SolvedLaunch)>> = std::sync::Mutex::new(Vec::new());
    let key = format!(
        "{}|{}|{}|{}|{}|{}|{}|{}|{}",
        pad_key(p),
        p.clearance.to_bits(),
        p.signal_layer,
        p.vias.drill.to_bits(),
        p.vias.pad.to_bits(),
        p.vias.f_max_hz.to_bits(),
        trace_width.to_bits(),
        z_line.to_bits(),
        pitch_max.to_bits()
    );
    if let Ok(c) = CACHE.lock()
        && let Some((_, l)) = c.iter().find(|(k, _)| *k == key)
    {
        return Ok(l.clone());
    }
    let l = solve_uncached(p, trace_width, z_line, pitch_max)?;
    if let Ok(mut c) = CACHE.lock() {
        if c.len() >= 64 {
            c.remove(0);
        }
        c.push((key, l.clone()));
    }
    Ok(l)
}

/// The pad gap's tolerance in ln g (0.1 %; the gap is rounded to a µm).
const GAP_XTOL: f64 = 1e-3;
/// The rough search's tolerance in ln g (1 %): its root only starts the full solution's polish,
/// and the rough solution's own root is several per cent off the full one's (10 % on the demo's
/// pad), so a finer tolerance buys nothing but rough solutions.
const ROUGH_XTOL: f64 = 1e-2;

/// A length rounded to a µm, as the artwork draws the pad's gap.
fn round_um(mm: f64) -> f64 {
    (mm * 1e3).round() / 1e3
}

/// Secant steps for the root of `f` (Z − target, rising with the gap) on the µm grid the gap is
/// rounded to, within `[g_lo, g_hi]`, from ln g = `x` with the `slope` of a rough solution (in
/// ln g): done when a step lands on a gap already solved (the root's rounding, whose solution
/// is then kept), usually the second. `None` when it has not landed in five.
fn gap_on_grid(
    mut f: impl FnMut(f64) -> Result<f64, Error>,
    x: f64,
    slope: f64,
    (g_lo, g_hi): (f64, f64),
) -> Result<Option<f64>, Error> {
    let on_grid = |x: f64| round_um(x.exp().clamp(g_lo, g_hi));
    let mut tried: Vec<(f64, f64)> = Vec::new(); // (gap, f)
    let (mut g, mut s) = (on_grid(x), slope);
    for _ in 0..5 {
        if tried.iter().any(|t| t.0 == g) {
            return Ok(Some(g));
        }
        let fg = f(g)?;
        if let Some(&(gp, fp)) = tried.last() {
            let secant = (fg - fp) / (g.ln() - gp.ln());
            if secant.is_finite() && secant > 0.0 {
                s = secant;
            }
        }
        tried.push((g, fg));
        g = on_grid(g.ln() - fg / s);
    }
    Ok(None)
}

/// The centre pad's relief depth and gap (rounded to a µm) for the probe's target, and the
/// pad's Z0 and εeff there: the shallowest relief whose gap range brackets the target, else the
/// closest end of any.
fn solve_pad(p: &Probe, acc: Accuracy) -> Result<(usize, f64, f64, f64), Error> {
    let target = p.target_z0;
    let field_err = |what: &str, e: Error| {
        Error::Invalid(vec![FieldError::new(
            "connector",
            format!(
                "centre pad {} × {} mm",
                p.connector.centre_pad_width, p.connector.centre_pad_length
            ),
            format!("the field solution of the {what} failed: {e}"),
        )])
    };
    let z = |g: f64, depth: usize| -> Result<(f64, f64), Error> {
        crate::field::solve(&pad_cross_section(p, g, depth), acc)
            .map(|s| (s.z0_ohms, s.eps_eff))
            .map_err(|e| field_err("connector's centre pad", e))
    };
    // The search runs on the rough field solution (`field::rough_z0`, a small fraction of the
    // work); the gap it finds is then polished on the full solution by secant steps on the µm
    // grid that start with the rough slope, usually two solutions, the second of them the
    // rounded gap's own; should they not settle, the search runs again on the full solution.
    // Where the rough solution fails (a coarser mesh of the same section), the full one stands
    // in for it.
    // Each rough solution starts from the one before (`field::rough_z0_warm`: the search's
    // later gaps keep the mesh's shape), and each is made once (the slope at the rough root
    // asks for the root's again).
    let chain = std::cell::RefCell::new((
        crate::field::Warm::default(),
        Vec::<((u64, usize), f64)>::new(),
    ));
    let rough = |g: f64, depth: usize| -> Result<f64, Error> {
        let key = (g.to_bits(), depth);
        if let Some(&(_, v)) = chain.borrow().1.iter().find(|(k, _)| *k == key) {
            return Ok(v);
        }
        let made = {
            let mut c = chain.borrow_mut();
            crate::field::rough_z0_warm(&pad_cross_section(p, g, depth), &mut c.0)
        };
        let v = made.or_else(|_| z(g, depth).map(|s| s.0))?;
        chain.borrow_mut().1.push((key, v));
        Ok(v)
    };
    let (g_lo, g_hi) = pad_gap_range(p);
    let (x_lo, x_hi) = (g_lo.ln(), g_hi.ln());
    let search = |z_of: &dyn Fn(f64) -> Result<f64, Error>, xtol: f64| -> Result<f64, Error> {
        // Z rises with the gap, close to linearly in ln g: Brent's method in ln g finds the
        // gap in three to five field solutions (the ends are kept solutions) where bisection
        // took ten. The gap is wanted to `xtol` in ln g: 0.1 % on the full solution, well below
        // the µm it is rounded to; 1 % on the rough one, whose root only starts the polish.
        let mut failed = None;
        // The bracket's ends map back to the very gaps solved before (kept solutions).
        let gap_at = |x: f64| match x {
            _ if x == x_lo => g_lo,
            _ if x == x_hi => g_hi,
            _ => x.exp(),
        };
        let root = crate::solve::roots::brent(
            |x| match z_of(gap_at(x)) {
                Ok(zz) => zz - target,
                Err(e) => {
                    failed.get_or_insert(e);
                    f64::NAN
                }
            },
            x_lo,
            x_hi,
            xtol,
        );
        if let Some(e) = failed {
            return Err(e);
        }
        let x = root.map_err(|e| {
            field_err(
                "connector's centre pad",
                Error::Unsolvable(format!("the pad gap search failed: {e:?}")),
            )
        })?;
        Ok(gap_at(x))
    };
    // Deepest relief: the reference must be a copper layer.
    let max_depth = p.stackup.copper_count().saturating_sub(2);
    let mut best: Option<(f64, usize, f64)> = None; // (|Z − target| at an end, depth, gap)
    let mut polished: Vec<(f64, usize, (f64, f64))> = Vec::new(); // (gap, depth, (Z0, εeff))
    let mut chosen = None;
    for depth in 0..=max_depth {
        // The bracket's ends: rough, but full where the rough value is within 5 % of the target
        // (the rough solution is a few per cent off, so only the full one may decide a bracket
        // that close).
        let end = |g: f64| -> Result<f64, Error> {
            let zr = rough(g, depth)?;
            if (zr / target - 1.0).abs() < 0.05 {
                Ok(z(g, depth)?.0)
            } else {
                Ok(zr)
            }
        };
        // Z rises with the gap: when the widest gap is still below the target, nothing at
        // this depth brackets it and the narrowest is further off (not solved).
        let z_hi = end(g_hi)?;
        let z_lo = if z_hi < target {
            f64::NEG_INFINITY
        } else {
            end(g_lo)?
        };
        for (g, zz) in [(g_lo, z_lo), (g_hi, z_hi)] {
            let miss = (zz - target).abs();
            if best.is_none_or(|b| miss < b.0) {
                best = Some((miss, depth, g));
            }
        }
        if z_lo <= target && target <= z_hi {
            // The rough search between those ends, and the rough slope at its root, in ln g
            // (one more rough solution); any failure, or a slope that is not positive (Z rises
            // with the gap), leaves the search to the full solution.
            let rough_root = search(
                &|g| match g {
                    _ if g == g_lo => Ok(z_lo),
                    _ if g == g_hi => Ok(z_hi),
                    _ => rough(g, depth),
                },
                ROUGH_XTOL,
            )
            .and_then(|g| {
                let x = g.ln();
                let h = if x + 0.02 <= x_hi { 0.02 } else { -0.02 };
                let slope = (rough((x + h).exp(), depth)? - rough(g, depth)?) / h;
                Ok((x, slope))
            })
            .ok()
            .filter(|(_, slope)| slope.is_finite() && *slope > 0.0);
            // The polish's solutions each start from the one before (`field::solve_warm`: a
            // third to a tenth of the iterations) and are kept here, for the gap it lands on.
            let mut warm = crate::field::Warm::default();
            let landed = match rough_root {
                Some((x, slope)) => gap_on_grid(
                    |g| {
                        let s = crate::field::solve_warm(
                            &pad_cross_section(p, g, depth),
                            acc,
                            &mut warm,
                        )
                        .map_err(|e| field_err("connector's centre pad", e))?;
                        polished.push((g, depth, (s.z0_ohms, s.eps_eff)));
                        Ok(s.z0_ohms - target)
                    },
                    x,
                    slope,
                    (g_lo, g_hi),
                )?,
                None => None,
            };
            let g = match landed {
                Some(g) => g,
                None => search(&|g| z(g, depth).map(|(zz, _)| zz), GAP_XTOL)?,
            };
            chosen = Some((depth, g));
            break;
        }
    }
    let (relief_depth, pad_gap) = match chosen {
        Some(c) => c,
        None => {
            let (_, d, g) = best.expect("at least one depth is tried");
            (d, g)
        }
    };
    // Round the gap to a µm, as the artwork will. Its Z0 and εeff are the polish's own
    // solution where the polish solved that gap (also when the full search, after a polish that
    // did not settle, rounds onto one of its gaps): a fixed function of this search's inputs.
    let pad_gap = round_um(pad_gap);
    let (pad_z0, pad_eps_eff) = match polished
        .iter()
        .find(|(g, d, _)| *g == pad_gap && *d == relief_depth)
    {
        Some(&(_, _, s)) => s,
        None => z(pad_gap, relief_depth)?,
    };
    Ok((relief_depth, pad_gap, pad_z0, pad_eps_eff))
}

/// Every input of the pad's search ([`solve_pad`] and [`pad_cross_section`]), exactly (floats by
/// their bits, Debug's shortest round trip within the stackup, connector and fab).
fn pad_key(p: &Probe) -> String {
    format!(
        "{:?}|{:?}|{:?}|{}|{}",
        p.stackup,
        p.connector,
        p.fab,
        p.handle.width.to_bits(),
        p.target_z0.to_bits(),
    )
}

/// [`solve_pad`], kept for the process: launches that differ only in what the pad does not see
/// (the loop trace's width, the handle line's impedance, the stitching limit) share the pad's
/// search, whose polish keeps its solutions itself (`field::solve_warm`). The key is every
/// input the search reads, exactly (floats by their bits).
fn kept_pad(p: &Probe, acc: Accuracy) -> Result<(usize, f64, f64, f64), Error> {
    type Pad = (usize, f64, f64, f64);
    static KEPT: std::sync::OnceLock<crate::field::Cells<Pad>> = std::sync::OnceLock::new();
    let key = format!("{}|{acc:?}", pad_key(p));
    crate::field::kept_in(KEPT.get_or_init(Default::default), 64, key, || {
        solve_pad(p, acc)
    })
}

fn solve_uncached(
    p: &Probe,
    trace_width: f64,
    z_line: f64,
    pitch_max: f64,
) -> Result<SolvedLaunch, Error> {
    let target = p.target_z0;
    let acc = Accuracy::default();
    let (relief_depth, pad_gap, pad_z0, pad_eps_eff) = kept_pad(p, acc)?;

    let template = p
        .stackup
        .line_for_layer(1, Structure::Cpwg, 1.0, Some(p.clearance))?;
    let limits = SolveLimits {
        min_trace_mm: p.fab.min_trace,
        accuracy: acc,
        ..Default::default()
    };
    let link_err = |e: Error| {
        Error::Invalid(vec![FieldError::new(
            "target_z0_ohms",
            p.target_z0,
            format!(
                "the top-layer link (grounded CPW on layer 1, clearance {} mm) cannot be solved \
                 for it: {e}",
                p.clearance
            ),
        )])
    };
    // The closed form where it is valid and the field solution agrees with it to the probe's
    // own threshold (`WidthFrom::AUTO_THRESHOLD`); the field solver otherwise.
    let closed = solve_width(&template, None, target, &limits).ok();
    let agrees = closed.as_ref().is_some_and(|(l, s)| {
        analyse_with(l, Some(Method::Field), acc)
            .is_ok_and(|f| (f.z0 / s.z0 - 1.0).abs() <= WidthFrom::AUTO_THRESHOLD)
    });
    let (line, sol) = match closed {
        Some(x) if agrees => x,
        _ => solve_width(&template, Some(Method::Field), target, &limits).map_err(link_err)?,
    };
    let link_width = line.width();
    let antipad_d = p.vias.pad.max(trace_width).max(link_width) + 2.0 * p.clearance;
    // The barrel's and the stub's antipads: a coaxial line of the target Z0, within what the
    // ring allows (its radius must stay within the stitching limit λ/N of the signal via).
    let d_max = 2.0 * (pitch_max - p.vias.pad / 2.0 - VIA_WEB - SIGNAL_RING_MARGIN);
    let ((_, er_up), (_, er_down)) = via_stretches(p, p.signal_layer);
    let coax_d = |er: f64| {
        let d = p.vias.drill * (target * er.sqrt() / (crate::math::ETA0 / (2.0 * PI))).exp();
        d.min(d_max).max(antipad_d)
    };
    let mut launch = SolvedLaunch {
        pad_gap,
        relief_depth,
        pad_z0,
        pad_eps_eff,
        link_width,
        link_z0: sol.z0,
        link_eps_eff: sol.eps_eff,
        link_method: sol.method,
        antipad_d,
        barrel_antipad_d: coax_d(er_up),
        stub_antipad_d: coax_d(er_down),
        worst_s11: (f64::NAN, f64::NAN),
        link_length: p.clearance + p.vias.pad / 2.0 + 0.3,
    };
    let b = budget_of(p, &launch, z_line);
    launch.worst_s11 = (b.worst_db, b.worst_hz);
    Ok(launch)
}

/// Heights in the stack, mm: (layer 1's top face to the middle of copper layer `n`, and from
/// there to the bottom face), with the thickness-weighted mean εr of the dielectrics on each
/// stretch.
fn via_stretches(p: &Probe, n: usize) -> ((f64, f64), (f64, f64)) {
    let st = &p.stackup;
    let count = st.copper_count();
    let mut above = (0.0, 0.0); // (length, Σ er·h)
    let mut below = (0.0, 0.0);
    for k in 1..=count {
        let t = st.copper(k).map(|c| c.thickness_mm).unwrap_or(0.0);
        let er_near = st
            .dielectric_below(k.min(count - 1))
            .map(|d| d.er)
            .unwrap_or(1.0);
        let acc = |x: &mut (f64, f64), h: f64| {
            x.0 += h;
            x.1 += er_near * h;
        };
        if k < n {
            acc(&mut above, t);
        } else if k == n {
            acc(&mut above, t / 2.0);
            acc(&mut below, t / 2.0);
        } else {
            acc(&mut below, t);
        }
        if let Some(d) = st.dielectric_below(k) {
            let x = if k < n { &mut above } else { &mut below };
            x.0 += d.thickness_mm;
            x.1 += d.er * d.thickness_mm;
        }
    }
    let mean = |x: (f64, f64)| (x.0, if x.0 > 0.0 { x.1 / x.0 } else { 1.0 });
    (mean(above), mean(below))
}

/// The launch's sections, connector side first: the centre pad, the link, the signal via
/// down to the loop's layer (coaxial, in its antipad) and the via's stub below it (an open
/// shunt stub in the stub antipad).
pub fn sections(p: &Probe, l: &SolvedLaunch) -> Vec<Section> {
    let ((h_up, er_up), (h_down, er_down)) = via_stretches(p, p.signal_layer);
    let mut v = vec![
        Section::Line {
            z0: l.pad_z0,
            eps_eff: l.pad_eps_eff,
            len_m: p.connector.centre_pad_length * 1e-3,
        },
        Section::Line {
            z0: l.link_z0,
            eps_eff: l.link_eps_eff,
            len_m: l.link_length * 1e-3,
        },
        Section::Line {
            // With no plane between layer 1 and the loop's layer the barrel sees the smaller
            // antipad of those two layers.
            z0: coax_z0(
                p.vias.drill,
                if p.signal_layer > 2 {
                    l.barrel_antipad_d
                } else {
                    l.antipad_d
                },
                er_up,
            ),
            eps_eff: er_up,
            len_m: h_up * 1e-3,
        },
    ];
    if h_down > 0.0 {
        v.push(Section::OpenStub {
            z0: coax_z0(p.vias.drill, l.stub_antipad_d, er_down),
            eps_eff: er_down,
            len_m: h_down * 1e-3,
        });
    }
    v
}

/// Points per decade of the launch's return-loss scan.
pub const PER_DECADE: f64 = 50.0;

/// The launch's |S11| (50 Ω at the connector, `z_line` beyond the via) from 10 MHz (or
/// f_max/10) to the probe's f_max.
pub fn budget_of(p: &Probe, l: &SolvedLaunch, z_line: f64) -> Budget {
    let f_max = p.vias.f_max_hz;
    let lo = 10e6_f64.min(f_max / 10.0);
    let n = (((f_max / lo).log10() * PER_DECADE).ceil() as usize).max(2);
    budget(&sections(p, l), R_REF, z_line, lo, f_max, n)
}

/// The connector's reference impedance, Ω.
const R_REF: f64 = 50.0;

/// The probe's launch sections and the load beyond them (the handle line's Z0, Ω).
pub fn probe_sections(p: &Probe, s: &SolvedProbe) -> (Vec<Section>, f64) {
    (sections(p, &s.launch), s.handle_z0.unwrap_or(s.solution.z0))
}

/// Radius of the ring of ground vias around the signal via: the larger antipad, a ground
/// via's pad, a web and a margin, mm.
pub fn signal_ring_radius(p: &Probe, l: &SolvedLaunch) -> f64 {
    l.antipad_d.max(l.barrel_antipad_d).max(l.stub_antipad_d) / 2.0
        + p.vias.pad / 2.0
        + VIA_WEB
        + SIGNAL_RING_MARGIN
}
