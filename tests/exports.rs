//! Analyzer exports as instruments write them (fixture files in `tests/data/exports/`):
//! metadata before the header, `;` and tab separators, decimal commas, units in the header,
//! several traces, CRLF and CR line ends. Each case asserts the exact line of a refusal or the
//! converted field strength against the level budget.
//!
//! The level budget (facts of the trade, written out here rather than taken from the code):
//! V[dBµV] = P[dBm] + 10·log10(50 Ω · 1 mW / (1 µV)²) = P[dBm] + 106.99 dB in 50 Ω;
//! V_probe = V − preamp gain + attenuator + cable loss; H[dBµA/m] = V_probe[dBµV] + PF[dB(S/m)].

use loopwright::calib::export::read_readings;
use std::path::{Path, PathBuf};
use std::process::Command;

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/exports")
        .join(name)
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("loopwright-exports-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// 10·log10(50 Ω · 1e-3 W / (1e-6 V)²), the dBm → dBµV offset in 50 Ω.
fn dbm_to_dbuv() -> f64 {
    10.0 * (50.0 * 1e-3 / 1e-12f64).log10()
}

/// Runs `convert` on an export with a flat probe factor of 10 dB(S/m), 20 dB of preamp gain,
/// a 6 dB attenuator and 1.5 dB of cable; returns the output CSV and stdout.
fn convert(export: &str, d: &Path) -> (String, String) {
    let f = d.join("pf.csv");
    std::fs::write(&f, "freq_hz,pf_db_s_per_m\n1e5,10\n1e10,10\n").unwrap();
    let out = d.join("h.csv");
    let o = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(["convert", "--readings"])
        .arg(data(export))
        .arg("--factor")
        .arg(&f)
        .args([
            "--gain-db",
            "20",
            "--atten-db",
            "6",
            "--cable-db",
            "1.5",
            "--out",
        ])
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    (
        std::fs::read_to_string(&out).unwrap(),
        String::from_utf8_lossy(&o.stdout).to_string(),
    )
}

/// The data rows of an output CSV (not `#` comments, not the header), split at commas.
fn rows(csv: &str) -> Vec<Vec<f64>> {
    csv.lines()
        .filter(|l| !l.starts_with('#'))
        .skip(1)
        .map(|l| l.split(',').map(|v| v.parse().unwrap()).collect())
        .collect()
}

// A semicolon export with six metadata lines (one with Latin-1 bytes), a blank line, the
// header `Frequency [MHz];Level [dBm];`, decimal commas and CRLF line ends.
#[test]
fn semicolon_export_with_metadata_and_decimal_commas_converts_by_the_budget() {
    let r = read_readings(&data("semicolon_decimal_comma_crlf.csv")).unwrap();
    assert_eq!(r.traces.len(), 1);
    let t = &r.traces[0];
    assert_eq!(t.column, "level_dbm");
    assert_eq!(t.rows, vec![(30e6, -61.5), (100e6, -58.25), (300e6, -70.0)]);
    assert_eq!(t.lines, vec![8, 9, 10]);
    assert_eq!(r.provenance.len(), 5, "{:?}", r.provenance);
    assert_eq!(r.provenance[0], "Type;Spectrum Analyzer;");
    assert!(
        r.form.contains("header on line 7") && r.form.contains("MHz"),
        "{}",
        r.form
    );

    let d = scratch("semicolon");
    let (csv, stdout) = convert("semicolon_decimal_comma_crlf.csv", &d);
    assert!(csv.contains("# metadata: Type;Spectrum Analyzer;"), "{csv}");
    assert!(stdout.contains("separator ';'"), "{stdout}");
    let got = rows(&csv);
    for (row, (f, dbm)) in got
        .iter()
        .zip([(30e6, -61.5), (100e6, -58.25), (300e6, -70.0)])
    {
        let h = dbm + dbm_to_dbuv() - 20.0 + 6.0 + 1.5 + 10.0;
        assert_eq!(row[0], f);
        assert!((row[1] - h).abs() < 1e-4, "{f}: {} vs {h}", row[1]);
    }
}

// A tab-separated export with two level columns in dBµV (`dBuV` and `dBµV` spellings) and a
// phase column, which is left out and named in the provenance.
#[test]
fn two_traces_convert_into_one_output_with_a_column_each() {
    let r = read_readings(&data("tab_two_traces.txt")).unwrap();
    assert_eq!(r.traces.len(), 2);
    assert_eq!(r.labels, vec!["Trace 1 [dBuV]", "Max Hold [dBµV]"]);
    assert_eq!(
        r.traces[1].rows,
        vec![(1e6, 25.5), (1e7, 31.0), (1e8, 40.0)]
    );
    assert_eq!(r.traces[0].lines, vec![4, 5, 6]);
    assert!(r.provenance.iter().any(|l| l.contains("Phase [deg]")));

    let d = scratch("tab");
    let (csv, _) = convert("tab_two_traces.txt", &d);
    let header = csv.lines().find(|l| !l.starts_with('#')).unwrap();
    assert_eq!(
        header,
        "freq_hz,h_dbua_per_m_t1,h_a_per_m_t1,b_dbpt_t1,v_probe_dbuv_t1,\
         h_dbua_per_m_t2,h_a_per_m_t2,b_dbpt_t2,v_probe_dbuv_t2"
    );
    let want = [(1e6, 20.0, 25.5), (1e7, 22.0, 31.0), (1e8, 18.5, 40.0)];
    for (row, (f, a, b)) in rows(&csv).iter().zip(want) {
        assert_eq!(row[0], f);
        assert!((row[1] - (a - 20.0 + 6.0 + 1.5 + 10.0)).abs() < 1e-4);
        assert!((row[5] - (b - 20.0 + 6.0 + 1.5 + 10.0)).abs() < 1e-4);
    }
}

// Refusals name the file's own line whatever its line ends and however much metadata comes
// first.
#[test]
fn refusals_in_exports_name_the_physical_line() {
    let e = read_readings(&data("semicolon_bad_value_cr.csv"))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("line 5: Level [dBm] = '-6x' is not a number"),
        "{e}"
    );
    let e = read_readings(&data("thousands_separator.csv"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("line 2:") && e.contains("thousands"), "{e}");
    let e = read_readings(&data("no_header.csv"))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("line 1: header is 'Type;Spectrum Analyzer;', expected freq_hz,level_dbm")
            && e.contains("Frequency [Hz];Level [dBm]"),
        "{e}"
    );
}

// The two-column form stays as it was: the same rows and lines as the strict reader.
#[test]
fn the_plain_form_reads_as_before() {
    let d = scratch("plain");
    let p = d.join("r.csv");
    std::fs::write(
        &p,
        "# c\r\nfreq_hz,level_dbuv\r\n1e6,20\r\n\r\n2e6,21.5\r\n",
    )
    .unwrap();
    let r = read_readings(&p).unwrap();
    let t = loopwright::calib::convert::read_table(&p, &["level_dbuv"]).unwrap();
    assert_eq!(r.traces, vec![t]);
    assert!(r.provenance.is_empty());
}
