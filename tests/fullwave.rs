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
        .map(|x| x.as_float().or(x.as_integer().map(|i| i as f64)).unwrap())
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
    let mut r = x.response.clone();
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
            let (re, im) = c.s21(&r, f);
            let m = 20.0 * re.hypot(im).log10();
            let band = f >= r.corner_hz / 10.0 && f <= r.upper_hz;
            (f, m, df[i], dc[i], band)
        })
        .collect()
}

/// In the usable band (a decade below the corner to the upper usable frequency).
///
/// **FM-R5** has three meshes (cells 0.15, 0.11 and 0.08 mm in the probe's region): the model
/// holds 1 dB against the finest everywhere in its band (worst 0.88 dB, at the top; it reads
/// 0.65–0.8 dB low below the corner, as it does against NEC-2). The three meshes' observed
/// order (`richardson` in the data) is about 2 from 0.5 to 0.85 GHz, undefined from 1.16 to
/// 1.74 GHz (the changes switch sign) and 3.5–4 from 1.75 to 1.91 GHz.
///
/// **FM-R10** has two meshes (0.15 and 0.11 mm). The model holds 1 dB against the fine mesh to
/// about 87 % of its upper frequency and drifts to 1.19 dB at the top, where the fine mesh is
/// still moving towards the model (+0.3 to +0.5 dB from the coarse one; FDTD's staircased loop
/// is electrically long, so its stub null climbs from 1.85 to 1.98 GHz against the model's
/// 2.26 GHz). Against the fine mesh extrapolated to a zero cell with order 1, 2 or 3 the model
/// holds 1 dB in the whole band (worst 0.75 / 0.69 / 0.91 dB); with order 4, which FM-R5 shows
/// at its top, it reads 1.02 dB at 914 MHz, so FM-R10's top of band is not settled. A third
/// FM-R10 mesh (about two hours on two cores) would settle it and was not run. Against
/// the raw fine mesh the band is held at 1.25 dB so any drift shows. The earlier centreline
/// model read 1.7 dB (FM-R10) and 3.7 dB (FM-R5) high at low frequency.
#[test]
fn predicted_s21_follows_the_fdtd_reference_in_the_usable_band() {
    let top = refs("fdtd_refs.toml");
    for (case, name) in [("R10", "FM-R10"), ("R5", "FM-R5")] {
        let rows = compare(case, name);
        let inband: Vec<_> = rows.iter().filter(|r| r.4).collect();
        assert!(inband.len() > 20, "{case}: {} points", inband.len());
        for &&(f, m, fine, coarse, _) in &inband {
            assert!(
                (m - fine).abs() < 1.25,
                "{case} at {f:.3e} Hz: model {m:.2} dB, FDTD {fine:.2} dB"
            );
            if case == "R10" {
                for p in [1.0f64, 2.0, 3.0] {
                    let x = fine + (fine - coarse) / ((0.15f64 / 0.11).powf(p) - 1.0);
                    assert!(
                        (m - x).abs() < 1.0,
                        "{case} at {f:.3e} Hz: model {m:.2} dB, extrapolated (order {p}) {x:.2}"
                    );
                }
            }
        }
        // Below 300 MHz the meshes agree to 0.2 dB and the model holds 1 dB.
        for &&(f, m, fine, coarse, _) in inband.iter().filter(|r| r.0 < 3e8) {
            assert!((fine - coarse).abs() < 0.2, "{case} {f}");
            assert!((m - fine).abs() < 1.0, "{case} {f}");
        }
    }
    // FM-R5 against its finest mesh, every point of the band.
    let finer = top["sparam"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["case"].as_str() == Some("R5") && s["mesh"].as_str() == Some("finer"))
        .expect("FM-R5's third mesh");
    let ff = floats(&finer["s21_probe_db"]);
    let rows = compare("R5", "FM-R5");
    let mut n = 0;
    for (i, &(f, m, _, _, band)) in rows.iter().enumerate() {
        if band {
            assert!(
                (m - ff[i]).abs() < 1.0,
                "R5 at {f:.3e} Hz: model {m:.2} dB, finest FDTD {:.2} dB",
                ff[i]
            );
            n += 1;
        }
    }
    assert!(n > 20);
    // The recorded extrapolation found an order at most frequencies (where the three meshes
    // move monotonically).
    let rich = top["richardson"].as_array().unwrap();
    assert_eq!(rich[0]["case"].as_str(), Some("R5"));
    let x = floats(&rich[0]["extrapolated_db"]);
    let found = x.iter().filter(|v| v.is_finite()).count();
    assert!(found > 30, "{found}");
}
