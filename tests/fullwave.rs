//! The demo probes' predicted S21 on the demo fixture against an openEMS FDTD reference.
//!
//! Reference: `tests/data/fdtd_refs.toml`, from `tests/reference/fdtd_refs.py` (openEMS
//! v0.0.35 / CSXCAD 0.6.2, Debian packages; its header lists the set-up and every
//! simplification: PEC copper, lossless dielectrics, via rows as walls, handle shortened to
//! 6 mm, plain 50 mm microstrip between lumped ports). FM-R10 and FM-R5, tip 1 mm above the
//! line's copper, two meshes each. The model is compared lossless, as the FDTD ran.

mod common;
use common::refs;

fn floats(v: &toml::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| {
            x.as_float()
                .or(x.as_integer().map(|i| i as f64))
                .unwrap_or(f64::NAN)
        })
        .collect()
}

/// (f, model |S21| dB, FDTD fine dB, FDTD coarse dB, in band) for one probe.
fn compare(case: &str, name: &str) -> Vec<(f64, f64, f64, f64, bool)> {
    let top = refs("fdtd_refs.toml");
    let sp = |mesh: &str| {
        top["sparam"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| s["case"].as_str() == Some(case) && s["mesh"].as_str() == Some(mesh))
            .unwrap()
            .clone()
    };
    let (fine, coarse) = (sp("fine"), sp("coarse"));
    let (x, line) = common::demo_probe_and_line(name);
    let mut r = x.response.as_loop().unwrap().clone();
    (r.alpha_c_1ghz, r.alpha_dc, r.tan_d) = (0.0, 0.0, 0.0);
    let c = loopwright::physics::coupling::probe_coupling(&x.probe, &x.solved, &r, 1.0, &line);
    let fr = floats(&fine["freq_hz"]);
    let (df, dc) = (
        floats(&fine["s21_probe_db"]),
        floats(&coarse["s21_probe_db"]),
    );
    fr.iter()
        .enumerate()
        .map(|(i, &f)| {
            let m = 20.0 * c.s21(&r, f).abs().log10();
            let band = f >= r.corner_hz / 10.0 && f <= r.upper_hz;
            (f, m, df[i], dc[i], band)
        })
        .collect()
}

/// In the usable band (a decade below the corner to the upper usable frequency), against each
/// probe's finest mesh: cells 0.15, 0.11 and 0.08 mm in the probe's region, and 0.06 mm for
/// FM-R5 (3.4 M cells, 42 min); the extrapolation is the three finest meshes'.
///
/// The model as shipped: the shield's current with the gap's correction, and for the test
/// line the gap capacitance in the gap's impedance only (`Response::line_transfer`, from the
/// FDTD of the gap circuit).
///
/// **FM-R10**: +0.13 to +0.53 dB against the finest mesh over the whole band, within 0.29 dB
/// of the three meshes' Richardson extrapolation where one exists (above 0.75 GHz). The top
/// of the band moves with the mesh towards the model: FDTD's staircased loop is electrically
/// long, and its stub null climbs 1.85 → 1.98 → 2.07 GHz against the model's 2.26 GHz.
///
/// **FM-R5**: −0.08 to +0.50 dB against the finest mesh, within 0.70 dB of the
/// fine/finer/finest extrapolation. The fourth mesh moved the top of the band by only 0.1 dB
/// (0.27 dB from fine to finer).
///
/// Held at 0.6 dB against the finest mesh (the issue asks 1 dB) and 1 dB against the
/// extrapolation; 1.25 dB against the coarser fine mesh, so a drift in either shows. The
/// axisymmetric model with a lumped gap circuit read −0.72 to +0.94 dB, the earlier
/// centreline model 1.7 dB (FM-R10) and 3.7 dB (FM-R5) high at low frequency.
#[test]
fn predicted_s21_follows_the_fdtd_reference_in_the_usable_band() {
    let top = refs("fdtd_refs.toml");
    for (case, name) in [("R10", "FM-R10"), ("R5", "FM-R5")] {
        let rows = compare(case, name);
        let inband: Vec<_> = rows.iter().filter(|r| r.4).collect();
        assert!(inband.len() > 20, "{case}: {} points", inband.len());
        for &&(f, m, fine, _, _) in &inband {
            assert!(
                (m - fine).abs() < 1.25,
                "{case} at {f:.3e} Hz: model {m:.2} dB, FDTD fine {fine:.2} dB"
            );
        }
        // Below 300 MHz the meshes agree to 0.2 dB and the model holds 1 dB.
        for &&(f, m, fine, coarse, _) in inband.iter().filter(|r| r.0 < 3e8) {
            assert!((fine - coarse).abs() < 0.2, "{case} {f}");
            assert!((m - fine).abs() < 1.0, "{case} {f}");
        }
        // The finest mesh, every point of the band, and the extrapolation of the three finest
        // meshes where it exists.
        let finest = ["finest", "finer"]
            .iter()
            .find_map(|m| {
                top["sparam"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .find(|s| s["case"].as_str() == Some(case) && s["mesh"].as_str() == Some(m))
            })
            .expect("a third mesh");
        let last = finest["mesh"].as_str().unwrap();
        let ff = floats(&finest["s21_probe_db"]);
        let rich = top["richardson"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| {
                s["case"].as_str() == Some(case)
                    && s["meshes"].as_array().unwrap().last().unwrap().as_str() == Some(last)
            })
            .expect("the extrapolation");
        let x = floats(&rich["extrapolated_db"]);
        let (mut n, mut nx) = (0, 0);
        let (mut lo, mut hi, mut worst_x) = (f64::INFINITY, f64::NEG_INFINITY, 0.0f64);
        for (i, &(f, m, _, _, band)) in rows.iter().enumerate() {
            if !band {
                continue;
            }
            assert!(
                (m - ff[i]).abs() < 0.6,
                "{case} at {f:.3e} Hz: model {m:.2} dB, finest FDTD ({last}) {:.2} dB",
                ff[i]
            );
            (lo, hi) = (lo.min(m - ff[i]), hi.max(m - ff[i]));
            n += 1;
            if x[i].is_finite() {
                assert!((m - x[i]).abs() < 1.0, "{case} at {f:.3e} Hz: extrapolated");
                worst_x = worst_x.max((m - x[i]).abs());
                nx += 1;
            }
        }
        eprintln!(
            "{case}: {lo:+.2} to {hi:+.2} dB against the {last} mesh, within {worst_x:.2} dB of \
             the extrapolation"
        );
        assert!(n > 20 && nx > 5, "{case}: {n} {nx}");
    }
}

/// The `[[run]]` table of one case, mesh and variant.
fn find_run<'a>(top: &'a toml::Value, case: &str, mesh: &str, variant: &str) -> &'a toml::Value {
    top["run"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| {
            r["case"].as_str() == Some(case)
                && r["mesh"].as_str() == Some(mesh)
                && r["variant"].as_str() == Some(variant)
        })
        .unwrap_or_else(|| panic!("no {case} {mesh} {variant} run"))
}

/// One run of `tests/data/fdtd_probe_port.toml` (`tests/reference/fdtd_probe_port.py`): the
/// probe driven at its own output, S33 and S13 as complex numbers.
fn port_run(top: &toml::Value, case: &str, mesh: &str, variant: &str) -> Vec<(f64, Cx, Cx)> {
    let r = find_run(top, case, mesh, variant);
    let v = |k: &str| floats(&r[k]);
    let (f, a, b, c, d) = (
        v("freq_hz"),
        v("s33_re"),
        v("s33_im"),
        v("s13_re"),
        v("s13_im"),
    );
    (0..f.len())
        .map(|i| (f[i], Cx::new(a[i], b[i]), Cx::new(c[i], d[i])))
        .collect()
}

use loopwright::physics::Cx;

/// The probe seen from its output (FM-R5, fine and finer meshes, and the fine mesh run longer;
/// the probe driven at its port, the line's ports terminated): an outside check of the shield's
/// inductance as the gap sees it.
///
/// - **Reciprocity** of the two FDTD set-ups: S13 (probe driven) and `fdtd_refs.toml`'s S31
///   (line driven, fine mesh) agree within 0.1 dB from 500 MHz to 3 GHz (0.03 dB below 2 GHz),
///   so the two runs and their post-processing are consistent there; lower down they part by up
///   to 0.15 dB (300–500 MHz), 0.4 dB (100–300 MHz) and 1 dB (below 100 MHz), a measure of the
///   FDTD's own uncertainty where its pulse carries little energy.
/// - **Inductance at the gap.** With the shield joined across its cut (`bridged`) the gap sees
///   the stub alone; as built (`open`) the shield's loop in series. At 10–50 MHz the lines are
///   electrically short, so the difference of the port reactances over ω is the shield loop's
///   inductance at the gap, free of any line model: 2.93 nH on the fine mesh, 2.91 nH on the
///   finer one (converged to 1 %). The axisymmetric current's L_out (`physics::shield`) is
///   2.42 nH, 17 % lower; with the current gathered at the gap (`physics::shield_gap`), as
///   shipped, 2.61 nH, 10 % lower. NEC-2's grid reads 3.15 nH with
///   its gap bus. Held at those margins (±3 %) as an open finding of the issue on the probe
///   factor: docs/response.md.
/// - **Where the fence stops** (`-walls0`, `-walls1`: the ring's via walls reaching the cut or
///   stopping 1 mm short of it, against 0.3 mm as built; fine mesh). Full-record values: the
///   open probe's port inductance moves by 0.015 nH when the walls reach the cut (+0.18 nH at
///   1 mm), the bridged reference by +0.26 nH (open − bridged 2.68 nH, where the model with the
///   gap's correction reads 2.9 % low and the axisymmetric one 9.8 % low).
/// - **The −40 dB records do not resolve these inductances**: each run's tail self-check (S33
///   from the first 80 % of the record with its own tail) moves the bridged runs' low-frequency
///   inductance by 3–4 nH and the open runs' by 0.2–1 nH (asserted below), so the margins above
///   are regression guards on recorded data.
/// - **Run on to −50 dB** (`fine-long`: the fine mesh, end criterion 1e-5), the self-check
///   moves them by less than 0.1 nH: open 10.61 nH, bridged 8.05 nH (the −40 dB runs read 0.16
///   and 0.53 nH low), so the shield's inductance at the gap is **2.56 nH**. The model with the
///   gap's correction (shipped) reads 2.61 nH (+1.6 %, held at 3 %), the axisymmetric one 2.42 nH (−5.7 %,
///   regression guard).
#[test]
fn gap_inductance_and_reciprocity_against_the_probe_driven_fdtd() {
    let top = refs("fdtd_probe_port.toml");
    let open = port_run(&top, "R5", "fine", "open");
    // Reciprocity against the line-driven run.
    let line = refs("fdtd_refs.toml");
    let s31 = line["sparam"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["case"].as_str() == Some("R5") && s["mesh"].as_str() == Some("fine"))
        .unwrap();
    let (f31, m31) = (floats(&s31["freq_hz"]), floats(&s31["s21_probe_db"]));
    let mut n = 0;
    for ((&f, &m), &(fo, _, s13)) in f31.iter().zip(&m31).zip(&open) {
        assert!((f / fo - 1.0).abs() < 1e-9);
        if (5e8..=3e9).contains(&f) {
            let d = 20.0 * s13.abs().log10() - m;
            assert!(d.abs() < 0.1, "{f:.3e} Hz: S13 − S31 = {d:.3} dB");
            n += 1;
        }
    }
    assert!(n > 100, "{n}");
    // Below 500 MHz the two set-ups part (0.15 dB at 300–500 MHz, 0.4 dB at 100–300 MHz, 1 dB
    // below): the pulse carries little energy there, so that is the FDTD's own uncertainty.
    // The shield's inductance at the gap, from the low-frequency reactances.
    let x_over_w = |run: &[(f64, Cx, Cx)], i: usize| {
        let (f, s, _) = run[i];
        let one = Cx::new(1.0, 0.0);
        let z = (one + s) / (one + s * Cx::new(-1.0, 0.0)) * Cx::new(50.0, 0.0);
        z.im / (2.0 * std::f64::consts::PI * f)
    };
    let l_gap = |mesh: &str| {
        let open = port_run(&top, "R5", mesh, "open");
        let bridged = port_run(&top, "R5", mesh, "bridged");
        let low: Vec<f64> = (0..open.len())
            .filter(|&i| open[i].0 <= 5.1e7)
            .map(|i| x_over_w(&open, i) - x_over_w(&bridged, i))
            .collect();
        assert!(low.len() >= 5);
        let spread = low.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            - low.iter().cloned().fold(f64::INFINITY, f64::min);
        let l = low.iter().sum::<f64>() / low.len() as f64;
        assert!(
            spread < 0.01 * l,
            "{mesh}: the low-frequency values move: {low:?}"
        );
        l
    };
    let (l_fine, l_fdtd) = (l_gap("fine"), l_gap("finer"));
    assert!(
        (l_fine / l_fdtd - 1.0).abs() < 0.02,
        "the meshes differ: {l_fine:e} {l_fdtd:e}"
    );
    let (x, _) = common::demo_probe_and_line("FM-R5");
    // The shipped L_out includes the gap's correction; without it, the axisymmetric current's.
    let (l_corr, l_axi) = (
        x.response.as_loop().unwrap().l_outer,
        x.response.as_loop().unwrap().l_outer - x.response.as_loop().unwrap().gap_l_outer,
    );
    let axi = l_axi / l_fdtd - 1.0;
    let gathered = l_corr / l_fdtd - 1.0;
    eprintln!(
        "FDTD {:.3} nH; the axisymmetric current alone {:.3} nH ({:+.1} %), shipped (with the gap's correction) {:.3} nH ({:+.1} %)",
        l_fdtd * 1e9,
        l_axi * 1e9,
        axi * 100.0,
        l_corr * 1e9,
        gathered * 100.0
    );
    assert!(
        (axi + 0.17).abs() < 0.03,
        "axisymmetric L_out {axi:+.3} re FDTD"
    );
    assert!(
        (gathered + 0.10).abs() < 0.03,
        "shipped L_out {gathered:+.3} re FDTD"
    );
    // Where the fence walls stop (fine mesh): the open probe's low-frequency port inductance
    // hardly moves when they reach the cut, but the bridged reference does, and its tail's
    // self-check is four to twenty times the open runs'. So the open − bridged inductance
    // carries the bridge's own uncertainty, of the size of the model's shortfall above.
    let low_l = |run: &[(f64, Cx, Cx)]| {
        let v: Vec<f64> = (0..run.len())
            .filter(|&i| run[i].0 <= 5.1e7)
            .map(|i| x_over_w(run, i))
            .collect();
        v.iter().sum::<f64>() / v.len() as f64
    };
    let l = |variant: &str| low_l(&port_run(&top, "R5", "fine", variant));
    let (open_0, open_3, open_10) = (l("open-walls0"), l("open"), l("open-walls1"));
    let (bridged_0, bridged_3, bridged_10) =
        (l("bridged-walls0"), l("bridged"), l("bridged-walls1"));
    eprintln!(
        "open {:.3}/{:.3}/{:.3} nH, bridged {:.3}/{:.3}/{:.3} nH (walls 0/0.3/1 mm from the cut)",
        open_0 * 1e9,
        open_3 * 1e9,
        open_10 * 1e9,
        bridged_0 * 1e9,
        bridged_3 * 1e9,
        bridged_10 * 1e9
    );
    assert!((open_0 - open_3).abs() < 0.03e-9, "{open_0:e} {open_3:e}");
    assert!(open_10 > open_3 + 0.1e-9 && open_10 < open_3 + 0.3e-9);
    assert!((bridged_10 - bridged_3).abs() < 0.03e-9);
    assert!(bridged_0 > bridged_3 + 0.2e-9 && bridged_0 < bridged_3 + 0.35e-9);
    // Against the bridged reference with the walls reaching the cut: recorded margins.
    let l_walls = open_0 - bridged_0;
    let (axi_w, gathered_w) = (l_axi / l_walls - 1.0, l_corr / l_walls - 1.0);
    eprintln!(
        "walls to the cut: FDTD {:.3} nH; axisymmetric {:+.1} %, shipped {:+.1} %",
        l_walls * 1e9,
        axi_w * 100.0,
        gathered_w * 100.0
    );
    assert!((axi_w + 0.10).abs() < 0.02, "{axi_w}");
    assert!(gathered_w.abs() < 0.04, "{gathered_w}");
    // The tail self-check: S33 with the recorded phase change of the 80 % record moves the
    // low-frequency inductance by far more than the differences above.
    let cut_l = |mesh: &str, variant: &str| {
        let change = floats(&find_run(&top, "R5", mesh, variant)["s33_cut_change_deg"]);
        let run = port_run(&top, "R5", mesh, variant);
        let moved: Vec<(f64, Cx, Cx)> = run
            .iter()
            .zip(&change)
            .map(|(&(f, s, t), &d)| {
                let (c, si) = (d.to_radians().cos(), d.to_radians().sin());
                (f, s * Cx::new(c, si), t)
            })
            .collect();
        low_l(&moved) - low_l(&run)
    };
    for v in ["bridged", "bridged-walls0", "bridged-walls1"] {
        let d = cut_l("fine", v);
        assert!(d.abs() > 2.5e-9, "{v}: the tail moves L by {d:e}");
    }
    for v in ["open", "open-walls0", "open-walls1"] {
        let d = cut_l("fine", v);
        assert!(d.abs() > 0.1e-9 && d.abs() < 1.2e-9, "{v}: {d:e}");
    }
    // Run on to −50 dB (`fine-long`): the self-check moves the low-frequency inductance by less
    // than 0.1 nH, so open − bridged is resolved, and the model with the gap's correction
    // matches it.
    for v in ["open", "bridged"] {
        let d = cut_l("fine-long", v);
        assert!(d.abs() < 0.1e-9, "{v}: the tail still moves L by {d:e}");
    }
    let (open_l, bridged_l) = (
        low_l(&port_run(&top, "R5", "fine-long", "open")),
        low_l(&port_run(&top, "R5", "fine-long", "bridged")),
    );
    let l_long = open_l - bridged_l;
    let (axi_l, gathered_l) = (l_axi / l_long - 1.0, l_corr / l_long - 1.0);
    eprintln!(
        "−50 dB runs: open {:.3} nH (−40 dB: {:.3}), bridged {:.3} nH (−40 dB: {:.3}); at the \
         gap {:.3} nH: axisymmetric {:+.1} %, shipped {:+.1} %",
        open_l * 1e9,
        open_3 * 1e9,
        bridged_l * 1e9,
        bridged_3 * 1e9,
        l_long * 1e9,
        axi_l * 100.0,
        gathered_l * 100.0
    );
    assert!(
        gathered_l.abs() < 0.03,
        "corrected L_out {gathered_l:+.3} re FDTD"
    );
    assert!(
        (axi_l + 0.056).abs() < 0.02,
        "axisymmetric L_out {axi_l:+.3} re FDTD"
    );
}

/// One run of `tests/data/fdtd_gap_port.toml` (`tests/reference/fdtd_gap_port.py`): the
/// frequencies and the complex values of `key` (`s33`, `s13`, `v_per_h`).
fn gap_run(top: &toml::Value, case: &str, mesh: &str, variant: &str, key: &str) -> Vec<(f64, Cx)> {
    let r = find_run(top, case, mesh, variant);
    let (f, re, im) = (
        floats(&r["freq_hz"]),
        floats(&r[format!("{key}_re").as_str()]),
        floats(&r[format!("{key}_im").as_str()]),
    );
    (0..f.len())
        .map(|i| (f[i], Cx::new(re[i], im[i])))
        .collect()
}

/// Port impedance from S (50 Ω reference).
fn z_of(s: Cx) -> Cx {
    let one = Cx::new(1.0, 0.0);
    Cx::new(50.0, 0.0) * (one + s) / sub(one, s)
}

/// a − b.
fn sub(a: Cx, b: Cx) -> Cx {
    a + b * Cx::new(-1.0, 0.0)
}

/// The shield's impedance at the gap, Z_open − Z_bridged, fitted as jωL/(1 − ω²LC) between
/// `lo` and `hi` Hz (Im 1/Z = ωC − 1/(ωL), least squares in C and 1/L scaled to order one);
/// (L, C), after checking the lumped form fits every point within 1 %.
fn fit_gap(open: &[(f64, Cx)], bridged: &[(f64, Cx)], lo: f64, hi: f64) -> (f64, f64) {
    let rows: Vec<(f64, f64)> = open
        .iter()
        .zip(bridged)
        .filter(|((f, _), _)| *f >= lo && *f <= hi)
        .map(|(&(f, so), &(_, sb))| {
            let y = Cx::new(1.0, 0.0) / sub(z_of(so), z_of(sb));
            (2.0 * std::f64::consts::PI * f, y.im)
        })
        .collect();
    assert!(rows.len() > 30, "{}", rows.len());
    let (mut a11, mut a12, mut a22, mut b1, mut b2) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for &(w, y) in &rows {
        let (u, v) = (w * 1e-9, -1e9 / w);
        (a11, a12, a22, b1, b2) = (
            a11 + u * u,
            a12 + u * v,
            a22 + v * v,
            b1 + u * y,
            b2 + v * y,
        );
    }
    let det = a11 * a22 - a12 * a12;
    let (c, inv_l) = (
        (b1 * a22 - b2 * a12) / det * 1e-9,
        (a11 * b2 - a12 * b1) / det * 1e9,
    );
    let l = 1.0 / inv_l;
    let misfit = rows
        .iter()
        .map(|&(w, y)| ((w * c - 1.0 / (w * l)) - y).abs() / y.abs())
        .fold(0.0, f64::max);
    assert!(misfit < 0.01, "the lumped form does not fit: {misfit}");
    (l, c)
}

/// The line's voltage per ampere into the gap, M_eff = 2·50·S13/(jω(1 − S33)), per frequency.
fn m_eff_of(s13: &[(f64, Cx)], s33: &[(f64, Cx)]) -> Vec<(f64, f64)> {
    s13.iter()
        .zip(s33)
        .map(|(&(f, a), &(_, s))| {
            let w = 2.0 * std::f64::consts::PI * f;
            (
                f,
                (Cx::new(100.0, 0.0) * a / (Cx::new(0.0, w) * sub(Cx::new(1.0, 0.0), s))).abs(),
            )
        })
        .collect()
}

/// The shield's gap circuit and the probe in a uniform field, against the FDTD with no inner
/// line at all (`fdtd_gap_port.py`: FM-R5 on the fixture with the trace, feed and short removed,
/// L2 filled like the shield layers, a 50 Ω port across the cut on L2 at the centreline; runs
/// to −50 dB, tail self-check under 0.01 dB). docs/response.md has the reading.
///
/// - **Gap circuit.** Z_open − Z_bridged (the port's own crossing, 0.32 nH, taken out) is the
///   shield's impedance at the gap. Fitted as jωL/(1 − ω²LC) (Im 1/Z linear in C and 1/L) from
///   0.3 GHz (below, the FDTD's X/ω wanders by 0.8 %) to FM-R5's upper usable frequency, on two
///   meshes: L = 2.62 nH, C = 0.335 pF, misfit under 1 %. The model: L_out 2.42 nH for the
///   axisymmetric current alone (−8 %), 2.61 nH with the gap's correction, as shipped (within
///   3 %); its 2-D gap capacitance in the
///   board 0.268 pF, 20 % low (held at 20 ± 5 %).
/// - **The line sees no resonant rise.** The line's voltage per ampere into the gap,
///   M_eff = 2·50·S13/(jω(1 − S33)), is 212.8 pH at 50 MHz (axisymmetric model 195.1 pH, shipped 214.1 pH) and rises
///   0.19 dB to the upper usable frequency, where a capacitor across the loop's terminals would
///   raise it by 1/(1 − ω²LC), 0.87 dB.
/// - **A uniform field does.** The same probe alone in air (no fixture), the port a passive
///   load, lit by a plane wave with H normal to the loop (`wave-bare`: the handle cut back to a
///   neck): V/H at 50 MHz gives an effective area of 12.97 mm², the axisymmetric model's
///   12.16 mm² (−6.2 %) and 12.86 mm² with the gap's correction, as shipped (within 2 %); over the band it follows
///   the model's uniform-field transfer, with the rise, within 0.1 dB (held at 0.25), and
///   departs from the same transfer without the rise by 1.0 dB.
/// - **FM-R10's gap circuit** (fine mesh): L = 9.75 nH (shipped 9.89, +1.4 %), C = 0.416 pF
///   (model 0.275, −34 %), and its line coupling *does* rise, 0.89 dB to the upper usable
///   frequency against the lumped form's 0.84: the line form the predictions use
///   (`Response::line_transfer`) is FM-R5's finding and does not hold for FM-R10 (an open
///   limitation, docs/response.md).
/// - **The handle adds area.** With the 6 mm handle of the other runs (`wave`), the effective
///   area is 14.99 mm², +1.26 dB (held at 1–1.5 dB). The model's handle share (the thin sheet of
///   `physics::handle`, applied as a ratio) gives +1.47 dB against the same neck, 0.2 dB too
///   much, and the uniform area with it 15.39 mm² (+0.23 dB; without it 1.3 dB low).
/// - **The demo's whole handle** (40 mm, `wave-long`): +1.67 dB against the neck; the sheet
///   +1.84 dB (0.17 dB too much), and the shipped uniform area of the demo's FM-R5 (its handle
///   modelled to 24 mm) 16.02 against 15.71 mm², +0.17 dB (without the handle −1.74 dB).
/// - **FM-R10** in the same wave: the ring with its neck 69.2 mm² (shipped 68.9), and its
///   whole 40 mm handle +0.85 dB, the sheet within 0.1 dB of it.
#[test]
fn gap_circuit_and_uniform_field_against_the_fdtd_gap_port() {
    use std::f64::consts::PI;
    let top = refs("fdtd_gap_port.toml");
    let (x, line) = common::demo_probe_and_line("FM-R5");
    let resp = x.response.as_loop().unwrap();
    // Shipped: with the gap's correction; `_axi`: the axisymmetric current alone.
    let (l_corr, l_axi) = (resp.l_outer, resp.l_outer - resp.gap_l_outer);
    let (a_corr, a_axi) = (resp.area_eff_m2, resp.area_eff_m2 - resp.gap_area_m2);
    let upper = resp.upper_hz;

    let bridged = gap_run(&top, "R5", "fine-long", "bridged", "s33");
    let l_port = {
        let (f, s) = bridged[0];
        z_of(s).im / (2.0 * PI * f)
    };
    assert!(l_port > 0.2e-9 && l_port < 0.5e-9, "{l_port:e}");
    let mut lc = Vec::new();
    for mesh in ["fine-long", "finer-long"] {
        let open = gap_run(&top, "R5", mesh, "open", "s33");
        let br = gap_run(&top, "R5", mesh, "bridged", "s33");
        let (l, c) = fit_gap(&open, &br, 3e8, upper);
        eprintln!(
            "{mesh}: L {:.3} nH (axisymmetric {:.3}, shipped {:.3}), C {:.4} pF (model {:.4})",
            l * 1e9,
            l_axi * 1e9,
            l_corr * 1e9,
            c * 1e12,
            resp.c_gap * 1e12
        );
        assert!(
            (l_corr / l - 1.0).abs() < 0.03,
            "{mesh}: L {l:e} against {l_corr:e}"
        );
        assert!(
            (l_axi / l - 1.0 + 0.08).abs() < 0.03,
            "{mesh}: axisymmetric {l:e}"
        );
        assert!(
            (resp.c_gap / c - 1.0 + 0.2).abs() < 0.05,
            "{mesh}: C {c:e} against {:e}",
            resp.c_gap
        );
        lc.push((l, c));
    }
    // The two meshes: L within 1 %, C within 3 %.
    assert!((lc[0].0 / lc[1].0 - 1.0).abs() < 0.01 && (lc[0].1 / lc[1].1 - 1.0).abs() < 0.03);

    // The line's mutual as the gap drives it, and how little it rises.
    let s13 = gap_run(&top, "R5", "fine-long", "open", "s13");
    let s33 = gap_run(&top, "R5", "fine-long", "open", "s33");
    let m_eff = m_eff_of(&s13, &s33);
    let m0 = m_eff[0].1;
    let c = loopwright::physics::coupling::probe_coupling(&x.probe, &x.solved, resp, 1.0, &line);
    eprintln!(
        "M_eff {:.1} pH at {:.0} MHz; model {:.1} pH",
        m0 * 1e12,
        m_eff[0].0 / 1e6,
        c.mutual * 1e12
    );
    assert!((m0 / 212.8e-12 - 1.0).abs() < 0.01, "{m0:e}");
    // The shipped model's mutual (with the gap's correction): +0.6 %, held at 1.5 %.
    assert!((c.mutual / m0 - 1.0).abs() < 0.015, "{:e}", c.mutual);
    let (f_top, m_top) = *m_eff.iter().rfind(|(f, _)| *f <= upper).unwrap();
    let rise = 20.0 * (m_top / m0).log10();
    let w = 2.0 * PI * f_top;
    let lumped = -20.0 * (1.0 - w * w * l_corr * resp.c_gap).log10();
    eprintln!("M_eff rises {rise:.2} dB to {f_top:.3e} Hz; a lumped gap capacitor: {lumped:.2} dB");
    assert!(rise.abs() < 0.3 && lumped > 0.7, "{rise} {lumped}");

    // FM-R10's gap circuit (fine mesh): the same L and C fit, and its line coupling, which
    // does rise as the lumped form says: the line form is FM-R5's finding, not a general one.
    let (x10, line10) = common::demo_probe_and_line("FM-R10");
    let r10 = x10.response.as_loop().unwrap();
    let open = gap_run(&top, "R10", "fine-long", "open", "s33");
    let br = gap_run(&top, "R10", "fine-long", "bridged", "s33");
    let (l10, c10) = fit_gap(&open, &br, 3e8, r10.upper_hz);
    let m10 = m_eff_of(&gap_run(&top, "R10", "fine-long", "open", "s13"), &open);
    let (f10, m10_top) = *m10.iter().rfind(|(f, _)| *f <= r10.upper_hz).unwrap();
    let rise10 = 20.0 * (m10_top / m10[0].1).log10();
    let w10 = 2.0 * PI * f10;
    let lumped10 = -20.0 * (1.0 - w10 * w10 * r10.l_outer * r10.c_gap).log10();
    let c10m =
        loopwright::physics::coupling::probe_coupling(&x10.probe, &x10.solved, r10, 1.0, &line10);
    eprintln!(
        "FM-R10: L {:.3} nH (shipped {:.3}), C {:.4} pF (model {:.4}); M_eff {:.1} pH (model {:.1}), rises {rise10:.2} dB to {f10:.3e} Hz, lumped {lumped10:.2} dB",
        l10 * 1e9,
        r10.l_outer * 1e9,
        c10 * 1e12,
        r10.c_gap * 1e12,
        m10[0].1 * 1e12,
        c10m.mutual * 1e12
    );
    assert!((r10.l_outer / l10 - 1.0).abs() < 0.03, "{l10:e}");
    assert!((r10.c_gap / c10 - 1.0 + 0.34).abs() < 0.05, "{c10:e}");
    // The model's mutual reads 5.9 % high here (its S21 0.5 dB high at low frequency, above):
    // a regression guard on a stated offset, not a verdict.
    assert!(
        (c10m.mutual / m10[0].1 - 1.059).abs() < 0.02,
        "{:e}",
        m10[0].1
    );
    assert!(
        (rise10 - lumped10).abs() < 0.3 && rise10 > 0.6,
        "{rise10} {lumped10}"
    );

    // The probe in a uniform field (no fixture): V/H against the model's uniform transfer.
    let mu0 = 4e-7 * PI;
    let bare = gap_run(&top, "R5", "fine-long", "wave-bare", "v_per_h");
    let handle = gap_run(&top, "R5", "fine-long", "wave", "v_per_h");
    let transfer = |f: f64, boost: bool| {
        let w = 2.0 * PI * f;
        let zl = Cx::new(50.0, w * l_port);
        let k = 1.0 - w * w * l_corr * resp.c_gap;
        let den = if boost {
            zl * Cx::new(k, 0.0) + Cx::new(0.0, w * l_corr)
        } else {
            zl + Cx::new(0.0, w * l_corr / k)
        };
        (Cx::new(0.0, w * mu0 * a_corr) * zl / den).abs()
    };
    let (f0, v0) = bare[0];
    let a_fdtd = v0.abs() / transfer(f0, true) * a_corr;
    eprintln!(
        "uniform field: FDTD {:.2} mm² (with the handle {:.2}); axisymmetric {:.2}, shipped {:.2}",
        a_fdtd * 1e6,
        handle[0].1.abs() / v0.abs() * a_fdtd * 1e6,
        a_axi * 1e6,
        a_corr * 1e6
    );
    assert!((a_corr / a_fdtd - 1.0).abs() < 0.02, "{a_fdtd:e}");
    assert!((a_axi / a_fdtd - 1.0 + 0.062).abs() < 0.02);
    let handle_db = 20.0 * (handle[0].1.abs() / v0.abs()).log10();
    assert!(handle_db > 1.0 && handle_db < 1.5, "{handle_db}");
    // The handle's share on the thin sheet (physics::handle), for the FDTD's own handle: 8 mm
    // of copper, 6 mm beyond the ring, from the centreline's end; against the ring alone.
    use loopwright::physics::handle::{Outline, ratio_of};
    let r_mm = 2.5;
    let hr = x.solved.ring_half_width;
    let sheet = |len: f64| {
        ratio_of(&Outline {
            shape: x.probe.shape,
            ring_half_width: hr,
            gap: x.probe.gap,
            side_gaps: false,
            handle: Some((4.0, -(r_mm + hr + len), -r_mm)),
        })
        .unwrap()
    };
    let neck = ratio_of(&Outline {
        shape: x.probe.shape,
        ring_half_width: hr,
        gap: x.probe.gap,
        side_gaps: false,
        handle: Some((hr + 0.3, -(r_mm + hr + 0.3), -r_mm)),
    })
    .unwrap();
    let a_handle = handle[0].1.abs() / v0.abs() * a_fdtd;
    let model = a_corr * sheet(6.0);
    // Like for like: the FDTD's `wave-bare` keeps a ring-wide neck 0.3 mm long; so does the
    // sheet's reference here.
    let sheet_db = 20.0 * (sheet(6.0) / neck).log10();
    eprintln!(
        "handle: FDTD +{handle_db:.2} dB, sheet +{sheet_db:.2} dB against the neck; uniform area with the 6 mm handle: FDTD {:.2} mm², model {:.2} mm² ({:+.2} dB)",
        a_handle * 1e6,
        model * 1e6,
        20.0 * (model / a_handle).log10()
    );
    // The thin sheet overstates the handle's share by about 0.2 dB (the board's 1.5 mm is left
    // out of it): held at 0.1–0.3 dB, and the shipped area with it within 0.3 dB of the FDTD
    // (without it 1.3 dB low).
    assert!(
        sheet_db - handle_db > 0.1 && sheet_db - handle_db < 0.3,
        "{sheet_db}"
    );
    assert!((20.0 * (model / a_handle).log10()).abs() < 0.3, "{model:e}");
    // The demo's whole 40 mm handle (`wave-long`): the FDTD's share against the sheet's for
    // the same copper, and the demo probe's shipped uniform area (its handle cut at
    // `HANDLE_REACH`) against the FDTD's.
    let long = gap_run(&top, "R5", "fine-long", "wave-long", "v_per_h");
    let long_db = 20.0 * (long[0].1.abs() / v0.abs()).log10();
    let sheet_long_db = 20.0 * (sheet(40.0) / neck).log10();
    let a_long = long[0].1.abs() / v0.abs() * a_fdtd;
    let shipped_db = 20.0 * (resp.area_uniform_m2() / a_long).log10();
    eprintln!(
        "40 mm handle: FDTD +{long_db:.2} dB, sheet +{sheet_long_db:.2} dB; uniform area FDTD {:.2} mm², shipped {:.2} mm² ({shipped_db:+.2} dB; without the handle {:+.2} dB)",
        a_long * 1e6,
        resp.area_uniform_m2() * 1e6,
        20.0 * (a_corr / a_long).log10()
    );
    assert!(long_db > 1.5 && long_db < 1.8, "{long_db}");
    assert!(
        sheet_long_db - long_db > 0.05 && sheet_long_db - long_db < 0.3,
        "{sheet_long_db}"
    );
    assert!(shipped_db.abs() < 0.3, "{shipped_db}");
    // FM-R10 in the same plane wave: the ring with its neck, and with the whole 40 mm handle.
    let bare10 = gap_run(&top, "R10", "fine-long", "wave-bare", "v_per_h");
    let long10 = gap_run(&top, "R10", "fine", "wave-long", "v_per_h");
    let (f10w, v10) = bare10[0];
    let a10_fdtd = {
        let w = 2.0 * PI * f10w;
        let zl = Cx::new(50.0, w * l_port);
        let k = 1.0 - w * w * r10.l_outer * r10.c_gap;
        let t = (Cx::new(0.0, w * mu0) * zl
            / (zl * Cx::new(k, 0.0) + Cx::new(0.0, w * r10.l_outer)))
        .abs();
        v10.abs() / t
    };
    let long10_db = 20.0 * (long10[0].1.abs() / v10.abs()).log10();
    let o10 = |handle| Outline {
        shape: x10.probe.shape,
        ring_half_width: x10.solved.ring_half_width,
        gap: x10.probe.gap,
        side_gaps: false,
        handle,
    };
    let (r10_mm, hr10) = (5.0, x10.solved.ring_half_width);
    let sheet10_db = 20.0
        * (ratio_of(&o10(Some((4.0, -(r10_mm + hr10 + 40.0), -r10_mm)))).unwrap()
            / ratio_of(&o10(Some((hr10 + 0.3, -(r10_mm + hr10 + 0.3), -r10_mm)))).unwrap())
        .log10();
    let shipped10_db =
        20.0 * (r10.area_uniform_m2() / (a10_fdtd * long10[0].1.abs() / v10.abs())).log10();
    eprintln!(
        "FM-R10: ring {:.2} mm² (shipped {:.2}); 40 mm handle FDTD +{long10_db:.2} dB, sheet +{sheet10_db:.2} dB; shipped uniform area {shipped10_db:+.2} dB from the FDTD's",
        a10_fdtd * 1e6,
        r10.area_eff_m2 * 1e6
    );
    assert!(
        (r10.area_eff_m2 / a10_fdtd - 1.0).abs() < 0.02,
        "{a10_fdtd:e}"
    );
    assert!(long10_db > 0.7 && long10_db < 1.0, "{long10_db}");
    assert!((sheet10_db - long10_db).abs() < 0.15, "{sheet10_db}");
    assert!(shipped10_db.abs() < 0.2, "{shipped10_db}");
    let shape = |boost: bool| {
        bare.iter()
            .filter(|(f, _)| *f <= upper)
            .map(|&(f, v)| 20.0 * (transfer(f, boost) / v.abs()).log10())
            .collect::<Vec<_>>()
    };
    let (with, without) = (shape(true), shape(false));
    let spread = |v: &[f64]| {
        v.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            - v.iter().cloned().fold(f64::INFINITY, f64::min)
    };
    eprintln!(
        "uniform field over the band: the boost form spreads {:.2} dB, without it {:.2} dB",
        spread(&with),
        spread(&without)
    );
    assert!(spread(&with) < 0.25 && spread(&without) > 0.6);
}
