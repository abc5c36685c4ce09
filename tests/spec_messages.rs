//! Bad specs are refused at validation, before any geometry is built, with the field, the
//! line it is written on, the value (cut to a readable length) and the limit, and nothing
//! that the user did not write is blamed. Fixture files in `tests/data/specs/` are copies of
//! the demo spec with one kind of fault each.

use loopwright::error::Error;
use loopwright::spec::probe::ProbeFileSpec;
use std::path::Path;

fn file(name: &str) -> String {
    std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/data/specs")
            .join(name),
    )
    .unwrap()
}

/// The refusal of a spec text: a parse error's message, or the field errors as printed.
/// Validation (`family_from_spec`) is the stage before geometry: a refusal here means no
/// geometry was built.
fn refusal(text: &str) -> Vec<String> {
    let spec: ProbeFileSpec = match loopwright::spec::parse_toml(text, "t.toml") {
        Ok(s) => s,
        Err(Error::Parse { message, .. }) => return message.lines().map(String::from).collect(),
        Err(e) => panic!("{e}"),
    };
    match loopwright::model::probe::family_from_spec(&spec, Path::new(".")) {
        Ok(_) => panic!("accepted"),
        Err(e) => match loopwright::spec::with_lines(text, e) {
            Error::Invalid(v) => v.iter().map(|f| f.to_string()).collect(),
            other => panic!("{other}"),
        },
    }
}

#[test]
fn every_unknown_key_is_reported_at_once_in_file_order() {
    let got = refusal(&file("unknown_keys.toml"));
    assert_eq!(got.len(), 4, "{got:#?}");
    // A probe's key at the top level (misplaced), a stray key, a typo in [via], a typo in a
    // [[probe]], each on its own line, in the file's order.
    assert!(got[0].starts_with("line 5: unknown field `size_mm`, expected one of `family`"));
    assert!(got[1].starts_with("line 9: unknown field `foo`"));
    assert!(got[2].starts_with("line 15: unknown field `pich`, expected one of `drill_mm`"));
    // Three edits from `pitch_n`: too far to guess.
    assert!(!got[2].contains("did you mean"), "{}", got[2]);
    assert!(got[3].starts_with("line 35: unknown field `sise_mm`"));
    assert!(got[3].ends_with("(did you mean `size_mm`?)"), "{}", got[3]);
}

#[test]
fn a_bad_size_blames_only_itself() {
    let got = refusal(&file("negative_width.toml"));
    // Not the corner radius (its range follows from the width) nor the gap (its limit
    // follows from the loop's size): the user set neither wrongly.
    assert_eq!(
        got,
        vec![
            "line 37: probe[4].width_mm = -5: must be a finite number greater than 0 and at most 200"
        ]
    );
}

#[test]
fn fields_foreign_to_the_shape_are_refused() {
    let got = refusal(&file("round_with_rect_fields.toml"));
    assert_eq!(
        got,
        vec![
            "line 23: probe[1].width_mm = 3: does not apply to a round loop, which takes \
             size_mm; remove it",
            "line 24: probe[1].corner_radius_mm = 1: does not apply to a round loop, which \
             takes size_mm; remove it",
        ]
    );
}

#[test]
fn names_hold_no_control_characters_and_only_what_the_silkscreen_draws() {
    let got = refusal(&file("control_char.toml"));
    assert_eq!(
        got,
        vec![
            "line 30: probe[3].name = \"FM\\u{7}R5\": must not hold control characters (U+0007 \
             at character 3)"
        ]
    );
    let got = refusal(&file("font_char.toml"));
    assert_eq!(got.len(), 1);
    assert!(
        got[0].starts_with(
            "line 30: probe[3].name = \"FM-R5€\": '€' (U+20AC, character 6) is not in the \
             silkscreen font"
        ),
        "{}",
        got[0]
    );
}

#[test]
fn a_huge_number_is_echoed_short_with_its_limit() {
    let got = refusal(&file("huge_number.toml"));
    assert_eq!(
        got,
        vec![
            "line 27: probe[2].size_mm = 1e300: must be a finite number greater than 0 and at most 200"
        ]
    );
}

// A 10 MB name is refused at validation with its echo cut: the message stays short. (How long
// the refusal takes is measured by `cargo bench --bench pipeline`, "refuse a 10 MB name".)
#[test]
fn a_ten_megabyte_name_is_refused_with_a_short_message() {
    let text = file("negative_width.toml")
        .replace("width_mm = -5", "width_mm = 12")
        .replace(
            "name = \"FM-R5\"",
            &format!("name = \"{}\"", "x".repeat(10_000_000)),
        );
    let got = refusal(&text);
    assert_eq!(got.len(), 1, "{}", got.len());
    let m = &got[0];
    assert!(m.len() < 400, "{} bytes", m.len());
    assert!(
        m.starts_with("line 30: probe[3].name = \"xxxx")
            && m.contains("… (10000002 characters in all)")
            && m.ends_with("at most 64 characters (it names a folder and its files, which must fit every platform's path limits)"),
        "{m}"
    );
}

// Two dielectrics in a row: the second is blamed, with its line, and not the copper layers
// after it (they are out of step only because of it) nor the last layer, which is copper.
#[test]
fn a_stackup_blames_the_first_break_of_the_alternation_only() {
    let path =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/specs/adjacent_dielectrics.toml");
    let e = loopwright::model::stackup::load(&path.to_string_lossy()).unwrap_err();
    let Error::Invalid(v) = e else { panic!("{e}") };
    let structural: Vec<String> = v
        .iter()
        .map(|f| f.to_string())
        .filter(|m| m.contains(".type"))
        .collect();
    assert_eq!(structural.len(), 1, "{structural:#?}");
    assert!(
        structural[0].ends_with(
            "line 11: layer[3].type = \"dielectric\": layers must alternate copper, dielectric, \
             copper... from the top; this one follows a dielectric layer"
        ),
        "{}",
        structural[0]
    );
}

// `calibrate` names its flags as they are typed.
#[test]
fn calibrate_names_its_flags_with_their_dashes() {
    let d = std::env::temp_dir().join(format!("loopwright-spec-messages-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .current_dir(&d)
        .args([
            "calibrate",
            "--touchstone",
            "x.s2p",
            "--probes",
            "a.toml",
            "--fixture",
            "b.toml",
            "--height",
            "-3",
            "--out",
            "o",
        ])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("--height = -3: must be a finite number from 0 to 100"),
        "{err}"
    );
}
