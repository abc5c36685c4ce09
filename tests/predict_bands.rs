//! `predict` across the scan bands: the default table starts at 150 kHz (the lower edge of
//! CISPR 16-1-1's band B, where emission scans of boards begin; from memory), ends at the
//! upper usable frequency, and rows the user asks for above it are marked in the JSON, the
//! tables and the plot.

use std::process::Command;

/// The demo's settings with one 4 mm round loop.
fn spec(d: &std::path::Path) -> std::path::PathBuf {
    let head = loopwright::cli::DEMO_SPEC
        .split("[[probe]]")
        .next()
        .unwrap();
    let p = d.join("r4.toml");
    std::fs::write(
        &p,
        format!("{head}[[probe]]\nname = \"R4\"\nshape = \"round\"\nsize_mm = 4.0\n"),
    )
    .unwrap();
    p
}

fn predict(args: &[&str]) -> serde_json::Value {
    let d = std::env::temp_dir().join(format!("loopwright-bands-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    let o = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .arg("predict")
        .arg(spec(&d))
        .args(args)
        .arg("--json")
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    serde_json::from_slice(&o.stdout).unwrap()
}

#[test]
fn a_4_mm_loop_is_predicted_from_150_khz_to_its_upper_frequency() {
    let v = predict(&[]);
    let p = &v["probes"][0];
    let pf = p["probe_factor"].as_array().unwrap();
    let f0 = pf[0]["freq_hz"].as_f64().unwrap();
    let f1 = pf.last().unwrap()["freq_hz"].as_f64().unwrap();
    assert!((f0 - 150e3).abs() < 1e-6, "{f0}");
    assert!((f1 / p["upper_hz"].as_f64().unwrap() - 1.0).abs() < 1e-9);
    // The corner of a 4 mm loop lies far above 150 kHz: the table covers the bands below it.
    assert!(p["corner_hz"].as_f64().unwrap() > 100.0 * f0);
    assert!(pf.iter().all(|r| r["above_band"] == false));
}

#[test]
fn rows_above_the_upper_frequency_are_marked() {
    let v = predict(&["--from", "1e6", "--to", "6e9"]);
    let p = &v["probes"][0];
    let upper = p["upper_hz"].as_f64().unwrap();
    assert!(upper < 6e9, "{upper}");
    let pf = p["probe_factor"].as_array().unwrap();
    assert!((pf[0]["freq_hz"].as_f64().unwrap() - 1e6).abs() < 1e-6);
    let mut above = 0;
    for r in pf {
        let f = r["freq_hz"].as_f64().unwrap();
        assert_eq!(r["above_band"].as_bool().unwrap(), f > upper, "{f}");
        above += usize::from(f > upper);
    }
    assert!(above > 0);
}

#[test]
fn the_plot_draws_rows_above_the_band_dotted_and_says_so() {
    use loopwright::physics::{PredictOptions, predict};
    let spec = loopwright::spec::parse_toml(loopwright::cli::DEMO_SPEC, "demo").unwrap();
    let fam = loopwright::model::probe::family_from_spec(&spec, std::path::Path::new(".")).unwrap();
    let p = &fam.probes[0];
    let s = loopwright::solve::probe::solve(p).unwrap();
    let within = predict(p, &s, &PredictOptions::default()).unwrap();
    let beyond = predict(
        p,
        &s,
        &PredictOptions {
            f_max_hz: Some(within.upper_hz * 4.0),
            ..PredictOptions::default()
        },
    )
    .unwrap();
    let plot = |r| loopwright::emit::plot::probe_factor_plot("t", &[("a", "#123456", r)]);
    let (a, b) = (plot(&within), plot(&beyond));
    assert!(!a.contains("stroke-dasharray=\"1 3\"") && !a.contains("dotted"));
    assert!(b.contains("stroke-dasharray=\"1 3\""));
    assert!(b.contains("dotted: above the upper usable frequency"));
    // One meaning per style: the corner's dashed line is in both.
    assert!(a.contains("dashed vertical: low-frequency corner"));
}
