//! The shield's outer current (`physics::shield`) against an independent computation.
//!
//! Reference: `tests/data/shield_refs.toml`, produced by
//! `nice -n 19 python3 tests/reference/shield_refs.py > tests/data/shield_refs.toml`
//! (numpy 2.4.6, scipy 1.17.1; the header lists the calls): a Nyström solution with the exact
//! thin-sheet edge singularity and Maxwell's ring formula (`scipy.special.ellipk`, `ellipe`,
//! `ellipkm1`), cross-checked there by a Galerkin solution to 1e-6. Our solver is a different
//! discretisation (edge-clustered ribbons, closed-form ribbon GMDs, Cholesky).

mod common;
use common::{f, refs, rel};
use loopwright::physics::shield::{Plate, RIBBONS_PER_PLATE, ln_gmd, solve_round};
use loopwright::physics::{MU0, maxwell_coaxial};

fn plates(case: &toml::Value) -> (f64, Vec<Plate>) {
    let r = f(case, "R_mm");
    let mut out = Vec::new();
    for p in case["plates"].as_array().unwrap() {
        let z = f(p, "z_mm") * 1e-3;
        for iv in p["intervals"].as_array().unwrap() {
            let iv = iv.as_array().unwrap();
            let (a, b) = (iv[0].as_float().unwrap(), iv[1].as_float().unwrap());
            out.push(Plate {
                z,
                d0: (a - r) * 1e-3,
                d1: (b - r) * 1e-3,
            });
        }
    }
    (r * 1e-3, out)
}

#[test]
fn outer_inductance_and_effective_area_match_the_independent_solution() {
    let cases = refs("shield_refs.toml")["case"].as_array().unwrap().clone();
    assert!(cases.len() >= 9);
    for c in &cases {
        let (r, pl) = plates(c);
        let s = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
        let (l, a) = (s.l_outer * 1e9, s.area_eff * 1e6);
        let (dl, da) = (rel(l, f(c, "L_nH")), rel(a, f(c, "A_eff_mm2")));
        eprintln!(
            "{}: L {l:.5} nH ({dl:.2e}), A_eff {a:.4} mm² ({da:.2e})",
            c["name"]
        );
        // The bar is 0.5 %; we hold 0.05 %.
        assert!(dl < 5e-4 && da < 5e-4, "{}: L {l} A {a}", c["name"]);
    }
}

#[test]
// Doubling the ribbons moves the hardest case (5 mm, the strongest crowding) by 2e-4: the
// default count holds the 0.05 % claimed in docs/response.md.
fn ribbon_count_is_converged() {
    let c = refs("shield_refs.toml")["case"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"].as_str() == Some("demo-D5"))
        .unwrap()
        .clone();
    let (r, pl) = plates(&c);
    let a = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
    let b = solve_round(r, &pl, 2 * RIBBONS_PER_PLATE).unwrap();
    assert!(
        rel(a.l_outer, b.l_outer) < 5e-4,
        "{} {}",
        a.l_outer,
        b.l_outer
    );
    assert!(rel(a.area_eff, b.area_eff) < 5e-4);
}

/// As the ring's width goes to zero the solution tends to the centreline forms: the
/// centreline's area, and the thin ring μ0R(ln(8R/a) − 2) with a thin strip's equivalent
/// radius a = w/4 (notes §1.3, from memory of the conformal-mapping result; the reference's
/// own strip cases confirm it to 1e-4 % at w/R = 0.002).
#[test]
fn thin_ring_tends_to_the_centreline_forms() {
    let r = 5e-3;
    let mut last = f64::INFINITY;
    for w in [1e-4, 1e-5, 1e-6] {
        let pl = [Plate {
            z: 0.0,
            d0: -w / 2.0,
            d1: w / 2.0,
        }];
        let s = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
        let thin = MU0 * r * ((8.0 * r / (w / 4.0)).ln() - 2.0);
        let area = std::f64::consts::PI * r * r;
        let (dl, da) = (rel(s.l_outer, thin), rel(s.area_eff, area));
        assert!(dl < 1e-3 && da < 1e-3, "w {w}: {dl} {da}");
        assert!(dl <= last + 1e-9);
        last = dl;
    }
}

/// The ribbons' closed-form log GMD against the textbook values: a strip with itself
/// ln(w) − 3/2 (Maxwell), and far-apart ribbons tend to their centre distance.
#[test]
fn ribbon_gmd_closed_form() {
    let w = 1e-3;
    assert!((ln_gmd(0.0, w, 0.0, w, 0.0) - (w.ln() - 1.5)).abs() < 1e-9);
    let far = ln_gmd(0.0, 1e-6, 1.0, 1.0 + 1e-6, 0.3);
    assert!((far - (1.0f64 + 0.09).sqrt().ln()).abs() < 1e-9);
    // Maxwell's formula is what the self term rests on: positive and finite.
    assert!(maxwell_coaxial(5e-3, 5e-3, w) > 0.0);
}

/// Our model's transimpedance for one NEC-2 case: (freq, dBΩ) over the case's frequencies, and
/// the model's corner and upper usable frequency. Round cases (`plates`: radii about R) use the
/// round shield solution; the rectangle (`rect_plates`: offsets from the centreline) the
/// non-round one (`shield::solve_shape`).
fn model_zt(c: &toml::Value, top: &toml::Value) -> (Vec<(f64, f64)>, f64, f64) {
    use loopwright::model::probe::LoopShape;
    use loopwright::physics::shield::solve_shape;
    use loopwright::physics::{flux_filaments, hx_line};
    let rect = c["variant"].as_str() == Some("rect_plates");
    let r = f(c, "R_mm");
    let pl = nec_plates(c);
    let (shape, sc) = if rect {
        let shape = LoopShape::Rect {
            width: f(c, "width_mm"),
            height: f(c, "height_mm"),
            corner_radius: f(c, "corner_radius_mm"),
            square: false,
        };
        let pts: Vec<(f64, f64)> = loopwright::model::centreline::closed(&shape, 0.0)
            .iter()
            .map(|q| (q.x * 1e-3, q.y * 1e-3))
            .collect();
        let (a, p) = (shape.centreline_area() * 1e-6, shape.circumference() * 1e-3);
        assert!(rel(p, f(c, "perimeter_mm") * 1e-3) < 1e-6, "{p}");
        let sc = solve_shape(a, p, &pts, &pl, RIBBONS_PER_PLATE).unwrap();
        (shape, sc)
    } else {
        let shape = LoopShape::Round { diameter: 2.0 * r };
        (
            shape,
            solve_round(r * 1e-3, &pl, RIBBONS_PER_PLATE).unwrap(),
        )
    };
    let fil = loopwright::physics::filaments(&sc, 8);
    let h = f(c, "h_line_mm") * 1e-3;
    let z0 = (f(c, "z_apex_mm") - f(c, "h_line_mm")) * 1e-3;
    let m = MU0 * flux_filaments(&shape, &fil, |x, z| hx_line(x, z, h), 0.0, z0);
    let l_outer = sc.l_outer;
    let eps = f(top, "eps_eff");
    let per = shape.circumference() * 1e-3;
    let l2 = per / 2.0;
    let c0 = 299_792_458.0;
    let l_stub = 50.0 * eps.sqrt() * l2 / c0;
    let corner = 50.0 / (2.0 * std::f64::consts::PI * (l_outer + l_stub));
    let upper = c0 / (10.0 * per);
    let zt = case_freqs(c)
        .into_iter()
        .map(|fr| {
            let w = 2.0 * std::f64::consts::PI * fr;
            let x = w * l_outer + 50.0 * (w * eps.sqrt() / c0 * l2).tan();
            (
                fr,
                20.0 * (50.0 * w * m / (50.0f64.powi(2) + x * x).sqrt()).log10(),
            )
        })
        .collect();
    (zt, corner, upper)
}

/// The NEC-2 case of that name.
fn nec_case(top: &toml::Value, name: &str) -> Option<toml::Value> {
    top["case"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"].as_str() == Some(name))
        .cloned()
}

/// A NEC-2 case's frequencies, Hz (written as integers or floats).
fn case_freqs(c: &toml::Value) -> Vec<f64> {
    c["freq_hz"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_float().or(v.as_integer().map(|i| i as f64)).unwrap())
        .collect()
}

/// NEC's Z_t of a case in dBΩ; for a loop with a ring-count study (cases `<name>_rings<N>`),
/// the value extrapolated to an infinitely fine grid. A uniform grid of rings stands for each
/// plate's sheet, whose current is singular at the edges; the edge rings sit half a spacing
/// inside, so the grid's error falls as 1/N (N rings per plate; our quasi-static emulation of
/// the same grids shows 1/N to a few per cent from N = 12 to 96). With N = 12 and 24:
/// Z∞ = 2·Z24 − Z12; the 16-ring run checks the order (its value predicted from the other two
/// within 0.1 dB).
fn nec_zt(top: &toml::Value, c: &toml::Value) -> Vec<f64> {
    let vals = |c: &toml::Value| -> Vec<f64> {
        c["zt_db_ohm"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_float().unwrap())
            .collect()
    };
    let name = c["name"].as_str().unwrap();
    let find = |n: usize| {
        top["case"]
            .as_array()
            .unwrap()
            .iter()
            .find(|x| x["name"].as_str() == Some(&format!("{name}_rings{n}")))
    };
    let (Some(c16), Some(c24)) = (find(16), find(24)) else {
        return vals(c);
    };
    assert_eq!(c["freq_hz"], c24["freq_hz"]);
    let (z12, z16, z24) = (vals(c), vals(c16), vals(c24));
    let inf: Vec<f64> = z12.iter().zip(&z24).map(|(a, b)| 2.0 * b - a).collect();
    for ((a, b), i) in z12.iter().zip(&z16).zip(&inf) {
        let predicted = i + (a - i) * 12.0 / 16.0;
        assert!(
            (predicted - b).abs() < 0.1,
            "{name}: the 16-ring grid reads {b:.3} dBΩ, 1/N from 12 and 24 predicts {predicted:.3}"
        );
    }
    inf
}

/// Against NEC-2 (`tests/data/nec2_refs.toml`, from `tests/reference/nec2_refs.py` with
/// PyNEC 2.3.4; its header lists the cards): the transimpedance V_out/I_line of the demo's
/// cross-section on round loops of 5–30 mm over a thin-wire line, with the same lossless gap
/// load (50 Ω + jZ0·tan βl2), from a decade below the model's corner to its upper usable
/// frequency. Holds 0.5 dB for 10, 20 and 30 mm (the model reads 0.15–0.34 dB low). The 5 mm
/// loop is compared with NEC's ring-count extrapolation ([`nec_zt`]; the 12-ring grid alone
/// reads 0.27 dB higher still): the axisymmetric model reads 0.08–0.57 dB low, held at 0.6 dB.
/// This is the shield's axisymmetric current alone; the predictions add the current's
/// gathering at the gap (`physics::shield_gap`), checked against NEC like for like in
/// [`corrected_model_matches_nec2_like_for_like`].
#[test]
fn transimpedance_matches_nec2_grid_model() {
    let top = refs("nec2_refs.toml");
    let mut seen = 0;
    let mut worst = 0.0f64;
    for c in top["case"].as_array().unwrap() {
        if c["variant"].as_str() != Some("plates") || c["name"].as_str().unwrap().contains("_rings")
        {
            continue;
        }
        let (zt, corner, upper) = model_zt(c, &top);
        let nec = nec_zt(&top, c);
        for ((fr, z), n) in zt.iter().zip(&nec) {
            if *fr < corner / 10.0 || *fr > upper {
                continue;
            }
            let d = z - n;
            eprintln!(
                "{} {fr:.4e} Hz: model {z:.3} NEC {n:.3} diff {d:+.3} dB",
                c["name"]
            );
            worst = worst.max(d.abs());
            let tol = if f(c, "R_mm") < 3.0 { 0.6 } else { 0.5 };
            assert!(
                d.abs() < tol,
                "{} at {fr:.3e} Hz: model {z:.3} dBΩ, NEC {n:.3}",
                c["name"]
            );
            seen += 1;
        }
    }
    eprintln!("worst {worst:.3} dB over {seen} points");
    assert!(seen > 30, "{seen} points compared");
}

/// The electric pickup against NEC-2 in a plane wave (`tests/data/erej_refs.toml`, from
/// `tests/reference/erej_refs.py`, PyNEC; the probe alone in free space, the same wire grid,
/// gap bus and gap load as the transimpedance reference): the electric response (E across the
/// axis) relative to the magnetic one (H normal), equal |E|. The model is 2ka
/// (`physics::electric`). A thin ring (a = 5 mm, b = 0.1 mm) holds 0.1 dB from 100 MHz to
/// 1 GHz, which checks the derivation; the demo's shield on 10, 20 and 30 mm loops holds 1 dB
/// from 200 MHz to each loop's upper usable frequency (NEC reads 0.3 dB below to 0.7 dB above
/// the model). Left out: NEC's 5 mm grid gives an electric response that is not monotonic in
/// frequency, and at 100 MHz the grids scatter (the 5 mm one 24 dB high, the 10 mm one 4.5 dB
/// low): suspected NEC-2's precision for so small a difference, not established.
#[test]
fn electric_pickup_matches_nec2_plane_wave() {
    use loopwright::physics::electric::{ETA0, e_to_h};
    let top = refs("erej_refs.toml");
    let mut seen = (0, 0);
    for c in top["case"].as_array().unwrap() {
        let d = f(c, "diameter_mm");
        let a = d / 2.0 * 1e-3;
        let thin = c["variant"].as_str() == Some("thin");
        if !thin && d < 7.0 {
            continue;
        }
        let upper = 299_792_458.0 / (10.0 * std::f64::consts::PI * d * 1e-3);
        let fs = c["freq_hz"].as_array().unwrap();
        let nec = c["ratio_db"].as_array().unwrap();
        for (fr, n) in fs.iter().zip(nec) {
            let fr = fr.as_float().unwrap();
            let n = n.as_float().unwrap();
            let m = 20.0 * e_to_h(fr, a, ETA0).log10();
            if thin {
                assert!(
                    (m - n).abs() < 0.1,
                    "thin ring at {fr:.3e}: model {m:.3}, NEC {n}"
                );
                seen.0 += 1;
            } else if (2e8..=upper).contains(&fr) {
                assert!(
                    (m - n).abs() < 1.0,
                    "{d} mm at {fr:.3e}: model {m:.3}, NEC {n}"
                );
                seen.1 += 1;
            }
        }
    }
    assert!(seen.0 >= 6 && seen.1 >= 8, "{seen:?}");
}

/// The upper usable frequency's error budget is what it says (an internal invariant, no
/// outside source: the electric term's outside check is the NEC-2 test above): at the budget's
/// frequency the left-out effects sum to the budget, below it they stay under it, the electric
/// share alone is 20·log10(1 + sin 20°·2ka), and the upper usable frequency never exceeds it.
#[test]
fn error_budget_frequency_is_where_the_budget_is_spent() {
    use loopwright::physics::electric::BUDGET_DB;
    for name in ["FM-R20", "FM-R10", "FM-R5", "FM-T12x6"] {
        let (x, _) = common::demo_probe_and_line(name);
        let r = x.response.as_loop().unwrap();
        let b = r
            .budget_hz
            .expect("the demo probes reach the budget below the null");
        assert!((r.budget_error_db(b) - BUDGET_DB).abs() < 1e-3, "{name}");
        assert!(r.budget_error_db(0.9 * b) < BUDGET_DB, "{name}");
        assert!(r.upper_hz <= b * (1.0 + 1e-12), "{name}");
        // The electric share: 2ka at the budget's 20° tilt, a = √(A_centre/π).
        use loopwright::physics::electric::{ETA0, pickup_error_db};
        let a = (r.area_m2 / std::f64::consts::PI).sqrt();
        let ka2 = 2.0 * 2.0 * std::f64::consts::PI * b / 299_792_458.0 * a;
        let e_share = pickup_error_db(20f64.to_radians().sin() * ka2);
        assert!((-20.0 * ka2.log10() - r.e_rejection_db(b, ETA0)).abs() < 1e-9);
        assert!(e_share > 0.0 && e_share < BUDGET_DB, "{name}: {e_share}");
    }
}

/// The demo's 5 mm cross-section as NEC-2's plates (the heights and radii of
/// `tests/data/shield_refs.toml`'s demo-D5 case).
fn demo_plates() -> Vec<Plate> {
    let (hw, slot) = (1.108e-3, 0.308e-3);
    let z = [0.7775e-3, 0.54125e-3, -0.54125e-3, -0.7775e-3];
    vec![
        Plate {
            z: z[0],
            d0: -hw,
            d1: hw,
        },
        Plate {
            z: z[1],
            d0: -hw,
            d1: -slot,
        },
        Plate {
            z: z[1],
            d0: slot,
            d1: hw,
        },
        Plate {
            z: z[2],
            d0: -hw,
            d1: hw,
        },
        Plate {
            z: z[3],
            d0: -hw,
            d1: hw,
        },
    ]
}

/// The gap's correction (`physics::shield_gap`) against its own refinement: the shipped mesh
/// (80 modes, 20 elements across a full plate, far elements as one cell) against 120 modes on
/// 30 elements of three cells each, every pair cell by cell: ΔA and ΔL of the 5 mm loop with the demo's 0.4 mm gap move by less than 6 % of
/// themselves (0.3 % of A_eff). Self-consistency only; the independent check is the real-space
/// solution of `tests/reference/gap_refs.py` (see docs/response.md).
#[test]
fn gap_correction_is_converged_to_a_few_per_cent() {
    use loopwright::physics::shield_gap::{GAP_MESH, GapMesh, solve};
    let r = 2.5e-3;
    let pl = demo_plates();
    let sc = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
    let wf = 0.616e-3;
    let a = solve(r, &pl, &sc, wf, 0.4e-3, GAP_MESH).unwrap();
    let b = solve(
        r,
        &pl,
        &sc,
        wf,
        0.4e-3,
        GapMesh {
            elements: 30,
            cells: 3,
            modes: 120,
            angles: 384,
            far: f64::INFINITY,
        },
    )
    .unwrap();
    assert!(a.d_area > 0.0 && a.dl_outer > 0.0, "{a:?}");
    assert!(
        rel(a.d_area, b.d_area) < 0.06,
        "{} vs {}",
        a.d_area,
        b.d_area
    );
    assert!(
        rel(a.dl_outer, b.dl_outer) < 0.06,
        "{} vs {}",
        a.dl_outer,
        b.dl_outer
    );
    assert!(((a.d_area - b.d_area) / sc.area_eff).abs() < 3e-3);
    // The samples carry the same moment as the m = 0 part.
    let w: f64 = a.points.iter().map(|p| p.w).sum();
    assert!(rel(w, a.d_area) < 2e-3, "{w} vs {}", a.d_area);
}

/// As the ring gets thin the gap's correction to the area vanishes, so the model tends to the
/// centreline forms (the limit): ΔA/A below 1e-4 on a 0.01 mm strip. ΔL keeps the
/// inductance of the current crossing the 0.4 mm gap in its narrow window (below 1 % of L).
#[test]
fn gap_correction_vanishes_on_a_thin_ring() {
    use loopwright::physics::shield_gap::{GAP_MESH, solve};
    let r = 5e-3;
    let pl = [Plate {
        z: 0.0,
        d0: -5e-6,
        d1: 5e-6,
    }];
    let sc = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
    let g = solve(r, &pl, &sc, 2e-6, 0.4e-3, GAP_MESH).unwrap();
    let (da, dl) = (g.d_area / sc.area_eff, g.dl_outer / sc.l_outer);
    assert!(da.abs() < 1e-4, "ΔA/A {da}");
    assert!(dl > 0.0 && dl < 1e-2, "ΔL/L {dl}");
}

/// The demo's 12 × 6 mm rectangle (corner radius 1.5 mm) against NEC-2's offset-curve ring
/// grid (`tests/data/nec2_refs.toml`, case rect_12x6, `nec2_refs.py --rect`, 12 rings per
/// plate, the gap a straight cut through the flat tip): the model's non-round shield current
/// (the round loop of R_eq = 2A/P's shares on the shape's offset curves, `shield::solve_shape`)
/// and its coupling over the shape's own filaments, from a decade below the corner to the upper
/// usable frequency. The model reads 0.43–0.52 dB low (NEC's 12-ring grid itself reads high
/// by its edge-ring offset, 0.07 dB on the round 10 mm loop's grid study); held at 0.6 dB, the
/// first outside check of the non-round shield model.
#[test]
fn rectangle_transimpedance_against_nec2() {
    let top = refs("nec2_refs.toml");
    let c = top["case"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"].as_str() == Some("rect_12x6"))
        .expect("the rectangle's case");
    let (zt, corner, upper) = model_zt(c, &top);
    let nec = c["zt_db_ohm"].as_array().unwrap();
    let (mut seen, mut lo, mut hi) = (0, f64::INFINITY, f64::NEG_INFINITY);
    for ((fr, z), n) in zt.iter().zip(nec) {
        if *fr < corner / 10.0 || *fr > upper {
            continue;
        }
        let d = z - n.as_float().unwrap();
        lo = lo.min(d);
        hi = hi.max(d);
        seen += 1;
    }
    assert!(seen > 10, "{seen}");
    assert!(
        lo > -0.6 && hi < 0.6,
        "model − NEC from {lo:+.3} to {hi:+.3} dB"
    );
}

/// The plates of a NEC-2 case as offsets from the centreline, m: `r_min_mm`/`r_max_mm` about
/// `R_mm` for a round case, `d_min_mm`/`d_max_mm` for the rectangle's offset curves; `slot_mm`
/// cut out.
fn nec_plates(c: &toml::Value) -> Vec<Plate> {
    let (lo, hi, base) = if c["variant"].as_str() == Some("rect_plates") {
        ("d_min_mm", "d_max_mm", 0.0)
    } else {
        ("r_min_mm", "r_max_mm", f(c, "R_mm"))
    };
    let mut pl = Vec::new();
    for p in c["plates"].as_array().unwrap() {
        let z = f(p, "y_mm") * 1e-3;
        let (a, b) = (f(p, lo) - base, f(p, hi) - base);
        let cuts = match p.get("slot_mm").and_then(|s| s.as_array()) {
            Some(s) => {
                let (s0, s1) = (s[0].as_float().unwrap(), s[1].as_float().unwrap());
                vec![(a, s0 - base), (s1 - base, b)]
            }
            None => vec![(a, b)],
        };
        for (d0, d1) in cuts {
            pl.push(Plate {
                z,
                d0: d0 * 1e-3,
                d1: d1 * 1e-3,
            });
        }
    }
    pl
}

/// NEC-2's (M, L, C) from its complex Z_t = 50·jωM/(Z_L + jωL − ω²L·C·Z_L), Z_L = 50 +
/// j50·tan βl2: 50jω/Z_t = Z_L·(1/M) + jω·(L/M) − ω²Z_L·(L·C/M) is linear in the three real
/// unknowns, solved by least squares over NEC's own frequencies up to `f_top`; with
/// `with_c = false` the third is left out. Returns (M, L, C, rms relative misfit of Z_t).
fn nec_mlc(top: &toml::Value, c: &toml::Value, f_top: f64, with_c: bool) -> (f64, f64, f64, f64) {
    use loopwright::physics::Cx;
    let fl = |k: &str| -> Vec<f64> {
        c[k].as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_float().or(v.as_integer().map(|i| i as f64)).unwrap())
            .collect()
    };
    let (fr, db, deg) = (fl("nec2_freq_hz"), fl("nec2_zt_db_ohm"), fl("nec2_zt_deg"));
    let eps = f(top, "eps_eff");
    let l2 = std::f64::consts::PI * f(c, "R_mm") * 1e-3;
    let c0 = 299_792_458.0;
    let rows: Vec<(Cx, [Cx; 3])> = (0..fr.len())
        .filter(|&i| fr[i] <= f_top)
        .map(|i| {
            let w = 2.0 * std::f64::consts::PI * fr[i];
            let (mag, ph) = (10f64.powf(db[i] / 20.0), deg[i].to_radians());
            let zt = Cx::new(mag * ph.cos(), mag * ph.sin());
            let zl = Cx::new(50.0, 50.0 * (w * eps.sqrt() / c0 * l2).tan());
            let y = Cx::new(0.0, 50.0 * w) / zt;
            (y, [zl, Cx::new(0.0, w), zl * Cx::new(-w * w, 0.0)])
        })
        .collect();
    let n = if with_c { 3 } else { 2 };
    // Normal equations of the stacked real and imaginary parts, each row scaled by |y|.
    let (mut a, mut b) = ([[0.0; 3]; 3], [0.0; 3]);
    for (y, x) in &rows {
        let s = 1.0 / y.abs();
        for part in [|z: Cx| z.re, |z: Cx| z.im] {
            for i in 0..n {
                b[i] += part(x[i]) * part(*y) * s * s;
                for j in 0..n {
                    a[i][j] += part(x[i]) * part(x[j]) * s * s;
                }
            }
        }
    }
    // Gaussian elimination without pivoting (n ≤ 3; the normal matrix is positive definite).
    let mut u = [0.0; 3];
    for i in 0..n {
        for k in i + 1..n {
            let r = a[k][i] / a[i][i];
            let pivot = a[i];
            for (akj, aij) in a[k][i..n].iter_mut().zip(&pivot[i..n]) {
                *akj -= r * aij;
            }
            b[k] -= r * b[i];
        }
    }
    for i in (0..n).rev() {
        u[i] = (b[i] - (i + 1..n).map(|j| a[i][j] * u[j]).sum::<f64>()) / a[i][i];
    }
    let (m, l, cg) = (
        1.0 / u[0],
        u[1] / u[0],
        if with_c { u[2] / u[1] } else { 0.0 },
    );
    let rms = (rows
        .iter()
        .map(|(y, x)| {
            let fit =
                x[0] * Cx::new(u[0], 0.0) + x[1] * Cx::new(u[1], 0.0) + x[2] * Cx::new(u[2], 0.0);
            ((fit + *y * Cx::new(-1.0, 0.0)) / *y).abs().powi(2)
        })
        .sum::<f64>()
        / rows.len() as f64)
        .sqrt();
    (m, l, cg, rms)
}

/// The model's gap capacitance (as `physics::elements::gap_capacitance`: the 2-D solution of
/// the cut, a quarter turn of every copper layer on each side, times the ring's width) for a
/// round NEC-2 case, with the demo stackup's copper and air between (NEC has no dielectric), F.
fn gap_capacitance_in_air(c: &toml::Value) -> f64 {
    use loopwright::field::{
        Accuracy, Boundary, Conductor, CrossSection, Dielectric, Role, Shape, capacitance_per_m,
    };
    let g = f(c, "gap_mm");
    let len = std::f64::consts::PI * 2.0 * f(c, "R_mm") / 4.0;
    // Bottom up: L4, prepreg, L3, core, L2, prepreg, L1 (mm).
    let stack = [
        (0.035, true),
        (0.21, false),
        (0.0175, true),
        (1.065, false),
        (0.0175, true),
        (0.21, false),
        (0.035, true),
    ];
    let (mut layers, mut conductors, mut y) = (Vec::new(), Vec::new(), 0.0);
    for (t, cu) in stack {
        layers.push(Dielectric::new(t, 1.0));
        if cu {
            conductors.push(Conductor::ground(-g / 2.0 - len, -g / 2.0, y, y + t));
            conductors.push(Conductor {
                role: Role::Signal,
                shape: Shape::Rect {
                    x0: g / 2.0,
                    x1: g / 2.0 + len,
                    y0: y,
                    y1: y + t,
                },
            });
        }
        y += t;
    }
    let cs = CrossSection {
        layers,
        board: Some([-g / 2.0 - len, g / 2.0 + len]),
        conductors,
        coat: None,
        fences: Vec::new(),
        boundary: Boundary::Open,
    };
    capacitance_per_m(&cs, Accuracy::Draft).unwrap() * 2.0 * f(c, "hw_mm") * 1e-3
}

/// Partial mutual inductance of two parallel filaments along one axis, [a1, a2] and [b1, b2],
/// `d` apart, H (Grover's formula for parallel straight filaments; the same with d the wire's
/// geometric mean radius for a wire's own segments and for collinear ones).
fn parallel_m(a1: f64, a2: f64, b1: f64, b2: f64, d: f64) -> f64 {
    let fm = |u: f64| u * (u / d).asinh() - (u * u + d * d).sqrt();
    MU0 / (4.0 * std::f64::consts::PI) * (fm(a2 - b1) - fm(a2 - b2) - fm(a1 - b1) + fm(a1 - b2))
}

/// A straight current filament: its axis (0 along the gap, 2 across the board), its extent
/// along it and its position in the other two coordinates (m), and its current.
struct Filament {
    axis: usize,
    span: (f64, f64),
    at: (f64, f64),
    i: f64,
}

fn filament_energy(fs: &[Filament], r_gmd: f64) -> f64 {
    let mut e = 0.0;
    for a in fs {
        for b in fs.iter().filter(|b| b.axis == a.axis) {
            let d = (a.at.0 - b.at.0).hypot(a.at.1 - b.at.1).max(r_gmd);
            e += a.i * b.i * parallel_m(a.span.0, a.span.1, b.span.0, b.span.1, d);
        }
    }
    e
}

/// The inductance NEC-2's bus adds at the gap over the model's crossing (our estimate, from the
/// geometry of `tests/reference/nec2_refs.py`'s bus): the model lets each plate's current cross
/// the gap in its own plane; NEC gathers it, in each gap face, down a spine of wires to the
/// board's mid-plane and across the gap on one bridge wire. Both as wires of NEC's radius `a`
/// (m) with their approaches (`la` m of each plate's current on either side, the same in both)
/// for the mutual terms; `plates` are (height m, current share).
fn nec_bus_inductance(plates: &[(f64, f64)], gap: f64, a: f64, la: f64) -> f64 {
    let h = gap / 2.0;
    let mut model = Vec::new();
    let mut nec = Vec::new();
    for &(z, i) in plates {
        for span in [(-h - la, -h), (h, h + la)] {
            let f = || Filament {
                axis: 0,
                span,
                at: (0.0, z),
                i,
            };
            model.push(f());
            nec.push(f());
        }
        model.push(Filament {
            axis: 0,
            span: (-h, h),
            at: (0.0, z),
            i,
        });
    }
    // The spines: between consecutive heights, the current of every plate beyond, down one
    // face and up the other.
    let mut zs: Vec<f64> = plates.iter().map(|p| p.0).chain([0.0]).collect();
    zs.sort_by(f64::total_cmp);
    zs.dedup();
    for w in zs.windows(2) {
        let mid = 0.5 * (w[0] + w[1]);
        let beyond: f64 = plates
            .iter()
            .filter(|p| if mid > 0.0 { p.0 > mid } else { p.0 < mid })
            .map(|p| p.1)
            .sum();
        let sign = if mid > 0.0 { 1.0 } else { -1.0 };
        for (x, s) in [(-h, -sign), (h, sign)] {
            nec.push(Filament {
                axis: 2,
                span: (w[0], w[1]),
                at: (x, 0.0),
                i: s * beyond,
            });
        }
    }
    nec.push(Filament {
        axis: 0,
        span: (-h, h),
        at: (0.0, 0.0),
        i: plates.iter().map(|p| p.1).sum(),
    });
    // NEC's thin-wire current flows on the wire's surface: a tube's own GMD is its radius.
    filament_energy(&nec, a) - filament_energy(&model, a)
}

/// The gap's circuit taken apart against NEC-2 (5 mm loop, grids of 12, 16 and 24 rings per
/// plate; `nec_mlc` fits NEC's complex Z_t from 63 MHz to the loop's upper usable frequency):
/// - NEC's grid has a capacitance across its gap: fitting one cuts the misfit of Z_t by 2.4 to
///   4.8 times, and gives 0.100, 0.100 and 0.084 pF (12, 16, 24 rings; its wires thin as 1/N),
///   0.068 pF at the 1/N extrapolation. The model's gap capacitance
///   (`physics::elements::gap_capacitance`: the 2-D solution of the cut, a quarter turn of
///   every copper layer each side, times the ring's width) with the demo stackup's copper in
///   air (NEC has no dielectric) is 0.105 pF: 5–25 % above each grid and 54 % above the
///   extrapolation. So NEC confirms a capacitance of that size and suggests the 2-D estimate
///   is high, by up to half; NEC's fitted C also holds its bus's own capacitance, so it is not
///   a finer check than that (in the board the model's value is 0.27 pF, the same solution
///   with the stackup's dielectrics).
/// - The mutual inductance: NEC's fitted M, extrapolated in 1/N from 12 and 24 rings, against
///   the model's with the gap's correction (`physics::shield_gap`, solved with NEC's crossing:
///   every plate gathered to one wire of the grid's radius on the centreline, put through the
///   same 1/N combination) agrees within 2.5 %; the axisymmetric current alone (no
///   correction) reads 5–8 % low, which is the 5 mm loop's low-frequency shortfall in
///   [`transimpedance_matches_nec2_grid_model`].
/// - NEC's fitted L (3.1–3.25 nH) is above the model's (2.42 nH, 2.63 with the correction):
///   NEC's bus of thin wires across the plates and the gap adds inductance the board does not
///   have ([`nec_bus_inductance`]).
#[test]
fn nec2_gap_capacitance_and_mutual_against_the_model() {
    use loopwright::physics::{filaments, flux_filaments, hx_line, shield_gap};
    let top = refs("nec2_refs.toml");
    let case = |name: &str| nec_case(&top, name).unwrap();
    let c12 = case("round_5mm");
    let r_mm = f(&c12, "R_mm");
    let upper = 299_792_458.0 / (10.0 * 2.0 * std::f64::consts::PI * r_mm * 1e-3);
    let g = f(&c12, "gap_mm");
    let c_model = gap_capacitance_in_air(&c12);
    let (mut ms, mut cs) = (Vec::new(), Vec::new());
    for name in ["round_5mm", "round_5mm_rings16", "round_5mm_rings24"] {
        let c = case(name);
        let (m, l, cg, rms) = nec_mlc(&top, &c, upper, true);
        let (_, _, _, rms0) = nec_mlc(&top, &c, upper, false);
        eprintln!(
            "{name}: M {:.2} pH, L {:.3} nH, C {:.3} pF (model in air {:.3} pF); misfit {rms:.4} \
             ({rms0:.4} without C)",
            m * 1e12,
            l * 1e9,
            cg * 1e12,
            c_model * 1e12
        );
        assert!(rms < 0.003 && rms0 > 2.0 * rms, "{name}: {rms} {rms0}");
        assert!(l > 3.1e-9 && l < 3.25e-9, "{name}: L {l:e}");
        ms.push(m);
        cs.push(cg);
    }
    let c_nec = 2.0 * cs[2] - cs[0];
    eprintln!("C: NEC 1/N {:.3} pF", c_nec * 1e12);
    // The model's value is above every grid's and within 60 % of the extrapolation.
    for cg in &cs {
        assert!(c_model > *cg && c_model < 1.3 * cg, "C {cg:e}");
    }
    assert!(c_nec > 0.0 && c_model < 1.6 * c_nec, "C 1/N {c_nec:e}");
    let m_nec = 2.0 * ms[2] - ms[0];
    // The model's mutual, with and without the gap's correction (NEC's crossing window).
    let (r, pl) = (r_mm * 1e-3, nec_plates(&c12));
    let sc = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
    let shape = loopwright::model::probe::LoopShape::Round {
        diameter: 2.0 * r_mm,
    };
    let h = f(&c12, "h_line_mm") * 1e-3;
    let z0 = (f(&c12, "z_apex_mm") - f(&c12, "h_line_mm")) * 1e-3;
    let m0 = MU0 * flux_filaments(&shape, &filaments(&sc, 8), |x, z| hx_line(x, z, h), 0.0, z0);
    let dm_with = |c: &toml::Value| {
        let wire = 2.0 * f(c, "wire_radius_mm") * 1e-3;
        let gc = shield_gap::solve(r, &pl, &sc, wire, g * 1e-3, shield_gap::GAP_MESH).unwrap();
        gc.points
            .iter()
            .map(|q| {
                let depth = r * (1.0 - q.theta.cos());
                q.w * hx_line(q.z, z0 + depth - q.d * q.theta.cos(), h)
            })
            .sum::<f64>()
            * MU0
    };
    let dm = 2.0 * dm_with(&case("round_5mm_rings24")) - dm_with(&c12);
    let (axi, corrected) = (m0 / m_nec - 1.0, (m0 + dm) / m_nec - 1.0);
    eprintln!(
        "M: NEC {:.2} pH (1/N), axisymmetric {:.2} pH ({:+.1} %), with the correction {:.2} pH ({:+.1} %)",
        m_nec * 1e12,
        m0 * 1e12,
        axi * 100.0,
        (m0 + dm) * 1e12,
        corrected * 100.0
    );
    assert!(corrected.abs() < 0.025, "{corrected}");
    assert!(axi < -0.05 && axi > -0.08, "{axi}");
}

/// NEC-2 compared like for like with the shipped model (the axisymmetric current with the
/// gap's correction): every round loop, its transimpedance from a decade below
/// the corner to the upper usable frequency, with the model's circuit of NEC's own geometry at
/// the gap: the correction solved for NEC's crossing (each plate gathered to a wire of the
/// grid's own radius on the centreline), the model's gap capacitance in air, and the
/// inductance of NEC's bus ([`nec_bus_inductance`] with the grid's wire radius; 2 mm of
/// approach, within 2 % of 1 mm and 4 mm). The 5 mm loop is compared at NEC's 1/N
/// extrapolation with the model put through the same combination (each grid's model with its
/// own wire radius, 2·Z24 − Z12). With the lumped gap circuit (C_gap across the gap: NEC's
/// gap is its bus of wires) within 0.25 dB for every loop (held at 0.4 dB); with the form the
/// predictions use for a test line (C_gap in the gap's impedance only, from the FDTD of the
/// board's gap: `Response::line_transfer`) within 0.45 dB (held at the 0.5 dB), the
/// largest at the top of the 10–30 mm loops' bands. The axisymmetric current alone (no
/// correction) holds only 0.6 dB on 5 mm ([`transimpedance_matches_nec2_grid_model`]).
#[test]
fn corrected_model_matches_nec2_like_for_like() {
    use loopwright::model::probe::LoopShape;
    use loopwright::physics::{Cx, filaments, flux_filaments, hx_line, shield_gap};
    let top = refs("nec2_refs.toml");
    let (c0, eps) = (299_792_458.0, f(&top, "eps_eff"));
    let case = |name: &str| nec_case(&top, name);
    // The model's |Z_t| (dBΩ) of NEC's geometry in case `c` with the wire radius of case `w`,
    // at c's frequencies; and the band (corner/10, upper).
    let model_db = |c: &toml::Value, w: &toml::Value, line_form: bool| -> (Vec<f64>, f64, f64) {
        let r_mm = f(c, "R_mm");
        let (r, pl) = (r_mm * 1e-3, nec_plates(c));
        let sc = solve_round(r, &pl, RIBBONS_PER_PLATE).unwrap();
        let shape = LoopShape::Round {
            diameter: 2.0 * r_mm,
        };
        let h = f(c, "h_line_mm") * 1e-3;
        let z0 = (f(c, "z_apex_mm") - f(c, "h_line_mm")) * 1e-3;
        let hx = |x: f64, z: f64| hx_line(x, z, h);
        let m0 = MU0 * flux_filaments(&shape, &filaments(&sc, 8), hx, 0.0, z0);
        let a = f(w, "wire_radius_mm") * 1e-3;
        let g = f(c, "gap_mm") * 1e-3;
        let gc = shield_gap::solve(r, &pl, &sc, 2.0 * a, g, shield_gap::GAP_MESH).unwrap();
        let dm = MU0
            * gc.points
                .iter()
                .map(|q| q.w * hx(q.z, z0 + r * (1.0 - q.theta.cos()) - q.d * q.theta.cos()))
                .sum::<f64>();
        let n = sc.per_plate;
        let shares: Vec<(f64, f64)> = pl
            .iter()
            .enumerate()
            .map(|(k, p)| (p.z, sc.share[k * n..(k + 1) * n].iter().sum()))
            .collect();
        let bus = nec_bus_inductance(&shares, g, a, 2e-3);
        let spread = [1e-3, 4e-3].map(|la| nec_bus_inductance(&shares, g, a, la) / bus - 1.0);
        assert!(spread.iter().all(|d| d.abs() < 0.02), "{spread:?}");
        let (m, l, cg) = (
            m0 + dm,
            sc.l_outer + gc.dl_outer + bus,
            gap_capacitance_in_air(c),
        );
        eprintln!(
            "{} (wire {:.4} mm): bus {:.3} nH, C {:.3} pF, ΔM {:+.1} %",
            c["name"],
            a * 1e3,
            bus * 1e9,
            cg * 1e12,
            dm / m0 * 100.0
        );
        let l2 = std::f64::consts::PI * r;
        let corner =
            50.0 / (2.0 * std::f64::consts::PI * (sc.l_outer + 50.0 * eps.sqrt() * l2 / c0));
        let upper = c0 / (10.0 * 2.0 * std::f64::consts::PI * r);
        let db = case_freqs(c)
            .into_iter()
            .map(|fr| {
                let w = 2.0 * std::f64::consts::PI * fr;
                let zl = Cx::new(50.0, 50.0 * (w * eps.sqrt() / c0 * l2).tan());
                let den = if line_form {
                    zl + Cx::new(0.0, w * l / (1.0 - w * w * l * cg))
                } else {
                    zl + Cx::new(0.0, w * l) + zl * Cx::new(-w * w * l * cg, 0.0)
                };
                20.0 * (Cx::new(0.0, 50.0 * w * m) / den).abs().log10()
            })
            .collect();
        (db, corner, upper)
    };
    // The lumped form (NEC's gap is a bus of wires across the cut), held at 0.4 dB; the form
    // the predictions use for a test line (the gap capacitance in the gap's impedance only,
    // `Response::line_transfer`), held at the 0.5 dB.
    for (line_form, tol) in [(false, 0.4), (true, 0.5)] {
        let mut worst = 0.0f64;
        for c in top["case"].as_array().unwrap() {
            let name = c["name"].as_str().unwrap();
            if c["variant"].as_str() != Some("plates") || name.contains("_rings") {
                continue;
            }
            let (mut db, corner, upper) = model_db(c, c, line_form);
            if let Some(c24) = case(&format!("{name}_rings24")) {
                let (db24, _, _) = model_db(c, &c24, line_form);
                db = db24.iter().zip(&db).map(|(b, a)| 2.0 * b - a).collect();
            }
            let nec = nec_zt(&top, c);
            let mut line = String::new();
            for (k, fr) in case_freqs(c).into_iter().enumerate() {
                if fr < corner / 10.0 || fr > upper {
                    continue;
                }
                let d = db[k] - nec[k];
                line += &format!(" {fr:.2e}:{d:+.2}");
                worst = worst.max(d.abs());
                assert!(
                    d.abs() < tol,
                    "{name} at {fr:.3e} Hz: {d:+.3} dB ({line_form})"
                );
            }
            eprintln!("{name}:{line}");
        }
        eprintln!("worst {worst:.3} dB (line form: {line_form})");
    }
}
