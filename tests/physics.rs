//! Response predictions against outside references.
//!
//! Reference values: `tests/data/physics_refs.toml`, produced by
//! `python3 tests/reference/physics_refs.py > tests/data/physics_refs.toml` (numpy, scipy; the
//! exact expression for each value is in its `call`): Maxwell's coaxial-filament formula with
//! `scipy.special.ellipk/ellipe`, regularised Neumann integrals of a square with
//! `scipy.integrate.dblquad`, line-to-loop flux integrals with `dblquad`, and −6 dB widths of
//! the scanned flux with `quad` and `scipy.optimize.brentq`.

use loopwright::model::probe::LoopShape;
use loopwright::physics::*;
use toml::Value;

fn refs() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/physics_refs.toml"
    ))
    .unwrap();
    toml::from_str(&text).unwrap()
}

fn f(e: &Value, k: &str) -> f64 {
    e[k].as_float().unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

// μ0 here is CODATA 2022; the references use 4π·1e-7 (1e-10 apart).
#[test]
fn maxwell_coaxial_filaments_match_scipy() {
    for e in refs()["maxwell"].as_array().unwrap() {
        let (r, d) = (f(e, "r_mm") * 1e-3, f(e, "d_mm") * 1e-3);
        let m = maxwell_coaxial(r, r, d) * 1e9;
        assert!(rel(m, f(e, "m_nh")) < 1e-8, "{e:?}: {m}");
    }
}

// The regularised Neumann integral of a circle is Maxwell's formula one GMD apart, exactly;
// numerically to 0.05 % with our discretisation.
#[test]
fn neumann_of_a_circle_is_maxwell() {
    for (r_mm, g_mm) in [(5.0, 0.25), (10.0, 0.85), (2.5, 0.85)] {
        let shape = LoopShape::Round {
            diameter: 2.0 * r_mm,
        };
        let pts: Vec<(f64, f64)> = loopwright::geom::shape::closed(&shape, 0.0)
            .iter()
            .map(|q| (q.x * 1e-3, q.y * 1e-3))
            .collect();
        let n = neumann_loop(&pts, g_mm * 1e-3);
        let m = maxwell_coaxial(r_mm * 1e-3, r_mm * 1e-3, g_mm * 1e-3);
        assert!(rel(n, m) < 5e-4, "r {r_mm} g {g_mm}: {n} vs {m}");
    }
}

#[test]
fn neumann_of_a_square_matches_scipy_dblquad() {
    for e in refs()["neumann_square"].as_array().unwrap() {
        let (s, g) = (f(e, "side_mm") * 1e-3, f(e, "g_mm") * 1e-3);
        let pts = [(0.0, 0.0), (s, 0.0), (s, s), (0.0, s)];
        let l = neumann_loop(&pts, g) * 1e9;
        assert!(rel(l, f(e, "l_nh")) < 1e-3, "{e:?}: {l}");
    }
}

// Rosa/Grover (formulas from memory in our notes, checked here against Maxwell's exact
// thin-torus value): within 0.4 % for a/R ≤ 0.1. Grover's rectangle: the notes' value for a
// square of side 8.862 mm, wire radius 0.25 mm, surface current is 19.81 nH; the regularised
// Neumann integral of that square is within 1.5 % of it (a different conductor model).
#[test]
fn rosa_grover_formulas() {
    for (r, a) in [
        (5e-3, 0.1e-3),
        (10e-3, 0.25e-3),
        (2.5e-3, 0.1e-3),
        (10e-3, 1e-3),
    ] {
        let exact = maxwell_coaxial(r, r, a);
        assert!(rel(rosa_ring(r, a, false), exact) < 0.004, "{r} {a}");
    }
    let s = 8.862e-3;
    let gr = grover_rectangle(s, s, 0.25e-3) * 1e9;
    assert!((gr - 19.81).abs() < 0.006, "{gr}");
    let sq = refs()["neumann_square"][0]["l_nh"].as_float().unwrap();
    assert!(rel(sq, gr) < 0.015, "{sq} vs {gr}");
}

// Image-theory flux through a circle over a line: the closed form and our quadrature against
// scipy's dblquad.
#[test]
fn line_to_loop_mutual_inductance() {
    for e in refs()["mutual_circle_line"].as_array().unwrap() {
        let (r, zc, h) = (
            f(e, "r_mm") * 1e-3,
            f(e, "zc_mm") * 1e-3,
            f(e, "h_mm") * 1e-3,
        );
        let want = f(e, "m_ph");
        let closed = mutual_circle_line(r, zc, h) * 1e12;
        assert!(rel(closed, want) < 1e-6, "{e:?}: {closed}");
        let shape = LoopShape::Round {
            diameter: 2.0 * r * 1e3,
        };
        let quad = MU0 * flux_per_amp(&shape, 0.0, zc - r, h) * 1e12;
        assert!(rel(quad, want) < 1e-4, "{e:?}: {quad}");
    }
}

#[test]
fn scan_resolution_matches_scipy() {
    for e in refs()["resolution_circle"].as_array().unwrap() {
        let (r, bottom, h) = (f(e, "r_mm"), f(e, "bottom_mm") * 1e-3, f(e, "h_mm") * 1e-3);
        let shape = LoopShape::Round { diameter: 2.0 * r };
        let p0 = flux_per_amp(&shape, 0.0, bottom, h);
        let x6 = loopwright::solve::roots::brent(
            |x| flux_per_amp(&shape, x, bottom, h) - 0.5 * p0,
            1e-9,
            0.1,
            1e-12,
        )
        .unwrap();
        assert!(
            rel(2.0 * x6 * 1e3, f(e, "fw6_mm")) < 1e-4,
            "{e:?}: {}",
            2e3 * x6
        );
    }
}

// Our notes' worked value (unshielded 10 mm loop, L = Rosa with a = 0.25 mm, 50 Ω, 100 MHz):
// 24.40 dB(S/m), i.e. |R + jωL|/(ωμ0·A·R).
#[test]
fn probe_factor_formula() {
    let l = rosa_ring(5e-3, 0.25e-3, false);
    let w = 2.0 * std::f64::consts::PI * 100e6;
    let a = std::f64::consts::PI * 25e-6;
    let t = w * MU0 * a * 50.0 / (50.0f64.powi(2) + (w * l).powi(2)).sqrt();
    assert!((pf_db(t) - 24.40).abs() < 0.006, "{}", pf_db(t));
}

fn demo_predictions(o: &PredictOptions) -> Vec<loopwright::physics::predicted::Predicted> {
    let spec: loopwright::spec::probe::ProbeFileSpec =
        toml::from_str(loopwright::cli::DEMO_SPEC).unwrap();
    loopwright::pipeline::predict::predict_spec(&spec, std::path::Path::new("."), o).unwrap()
}

// Facts of the trade (common practice): a bigger loop is more sensitive (lower probe factor)
// and resolves more coarsely; well below the corner the output rises 20 dB per decade and
// four times the area gives 12 dB more; the corner is 50 Ω/(2πL).
#[test]
fn the_size_trade_off_and_low_frequency_laws() {
    let all = demo_predictions(&PredictOptions::default());
    let by = |n: &str| all.iter().find(|x| x.probe.name == n).unwrap();
    let (big, mid, small) = (by("FM-R20"), by("FM-R10"), by("FM-R5"));
    for (a, b) in [(big, mid), (mid, small)] {
        assert!(
            a.response.as_loop().unwrap().resolution_m > b.response.as_loop().unwrap().resolution_m
        );
        let pa = probe_factor_at(&a.probe, &a.solved, a.response.as_loop().unwrap(), 10e6);
        let pb = probe_factor_at(&b.probe, &b.solved, b.response.as_loop().unwrap(), 10e6);
        assert!(pa < pb, "bigger loop must need less factor: {pa} vs {pb}");
        // Far below both corners the output scales with the (effective) area: 4× the area,
        // 12.04 dB. The shield's current crowding makes the small loop's effective area less
        // than a quarter of the big one's, so the step exceeds 12 dB.
        let f = 1e5;
        let d = probe_factor_at(&b.probe, &b.solved, b.response.as_loop().unwrap(), f)
            - probe_factor_at(&a.probe, &a.solved, a.response.as_loop().unwrap(), f);
        // (The areas in a uniform field: the loop's own and the handle's share.)
        let want = 20.0
            * (a.response.as_loop().unwrap().area_uniform_m2()
                / b.response.as_loop().unwrap().area_uniform_m2())
            .log10();
        // (0.05 dB: the two feed runs differ in length, and so in their small DC loss.)
        assert!((d - want).abs() < 0.05, "{d} vs {want}");
        assert!(d > 20.0 * 4f64.log10(), "{d}");
    }
    // The loops (the demo's electric probe has its own laws, tests/electrode.rs).
    for (x, r) in all
        .iter()
        .filter_map(|x| x.response.as_loop().map(|r| (x, r)))
    {
        let f = r.corner_hz / 1000.0;
        let slope = probe_factor_at(&x.probe, &x.solved, r, f)
            - probe_factor_at(&x.probe, &x.solved, r, 10.0 * f);
        assert!((slope - 20.0).abs() < 0.01, "{slope}");
        // R_L over the loop's inductance, a balanced loop's two loads 2·R_L.
        let loads = if r.balanced.is_some() { 2.0 } else { 1.0 };
        assert!(
            (r.corner_hz - loads * 50.0 / (2.0 * std::f64::consts::PI * r.l_total)).abs() < 1e-6
        );
        // The default table spans the emission-scan bands from 150 kHz (CISPR 16-1-1 band B's
        // lower edge, from memory) to the upper usable frequency.
        let (f0, _) = r.probe_factor[0];
        let (f1, _) = *r.probe_factor.last().unwrap();
        assert!((f0 / 150e3 - 1.0).abs() < 1e-9 && (f1 / r.upper_hz - 1.0).abs() < 1e-9);
    }
}

#[test]
fn bad_prediction_inputs_are_refused() {
    let spec: loopwright::spec::probe::ProbeFileSpec =
        toml::from_str(loopwright::cli::DEMO_SPEC).unwrap();
    let run = |o: PredictOptions| {
        loopwright::pipeline::predict::predict_spec(&spec, std::path::Path::new("."), &o)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default()
    };
    let d = PredictOptions::default;
    let e = run(PredictOptions {
        height_mm: -1.0,
        ..d()
    });
    assert!(e.contains("--height = -1") && e.contains("from 0"), "{e}");
    let e = run(PredictOptions {
        f_min_hz: Some(1e9),
        f_max_hz: Some(1e6),
        ..d()
    });
    assert!(e.contains("--f-max") && e.contains("empty"), "{e}");
    let e = run(PredictOptions {
        f_min_hz: Some(-5.0),
        ..d()
    });
    assert!(e.contains("--f-min = -5"), "{e}");
}
