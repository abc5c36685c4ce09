//! `loopwright convert`: the level budget and the refusals of malformed tables.

use loopwright::calib::convert::*;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("loopwright-convert-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn write(d: &Path, name: &str, text: &str) -> String {
    let p = d.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().to_string()
}

/// `convert --readings r --factor f --gain-db 0` and `extra`.
fn convert_cmd(r: &str, f: &str, extra: &[&str]) -> Output {
    let mut args = vec!["convert", "--readings", r, "--factor", f, "--gain-db", "0"];
    args.extend_from_slice(extra);
    run(&args)
}

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(args)
        .output()
        .unwrap()
}

// Facts of the trade: dBm → dBµV is +106.99 dB in 50 Ω (10·log10(50 Ω·1 mW / 1 µV²));
// dBµA/m → dBpT is +1.98 dB (20·log10(μ0·10⁶)).
#[test]
fn unit_offsets() {
    assert!((dbm_to_dbuv_offset() - 106.99).abs() < 0.001);
    assert!((dbua_to_dbpt_offset() - 1.98).abs() < 0.005);
}

// A worked budget: −40 dBm with a 20 dB preamp and PF = 10 dB(S/m):
// V = −40 + 106.99 − 20 = 46.99 dBµV, H = 56.99 dBµA/m = 7.07e-4 A/m, B = 58.97 dBpT.
#[test]
fn worked_budget_and_log_frequency_interpolation() {
    let r = parse_table(
        "freq_hz,level_dbm\n1e8,-40\n",
        "r",
        &["level_dbm", "level_dbuv"],
    )
    .unwrap();
    // The factor is 20 at 10 MHz and 0 at 1 GHz: 10 at 100 MHz, linear in log-frequency.
    let f = parse_table(
        "freq_hz,pf_db_s_per_m\n1e7,20\n1e9,0\n",
        "f",
        &["pf_db_s_per_m"],
    )
    .unwrap();
    let p = convert(&r, &f, &Gain::Fixed(20.0), 0.0, 0.0, false).unwrap();
    assert!((p[0].field_db - 56.9897).abs() < 1e-3, "{p:?}");
    assert!((p[0].field / 7.0674e-4 - 1.0).abs() < 1e-3);
    assert!((p[0].b_dbpt.unwrap() - p[0].field_db - dbua_to_dbpt_offset()).abs() < 1e-12);
}

// The same budget with an electric probe's factor (E[dBµV/m] = V[dBµV] + EF[dB(1/m)]): −50 dBm
// with a 20 dB preamp, a 10 dB pad and 1.5 dB of cable, EF = 120 dB(1/m) at 100 MHz:
// V = −50 + 106.99 − 20 + 10 + 1.5 = 48.49 dBµV, E = 168.49 dBµV/m = 265.6 V/m (hand
// arithmetic); no B column, and the output names E.
#[test]
fn an_electric_factor_gives_the_electric_field() {
    let r = parse_table("freq_hz,level_dbm\n1e8,-50\n", "r", &["level_dbm"]).unwrap();
    let f = parse_table(
        "freq_hz,ef_db_per_m\n1e7,140\n1e9,100\n",
        "f",
        &["pf_db_s_per_m", "ef_db_per_m"],
    )
    .unwrap();
    let p = convert(&r, &f, &Gain::Fixed(20.0), 10.0, 1.5, false).unwrap();
    assert!((p[0].field_db - 168.4897).abs() < 1e-3, "{p:?}");
    assert!((p[0].field / 265.6 - 1.0).abs() < 1e-3, "{}", p[0].field);
    assert!(p[0].b_dbpt.is_none());
    let csv = loopwright::calib::convert::to_csv(&p);
    assert!(
        csv.starts_with("freq_hz,e_dbuv_per_m,e_v_per_m,v_probe_dbuv\n"),
        "{csv}"
    );
    // A value no electric probe can have is refused with its line.
    let e = parse_table(
        "freq_hz,ef_db_per_m\n1e7,-20\n",
        "f",
        &["pf_db_s_per_m", "ef_db_per_m"],
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("line 2") && e.contains("0 to 350 dB(1/m)"),
        "{e}"
    );
}

// Common practice: a 10 dB attenuator after a 30 dB preamp reads the same as a 20 dB preamp.
#[test]
fn attenuator_after_preamp_equals_the_net_gain() {
    let d = dir("budget");
    let r = write(
        &d,
        "r.csv",
        "freq_hz,level_dbuv\n1e6,30\n5e7,42.5\n2e8,20\n",
    );
    let f = write(&d, "f.csv", "freq_hz,pf_db_s_per_m\n1e6,40\n1e9,12\n");
    let a = d.join("a.csv");
    let b = d.join("b.csv");
    let o1 = run(&[
        "convert",
        "--readings",
        &r,
        "--factor",
        &f,
        "--gain-db",
        "30",
        "--atten-db",
        "10",
        "--out",
        a.to_str().unwrap(),
    ]);
    let o2 = run(&[
        "convert",
        "--readings",
        &r,
        "--factor",
        &f,
        "--gain-db",
        "20",
        "--out",
        b.to_str().unwrap(),
    ]);
    assert!(
        o1.status.success() && o2.status.success(),
        "{}",
        String::from_utf8_lossy(&o1.stderr)
    );
    let (ta, tb) = (
        std::fs::read_to_string(&a).unwrap(),
        std::fs::read_to_string(&b).unwrap(),
    );
    assert!(ta.starts_with("freq_hz,h_dbua_per_m"));
    assert_eq!(ta, tb);
    assert_eq!(ta.lines().count(), 4);
}

#[test]
fn malformed_tables_are_refused_with_their_line_and_nothing_is_written() {
    let d = dir("bad");
    let f = write(&d, "f.csv", "freq_hz,pf_db_s_per_m\n1e6,40\n1e9,12\n");
    let out = d.join("out.csv");
    let cases = [
        (
            "freq_hz,level_dbm\n1e6,-40\n5e5,-41\n",
            "line 3",
            "must increase",
        ),
        ("freq_hz,level_dbm\n1e6,-40\n1e6,-41\n", "line 3", "repeats"),
        ("freq_hz,level_dbm\n1e6\n", "line 2", "1 columns"),
        ("freq_hz,level_dbm\n1e6,NaN\n", "line 2", "not finite"),
        ("freq_hz,level_dbm\n1e6,abc\n", "line 2", "not a number"),
        ("", "line 1", "empty"),
        (
            "freq_hz,watts\n1e6,1\n",
            "line 1",
            "expected freq_hz,level_dbm|level_dbuv",
        ),
        ("freq_hz,level_dbm\n", "line 2", "no data rows"),
        (
            "freq_hz,level_dbm\n-5,-40\n",
            "line 2",
            "outside 1 Hz to 1 THz",
        ),
        // Physical ranges (calib::convert::column_range, with their reasons): a frequency
        // pasted into the level column, a level beyond any analyzer, a frequency beyond 1 THz.
        (
            "freq_hz,level_dbuv\n1e6,40\n2e6,1e8\n",
            "line 3",
            "level_dbuv = 1e8 is outside -93.01 to 166.99 dBµV",
        ),
        (
            "freq_hz,level_dbm\n1e6,1e300\n",
            "line 2",
            "level_dbm = 1e300 is outside -200 to 60 dBm",
        ),
        (
            "freq_hz,level_dbm\n1e13,-40\n",
            "line 2",
            "outside 1 Hz to 1 THz",
        ),
    ];
    for (text, line, why) in cases {
        let r = write(&d, "r.csv", text);
        let o = convert_cmd(&r, &f, &["--out", out.to_str().unwrap()]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{text:?}: {err}");
        assert!(
            err.contains("r.csv") && err.contains(line) && err.contains(why),
            "{text:?}: {err}"
        );
        assert!(!err.contains("panicked"));
        assert!(!out.exists(), "{text:?} wrote an output");
    }
    // Outside the factor table: refused, unless extrapolation is asked for.
    let r = write(&d, "r.csv", "freq_hz,level_dbm\n2e9,-40\n");
    let args = [
        "convert",
        "--readings",
        &r,
        "--factor",
        &f,
        "--gain-db",
        "0",
        "--out",
        out.to_str().unwrap(),
    ];
    let o = run(&args);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--extrapolate"));
    assert!(!out.exists());
    let mut with = args.to_vec();
    with.push("--extrapolate");
    assert!(run(&with).status.success());
    assert!(out.exists());
}

// The reliability audit's case: a reading of 1e8 dBµV with --plot once wrote a 1.34 GB SVG.
// Now it is refused with its line; and a plot of the widest legal data (−200 to +60 dBm over
// 1 Hz to 1 THz, 100 000 points) stays under 1 MB, with no inf or NaN in any output.
#[test]
fn absurd_readings_are_refused_and_plots_stay_small() {
    let d = dir("absurd");
    let f = write(&d, "f.csv", "freq_hz,pf_db_s_per_m\n1,250\n1e12,-100\n");
    let (out, plot) = (d.join("out.csv"), d.join("plot.svg"));
    let with_plot = |r: &str| {
        convert_cmd(
            r,
            &f,
            &[
                "--out",
                out.to_str().unwrap(),
                "--plot",
                plot.to_str().unwrap(),
            ],
        )
    };
    let r = write(&d, "r.csv", "freq_hz,level_dbuv\n1e6,40\n2e6,1e8\n");
    let o = with_plot(&r);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("line 3") && err.contains("level_dbuv = 1e8"),
        "{err}"
    );
    assert!(!out.exists() && !plot.exists());
    let mut text = String::from("freq_hz,level_dbm\n");
    for i in 0..100_000 {
        let fr = 10f64.powf(12.0 * i as f64 / 99_999.0);
        let level = if i % 2 == 0 { -200.0 } else { 60.0 };
        text.push_str(&format!("{fr:e},{level}\n"));
    }
    let r = write(&d, "wide.csv", &text);
    let t = std::time::Instant::now();
    let o = with_plot(&r);
    let took = t.elapsed();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let svg = std::fs::metadata(&plot).unwrap().len();
    println!("100 000 points, widest ranges: {svg} bytes of SVG in {took:?} (debug build)");
    assert!(svg < 1_000_000, "{svg} bytes");
    for p in [&out, &plot] {
        let t = std::fs::read_to_string(p).unwrap().to_lowercase();
        assert!(!t.contains("inf") && !t.contains("nan"), "{}", p.display());
    }
}

// Outputs never overwrite an input or each other, and a folder is not a file to write: each is
// refused up front (exit 2, naming the flag) and every file stays as it was.
#[test]
fn outputs_that_collide_are_refused_and_inputs_survive() {
    let d = dir("collide");
    let r = write(&d, "r.csv", "freq_hz,level_dbuv\n1e8,20\n");
    let f = write(&d, "f.csv", "freq_hz,pf_db_s_per_m\n1e7,10\n1e9,10\n");
    let out = d.join("out.csv").to_string_lossy().to_string();
    let folder = d.to_string_lossy().to_string();
    let cases: [(&[&str], &str); 5] = [
        (&["--out", &out, "--plot", &r], "--plot"),
        (&["--out", &out, "--plot", &f], "is also --factor"),
        (&["--out", &out, "--plot", &out], "is also --out"),
        (&["--out", &r], "is also --readings"),
        (&["--out", &folder], "is a folder"),
    ];
    for (extra, want) in cases {
        let o = convert_cmd(&r, &f, extra);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {err}");
        assert!(err.contains(want), "{extra:?}: {err}");
        assert_eq!(
            std::fs::read_to_string(&r).unwrap(),
            "freq_hz,level_dbuv\n1e8,20\n"
        );
        assert!(
            std::fs::read_to_string(&f)
                .unwrap()
                .starts_with("freq_hz,pf")
        );
        assert!(!Path::new(&out).exists());
    }
    // A good run with a plot writes both.
    let plot = d.join("p.svg").to_string_lossy().to_string();
    let o = convert_cmd(&r, &f, &["--out", &out, "--plot", &plot]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(std::fs::read_to_string(&plot).unwrap().starts_with("<svg"));
    // 20 dBµV + 10 dB(S/m) = 30 dBµA/m.
    let text = std::fs::read_to_string(&out).unwrap();
    let h: f64 = text
        .lines()
        .nth(1)
        .unwrap()
        .split(',')
        .nth(1)
        .unwrap()
        .parse()
        .unwrap();
    assert!((h - 30.0).abs() < 1e-9);
}

/// The line a refused table names, for a file written with `end` as its line end.
fn refused_line(d: &Path, name: &str, lines: &[&[u8]], end: &[u8]) -> String {
    let mut bytes = Vec::new();
    for l in lines {
        bytes.extend_from_slice(l);
        bytes.extend_from_slice(end);
    }
    let p = d.join(name);
    std::fs::write(&p, &bytes).unwrap();
    match read_table(&p, &["level_dbuv"]) {
        Ok(_) => panic!("{name}: accepted"),
        Err(e) => e.to_string(),
    }
}

/// Line numbers are the file's own, whatever its line ends (instrument exports are often
/// CRLF), with comment and blank lines counted: here the bad value sits on line 6.
#[test]
fn refusals_name_the_physical_line_for_lf_crlf_and_cr_files() {
    let d = dir("lines");
    let lines: [&[u8]; 7] = [
        b"# exported by the bench analyzer",
        b"",
        b"freq_hz,level_dbuv",
        b"1e6,20",
        b"# a comment between rows",
        b"3e6,abc",
        b"4e6,22",
    ];
    for (name, end) in [
        ("lf.csv", &b"\n"[..]),
        ("crlf.csv", &b"\r\n"[..]),
        ("cr.csv", &b"\r"[..]),
    ] {
        let e = refused_line(&d, name, &lines, end);
        assert!(e.contains("line 6: level_dbuv = 'abc'"), "{name}: {e}");
    }
    // A bad header after a comment and a blank line is named on its own line (3).
    let bad_header: [&[u8]; 4] = [b"# c", b"", b"frequency,level", b"1e6,20"];
    let e = refused_line(&d, "header.csv", &bad_header, b"\r\n");
    assert!(e.contains("line 3: header is 'frequency,level'"), "{e}");
}

/// A Latin-1 byte (`°` as 0xB0) in a comment is tolerated; in a data row it is refused with
/// its line and column.
#[test]
fn non_utf8_bytes_pass_in_comments_and_are_named_elsewhere() {
    let d = dir("latin1");
    let ok = d.join("comment.csv");
    std::fs::write(
        &ok,
        b"# room 23 \xB0C\r\nfreq_hz,level_dbuv\r\n1e6,20\r\n2e6,21\r\n",
    )
    .unwrap();
    let t = read_table(&ok, &["level_dbuv"]).unwrap();
    assert_eq!(t.rows, vec![(1e6, 20.0), (2e6, 21.0)]);
    assert_eq!(t.lines, vec![3, 4]);
    let bad = d.join("data.csv");
    std::fs::write(&bad, b"freq_hz,level_dbuv\n1e6,20\n2e6,2\xB01\n").unwrap();
    let e = read_table(&bad, &["level_dbuv"]).unwrap_err().to_string();
    assert!(
        e.contains("line 3: byte 0xB0 at column 6 is not UTF-8"),
        "{e}"
    );
}
