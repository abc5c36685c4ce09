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

/// In the usable band (a decade below the corner to the upper usable frequency) the model
/// follows the fine mesh within 1 dB up to about 85 % of the upper frequency: FM-R10 0.2–0.4 dB
/// to 600 MHz, FM-R5 0.7–1.0 dB high to 1.2 GHz. In the top of the band it drifts to 1.19 dB
/// (FM-R10, 914 MHz) and 1.10 dB (FM-R5, 1.88 GHz), where the two meshes differ by 0.4 and
/// 0.8 dB; FDTD puts FM-R10's stub null at 1.98 GHz against the model's 2.26 GHz, so the
/// model's stub is electrically short. Held at 1.25 dB so any drift shows; the 1 dB
/// is not met in that top slice (docs/response.md). The earlier centreline model read 1.7 dB
/// (FM-R10) and 3.7 dB (FM-R5) high at low frequency.
#[test]
fn predicted_s21_follows_the_fdtd_reference_in_the_usable_band() {
    for (case, name, tol) in [("R10", "FM-R10", 1.25), ("R5", "FM-R5", 1.25)] {
        let rows = compare(case, name);
        let inband: Vec<_> = rows.iter().filter(|r| r.4).collect();
        assert!(inband.len() > 20, "{case}: {} points", inband.len());
        for &&(f, m, fine, _, _) in &inband {
            assert!(
                (m - fine).abs() < tol,
                "{case} at {f:.3e} Hz: model {m:.2} dB, FDTD {fine:.2} dB"
            );
        }
        // Below 85 % of the upper frequency the model holds 1 dB; below 300 MHz the meshes
        // agree to 0.2 dB.
        let upper = inband.last().unwrap().0;
        for &&(f, m, _, _, _) in inband.iter().filter(|r| r.0 < 0.85 * upper) {
            assert!(
                (m - inband.iter().find(|r| r.0 == f).unwrap().2).abs() < 1.0,
                "{case} {f}"
            );
        }
        for &&(f, m, fine, coarse, _) in inband.iter().filter(|r| r.0 < 3e8) {
            assert!((fine - coarse).abs() < 0.2, "{case} {f}");
            assert!((m - fine).abs() < 1.0, "{case} {f}");
        }
    }
}
