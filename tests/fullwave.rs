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
            let m = 20.0 * c.s21(&r, f).abs().log10();
            let band = f >= r.corner_hz / 10.0 && f <= r.upper_hz;
            (f, m, df[i], dc[i], band)
        })
        .collect()
}

/// In the usable band (a decade below the corner to the upper usable frequency), against each
/// probe's finest mesh: three meshes each (cells 0.15, 0.11 and 0.08 mm in the probe's region).
///
/// **FM-R10**: within 0.94 dB of the finest mesh over the whole band (0.2 dB high at low
/// frequency, rising to 0.94 dB at the top), 0.60 dB of the three meshes' Richardson
/// extrapolation where one exists (above 0.75 GHz). The top of the band moves with the mesh
/// towards the model: FDTD's staircased loop is electrically long, and its stub null climbs
/// 1.85 → 1.98 → 2.07 GHz against the model's 2.26 GHz.
///
/// **FM-R5**: within 0.88 dB of the finest mesh (0.65–0.8 dB low below the corner, as against
/// NEC-2; 0.88 dB high at the top), 0.74 dB of the extrapolation.
///
/// Against the coarser fine mesh the band is held at 1.25 dB, so a drift in either shows. The
/// earlier centreline model read 1.7 dB (FM-R10) and 3.7 dB (FM-R5) high at low frequency.
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
        // The finest mesh, every point of the band, and the extrapolation where it exists.
        let finer = top["sparam"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| s["case"].as_str() == Some(case) && s["mesh"].as_str() == Some("finer"))
            .expect("a third mesh");
        let ff = floats(&finer["s21_probe_db"]);
        let rich = top["richardson"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| s["case"].as_str() == Some(case))
            .expect("the extrapolation");
        let x = floats(&rich["extrapolated_db"]);
        let (mut n, mut nx) = (0, 0);
        for (i, &(f, m, _, _, band)) in rows.iter().enumerate() {
            if !band {
                continue;
            }
            assert!(
                (m - ff[i]).abs() < 1.0,
                "{case} at {f:.3e} Hz: model {m:.2} dB, finest FDTD {:.2} dB",
                ff[i]
            );
            n += 1;
            if x[i].is_finite() {
                assert!((m - x[i]).abs() < 1.0, "{case} at {f:.3e} Hz: extrapolated");
                nx += 1;
            }
        }
        assert!(n > 20 && nx > 5, "{case}: {n} {nx}");
    }
}
