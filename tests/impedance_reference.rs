//! The impedance engine against outside references.
//!
//! Reference values live in `tests/data/impedance_refs.toml`, produced by
//! `python3 tests/reference/impedance_refs.py > tests/data/impedance_refs.toml` with
//! python 3.11.7, numpy 2.4.6, scipy 1.17.1 and scikit-rf 2.2.0. Every entry carries the
//! exact Python call (`call = "..."`) that produced its value; the file header records the
//! versions. The sources:
//! - `cohn`: Cohn 1954 exact stripline, K via `scipy.special.ellipkm1` (cross-checked in the
//!   script against `scipy.special.ellipk(k*k)/ellipk(kp*kp)`);
//! - `hj_microstrip`: scikit-rf `skrf.media.MLine(model='hammerstadjensen', disp='none')`;
//! - `skrf_gcpw`: scikit-rf `skrf.media.CPW(has_metal_backside=True, compatibility_mode='ads')`;
//! - `wheeler78`, `ipc_*`, `offset_parallel`: the published equations evaluated in Python
//!   (worked values of the same formulas).

use loopwright::solve::impedance::*;
mod common;

use common::{f, impedance_refs as refs, rel, section, stripline};

// Cohn's exact solution (scipy.special.ellipkm1, call in each entry): same formula, so
// agreement to 1e-9 (far inside the 0.1 % the engine promises).
#[test]
fn cohn_matches_scipy_elliptic_integrals() {
    for e in section(&refs(), "cohn") {
        let (w, b, er) = (f(&e, "w_mm"), f(&e, "b_mm"), f(&e, "er"));
        let z = cohn_centred(w, b, er);
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}: {z}");
        // Through the public analysis path too (centred, t = 0 → Cohn by default).
        let sol = analyse(&stripline(w, b / 2.0, b / 2.0, 0.0, er), None).unwrap();
        assert_eq!(sol.method, Method::Cohn);
        assert!(rel(sol.z0, f(&e, "z0_ohms")) < 1e-9);
        assert!(sol.warnings.is_empty(), "{:?}", sol.warnings);
    }
}

// Wheeler 1978 as given by Wadell must be within 1 % of Cohn's exact result at t = 0
// (its stated accuracy is about 0.5 %, from memory of the paper).
#[test]
fn wheeler_within_one_percent_of_cohn_at_zero_thickness() {
    for e in section(&refs(), "cohn") {
        let (w, b, er) = (f(&e, "w_mm"), f(&e, "b_mm"), f(&e, "er"));
        let zw = wheeler_centred(w, b, 0.0, er);
        assert!(rel(zw, f(&e, "z0_ohms")) < 0.01, "w/b {}: {zw}", w / b);
    }
}

// Wheeler 1978 worked values (the published equation evaluated in Python).
#[test]
fn wheeler_matches_worked_values() {
    for e in section(&refs(), "wheeler78") {
        let z = wheeler_centred(f(&e, "w_mm"), f(&e, "b_mm"), f(&e, "t_mm"), f(&e, "er"));
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}: {z}");
    }
}

// IPC-2141 equations: worked values of the same equations.
#[test]
fn ipc_equations_match_worked_values() {
    let r = refs();
    for e in section(&r, "ipc_stripline") {
        let z = ipc_symmetric(f(&e, "w_mm"), f(&e, "b_mm"), f(&e, "t_mm"), f(&e, "er"));
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}");
    }
    for e in section(&r, "ipc_microstrip") {
        let z = ipc_microstrip(f(&e, "w_mm"), f(&e, "h_mm"), f(&e, "t_mm"), f(&e, "er"));
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}");
    }
    for e in section(&r, "ipc_embedded") {
        let (z, _) = ipc_embedded(f(&e, "w"), f(&e, "h"), f(&e, "h1"), f(&e, "t"), f(&e, "er"));
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}");
    }
    for e in section(&r, "ipc_asym") {
        let z = ipc_asymmetric(
            f(&e, "w_mm"),
            f(&e, "h1_mm"),
            f(&e, "h2_mm"),
            f(&e, "t_mm"),
            f(&e, "er"),
        );
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}");
    }
    // The two embedded-microstrip check values printed in the notes to 3-5 digits.
    assert!((ipc_embedded(7.0, 4.0, 6.4, 1.2, 4.0).0 - 39.42).abs() < 0.005);
    assert!((ipc_embedded(5.1, 4.45, 6.0, 1.5, 3.8).0 - 51.363).abs() < 0.0005);
}

// scikit-rf MLine (Hammerstad–Jensen, disp='none'): same formula, Z0 and εeff to 1e-9.
#[test]
fn hammerstad_jensen_matches_scikit_rf() {
    let entries = section(&refs(), "hj_microstrip");
    assert!(entries.len() >= 60);
    for e in entries {
        let (w, h, t, er) = (f(&e, "w_mm"), f(&e, "h_mm"), f(&e, "t_mm"), f(&e, "er"));
        let (z, ee) = hammerstad_jensen(w, h, t, er);
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-9, "{e:?}: {z}");
        assert!(rel(ee, f(&e, "eps_eff")) < 1e-9, "{e:?}: {ee}");
    }
}

// scikit-rf CPW(has_metal_backside=True): scikit-rf uses Hilberg's approximation of
// K/K′ (about 2 ppm), we use the exact AGM, so agreement is to 1e-5 (well inside 0.1 %).
#[test]
fn grounded_cpw_matches_scikit_rf() {
    for e in section(&refs(), "skrf_gcpw") {
        let (z, ee) = ghione_naldi(
            f(&e, "w_mm"),
            f(&e, "s_mm"),
            f(&e, "h_mm"),
            f(&e, "t_mm"),
            f(&e, "er"),
        );
        assert!(rel(z, f(&e, "z0_ohms")) < 1e-5, "{e:?}: {z}");
        assert!(rel(ee, f(&e, "eps_eff")) < 1e-5, "{e:?}: {ee}");
    }
}

// Offset stripline by parallel combination (Cohn/Wadell), worked values of the equation with
// Cohn or Wheeler halves.
#[test]
fn offset_parallel_combination_matches_worked_values() {
    for e in section(&refs(), "offset_parallel") {
        let (w, h1, h2, t, er) = (
            f(&e, "w_mm"),
            f(&e, "h1_mm"),
            f(&e, "h2_mm"),
            f(&e, "t_mm"),
            f(&e, "er"),
        );
        let method = match e["halves"].as_str().unwrap() {
            "cohn" => Method::Cohn,
            _ => Method::Wheeler,
        };
        let sol = analyse(&stripline(w, h1, h2, t, er), Some(method)).unwrap();
        assert!(rel(sol.z0, f(&e, "z0_ohms")) < 1e-9, "{e:?}: {}", sol.z0);
        // Mirrored (h1 ↔ h2) is the same line.
        let m = analyse(&stripline(w, h2, h1, t, er), Some(method)).unwrap();
        assert!(rel(m.z0, sol.z0) < 1e-12);
    }
}

// IPC-2141 symmetric stripline, stated accuracy (IPC-2251 working draft as quoted on a public
// page; εr = 4, t/H ≈ 1.37/15): within 1 % of a field solution for 0.08 < w/(b−t) < 0.32 and
// within 2 % up to 0.35. Our reference is Wheeler 1978 (itself within about 0.5 %), so the
// bands are widened by 0.5 %. Outside the range the result is flagged.
#[test]
fn ipc_stripline_within_published_accuracy_and_flagged_outside() {
    let (hh, t, er) = (15.0, 1.37, 4.0);
    let b = 2.0 * hh + t;
    for i in 0..=40 {
        let r = 0.08 + (0.35 - 0.08) * i as f64 / 40.0;
        let w = r * (b - t);
        let sol = analyse(&stripline(w, hh, hh, t, er), Some(Method::Ipc2141)).unwrap();
        let err = rel(sol.z0, wheeler_centred(w, b, t, er));
        let band = if r < 0.32 { 0.015 } else { 0.025 };
        assert!(err < band, "w/(b−t) = {r}: {err}");
        if r < 0.349 {
            assert!(!sol.outside_validity(), "{:?}", sol.warnings);
        }
    }
    let wide = analyse(
        &stripline(0.5 * (b - t), hh, hh, t, er),
        Some(Method::Ipc2141),
    )
    .unwrap();
    assert!(wide.outside_validity());
    assert!(wide.warnings[0].text.contains("w/(b−t)"));
}

// IPC-2141 microstrip: no stated accuracy is published; our notes compare it with
// Hammerstad–Jensen at −2.4 % … +2.2 % inside 0.1 < w/h < 2 (εr = 4.3). Check that band
// (3 %) and the flag outside the range.
#[test]
fn ipc_microstrip_near_hammerstad_jensen_inside_range_and_flagged_outside() {
    for i in 0..=20 {
        let u = 0.15 + (1.95 - 0.15) * i as f64 / 20.0;
        let m = Line::Microstrip(Microstrip {
            width: u,
            h: 1.0,
            t: 0.0,
            er: 4.3,
        });
        let ipc = analyse(&m, Some(Method::Ipc2141)).unwrap();
        let hj = analyse(&m, None).unwrap();
        assert!(rel(ipc.z0, hj.z0) < 0.03, "w/h {u}");
        assert!(!ipc.outside_validity());
    }
    let m = Line::Microstrip(Microstrip {
        width: 5.0,
        h: 1.0,
        t: 0.0,
        er: 4.3,
    });
    let ipc = analyse(&m, Some(Method::Ipc2141)).unwrap();
    assert!(ipc.outside_validity());
    assert!(ipc.z0.is_finite());
}

// Coated microstrip: our notes' 2-D finite-difference study (t = 0, εr = 4.3, mask over
// strip and substrate; converged to < 0.01 %) gives the change in Z0 from an εm = 3.5 mask:
// w/h = 1.9: −1.3 %, −2.1 %, −3.3 % at c/h = 0.05, 0.1, 0.2; w/h = 0.5: −2.7 %, −4.4 %,
// −6.6 %. The cover blend claims 1.6 percentage points over c/h ≤ 0.2.
#[test]
fn cover_blend_within_stated_band_of_field_study() {
    let fd = [
        (1.9, 0.05, -1.3),
        (1.9, 0.1, -2.1),
        (1.9, 0.2, -3.3),
        (0.5, 0.05, -2.7),
        (0.5, 0.1, -4.4),
        (0.5, 0.2, -6.6),
    ];
    for (u, c, pct) in fd {
        let bare = Microstrip {
            width: u,
            h: 1.0,
            t: 0.0,
            er: 4.3,
        };
        let z0 = analyse(&Line::Microstrip(bare), None).unwrap().z0;
        let coated = Line::CoatedMicrostrip(CoatedMicrostrip {
            line: bare,
            mask_t: c,
            mask_er: 3.5,
        });
        let zc = analyse(&coated, None).unwrap();
        let change = (zc.z0 / z0 - 1.0) * 100.0;
        assert!(
            (change - pct).abs() <= 1.6,
            "w/h {u} c/h {c}: {change} vs {pct}"
        );
        assert!(!zc.outside_validity());
    }
}

// Trade fact (common practice): a 50 Ω microstrip on FR-4 (εr ≈ 4.3) is about twice as wide
// as its dielectric is thick (w/h ≈ 1.9), and a 50 Ω centred stripline is narrower than b/2.
#[test]
fn trade_rules_of_thumb() {
    let m = Line::Microstrip(Microstrip {
        width: 1.0,
        h: 1.0,
        t: 0.0,
        er: 4.3,
    });
    let (l, _) = solve_width(&m, None, 50.0, &SolveLimits::default()).unwrap();
    assert!((l.width() - 1.9).abs() < 0.1, "{}", l.width());
    let s = stripline(1.0, 0.5, 0.5, 0.0, 4.3);
    let (l, _) = solve_width(&s, None, 50.0, &SolveLimits::default()).unwrap();
    assert!(l.width() < 0.5 && l.width() > 0.3, "{}", l.width());
}
