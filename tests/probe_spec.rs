//! Probe specs: bad values are refused with the field, the value and the reason; random valid
//! specs give a design-rule-clean board or a clear refusal, never a panic; names cannot escape
//! the output folder.

use loopwright::error::Error;
use loopwright::pipeline::{build_family, build_to_dir};
use loopwright::spec::probe::ProbeFileSpec;
use proptest::prelude::*;
use std::path::Path;

fn spec(text: &str) -> ProbeFileSpec {
    toml::from_str(text).expect("spec TOML")
}

const BASE: &str = r#"
stackup = "common-4l-1.6"
signal_layer = 2
"#;

fn refused(text: &str, fragments: &[&str]) {
    let s = spec(&format!("{BASE}{text}"));
    let err = match build_family(&s, Path::new("."), false) {
        Ok(_) => panic!("accepted: {text}"),
        Err(e) => e.to_string(),
    };
    for f in fragments {
        assert!(err.contains(f), "'{f}' not in: {err}");
    }
}

#[test]
fn negative_size_is_refused() {
    refused(
        "[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = -4\n",
        &["probe[1].size_mm", "-4", "greater than 0"],
    );
}

#[test]
fn kinds_and_turn_counts_are_checked_and_refused_with_the_reason() {
    let probe = "[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n";
    // A balanced loop needs a handle that holds two connectors side by side: the family's 8 mm
    // is refused naming the field, the width it needs and the probe's own field to set.
    refused(
        &format!("{probe}kind = \"balanced\"\n"),
        &[
            "handle.width_mm = 8",
            "balanced loop",
            "at least 16.101 mm",
            "probe[1].handle_width_mm",
        ],
    );
    refused(
        &format!("{probe}kind = \"balanced\"\nhandle_width_mm = 1\n"),
        &["probe[1].handle_width_mm = 1"],
    );
    refused(
        &format!("{probe}kind = \"balanced\"\nhandle_width_mm = 17\nelectrode_diameter_mm = 2\n"),
        &["probe[1].electrode_diameter_mm = 2: applies only to kind = \"electric\""],
    );
    let s = spec(&format!(
        "{BASE}{probe}kind = \"balanced\"\nhandle_width_mm = 17\n"
    ));
    let fam = loopwright::model::probe::family_from_spec(&s, Path::new(".")).unwrap();
    assert_eq!(
        fam.probes[0].kind,
        loopwright::model::probe::ProbeKind::Balanced
    );
    assert_eq!(fam.probes[0].handle.width, 17.0);
    refused(
        &format!("{probe}kind = \"dipole\"\n"),
        &[
            "probe[1].kind",
            "dipole",
            "must be \"loop\"",
            "\"balanced\"",
            "\"electric\"",
        ],
    );
    // A balanced loop has one turn; 2 and 3 turns are built on a singly-loaded loop
    // (tests/multiturn.rs).
    refused(
        &format!("{probe}kind = \"balanced\"\nhandle_width_mm = 17\nturns = 2\n"),
        &["probe[1].turns = 2: must be 1 on a balanced loop"],
    );
    let s = spec(&format!("{BASE}{probe}turns = 2\n"));
    let fam = loopwright::model::probe::family_from_spec(&s, Path::new(".")).unwrap();
    assert_eq!(fam.probes[0].turns, 2);
    for n in ["0", "-1", "4"] {
        refused(
            &format!("{probe}turns = {n}\n"),
            &[&format!("probe[1].turns = {n}: must be 1")],
        );
    }
    // Spelled out, today's meaning is accepted.
    let s = spec(&format!("{BASE}{probe}kind = \"loop\"\nturns = 1\n"));
    let fam = loopwright::model::probe::family_from_spec(&s, Path::new(".")).unwrap();
    assert_eq!(
        fam.probes[0].kind,
        loopwright::model::probe::ProbeKind::Loop
    );
    assert_eq!(fam.probes[0].turns, 1);
}

#[test]
fn electric_probe_fields_are_checked_and_loop_fields_refused() {
    let e = "[[probe]]\nname = \"e\"\nkind = \"electric\"\n";
    // The diameter is required, at least the via pad and at most 20 mm.
    refused(
        e,
        &[
            "probe[1].electrode_diameter_mm = (missing)",
            "via pad (0.6)",
        ],
    );
    refused(
        &format!("{e}electrode_diameter_mm = 0.4\n"),
        &[
            "probe[1].electrode_diameter_mm = 0.4",
            "via pad (0.6 mm",
            "20",
        ],
    );
    // The clearance is held to 0.6 of the radius: the collecting radius r + c/2 is checked
    // that far (tests/electrode.rs).
    refused(
        &format!("{e}electrode_diameter_mm = 1\nelectrode_clearance_mm = 0.5\n"),
        &[
            "probe[1].electrode_clearance_mm = 0.5",
            "at most 0.3 mm",
            "0.6 of",
        ],
    );
    refused(
        &format!("{e}electrode_diameter_mm = 1\nelectrode_clearance_mm = 0.05\n"),
        &["probe[1].electrode_clearance_mm = 0.05"],
    );
    // A loop's fields and a turn count do not apply.
    refused(
        &format!("{e}electrode_diameter_mm = 1\nshape = \"round\"\nsize_mm = 10\nturns = 2\n"),
        &[
            "probe[1].shape = \"round\": does not apply to an electric probe",
            "probe[1].size_mm = 10: does not apply to an electric probe",
            "probe[1].turns = 2: does not apply to an electric probe",
        ],
    );
    // Nor do the electrode's fields to a loop.
    refused(
        "[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\nelectrode_diameter_mm = 1\n",
        &["probe[1].electrode_diameter_mm = 1: applies only to kind = \"electric\""],
    );
    // Accepted, with the clearance's default.
    let s = spec(&format!("{BASE}{e}electrode_diameter_mm = 1.5\n"));
    let fam = loopwright::model::probe::family_from_spec(&s, Path::new(".")).unwrap();
    assert_eq!(
        fam.probes[0].kind,
        loopwright::model::probe::ProbeKind::Electric(loopwright::model::probe::Electrode {
            diameter: 1.5,
            clearance: loopwright::model::probe::electrode_limits::CLEARANCE,
        })
    );
}

#[test]
fn gap_wider_than_the_loop_is_refused() {
    refused(
        "gap_mm = 6\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n",
        &["gap_mm", "6", "too wide", "less than half"],
    );
}

#[test]
fn signal_layer_without_a_layer_on_one_side_is_refused() {
    for n in [1, 4] {
        let text = format!(
            "stackup = \"common-4l-1.6\"\nsignal_layer = {n}\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n"
        );
        let err = build_family(&spec(&text), Path::new("."), false)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("signal_layer")
                && err.contains(&n.to_string())
                && err.contains("inner layer, 2 to 3"),
            "{err}"
        );
    }
}

#[test]
fn via_pitch_rule_the_fab_cannot_meet_is_refused() {
    refused(
        "[via]\npitch_n = 40\nf_max_hz = 2e10\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n",
        &["via.pitch_n", "40", "below the fab's smallest via pitch"],
    );
}

// Found by the spec census (examples/spec_census.rs): a stitching limit λ/N shorter than the
// distance the ground vias around the signal via must keep from it (antipad, pad, web) left
// that via isolated; it is now refused at validation with the highest f_max_hz that works.
#[test]
fn stitching_limit_shorter_than_the_signal_via_ring_is_refused() {
    let text = r#"
stackup = "slim-4l-0.8"
signal_layer = 3
target_z0_ohms = 39.6
clearance_mm = 0.310
gap_mm = 0.782
mill_interior = true
[via]
drill_mm = 0.274
pad_mm = 0.739
pitch_n = 8.6
f_max_hz = 1.570e10
[handle]
length_mm = 78.0
width_mm = 8.19
[fab]
min_trace_mm = 0.185
min_space_mm = 0.170
min_drill_mm = 0.232
min_annular_ring_mm = 0.120
min_hole_gap_mm = 0.214
copper_to_edge_mm = 0.220
mask_expansion_mm = 0.073
mask_web_mm = 0.126
silk_width_mm = 0.117
silk_text_height_mm = 0.83
silk_to_pad_mm = 0.246
[[probe]]
name = "p"
shape = "square"
size_mm = 14.250
corner_radius_mm = 2.048

"#;
    match build_family(&spec(text), Path::new("."), false) {
        Err(Error::Invalid(v)) => {
            let e = v
                .iter()
                .find(|e| e.field == "via.f_max_hz")
                .expect("via.f_max_hz");
            assert!(
                e.allowed.contains("at most") && e.allowed.contains("signal via"),
                "{e:?}"
            );
        }
        other => panic!(
            "not refused at validation: {:?}",
            other.err().map(|e| e.to_string())
        ),
    }
}

// Found by the spec census: the feed's fence on the outside of its bend left a gap wider than
// λ/N (1.87 mm against 1.60 mm); the fences now follow the bend.
#[test]
fn fence_follows_the_outside_of_the_feed_bend() {
    let text = "stackup = \"slim-4l-0.8\"\nsignal_layer = 2\nclearance_mm = 0.596\n\
                [via]\ndrill_mm = 0.558\npad_mm = 0.882\npitch_n = 37.4\nf_max_hz = 2.365e9\n\
                [handle]\nwidth_mm = 19.75\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 25\n";
    let b = build_family(&spec(text), Path::new("."), false);
    assert!(b.is_ok(), "{:?}", b.err().map(|e| e.to_string()));
}

#[test]
fn trace_narrower_than_the_fab_minimum_is_refused() {
    refused(
        "[fab]\nmin_trace_mm = 0.5\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n",
        &["target_z0_ohms", "below the fab minimum trace", "0.5"],
    );
}

#[test]
fn loop_too_small_for_its_ring_is_refused() {
    refused(
        "[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 2\n",
        &["size_mm", "too small"],
    );
}

/// The smallest size the refusal prints is itself accepted (it is rounded up, not to the
/// nearest: "at least 3.216 mm" once refused 3.216).
#[test]
fn the_printed_smallest_size_is_accepted() {
    let small = "[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 2\n";
    let err = match build_family(&spec(&format!("{BASE}{small}")), Path::new("."), false) {
        Ok(_) => panic!("accepted"),
        Err(e) => e.to_string(),
    };
    let tail = err.split("must be at least ").nth(1).expect(&err);
    let limit: f64 = tail.split(' ').next().unwrap().parse().expect(&err);
    let at_limit = format!("[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = {limit}\n");
    if let Err(e) = build_family(&spec(&format!("{BASE}{at_limit}")), Path::new("."), false) {
        assert!(!e.to_string().contains("too small"), "{limit} refused: {e}");
    }
}

/// A negative layer is refused by validation with the allowed range, not by the TOML reader
/// ("expected usize").
#[test]
fn a_negative_signal_layer_is_refused_with_its_range() {
    let text = "stackup = \"common-4l-1.6\"\nsignal_layer = -1\n[[probe]]\nname = \"a\"\n\
                shape = \"round\"\nsize_mm = 10\n";
    let e = match build_family(&spec(text), Path::new("."), false) {
        Ok(_) => panic!("accepted"),
        Err(e) => e.to_string(),
    };
    assert!(
        e.contains("signal_layer = -1: must be an inner layer, 2 to 3"),
        "{e}"
    );
}

/// A spec's minimum-trace refusal points at the spec's own setting, not at a command flag.
#[test]
fn the_min_trace_refusal_names_the_spec_setting() {
    refused(
        "[fab]\nmin_trace_mm = 0.5\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n",
        &["[fab] min_trace_mm"],
    );
}

#[test]
fn every_problem_is_reported_at_once() {
    refused(
        "clearance_mm = 0.01\n[[probe]]\nname = \"\"\nshape = \"oval\"\n[[probe]]\nname = \"b\"\nshape = \"rectangle\"\nwidth_mm = 10\n",
        &[
            "clearance_mm",
            "probe[1].name",
            "probe[1].shape",
            "\"oval\"",
            "probe[2].height_mm",
        ],
    );
}

#[test]
fn a_name_cannot_write_outside_the_output_folder() {
    let root = std::env::temp_dir().join(format!("loopwright-escape-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let out = root.join("a").join("b").join("out");
    let s = spec(&format!(
        "{BASE}[[probe]]\nname = \"../../x\"\nshape = \"round\"\nsize_mm = 10\n"
    ));
    build_to_dir(&s, Path::new("."), &out, false, Vec::new()).unwrap();
    // Everything written is under `out`; nothing appeared beside it or above it.
    let listing = |d: &Path| -> Vec<String> {
        std::fs::read_dir(d)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .collect()
    };
    assert_eq!(listing(&root), ["a"]);
    assert_eq!(listing(&root.join("a")), ["b"]);
    assert_eq!(listing(&root.join("a").join("b")), ["out"]);
    let inside = listing(&out);
    assert!(inside.iter().all(|n| !n.contains('/')), "{inside:?}");
    assert!(
        inside
            .iter()
            .any(|n| n.ends_with("x") && n.starts_with('-')),
        "{inside:?}"
    );
    let _ = std::fs::remove_dir_all(&root);
}

#[test]
fn a_refused_build_writes_nothing() {
    let root = std::env::temp_dir().join(format!("loopwright-refused-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let s = spec(&format!(
        "{BASE}[[probe]]\nname = \"ok\"\nshape = \"round\"\nsize_mm = 10\n[[probe]]\nname = \"bad\"\nshape = \"round\"\nsize_mm = 1\n"
    ));
    assert!(build_to_dir(&s, Path::new("."), &root, false, Vec::new()).is_err());
    assert!(!root.exists(), "a refused build left {root:?} behind");
}

fn shape_text() -> impl Strategy<Value = String> {
    prop_oneof![
        (3.0f64..40.0).prop_map(|d| format!("shape = \"round\"\nsize_mm = {d:.3}\n")),
        (3.0f64..40.0, 0.0f64..0.5).prop_map(|(s, r)| format!(
            "shape = \"square\"\nsize_mm = {s:.3}\ncorner_radius_mm = {:.3}\n",
            r * s * 0.9
        )),
        (3.0f64..40.0, 3.0f64..40.0, 0.0f64..0.5).prop_map(|(w, h, r)| format!(
            "shape = \"rectangle\"\nwidth_mm = {w:.3}\nheight_mm = {h:.3}\ncorner_radius_mm = {:.3}\n",
            r * w.min(h) * 0.9
        )),
    ]
}

/// The via table's stitching fields, a fab profile and a probe's silk text, over the ranges a
/// fab might offer (the spec census's ranges, examples/spec_census.rs).
fn via_fab_silk() -> impl Strategy<Value = (String, String, String)> {
    (
        (6.0f64..40.0, 8.0f64..10.3),
        (0.075f64..0.2, 0.075f64..0.2, 0.1f64..1.0, 0.0f64..0.1),
        "[A-Za-z0-9 µ-]{0,24}",
    )
        .prop_map(|((n, lf), (tr, sp, cte, me), silk)| {
            (
                format!("pitch_n = {n:.1}\nf_max_hz = {:.4e}\n", 10f64.powf(lf)),
                format!(
                    "[fab]\nmin_trace_mm = {tr:.3}\nmin_space_mm = {sp:.3}\n\
                     copper_to_edge_mm = {cte:.3}\nmask_expansion_mm = {me:.3}\n"
                ),
                format!("silk_text = \"{silk}\"\n"),
            )
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    // Random specs within the documented ranges (shape, stackup, layer, gap, clearance, vias,
    // stitching limit, handle, connector holes, fab profile, silk text, a singly-loaded loop of
    // one, two or three turns or a balanced loop): either every probe is
    // built, passes the design-rule check and writes Gerber files that gerber_parser reads
    // without error, or the spec is refused with field errors that each name a field, a value
    // and what is allowed; never a panic, never a design-rule failure. (The spec census runs
    // the same idea over hundreds of specs: examples/spec_census.rs.)
    #[test]
    fn random_specs_build_clean_or_are_refused(
        shape in shape_text(),
        slim in any::<bool>(),
        layer3 in any::<bool>(),
        gap in 0.13f64..1.5,
        clearance in 0.13f64..0.5,
        drill in 0.3f64..0.5,
        ring in 0.125f64..0.3,
        handle_len in 8.0f64..60.0,
        handle_w in 6.6f64..14.0,
        target in 35.0f64..55.0,
        mill in any::<bool>(),
        holes_kind in (prop_oneof![Just(0.0f64), 0.3f64..0.8], 0u8..4),
        vfs in via_fab_silk(),
    ) {
        let (via_extra, fab, silk) = vfs;
        // A balanced loop on its own handle, wide enough for two connectors; a loop of two
        // turns, or of three on the six-layer stackup.
        let (holes, kind_n) = holes_kind;
        let kind = match kind_n {
            1 => "kind = \"balanced\"\nhandle_width_mm = 17.5\n",
            2 => "turns = 2\n",
            3 => "turns = 3\n",
            _ => "",
        };
        let text = format!(
            "stackup = \"{}\"\nsignal_layer = {}\ntarget_z0_ohms = {target:.2}\nclearance_mm = {clearance:.3}\ngap_mm = {gap:.3}\nmill_interior = {mill}\n\
             [via]\ndrill_mm = {drill:.3}\npad_mm = {:.3}\n{via_extra}[handle]\nlength_mm = {handle_len:.2}\nwidth_mm = {handle_w:.2}\n\
             [connector]\nground_hole_drill_mm = {holes:.3}\n{fab}\
             [[probe]]\nname = \"p\"\n{silk}{kind}{shape}",
            if kind_n == 3 { "common-6l-1.6" } else if slim { "slim-4l-0.8" } else { "common-4l-1.6" },
            if layer3 { 3 } else { 2 },
            drill + 2.0 * ring,
        );
        match build_family(&spec(&text), Path::new("."), false) {
            Ok(b) => {
                for p in &b.probes {
                    prop_assert!(p.violations.is_empty());
                    for (name, bytes) in p.files.iter().filter(|(n, _)| n.ends_with(".gbr")) {
                        let doc = gerber_parser::parse(std::io::BufReader::new(&bytes[..]))
                            .map_err(|(_, e)| format!("{e:?}"));
                        let doc = doc.unwrap();
                        prop_assert!(doc.errors().is_empty(), "{name}: {:?}", doc.errors());
                    }
                }
            }
            Err(Error::Invalid(v)) => {
                prop_assert!(!v.is_empty());
                for e in &v {
                    prop_assert!(!e.field.is_empty() && !e.value.is_empty() && !e.allowed.is_empty(), "{e:?}");
                }
            }
            Err(other) => {
                prop_assert!(false, "not a field-level refusal for a spec in range:\n{text}\n{other}");
            }
        }
    }
}

// A design-rule violation stops the build and names rule, layer, place and measurement; with
// force the files are made and the notes open with the warning. (The spec validation keeps such
// boards from being specified, so the fab profile is tightened after validation here.)
#[test]
fn design_rule_violations_stop_the_build_unless_forced() {
    let s = spec(&format!(
        "{BASE}[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n"
    ));
    let fam = loopwright::model::probe::family_from_spec(&s, Path::new(".")).unwrap();
    let mut p = fam.probes[0].clone();
    p.fab.mask_web = 5.0;
    let err = loopwright::pipeline::build_probe(&p, "", false)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("mask web on mask-top") && err.contains("< 5.0000 mm"),
        "{err}"
    );
    let forced = loopwright::pipeline::build_probe(&p, "", true).unwrap();
    assert!(!forced.violations.is_empty());
    let notes = forced
        .files
        .iter()
        .find(|(n, _)| n.ends_with("fab-notes.md"))
        .map(|(_, b)| String::from_utf8_lossy(b).to_string())
        .unwrap();
    assert!(notes.contains("DESIGN-RULE CHECK FAILED"), "{notes}");
}

fn one_probe(extra: &str) -> loopwright::model::probe::Probe {
    let s = spec(&format!(
        "{BASE}{extra}\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n"
    ));
    loopwright::model::probe::family_from_spec(&s, Path::new("."))
        .unwrap()
        .probes
        .remove(0)
}

// The probe build solves its own cross-section with the field solver. On the usual build (thin
// prepreg on one side, coplanar ground and fences close by) the ideal-stripline closed form is
// several percent off, so `auto` takes the field width, which meets the target on the arm.
#[test]
fn width_from_auto_takes_the_field_solution_when_the_closed_form_is_off() {
    use loopwright::model::probe::WidthFrom;
    let s = loopwright::solve::probe::solve(&one_probe("")).unwrap();
    let cf = s.arm_z0_at_closed_form.unwrap();
    assert!((cf / s.closed_form.1.z0 - 1.0).abs() > 0.01, "{cf}");
    assert_eq!(s.width_source, WidthFrom::Field);
    assert!((s.arm_z0.unwrap() - 50.0).abs() < 0.05);
    assert!(s.trace_width < s.closed_form.0);
    // Asked for the closed form, the build keeps it and still reports the field's verdict.
    let c = loopwright::solve::probe::solve(&one_probe("width_from = \"closed-form\"")).unwrap();
    assert_eq!(c.width_source, WidthFrom::ClosedForm);
    assert_eq!(c.trace_width, c.closed_form.0);
    assert!((c.arm_z0.unwrap() - cf).abs() < 1e-9);
    refused(
        "width_from = \"guess\"\n[[probe]]\nname = \"a\"\nshape = \"round\"\nsize_mm = 10\n",
        &[
            "width_from",
            "\"guess\"",
            "\"auto\", \"field\" or \"closed-form\"",
        ],
    );
}

// Consistency of the probe's cross-section model: with the fences, coplanar ground and shield
// edges far from the trace (wide handle, large clearance), the handle's field solution tends to
// the field solution of ideal stripline between unlimited planes.
#[test]
fn far_walls_give_the_ideal_stripline() {
    use loopwright::solve::impedance::{Line, Method, analyse};
    use loopwright::solve::probe::{Section, cross_section, solve};
    // pitch_n 10: with a 2.5 mm clearance the ground vias around the signal via stand 3.3 mm
    // from it, beyond λ/20 at 3 GHz (refused), within λ/10.
    let p = one_probe("clearance_mm = 2.5\n[via]\npitch_n = 10\n[handle]\nwidth_mm = 40\n");
    let s = solve(&p).unwrap();
    let Line::Stripline(st) = s.line else {
        panic!()
    };
    let w = 0.3;
    let cs = cross_section(&p, &st, w, Section::Handle, s.pitch_max, s.pitch_min);
    let near_ideal = loopwright::field::solve(&cs, Default::default())
        .unwrap()
        .z0_ohms;
    let ideal = analyse(
        &Line::Stripline(loopwright::solve::impedance::Stripline { width: w, ..st }),
        Some(Method::Field),
    )
    .unwrap()
    .z0;
    assert!(
        (near_ideal / ideal - 1.0).abs() < 0.005,
        "{near_ideal} vs {ideal}"
    );
    // And walls brought close lower Z0 (more capacitance to ground).
    let close = one_probe("clearance_mm = 0.15");
    let sc = solve(&close).unwrap();
    let cs = cross_section(&close, &st, w, Section::Arm, sc.pitch_max, sc.pitch_min);
    let z_close = loopwright::field::solve(&cs, Default::default())
        .unwrap()
        .z0_ohms;
    assert!(z_close < 0.97 * ideal, "{z_close} vs {ideal}");
}

// Rebuilding replaces an unchanged earlier build; a file loopwright did not write, or one
// changed since, stops the build before anything is written (tests/output_folder.rs has the
// writer's own tests).
#[test]
fn output_folders_are_replaced_only_when_they_are_ours() {
    let root = std::env::temp_dir().join(format!("loopwright-replace-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let s = spec(&format!(
        "{BASE}[[probe]]\nname = \"P2\"\nshape = \"round\"\nsize_mm = 10\n"
    ));
    build_to_dir(&s, Path::new("."), &root, false, Vec::new()).unwrap();
    let first = std::fs::read(root.join("P2").join("P2-L1.gbr")).unwrap();
    build_to_dir(&s, Path::new("."), &root, false, Vec::new()).unwrap();
    assert_eq!(
        std::fs::read(root.join("P2").join("P2-L1.gbr")).unwrap(),
        first
    );
    std::fs::write(root.join("P2").join("P2-L1.gbr"), "edited").unwrap();
    std::fs::write(root.join("keep.txt"), "user").unwrap();
    let e = build_to_dir(&s, Path::new("."), &root, false, Vec::new())
        .unwrap_err()
        .to_string();
    assert!(e.contains("keep.txt is not written by loopwright"), "{e}");
    assert!(e.contains("P2/P2-L1.gbr changed"), "{e}");
    assert_eq!(
        std::fs::read_to_string(root.join("P2").join("P2-L1.gbr")).unwrap(),
        "edited"
    );
    assert_eq!(
        std::fs::read_to_string(root.join("keep.txt")).unwrap(),
        "user"
    );
    let leftovers: Vec<_> = std::fs::read_dir(root.parent().unwrap())
        .unwrap()
        .flatten()
        .filter(|e| {
            let n = e.file_name().to_string_lossy().to_string();
            n.starts_with(".loopwright-replace-") && n.contains(&format!("{}", std::process::id()))
        })
        .collect();
    assert!(leftovers.is_empty(), "temporary folder left behind");
    let _ = std::fs::remove_dir_all(&root);
}

// Names are checked at validation, against what the file systems and the family's own files
// need: folders differing only in case (one folder on Windows and macOS), a probe folder named
// like the family's summary, and names too long for the platforms' path limits.
#[test]
fn names_that_would_collide_or_overflow_are_refused_at_validation() {
    let p = |name: &str| format!("[[probe]]\nname = \"{name}\"\nshape = \"round\"\nsize_mm = 10\n");
    refused(
        &format!("{}{}", p("fm-r10"), p("FM-R10")),
        &[
            "probe[2].name",
            "\"FM-R10\"",
            "where case is ignored",
            "fm-r10",
        ],
    );
    refused(
        &format!("family = \"X\"\n{}", p("X-summary.md")),
        &["probe[1].name", "X-summary.md", "family's own file"],
    );
    refused(
        &format!("family = \"X\"\n{}", p("x-REPORT.html")),
        &["probe[1].name", "X-report.html"],
    );
    refused(
        &p(&"R".repeat(65)),
        &["probe[1].name", "at most 64 characters"],
    );
    refused(
        &format!("family = \"{}\"\n{}", "F".repeat(65), p("a")),
        &["family", "at most 64 characters"],
    );
    // 64 characters build.
    let s = spec(&format!("{BASE}{}", p(&"R".repeat(64))));
    assert!(build_family(&s, Path::new("."), false).is_ok());
}

// An --out that cannot be made is refused with --out named, before the build (here its parent
// is a file; a read-only parent takes the same path, but the tests may run as root).
#[test]
fn an_out_that_cannot_be_made_is_named() {
    let root = std::env::temp_dir().join(format!("loopwright-nodir-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    std::fs::create_dir_all(&root).unwrap();
    std::fs::write(root.join("a-file"), "x").unwrap();
    let out = root.join("a-file").join("boards");
    let e = loopwright::output::preflight(&out).unwrap_err().to_string();
    assert!(e.starts_with("--out = "), "{e}");
    assert!(e.contains("is a file, not a folder"), "{e}");
    let s = spec(&format!(
        "{BASE}[[probe]]\nname = \"P2\"\nshape = \"round\"\nsize_mm = 10\n"
    ));
    let e = build_to_dir(&s, Path::new("."), &out, false, Vec::new())
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("--out = "), "{e}");
    let _ = std::fs::remove_dir_all(&root);
}
