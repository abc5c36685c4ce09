//! The coupling of a probe to a test line, and the probe factor recovered from S21, against
//! outside references.
//!
//! Reference values: `tests/data/coupling_refs.toml`, produced by
//! `python3 tests/reference/coupling_refs.py > tests/data/coupling_refs.toml` (numpy, scipy,
//! scikit-rf; each value's exact expression is in its `call`):
//! - the line's field by numerical Biot–Savart integration (`scipy.integrate.quad` over the
//!   filament and its image, `dblquad` over the current sheet and its image);
//! - the line-to-loop mutual inductance by `dblquad` of the sheet field over the loop's disc;
//! - `tests/data/calib_skrf.s2p`, written by scikit-rf's `Network.write_touchstone` from a
//!   stated small-loop probe factor, and that probe factor.
//!
//! The image-theory closed forms are typed here as printed in the shared physics notes
//! (§4, "Field above a microstrip"; standard image theory).

mod common;

use common::{f, refs, rel, section};
use loopwright::calib::touchstone;
use loopwright::model::probe::LoopShape;
use loopwright::physics::coupling::{TestLine, couple, line_field, pf_from_s21};
use std::f64::consts::PI;

fn line(h_mm: f64, w_mm: f64) -> TestLine {
    TestLine {
        width: w_mm * 1e-3,
        h: h_mm * 1e-3,
        top: 0.0,
        r_port: 50.0,
    }
}

/// Absolute-or-relative closeness: relative to the larger magnitude, with a floor.
fn close(a: f64, b: f64, tol: f64, floor: f64) -> bool {
    (a - b).abs() <= tol * a.abs().max(b.abs()).max(floor)
}

#[test]
fn filament_field_matches_image_theory_and_biot_savart() {
    let r = refs("coupling_refs.toml");
    for e in section(&r, "filament") {
        let (x, z, h) = (
            f(&e, "x_mm") * 1e-3,
            f(&e, "z_mm") * 1e-3,
            f(&e, "h_mm") * 1e-3,
        );
        let (hx, hz) = line_field(x, z, &line(h * 1e3, 0.0));
        // Image theory, as printed in the notes.
        let hx_notes =
            (z / (x * x + z * z) - (z + 2.0 * h) / (x * x + (z + 2.0 * h).powi(2))) / (2.0 * PI);
        let hz_notes = -(x / (x * x + z * z) - x / (x * x + (z + 2.0 * h).powi(2))) / (2.0 * PI);
        assert!(close(hx, hx_notes, 1e-12, 1e-9), "{e:?}");
        assert!(close(hz, hz_notes, 1e-12, 1e-9), "{e:?}");
        // Numerical Biot–Savart (scipy quad).
        assert!(close(hx, f(&e, "hx"), 1e-7, 1.0), "Hx {hx} vs {e:?}");
        assert!(close(hz, f(&e, "hz"), 1e-7, 1.0), "Hz {hz} vs {e:?}");
    }
}

#[test]
fn sheet_field_matches_biot_savart_and_tends_to_the_filament() {
    let r = refs("coupling_refs.toml");
    for e in section(&r, "sheet") {
        let l = line(f(&e, "h_mm"), f(&e, "w_mm"));
        let (x, z) = (f(&e, "x_mm") * 1e-3, f(&e, "z_mm") * 1e-3);
        let (hx, hz) = line_field(x, z, &l);
        // Numerical Biot–Savart over the sheet (scipy dblquad).
        assert!(close(hx, f(&e, "hx"), 1e-6, 1.0), "Hx {hx} vs {e:?}");
        assert!(close(hz, f(&e, "hz"), 1e-6, 1.0), "Hz {hz} vs {e:?}");
    }
    // A very narrow sheet is the filament (to first order in (w/z)²).
    for (x, z, h) in [(0.0, 1e-3, 1.5e-3), (2e-3, 0.5e-3, 0.2e-3)] {
        let thin = TestLine {
            width: 1e-7,
            h,
            top: 0.0,
            r_port: 50.0,
        };
        let fil = TestLine { width: 0.0, ..thin };
        let (a, b) = (line_field(x, z, &thin), line_field(x, z, &fil));
        assert!(close(a.0, b.0, 1e-6, 1.0) && close(a.1, b.1, 1e-6, 1.0));
    }
    // Far from the line, width hardly matters; close to a wide line, the sheet reads lower
    // than the filament (its current is spread away from the axis).
    let wide = line(1.5, 2.9);
    let fil = line(1.5, 0.0);
    let db = |z: f64| 20.0 * (line_field(0.0, z, &wide).0 / line_field(0.0, z, &fil).0).log10();
    assert!(db(1e-3) < -1.0, "{}", db(1e-3));
    assert!(db(20e-3).abs() < 0.1, "{}", db(20e-3));
}

#[test]
fn mutual_inductance_matches_dblquad_over_the_loop() {
    let r = refs("coupling_refs.toml");
    for e in section(&r, "mutual_sheet_circle") {
        let rr = f(&e, "r_mm");
        let shape = LoopShape::Round { diameter: 2.0 * rr };
        let area = PI * (rr * 1e-3).powi(2);
        let l = line(f(&e, "h_mm"), f(&e, "w_mm"));
        let c = couple(&shape, area, 0.0, f(&e, "apex_mm") * 1e-3, &l);
        let m_ph = c.mutual * 1e12;
        // The notes' μ0 = 4π·1e-7 in the reference, CODATA 2022 here: 1e-10 apart.
        assert!(rel(m_ph, f(&e, "m_ph")) < 1e-5, "{m_ph} pH vs {e:?}");
        // The area-average field is M/(μ0·A) by definition.
        assert!(rel(c.h_avg_per_amp * loopwright::physics::MU0 * area, c.mutual) < 1e-12);
        // The filament model agrees with the closed form for a circle (shared notes §4).
        let zc = f(&e, "apex_mm") * 1e-3 + rr * 1e-3;
        let closed = loopwright::physics::mutual_circle_line(rr * 1e-3, zc, l.h);
        assert!(
            rel(c.mutual_filament, closed) < 1e-6,
            "{} vs {closed}",
            c.mutual_filament
        );
    }
}

#[test]
fn probe_factor_from_a_scikit_rf_touchstone_file_round_trips() {
    let r = refs("coupling_refs.toml");
    let cal = &r["calib_skrf"];
    let path = format!(
        "{}/{}",
        env!("CARGO_MANIFEST_DIR"),
        cal["file"].as_str().unwrap()
    );
    let text = std::fs::read_to_string(&path).unwrap();
    let net = touchstone::parse(&text, &path, 2).unwrap();
    let floats = |k: &str| -> Vec<f64> {
        cal[k]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_float().unwrap())
            .collect()
    };
    let (freqs, pf) = (floats("freq_hz"), floats("pf_db"));
    assert_eq!(net.freqs.len(), freqs.len());
    for (k, (&fr, &want)) in freqs.iter().zip(&pf).enumerate() {
        assert!(rel(net.freqs[k], fr) < 1e-12);
        let (re, im) = net.param(2, 1)[k];
        let got = pf_from_s21(re.hypot(im), f(cal, "h_per_amp"), f(cal, "r_port"));
        assert!(
            (got - want).abs() < 0.05,
            "{fr} Hz: {got} vs {want} dB(S/m)"
        );
        assert!(
            (got - want).abs() < 1e-6,
            "the file holds 15+ digits: {got} vs {want}"
        );
    }
}

#[test]
fn a_built_probe_couples_to_the_fixture_as_scipy_integrates_it() {
    use geo::{BooleanOps, BoundingRect};
    let r = refs("coupling_refs.toml");
    let e = &r["probe_on_fixture"];
    let name = e["probe"].as_str().unwrap();
    // The tip-to-apex distance, measured on the emitted files: from the outline's top edge to
    // the middle of the trace where it crosses the shield gap on the loop's layer (L3).
    let dir = common::demo_dir().join(name);
    let l2 = common::read_gerber(&dir.join(format!("{name}-L3.gbr")));
    let outline = common::read_gerber(&dir.join(format!("{name}-profile.gbr")));
    let top = outline
        .strokes
        .iter()
        .flat_map(|(pts, _)| pts.iter().map(|p| p.1))
        .fold(f64::NEG_INFINITY, f64::max);
    let crossing = common::copper(&l2, |_| true).intersection(&common::rect(-0.1, 0.0, 0.1, top));
    let b = crossing.bounding_rect().expect("the trace crosses the gap");
    let apex_y = 0.5 * (b.min().y + b.max().y);
    // The outline stands beyond the copper-to-edge rule by `EDGE_MARGIN` (2 µm), grown again
    // by the measured shortfall where arc flattening leaves one, so that the rule holds
    // exactly; the model's tip (and the recorded geometry) is the rule's. The files' tip lies
    // up to two margins further out.
    let margin = loopwright::geom::offsets::EDGE_MARGIN;
    let tip_to_apex = top - apex_y;
    let over = tip_to_apex - f(e, "tip_to_apex_mm");
    assert!(
        (-1e-3..=2.0 * margin + 1e-3).contains(&over),
        "{tip_to_apex} mm on the files vs {}",
        f(e, "tip_to_apex_mm")
    );
    // The coupling of that probe to the demo fixture's line, against scipy's dblquad at the
    // stated geometry.
    let (x, line) = common::demo_probe_and_line(name);
    let x = &x;
    assert!((line.h * 1e3 - f(e, "h_mm")).abs() < 1e-12);
    assert!((line.width * 1e3 - f(e, "w_mm")).abs() < 1e-12);
    // The reference integrates over the centreline's disc: `couple` is that centreline
    // filament; the built probe's own coupling (`probe_coupling`) sums the same integral over
    // its shield's current filaments, so it must share the apex and read lower (the current
    // crowds inwards, away from the line).
    let c = loopwright::physics::coupling::couple(
        &x.probe.shape,
        x.response.as_loop().unwrap().area_m2,
        loopwright::physics::tip_to_apex_m(&x.probe, &x.solved),
        f(e, "height_mm") * 1e-3,
        &line,
    );
    assert!(
        (c.apex_m * 1e3 - f(e, "apex_mm")).abs() < 1e-9,
        "{}",
        c.apex_m * 1e3
    );
    assert!(
        rel(c.mutual * 1e12, f(e, "m_ph")) < 1e-5,
        "{} pH",
        c.mutual * 1e12
    );
    let own = loopwright::physics::coupling::probe_coupling(
        &x.probe,
        &x.solved,
        x.response.as_loop().unwrap(),
        f(e, "height_mm"),
        &line,
    );
    assert!((own.apex_m - c.apex_m).abs() < 1e-12);
    assert!(own.mutual < c.mutual && own.mutual > 0.5 * c.mutual);
}
