//! The Touchstone v1 reader against files written by the test from stated numbers (the format
//! is the open Touchstone specification: option line, comments, S-parameter data).

use loopwright::calib::touchstone::parse;

fn close(a: (f64, f64), b: (f64, f64)) -> bool {
    (a.0 - b.0).abs() < 1e-9 && (a.1 - b.1).abs() < 1e-9
}

// One S21 = 0.01∠−90° (−40 dB) written three ways, in three units.
#[test]
fn the_three_formats_and_units_agree() {
    let s21 = (0.0, -0.01);
    let files = [
        "! RI\n# MHz S RI R 50\n100 0.1 0 0 -0.01 0 -0.01 0.1 0\n",
        "# GHz S MA R 50\n! comment line\n0.1 0.1 0 0.01 -90 0.01 -90 0.1 0 ! trailing comment\n",
        "# Hz S DB R 50\n100e6 -20 0 -40 -90\n -40 -90 -20 0\n",
    ];
    for f in files {
        let n = parse(f, "t.s2p", 2).unwrap();
        assert_eq!(n.freqs, vec![1e8]);
        assert_eq!(n.r_ref, 50.0);
        assert!(close(n.param(2, 1)[0], s21), "{f}: {:?}", n.param(2, 1));
        assert!(close(n.param(1, 1)[0], (0.1, 0.0)));
    }
    // Default option values: GHz, MA, 50 Ω; R is read.
    let n = parse("#\n1 0.5 0 0.25 180 0.25 180 0.5 0\n", "t.s2p", 2).unwrap();
    assert_eq!(n.freqs, vec![1e9]);
    let n = parse("# kHz S RI R 75\n1 0 0 1 0 1 0 0 0\n", "t.s2p", 2).unwrap();
    assert_eq!((n.freqs[0], n.r_ref), (1e3, 75.0));
}

// A three-port file, rows in row-major order: S31 is the 7th parameter.
#[test]
fn three_ports() {
    let mut row = String::from("# MHz S RI R 50\n10");
    for k in 0..9 {
        row.push_str(&format!(" {} 0", k as f64 / 10.0));
    }
    let n = parse(&row, "t.s3p", 3).unwrap();
    assert!(close(n.param(3, 1)[0], (0.6, 0.0)));
    assert!(close(n.param(1, 3)[0], (0.2, 0.0)));
}

#[test]
fn malformed_files_are_refused_with_their_line() {
    let cases: [(&str, usize, &str, &str); 12] = [
        (
            "# MHz S RI R 50\n1 0 0 0 0 0 0 0 0\n2 0 0 0 0 0 0 0\n3 0 0 0 0 0 0 0 0\n",
            2,
            "line 3",
            "8 numbers: a 2-port point is one line of 9",
        ),
        (
            "# MHz S RI R 50\n! c\n1 0 0 0 0 0 0 0 0\n2 0 0 0 0 0 0 0 0 0\n",
            2,
            "line 4",
            "a missing or extra column",
        ),
        (
            "# MHz S MA R 50\n1 0 0 0 0 0 0\n0 0 0 0 0\n0 0 0 0 0 0\n",
            3,
            "line 3",
            "row 2 of a 3-port point is a line of 6",
        ),
        ("# MHz S RI R 50\n[Version] 2.0\n", 2, "line 2", "version 2"),
        (
            "# MHz S XX R 50\n1 0 0 0 0 0 0 0 0\n",
            2,
            "line 1",
            "unknown option",
        ),
        ("# MHz S RI R -5\n", 2, "line 1", "positive reference"),
        (
            "# MHz S RI R 50\n2 0 0 0 0 0 0 0 0\n1 0 0 0 0 0 0 0 0\n",
            2,
            "line 3",
            "below the previous",
        ),
        (
            "# MHz S RI R 50\n1 0 0 0 0 0 0 0 0\n1 0 0 0 0 0 0 0 0\n",
            2,
            "line 3",
            "repeats",
        ),
        (
            "# MHz S RI R 50\n1 NaN 0 0 0 0 0 0 0\n",
            2,
            "line 2",
            "not finite",
        ),
        (
            "# MHz S RI R 50\n1 0 0 0 0 0 0 0 0\n",
            3,
            "line 2",
            "wrong port count",
        ),
        ("", 2, "line 1", "no data"),
        ("1 0 0 0 0 0 0 0 0\n", 2, "line 1", "before the option line"),
    ];
    for (text, ports, line, why) in cases {
        let e = parse(text, "bad.s2p", ports).unwrap_err().to_string();
        assert!(
            e.contains("bad.s2p") && e.contains(line) && e.contains(why),
            "{text:?}: {e}"
        );
    }
}
