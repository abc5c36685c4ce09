//! Stitching rows that never lose their vias, and a design rule that sees missing ones.
//!
//! The pitch limit is the project's own λ/N rule (docs/formulas.md, stitching pitch); these
//! tests check that the via placement keeps it along every required row of large loops, and
//! that the design-rule check's row coverage fails a board whose artwork lost a row.

use loopwright::drc::check;
use loopwright::geom::{ViaRole, build};
use loopwright::model::probe::{Probe, family_from_spec};
use loopwright::solve::probe::solve;
use std::path::Path;

/// The demo's 20 mm round probe (FM-R20, demo stackup and handle) at another size, stitching
/// count and top frequency.
fn probe(size_mm: f64, pitch_n: f64, f_max_hz: f64) -> Probe {
    let text = loopwright::cli::DEMO_SPEC
        .replace("pitch_n = 20", &format!("pitch_n = {pitch_n}"))
        .replace("f_max_hz = 3e9", &format!("f_max_hz = {f_max_hz}"))
        .replace("size_mm = 20.0", &format!("size_mm = {size_mm:.1}"));
    let spec = loopwright::spec::parse_toml(&text, "rows.toml").unwrap();
    let fam = family_from_spec(&spec, Path::new(".")).unwrap();
    let p = fam.probes.into_iter().find(|p| p.name == "FM-R20").unwrap();
    assert_eq!((p.vias.f_max_hz, p.vias.pitch_n), (f_max_hz, pitch_n));
    p
}

/// The largest straight-line gap between consecutive vias of one role along the left half of
/// a round loop's row (sorted by angle from the gap at the top to the axis at the bottom),
/// with the row's two ends.
fn row_gaps(b: &loopwright::geom::Board, role: ViaRole, r: f64, start: f64) -> (usize, f64) {
    let mut ang: Vec<f64> = b
        .vias
        .iter()
        .filter(|v| v.role == role && v.at.x <= 1e-9)
        .map(|v| v.at.x.abs().atan2(v.at.y))
        .collect();
    let n = ang.len();
    ang.push(start);
    ang.push(std::f64::consts::PI);
    ang.sort_by(f64::total_cmp);
    let worst = ang
        .windows(2)
        .map(|w| 2.0 * r * ((w[1] - w[0]) / 2.0).sin())
        .fold(0.0, f64::max);
    (n, worst)
}

/// A 180 mm round loop at 10 GHz with pitch_n = 10 (the case that used to lose all its
/// stitching vias at a 200-step ceiling): it builds, its inner and outer rows carry vias from
/// the gap's keep-out to the axis within the pitch limit, and the design-rule check is clean.
#[test]
fn a_180_mm_loop_at_10_ghz_keeps_its_rows() {
    let p = probe(180.0, 10.0, 10e9);
    let s = solve(&p).unwrap();
    let b = build(&p, &s);
    let r_mid = 90.0;
    for (role, r) in [
        (ViaRole::InnerRow, r_mid - s.fence_offset),
        (ViaRole::OuterRow, r_mid + s.fence_offset),
    ] {
        // The row starts where it leaves the gap's keep-out (half the gap, the pad, 0.1 mm).
        let keep = p.gap / 2.0 + p.vias.pad / 2.0 + 0.1;
        let start = (keep / r).asin();
        let (n, worst) = row_gaps(&b, role, r, start);
        // Half the circumference over the limit: the fewest vias a covered half-row needs.
        let need = (std::f64::consts::PI * r / s.pitch_max).floor() as usize;
        assert!(
            n >= need,
            "{role:?}: {n} vias on the half row, at least {need} needed"
        );
        if role == ViaRole::InnerRow {
            assert!(
                worst <= s.pitch_max + 1e-6,
                "{role:?}: a gap of {worst:.3} mm > limit {:.3} mm",
                s.pitch_max
            );
        }
    }
    let art = loopwright::artwork::compose(&p, &b);
    let v = check(&p, &s, &b, &art);
    assert!(v.is_empty(), "{v:?}");
}

/// The same check at the demo's 20 mm size: rows within the limit, the rule quiet.
#[test]
fn the_demo_size_rows_keep_the_limit() {
    let p = probe(20.0, 20.0, 3e9);
    let s = solve(&p).unwrap();
    let b = build(&p, &s);
    let keep = p.gap / 2.0 + p.vias.pad / 2.0 + 0.1;
    let r = 10.0 - s.fence_offset;
    let (_, worst) = row_gaps(&b, ViaRole::InnerRow, r, (keep / r).asin());
    assert!(worst <= s.pitch_max + 1e-6, "{worst} > {}", s.pitch_max);
}

/// Which vias a case removes.
type Drop = Box<dyn Fn(&loopwright::geom::Via) -> bool>;

/// Removing a row of vias from the artwork (and the board) makes the row-coverage rule fire,
/// naming the row; removing a single via from a row does too. The nearest-neighbour pitch rule
/// alone stays quiet when a whole row goes (every remaining via still has a neighbour).
#[test]
fn a_board_missing_vias_fails_the_pitch_rule() {
    let p = probe(20.0, 20.0, 3e9);
    let s = solve(&p).unwrap();
    let full = build(&p, &s);
    let art = loopwright::artwork::compose(&p, &full);
    assert!(check(&p, &s, &full, &art).is_empty());
    let cases: [(&str, Drop, &str); 3] = [
        (
            "inner row removed",
            Box::new(|v| v.role == ViaRole::InnerRow),
            "inner stitching row",
        ),
        (
            "one fence side removed",
            Box::new(|v| v.role == ViaRole::Fence && v.at.x > 0.0),
            "feed fence, right side",
        ),
        (
            "one outer-row via removed",
            {
                let target = full
                    .vias
                    .iter()
                    .filter(|v| v.role == ViaRole::OuterRow && v.at.x < -1.0)
                    .map(|v| v.at)
                    .max_by(|a, b| a.y.total_cmp(&b.y))
                    .unwrap();
                Box::new(move |v| v.at == target)
            },
            "outer stitching row, left half",
        ),
    ];
    for (what, drop, row) in cases {
        let mut b = full.clone();
        let before = b.vias.len();
        b.vias.retain(|v| !drop(v));
        assert!(b.vias.len() < before, "{what}: nothing removed");
        let art = loopwright::artwork::compose(&p, &b);
        let v = check(&p, &s, &b, &art);
        assert!(
            v.iter()
                .any(|x| x.rule == loopwright::drc::Rule::StitchingRowPitch
                    && x.detail.contains(row)),
            "{what}: no row violation naming '{row}': {v:?}"
        );
    }
}
