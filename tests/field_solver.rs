//! The 2-D field solver (`loopwright::field`, issue 5) against outside references, its own
//! recorded refinement study, and physical invariances.
//!
//! Outside references (all in `tests/data/impedance_refs.toml`, produced by
//! `tests/reference/impedance_refs.py` with python 3.11.7, numpy 2.4.6, scipy 1.17.1 and
//! scikit-rf 2.2.0; every entry carries the exact Python call that produced it):
//! - `cohn`: Cohn 1954 exact zero-thickness centred stripline, K(k) by
//!   `scipy.special.ellipkm1`;
//! - `hj_microstrip`: Hammerstad & Jensen 1980 by scikit-rf
//!   `skrf.media.MLine(model='hammerstadjensen', disp='none')`;
//! - `skrf_gcpw`: Ghione & Naldi 1983 conformal mapping by scikit-rf
//!   `skrf.media.CPW(has_metal_backside=True, compatibility_mode='ads')`;
//! - `offset_parallel`: the parallel-combination formula for offset stripline evaluated with
//!   scipy (an upper bound on Z0, by the argument in our notes, impedance.md §4).
//!
//! Consistency checks against our notes' companion finite-difference scripts (a separate
//! numpy/scipy implementation, `the project's notes, impedance` §4, §5, §6) are named [FD].

use loopwright::error::Error;
use loopwright::field::{self, Accuracy, Boundary, Coat, Conductor, CrossSection, Fence, Shape};
use loopwright::solve::impedance::*;
mod common;

use common::{f, impedance_refs as refs, rel, section, stripline};

fn microstrip(w: f64, h: f64, t: f64, er: f64) -> Line {
    Line::Microstrip(Microstrip { width: w, h, t, er })
}

fn z0(line: &Line, acc: Accuracy) -> f64 {
    field::solve_line(line, acc).expect("valid line").z0_ohms
}

fn solve(cs: &CrossSection) -> field::FieldSolution {
    field::solve(cs, Accuracy::default()).expect("valid cross-section")
}

// ---------------------------------------------------------------------------------------
// Acceptance checks of issue 5.

// Cohn 1954 exact result (scipy.special.ellipkm1, `cohn` section): zero-thickness centred
// stripline within 0.2 % at the default accuracy, w/b from 0.1 to 3, εr 1, 4.3 and 10.
#[test]
fn centred_stripline_within_0p2_percent_of_cohn_at_default_accuracy() {
    let mut n = 0;
    for e in section(&refs(), "cohn") {
        let (w, b, er) = (f(&e, "w_mm"), f(&e, "b_mm"), f(&e, "er"));
        if !(0.1..=3.0).contains(&(w / b)) {
            continue;
        }
        // A realistic board scale (b = 0.5 mm); Z0 depends on ratios only.
        let k = 0.5 / b;
        let sol = field::solve_line(
            &stripline(w * k, b * k / 2.0, b * k / 2.0, 0.0, er),
            Accuracy::default(),
        )
        .unwrap();
        let reference = f(&e, "z0_ohms");
        assert!(
            rel(sol.z0_ohms, reference) < 2e-3,
            "w/b {} er {er}: field {} vs Cohn {reference}",
            w / b,
            sol.z0_ohms
        );
        // A homogeneous dielectric: εeff is εr exactly.
        assert!(rel(sol.eps_eff, er) < 1e-12, "{}", sol.eps_eff);
        n += 1;
    }
    assert_eq!(n, 18, "expected 6 widths × 3 permittivities");
}

/// Converged offset-stripline references from our own refinement study (docs/field-solver.md,
/// "Offset stripline reference"): t = 0, εr = 1, b = h1 + h2 = 1; `Accuracy::Refined(16)`
/// (meshes of levels 16 and 32, Richardson-extrapolated), whose difference from
/// `Refined(8)` is below 1.1e-6 in every row and whose centred rows match Cohn's exact
/// value to 1.1e-6. Columns: w/b, h1/b, Z0 (Ω).
const OFFSET_REFERENCE: [(f64, f64, f64); 15] = [
    (0.2, 0.1, 88.043848),
    (0.2, 0.15, 108.158162),
    (0.2, 0.25, 132.939977),
    (0.2, 0.375, 148.403337),
    (0.2, 0.5, 153.029157),
    (0.5, 0.1, 48.402102),
    (0.5, 0.15, 63.024670),
    (0.5, 0.25, 82.922443),
    (0.5, 0.375, 96.303905),
    (0.5, 0.5, 100.432344),
    (1.0, 0.1, 28.116656),
    (1.0, 0.15, 37.879093),
    (1.0, 0.25, 52.043323),
    (1.0, 0.375, 62.142966),
    (1.0, 0.5, 65.353581),
];

// The recorded study's procedure checked where an exact answer exists: its centred rows
// against Cohn 1954 (the same formula as the scipy values of the `cohn` section).
#[test]
fn offset_reference_procedure_reproduces_cohn_when_centred() {
    for (wb, h1, zref) in OFFSET_REFERENCE {
        if h1 == 0.5 {
            assert!(rel(zref, cohn_centred(wb, 1.0, 1.0)) < 2e-6, "w/b {wb}");
        }
    }
}

// Offset stripline, h1/b from 0.1 to 0.5, t = 0: within 0.3 % of the recorded converged
// reference at the default accuracy (here at b = 0.8 mm and εr = 4.3: Z0 scales as 1/√εr in
// a homogeneous dielectric).
#[test]
fn offset_stripline_within_0p3_percent_of_converged_reference() {
    let (b, er) = (0.8, 4.3);
    for (wb, h1, zref) in OFFSET_REFERENCE {
        let z = z0(
            &stripline(wb * b, h1 * b, (1.0 - h1) * b, 0.0, er),
            Accuracy::default(),
        );
        let expect = zref / er.sqrt();
        assert!(rel(z, expect) < 3e-3, "w/b {wb} h1/b {h1}: {z} vs {expect}");
    }
}

// [FD] Our notes' table (impedance.md §4): the parallel combination of two centred Cohn
// lines overestimates the offset-stripline Z0 by +0.87 … +10.1 %. The field solution must
// reproduce those percentages within 0.1 points (they are printed to 0.01 points, one to
// 0.1; the default setting adds up to 0.04).
#[test]
fn offset_stripline_parallel_combination_error_matches_notes_fd_table() {
    let table = [
        (
            0.2,
            [(0.375, 0.87), (0.25, 3.69), (0.15, 7.69), (0.10, 10.1)],
        ),
        (
            0.5,
            [(0.375, 0.75), (0.25, 3.00), (0.15, 5.61), (0.10, 6.75)],
        ),
        (
            1.0,
            [(0.375, 0.52), (0.25, 2.01), (0.15, 3.55), (0.10, 4.09)],
        ),
    ];
    for (wb, row) in table {
        for (h1, pct) in row {
            let line = stripline(wb, h1, 1.0 - h1, 0.0, 1.0);
            let parallel = analyse(&line, Some(Method::Cohn)).unwrap().z0;
            let field = z0(&line, Accuracy::default());
            let excess = 100.0 * (parallel / field - 1.0);
            assert!(
                (excess - pct).abs() < 0.1,
                "w/b {wb} h1/b {h1}: {excess:.3} % vs notes {pct} %"
            );
        }
    }
}

// scipy-evaluated parallel combinations (`offset_parallel`, halves = "cohn") are an upper
// bound on the true Z0 (notes §4): the field solution must lie below each, by the 2–10 %
// the notes describe for thin-prepreg offsets.
#[test]
fn offset_stripline_below_scipy_parallel_upper_bound() {
    let mut n = 0;
    for e in section(&refs(), "offset_parallel") {
        if e["halves"].as_str() != Some("cohn") {
            continue;
        }
        let line = stripline(
            f(&e, "w_mm"),
            f(&e, "h1_mm"),
            f(&e, "h2_mm"),
            f(&e, "t_mm"),
            f(&e, "er"),
        );
        let z = z0(&line, Accuracy::default());
        let bound = f(&e, "z0_ohms");
        let excess = bound / z - 1.0;
        assert!((0.01..0.12).contains(&excess), "{e:?}: field {z}");
        n += 1;
    }
    assert!(n >= 3);
}

// scikit-rf Hammerstad–Jensen (`hj_microstrip`, t = 0): within 1 % where the formula claims
// 0.2 % (0.01 ≤ w/h ≤ 100; here w/h 0.2–5, εr 2.2–10.2), for Z0 and εeff.
#[test]
fn microstrip_within_1_percent_of_hammerstad_jensen() {
    let mut n = 0;
    for e in section(&refs(), "hj_microstrip") {
        let (w, h, t, er) = (f(&e, "w_mm"), f(&e, "h_mm"), f(&e, "t_mm"), f(&e, "er"));
        if t != 0.0 || !(0.2..=5.0).contains(&(w / h)) {
            continue;
        }
        let sol = field::solve_line(&microstrip(w, h, t, er), Accuracy::default()).unwrap();
        assert!(
            rel(sol.z0_ohms, f(&e, "z0_ohms")) < 0.01,
            "{e:?}: {}",
            sol.z0_ohms
        );
        assert!(
            rel(sol.eps_eff, f(&e, "eps_eff")) < 0.01,
            "{e:?}: {}",
            sol.eps_eff
        );
        n += 1;
    }
    assert_eq!(n, 15, "expected 5 widths × 3 permittivities");
}

// scikit-rf Hammerstad–Jensen with its thickness correction (`hj_microstrip`, t/h = 0.035
// and 0.1, w/h 0.2–5). The correction has no published accuracy figure (notes §2); we hold
// Z0 to the same 1 %.
#[test]
fn thick_microstrip_within_1_percent_of_hammerstad_jensen() {
    let mut n = 0;
    for e in section(&refs(), "hj_microstrip") {
        let (w, h, t, er) = (f(&e, "w_mm"), f(&e, "h_mm"), f(&e, "t_mm"), f(&e, "er"));
        if t == 0.0 || !(0.2..=5.0).contains(&(w / h)) {
            continue;
        }
        let z = z0(&microstrip(w, h, t, er), Accuracy::default());
        assert!(rel(z, f(&e, "z0_ohms")) < 0.01, "{e:?}: {z}");
        n += 1;
    }
    assert!(n >= 20);
}

// scikit-rf CPW with metal backside (Ghione–Naldi conformal mapping, `skrf_gcpw`), t = 0
// and s ≤ h, where the formula is good (notes §5): within 1.5 %.
#[test]
fn gcpw_within_1p5_percent_of_conformal_mapping() {
    let mut n = 0;
    for e in section(&refs(), "skrf_gcpw") {
        let (w, s, h, t, er) = (
            f(&e, "w_mm"),
            f(&e, "s_mm"),
            f(&e, "h_mm"),
            f(&e, "t_mm"),
            f(&e, "er"),
        );
        if t != 0.0 || s > h {
            continue;
        }
        let line = Line::Cpwg(Cpwg {
            width: w,
            gap: s,
            h,
            t,
            er,
        });
        let sol = field::solve_line(&line, Accuracy::default()).unwrap();
        assert!(
            rel(sol.z0_ohms, f(&e, "z0_ohms")) < 0.015,
            "{e:?}: {}",
            sol.z0_ohms
        );
        assert!(rel(sol.eps_eff, f(&e, "eps_eff")) < 0.015, "{e:?}");
        n += 1;
    }
    assert_eq!(n, 6);
}

// [FD] Notes §5: the conformal-mapping Z0 is +0.01, +0.14, +0.55 and +2.45 % above a 2-D
// field solution for these four lines (it degrades when s > h). Reproduced within 0.15
// points (the notes' solver had a lid and finite grounds).
#[test]
fn gcpw_formula_error_matches_notes_fd_table() {
    let rows = [
        (1.0, 0.2, 1.6, 4.3, 0.01),
        (1.6, 0.3, 1.55, 4.5, 0.14),
        (0.5, 0.15, 0.2, 4.3, 0.55),
        (0.3, 0.2, 0.1, 3.66, 2.45),
    ];
    for (w, s, h, er, pct) in rows {
        let line = Line::Cpwg(Cpwg {
            width: w,
            gap: s,
            h,
            t: 0.0,
            er,
        });
        let (zf, _) = ghione_naldi(w, s, h, 0.0, er);
        let excess = 100.0 * (zf / z0(&line, Accuracy::default()) - 1.0);
        assert!(
            (excess - pct).abs() < 0.15,
            "{w} {s} {h}: {excess:.3} % vs {pct} %"
        );
    }
}

// [FD] Notes §6: Z0 change from a solder-mask coat over microstrip (t = 0, εr = 4.3), in
// percent, for cover εr 4.3 (table (a)/(b), FD column) and 3.5 (table (d)). Printed to 0.1
// points; reproduced within 0.1.
#[test]
fn coated_microstrip_matches_notes_fd_tables() {
    let rows = [
        (
            1.9,
            4.3,
            [(0.05, -1.6), (0.1, -2.6), (0.2, -4.2), (0.5, -6.9)],
        ),
        (
            0.5,
            4.3,
            [(0.05, -3.4), (0.1, -5.4), (0.2, -8.1), (0.5, -12.0)],
        ),
        (
            1.9,
            3.5,
            [(0.05, -1.3), (0.1, -2.1), (0.2, -3.3), (1.0, -7.6)],
        ),
        (
            0.5,
            3.5,
            [(0.05, -2.7), (0.1, -4.4), (0.2, -6.6), (1.0, -11.7)],
        ),
    ];
    for (u, mask_er, cols) in rows {
        let bare = z0(&microstrip(u, 1.0, 0.0, 4.3), Accuracy::default());
        for (c, pct) in cols {
            let line = Line::CoatedMicrostrip(CoatedMicrostrip {
                line: Microstrip {
                    width: u,
                    h: 1.0,
                    t: 0.0,
                    er: 4.3,
                },
                mask_t: c,
                mask_er,
            });
            let change = 100.0 * (z0(&line, Accuracy::default()) / bare - 1.0);
            assert!(
                (change - pct).abs() <= 0.1,
                "w/h {u} c/h {c} εm {mask_er}: {change:.3} % vs {pct} %"
            );
        }
    }
}

// ---------------------------------------------------------------------------------------
// Convergence.

// Refinement of nested meshes (Cohn 1954 as the exact answer, w/b = 0.5): every mesh's Z0 is
// below the exact value and rises with refinement (the discrete energy of nested linear
// elements can only fall: Dirichlet's principle); the fine-mesh error falls by 4 ± 0.7 per
// halving (second order); the Richardson value is better than either mesh and its error is
// below the reported estimate.
#[test]
fn error_falls_as_h_squared_and_richardson_helps() {
    let exact = cohn_centred(0.5, 1.0, 1.0);
    let line = stripline(0.5, 0.5, 0.5, 0.0, 1.0);
    let mut prev_fine = 0.0;
    let mut prev_err = f64::INFINITY;
    let mut prev_extrapolated_err = f64::INFINITY;
    for m in [1, 2, 4] {
        let s = field::solve_line(&line, Accuracy::Refined(m)).unwrap();
        let [coarse, fine] = s.meshes;
        assert!(coarse.z0_ohms < fine.z0_ohms && fine.z0_ohms < exact);
        assert!(coarse.z0_ohms >= prev_fine - 1e-12 * exact, "m {m}");
        let err = (exact - fine.z0_ohms) / exact;
        if prev_err.is_finite() {
            let ratio = prev_err / err;
            assert!((3.3..4.7).contains(&ratio), "m {m}: ratio {ratio}");
        }
        let extrapolated_err = rel(s.z0_ohms, exact);
        assert!(extrapolated_err < 0.2 * err, "m {m}");
        assert!(extrapolated_err < s.estimated_error, "m {m}");
        assert!(extrapolated_err < prev_extrapolated_err, "m {m}");
        prev_fine = fine.z0_ohms;
        prev_err = err;
        prev_extrapolated_err = extrapolated_err;
    }
}

// The documented accuracy of each setting (`Accuracy` docs): Draft ≤ 0.25 %, Standard
// ≤ 0.06 %, Fine ≤ 0.015 %, checked against Cohn 1954 on the narrowest strip of the range
// (the hardest case of the validation set), and Fine better than Draft.
#[test]
fn accuracy_settings_meet_their_documented_bounds() {
    let exact = cohn_centred(0.1, 1.0, 1.0);
    let line = stripline(0.1, 0.5, 0.5, 0.0, 1.0);
    let e = |acc| rel(z0(&line, acc), exact);
    let (draft, standard, fine) = (e(Accuracy::Draft), e(Accuracy::Standard), e(Accuracy::Fine));
    assert!(
        draft < 2.5e-3 && standard < 6e-4 && fine < 1.5e-4,
        "{draft} {standard} {fine}"
    );
    assert!(fine < standard && standard < draft);
    assert_eq!(Accuracy::default(), Accuracy::Standard);
}

// The open boundary (OPEN_FAR_FACTOR sizes away, zero normal field): moving it has no
// effect at the solver's accuracy. Here against a grounded box twice as far away
// (Dirichlet: the opposite error sign): the open value must lie within 0.01 % of it.
#[test]
fn open_boundary_truncation_is_negligible() {
    let line = microstrip(1.0, 0.5, 0.0, 4.3);
    let open = field::cross_section_for_line(&line);
    let mut boxed = open.clone();
    // The structure's size is 1 mm (the width): the box is twice as far as the open edge.
    let d = 2.0 * field::OPEN_FAR_FACTOR;
    boxed.boundary = Boundary::Shield {
        x0: -d,
        x1: d,
        y0: 0.0,
        y1: d,
    };
    let (zo, zb) = (solve(&open).z0_ohms, solve(&boxed).z0_ohms);
    assert!(rel(zo, zb) < 1e-4, "{zo} {zb}");
    // A near lid (one substrate height above the strip) does lower Z0.
    boxed.boundary = Boundary::Shield {
        x0: -10.0,
        x1: 10.0,
        y0: 0.0,
        y1: 1.0,
    };
    assert!(solve(&boxed).z0_ohms < 0.95 * zo);
}

// ---------------------------------------------------------------------------------------
// Invariances.

// Scaling every length leaves Z0 and εeff unchanged (the mesh scales with the geometry).
#[test]
fn scaling_all_lengths_leaves_z0_unchanged() {
    let lines = [
        stripline(0.3, 0.2, 0.6, 0.035, 3.8),
        Line::Cpwg(Cpwg {
            width: 0.5,
            gap: 0.15,
            h: 0.2,
            t: 0.035,
            er: 4.3,
        }),
    ];
    for line in lines {
        let a = field::solve_line(&line, Accuracy::default()).unwrap();
        for k in [0.01, 7.3] {
            let b = field::solve_line(&line.scaled(k), Accuracy::default()).unwrap();
            assert!(rel(a.z0_ohms, b.z0_ohms) < 1e-9, "k {k}");
            assert!(rel(a.eps_eff, b.eps_eff) < 1e-9, "k {k}");
        }
    }
}

// Mirroring top–bottom (swap h1/h2 and er1/er2, t = 0) leaves Z0 and εeff unchanged.
#[test]
fn swapping_the_stripline_dielectrics_leaves_z0_unchanged() {
    let s = |h1, h2, er1, er2| {
        Line::Stripline(Stripline {
            width: 0.3,
            h1,
            h2,
            t: 0.0,
            er1,
            er2,
        })
    };
    // `Refined(1)` is `Standard`'s mesh solved to the reference studies' tighter residual.
    let a = field::solve_line(&s(0.2, 0.6, 3.0, 4.5), Accuracy::Refined(1)).unwrap();
    let b = field::solve_line(&s(0.6, 0.2, 4.5, 3.0), Accuracy::Refined(1)).unwrap();
    // The mirrored mesh orders its unknowns the other way, so the iterative solve stops at a
    // slightly different point: the two agree to the solver's stopping error (1e-6 on the
    // residual leaves about 1e-8; `Standard`'s 1e-5 about 1e-6), not to the last bit.
    assert!(
        rel(a.z0_ohms, b.z0_ohms) < 1e-7,
        "{}",
        rel(a.z0_ohms, b.z0_ohms)
    );
    assert!(
        rel(a.eps_eff, b.eps_eff) < 1e-7,
        "{}",
        rel(a.eps_eff, b.eps_eff)
    );
    // And at `Standard`'s own residual, to the error it is documented to leave (1.2e-6).
    let std = |l| field::solve_line(&l, Accuracy::default()).unwrap().z0_ohms;
    let (p, q) = (std(s(0.2, 0.6, 3.0, 4.5)), std(s(0.6, 0.2, 4.5, 3.0)));
    assert!(rel(p, q) < 3e-6, "{}", rel(p, q));
    // And the permittivities really matter (εeff between them, not at either).
    assert!(a.eps_eff > 3.05 && a.eps_eff < 4.45, "{}", a.eps_eff);
}

fn one_sided_coplanar() -> CrossSection {
    let mut cs = field::cross_section_for_line(&microstrip(0.5, 0.3, 0.035, 4.3));
    cs.conductors.push(Conductor::ground(0.45, 3.0, 0.3, 0.335));
    cs
}

// Mirroring left–right leaves Z0 unchanged (an asymmetric line: one coplanar ground).
#[test]
fn mirroring_left_right_leaves_z0_unchanged() {
    let cs = one_sided_coplanar();
    let tight = |cs: &CrossSection| field::solve(cs, Accuracy::Refined(1)).unwrap();
    let a = tight(&cs);
    let b = tight(&cs.mirrored_x());
    assert!(!a.half_domain && !b.half_domain);
    // To the solver's stopping error, as for the top–bottom mirror above.
    assert!(
        rel(a.z0_ohms, b.z0_ohms) < 1e-7,
        "{}",
        rel(a.z0_ohms, b.z0_ohms)
    );
    // And at `Standard`'s own residual, to the error it is documented to leave (1.2e-6).
    let (s, t) = (solve(&cs), solve(&cs.mirrored_x()));
    assert!(
        rel(s.z0_ohms, t.z0_ohms) < 3e-6,
        "{}",
        rel(s.z0_ohms, t.z0_ohms)
    );
    // The coplanar ground does something: lower Z0 than the bare microstrip.
    let bare = z0(&microstrip(0.5, 0.3, 0.035, 4.3), Accuracy::default());
    assert!(a.z0_ohms < 0.99 * bare);
}

// The half-domain solve (symmetry wall at x = 0) agrees with the full-domain solve of the
// same line moved sideways (no longer symmetric about x = 0).
#[test]
fn half_domain_agrees_with_full_domain() {
    let line = Line::Cpwg(Cpwg {
        width: 0.5,
        gap: 0.15,
        h: 0.2,
        t: 0.035,
        er: 4.3,
    });
    let cs = field::cross_section_for_line(&line);
    let mut moved = cs.clone();
    for c in &mut moved.conductors {
        if let Shape::Rect { x0, x1, .. } = &mut c.shape {
            *x0 += 0.0123;
            *x1 += 0.0123;
        }
    }
    let (h, full) = (solve(&cs), solve(&moved));
    assert!(h.half_domain && !full.half_domain);
    assert!(
        rel(h.z0_ohms, full.z0_ohms) < 5e-4,
        "{} {}",
        h.z0_ohms,
        full.z0_ohms
    );
}

// ---------------------------------------------------------------------------------------
// Physical bounds for the features closed forms do not cover.

// Capacitance grows with the conductor (Thomson's theorem): an etched trapezoid lies between
// the rectangles of its bottom and of its top width.
#[test]
fn trapezoidal_trace_lies_between_its_bounding_rectangles() {
    let base = field::cross_section_for_line(&microstrip(0.3, 0.2, 0.035, 4.3));
    let with = |c: Conductor| {
        let mut cs = base.clone();
        cs.conductors[1] = c;
        solve(&cs).z0_ohms
    };
    let bottom = with(Conductor::trace(0.0, 0.2, 0.3, 0.035, 0.0));
    let trap = with(Conductor::trace(0.0, 0.2, 0.3, 0.035, 0.025));
    let top = with(Conductor::trace(0.0, 0.2, 0.275, 0.035, 0.0));
    assert!(bottom < trap && trap < top, "{bottom} {trap} {top}");
}

// A coat of εr = 1 is no coat; a real coat lowers Z0 (it adds capacitance, not inductance).
#[test]
fn coat_lowers_z0_and_an_air_coat_changes_nothing() {
    let bare = field::cross_section_for_line(&microstrip(0.3, 0.2, 0.035, 4.3));
    let mut air = bare.clone();
    air.coat = Some(Coat {
        thickness: 0.02,
        er: 1.0,
    });
    let mut mask = bare.clone();
    mask.coat = Some(Coat {
        thickness: 0.02,
        er: 3.5,
    });
    let (zb, za, zm) = (solve(&bare), solve(&air), solve(&mask));
    assert!(rel(zb.z0_ohms, za.z0_ohms) < 5e-4);
    assert!(zm.z0_ohms < 0.99 * zb.z0_ohms && zm.eps_eff > zb.eps_eff);
}

// Via fences (modelled as equivalent walls): far fences leave the stripline at Cohn's value
// (Cohn 1954 exact); nearer fences lower Z0 step by step.
#[test]
fn via_fences_far_away_leave_cohn_and_near_ones_lower_z0() {
    let line = stripline(0.2, 0.2, 0.2, 0.0, 4.0);
    let exact = cohn_centred(0.2, 0.4, 4.0);
    let mut prev = f64::INFINITY;
    for d in [4.0, 0.6, 0.4, 0.3] {
        let mut cs = field::cross_section_for_line(&line);
        cs.fences = Fence::pair(d, 0.2, 0.6, 0.0, 0.4).to_vec();
        let z = solve(&cs).z0_ohms;
        if d == 4.0 {
            assert!(rel(z, exact) < 5e-4, "{z} vs {exact}");
        }
        assert!(z < prev, "d {d}: {z}");
        prev = z;
    }
    assert!(prev < 0.97 * exact);
}

// Ground planes of finite width approach the unlimited plane as they widen.
#[test]
fn finite_planes_approach_unlimited_planes() {
    let line = stripline(0.3, 0.25, 0.25, 0.0, 4.0);
    let unlimited = z0(&line, Accuracy::default());
    let mut prev = 0.0;
    for half in [0.3, 0.6, 3.0] {
        let mut cs = field::cross_section_for_line(&line);
        cs.conductors[0] = Conductor::finite_plane(-half, half, -0.035, 0.035);
        cs.conductors[2] = Conductor::finite_plane(-half, half, 0.5, 0.035);
        let z = solve(&cs).z0_ohms;
        assert!(z > unlimited && (prev == 0.0 || z < prev), "{half}: {z}");
        prev = z;
    }
    assert!(rel(prev, unlimited) < 1e-3, "{prev} {unlimited}");
}

// A board of finite width: far edges change nothing; as the board narrows towards the trace
// there is less dielectric, so εeff falls and Z0 rises (C falls, C0 does not change).
#[test]
fn finite_board_approaches_unlimited_board() {
    let line = microstrip(0.36, 0.2, 0.0, 4.3);
    let unlimited = solve(&field::cross_section_for_line(&line));
    let mut prev_eps = 0.0;
    for half in [0.25, 0.5, 5.0] {
        let mut cs = field::cross_section_for_line(&line);
        cs.board = Some([-half, half]);
        let s = solve(&cs);
        assert!(s.eps_eff > prev_eps, "{half}: {}", s.eps_eff);
        prev_eps = s.eps_eff;
        if half == 5.0 {
            // 25 substrate heights of board each side: the same line, to the mesh's noise.
            assert!(rel(s.z0_ohms, unlimited.z0_ohms) < 2e-4, "{}", s.z0_ohms);
            assert!(rel(s.eps_eff, unlimited.eps_eff) < 2e-4, "{}", s.eps_eff);
        } else {
            assert!(
                s.eps_eff < (1.0 - 1e-3) * unlimited.eps_eff,
                "{half}: {}",
                s.eps_eff
            );
            assert!(s.z0_ohms > unlimited.z0_ohms, "{half}");
        }
    }
}

// Every structure of the impedance engine has a field cross-section, and the field
// solution is within 2 % of the engine's default closed form on a typical geometry. (The
// grounded CPW is taken at t = 0: with t/s = 0.23 the closed form's a-posteriori thickness
// correction gives −3.6 % against our −8.8 %, see docs/field-solver.md.)
#[test]
fn every_impedance_structure_solves_by_the_field_method() {
    let lines = [
        microstrip(0.3, 0.2, 0.035, 4.3),
        Line::CoatedMicrostrip(CoatedMicrostrip {
            line: Microstrip {
                width: 0.3,
                h: 0.2,
                t: 0.035,
                er: 4.3,
            },
            mask_t: 0.02,
            mask_er: 3.5,
        }),
        stripline(0.15, 0.2, 0.3, 0.035, 4.2),
        Line::Cpwg(Cpwg {
            width: 0.3,
            gap: 0.15,
            h: 0.2,
            t: 0.0,
            er: 4.3,
        }),
    ];
    for line in lines {
        let closed = analyse(&line, None).unwrap().z0;
        let field = z0(&line, Accuracy::default());
        assert!(rel(field, closed) < 0.02, "{line:?}: {field} vs {closed}");
    }
}

// ---------------------------------------------------------------------------------------
// Bad input: refused with the field, the value and the allowed range; never a panic.

fn message(cs: &CrossSection) -> String {
    match field::solve(cs, Accuracy::default()) {
        Err(e @ Error::Invalid(_)) => e.to_string(),
        other => panic!("expected an Invalid error, got {other:?}"),
    }
}

#[test]
fn degenerate_geometries_are_refused_with_clear_messages() {
    let base = field::cross_section_for_line(&microstrip(0.5, 0.3, 0.035, 4.3));

    // A coplanar ground overlapping the trace.
    let mut cs = base.clone();
    cs.conductors.push(Conductor::ground(0.2, 3.0, 0.3, 0.335));
    let m = message(&cs);
    assert!(m.contains("conductors[1]") && m.contains("touches or overlaps conductors[2]"));
    assert!(m.contains("clearance greater than 0 mm"), "{m}");

    // Touching exactly (zero gap).
    let mut cs = base.clone();
    cs.conductors.push(Conductor::ground(0.25, 3.0, 0.3, 0.335));
    assert!(message(&cs).contains("clearance 0 mm"));

    // Zero and negative width.
    let mut cs = base.clone();
    cs.conductors[1] = Conductor::trace(0.0, 0.3, 0.0, 0.035, 0.0);
    assert!(message(&cs).contains("conductors[1] width = 0: a signal conductor must be wider"));
    cs.conductors[1] = Conductor::ground(0.2, -0.2, 0.3, 0.3);
    let m = message(&cs);
    assert!(
        m.contains("conductors[1].x1 = -0.2: must be at least x0 = 0.2"),
        "{m}"
    );

    // Etch as large as the width.
    let mut cs = base.clone();
    cs.conductors[1] = Conductor::trace(0.0, 0.3, 0.5, 0.035, 0.5);
    assert!(message(&cs).contains("conductors[1] top width = 0: must be greater than 0 mm"));

    // A trace outside the box.
    let mut cs = base.clone();
    cs.boundary = Boundary::Shield {
        x0: -1.0,
        x1: 0.2,
        y0: 0.0,
        y1: 2.0,
    };
    let m = message(&cs);
    assert!(
        m.contains("conductors[1]") && m.contains("must lie strictly inside"),
        "{m}"
    );

    // NaN and out-of-range numbers, all reported at once.
    let mut cs = base.clone();
    cs.layers[0].thickness = f64::NAN;
    cs.layers[0].er = 0.5;
    cs.coat = Some(Coat {
        thickness: -0.01,
        er: 3.5,
    });
    let m = message(&cs);
    assert!(
        m.contains("layers[0].thickness = NaN: must be a finite length"),
        "{m}"
    );
    assert!(m.contains("layers[0].er = 0.5: must be a finite relative permittivity from 1"));
    assert!(m.contains("coat.thickness = -0.01"));

    // A ground behind an unlimited plane, no signal, posts closer than two diameters.
    let mut cs = base.clone();
    cs.conductors.push(Conductor::ground(-1.0, 1.0, -0.5, -0.4));
    assert!(message(&cs).contains("screened from the signal by an unlimited plane"));
    let mut cs = base.clone();
    cs.conductors.remove(1);
    assert!(message(&cs).contains("at least one conductor must have the role Signal"));
    let mut cs = base.clone();
    cs.fences = vec![Fence {
        x: 1.0,
        diameter: 0.3,
        pitch: 0.5,
        y0: 0.0,
        y1: 0.3,
    }];
    assert!(message(&cs).contains("fences[0].pitch = 0.5: must be from 2 × diameter"));

    // An unreasonable refinement.
    let e = field::solve(&base, Accuracy::Refined(0))
        .unwrap_err()
        .to_string();
    assert!(e.contains("must be from 1 to"), "{e}");
}

// The line path reports the impedance engine's field names (the command-line flags).
#[test]
fn bad_lines_are_refused_with_their_flag_names() {
    let e = field::solve_line(
        &stripline(-0.1, 0.2, f64::NAN, 0.0, 4.0),
        Accuracy::default(),
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("width = -0.1") && e.contains("h2 = NaN"), "{e}");
}

/// A kept solution is the solution: solving the same cross-section again (served from the
/// process's kept solutions) gives exactly what a fresh solve gives, and a cross-section that
/// differs in one number's last bit is solved anew.
#[test]
fn kept_solutions_are_exact_and_keyed_to_the_last_bit() {
    let cs = one_sided_coplanar();
    let first = field::solve(&cs, Accuracy::Draft).unwrap();
    let again = field::solve(&cs, Accuracy::Draft).unwrap();
    let fresh = field::solve_uncached(&cs, Accuracy::Draft).unwrap();
    assert_eq!(first, again);
    assert_eq!(first, fresh);
    let mut nudged = cs.clone();
    nudged.layers[0].thickness = f64::from_bits(nudged.layers[0].thickness.to_bits() + 1);
    let other = field::solve(&nudged, Accuracy::Draft).unwrap();
    assert_eq!(
        other,
        field::solve_uncached(&nudged, Accuracy::Draft).unwrap()
    );
}

// The capacitance alone (`field::capacitance_per_m`, used for the shield gap) is the full
// solution's C to the last bit: the same meshes and iterations without the vacuum solves.
#[test]
fn capacitance_alone_is_the_full_solutions_c_to_the_bit() {
    let cs = one_sided_coplanar();
    let full = field::solve_uncached(&cs, Accuracy::Draft).unwrap();
    let c = field::capacitance_per_m(&cs, Accuracy::Draft).unwrap();
    assert_eq!(
        c.to_bits(),
        full.c_per_m.to_bits(),
        "{c} vs {}",
        full.c_per_m
    );
}
