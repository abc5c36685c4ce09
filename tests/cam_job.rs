//! What a fab's CAM reads beside the images: the Gerber job file names every image and drill
//! file of its folder, carries the header fields the Gerber Job Format requires (a creation
//! date and a project GUID; Ucamco, "The Gerber Job Format", revision 2020.08 and later; the
//! same required fields as PyGerber's `GerberJobFile` model: `Header.CreationDate`,
//! `GeneralSpecs.{ProjectId, Size, LayerNumber, BoardThickness}`, `FilesAttributes[].{Path,
//! FileFunction, FilePolarity}`, `MaterialStackup[].{Name, Type}`), each dielectric's own
//! material, and the order's finish, colours, IPC class and Tg, which the notes state too.

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("loopwright-cam-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// The demo's settings with one 10 mm loop, `fab` appended as a `[fab]` table and the stackup
/// given by `stackup`.
fn spec(d: &Path, stackup: &str, fab: &str) -> PathBuf {
    let head = loopwright::cli::DEMO_SPEC
        .split("[[probe]]")
        .next()
        .unwrap();
    let head = head.replace(
        "stackup = \"common-4l-1.6\"",
        &format!("stackup = \"{stackup}\""),
    );
    let text = format!(
        "{head}[[probe]]\nname = \"J10\"\nshape = \"round\"\nsize_mm = 10.0\n\n[fab]\n{fab}\n"
    );
    let p = d.join("p.toml");
    std::fs::write(&p, text).unwrap();
    p
}

fn build(spec: &Path, out: &Path) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .arg("build")
        .arg(spec)
        .arg("--out")
        .arg(out)
        .env("SOURCE_DATE_EPOCH", "1767225600")
        .output()
        .unwrap()
}

fn job(out: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("J10/J10.gbrjob")).unwrap()).unwrap()
}

#[test]
fn the_job_file_lists_every_image_and_drill_file_with_the_required_header() {
    let d = scratch("list");
    let out = d.join("o");
    let o = build(&spec(&d, "common-4l-1.6", ""), &out);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let j = job(&out);
    let (listed, in_folder) = common::job_listing(&j, &out.join("J10"));
    assert_eq!(listed, in_folder);
    for f in j["FilesAttributes"].as_array().unwrap() {
        assert!(!f["FileFunction"].as_str().unwrap().is_empty(), "{f}");
        assert!(!f["FilePolarity"].as_str().unwrap().is_empty(), "{f}");
    }
    let drill = j["FilesAttributes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["Path"] == "J10-PTH.drl")
        .unwrap();
    assert_eq!(drill["FileFunction"], "Plated,1,4,PTH");
    // SOURCE_DATE_EPOCH 1767225600 is 2026-01-01 00:00:00 UTC.
    assert_eq!(j["Header"]["CreationDate"], "2026-01-01T00:00:00Z");
    let guid = j["GeneralSpecs"]["ProjectId"]["GUID"].as_str().unwrap();
    let parts: Vec<&str> = guid.split('-').collect();
    assert_eq!(
        parts.iter().map(|p| p.len()).collect::<Vec<_>>(),
        vec![8, 4, 4, 4, 12],
        "{guid}"
    );
    assert!(guid.chars().all(|c| c == '-' || c.is_ascii_hexdigit()));
    assert!(parts[2].starts_with('8'), "version 8: {guid}");
    for k in ["Size", "LayerNumber", "BoardThickness"] {
        assert!(!j["GeneralSpecs"][k].is_null(), "{k}");
    }
    for m in j["MaterialStackup"].as_array().unwrap() {
        assert!(m["Name"].is_string() && m["Type"].is_string(), "{m}");
    }
    // The same board gives the same GUID; another board another.
    let again = d.join("o2");
    assert!(
        build(&spec(&d, "common-4l-1.6", ""), &again)
            .status
            .success()
    );
    assert_eq!(job(&again)["GeneralSpecs"]["ProjectId"]["GUID"], guid);
    let other = d.join("o3");
    let p = spec(&d, "common-4l-1.6", "").with_file_name("q.toml");
    std::fs::write(
        &p,
        std::fs::read_to_string(d.join("p.toml"))
            .unwrap()
            .replace("size_mm = 10.0", "size_mm = 12.0"),
    )
    .unwrap();
    assert!(build(&p, &other).status.success());
    assert_ne!(job(&other)["GeneralSpecs"]["ProjectId"]["GUID"], guid);
}

#[test]
fn the_order_and_the_materials_reach_the_job_file_and_the_notes() {
    let d = scratch("order");
    // A user stackup whose core is another laminate.
    let st = loopwright::model::stackup::builtin_text("common-4l-1.6").unwrap();
    let st = st.replacen("material = \"FR-4\"", "material = \"PTFE-ceramic\"", 1);
    std::fs::write(d.join("st.toml"), st).unwrap();
    let fab = "finish = \"osp\"\nmask_colour = \"black\"\nsilk_colour = \"yellow\"\n\
               ipc_class = 3\ntg_c = 170";
    let out = d.join("o");
    let o = build(&spec(&d, "st.toml", fab), &out);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let j = job(&out);
    assert_eq!(j["GeneralSpecs"]["Finish"], "OSP");
    let stack = j["MaterialStackup"].as_array().unwrap();
    let of = |t: &'static str| stack.iter().filter(move |m| m["Type"] == t);
    assert!(of("SolderMask").all(|m| m["Color"] == "Black"));
    assert!(of("Legend").all(|m| m["Color"] == "Yellow"));
    let materials: Vec<&str> = of("Dielectric")
        .map(|m| m["Material"].as_str().unwrap())
        .collect();
    assert_eq!(materials, vec!["PTFE-ceramic", "FR-4", "FR-4"]);
    assert!(of("Dielectric").all(|m| m["Notes"] == "Tg at least 170 °C"));
    let notes = std::fs::read_to_string(out.join("J10/J10-fab-notes.md")).unwrap();
    assert!(
        notes.contains("Finish OSP; solder mask black, silkscreen yellow; IPC-6012 class 3; laminate Tg at least 170 °C"),
        "{notes}"
    );
    assert!(notes.contains("exempt them from copper pullback"));
}

#[test]
fn an_order_the_fab_cannot_read_is_refused() {
    let d = scratch("bad");
    let out = d.join("o");
    let o = build(
        &spec(&d, "common-4l-1.6", "finish = \"gold\"\nipc_class = 4"),
        &out,
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("fab.finish = \"gold\": one of enig, enepig"),
        "{err}"
    );
    assert!(err.contains("fab.ipc_class = 4: 1, 2 or 3"), "{err}");
    assert!(!out.exists());
}

/// The annular-ring rule's basis is stated and checked (issue on fabrication output): by
/// default the ring is measured from the finished hole (the spec's and drill files' sizes),
/// and the notes give the least ring on both bases with the plating allowance (the demo's
/// 0.6 mm pads on 0.3 mm holes: 0.15 mm finished, 0.1 mm drilled with 0.1 mm over size, the
/// default allowance: common practice, no source). On the
/// drilled basis the same vias break a 0.125 mm rule and the spec is refused naming the pad
/// and its least size; 0.65 mm pads build, and the notes say which basis was checked. A
/// basis that is neither, and a router bit out of range, are refused naming the field.
#[test]
fn the_ring_rule_states_and_checks_its_basis_with_the_drill_allowance() {
    let d = scratch("ring");
    let out = d.join("o");
    let o = build(&spec(&d, "common-4l-1.6", ""), &out);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let notes = std::fs::read_to_string(out.join("J10/J10-fab-notes.md")).unwrap();
    assert!(
        notes.contains(
            "The annular-ring rule (0.125 mm) is measured from the finished hole: the least ring \
             on a plated hole here is 0.15 mm from the finished hole, 0.1 mm from the drilled hole."
        ),
        "{notes}"
    );
    // Drilled basis, the demo's vias: refused before anything is built.
    let drilled = "annular_ring_basis = \"drilled\"\ndrill_allowance_mm = 0.1";
    let o = build(&spec(&d, "common-4l-1.6", drilled), &d.join("o2"));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(err.contains("via.pad_mm") && err.contains("0.65"), "{err}");
    assert!(!d.join("o2").exists());
    // Larger pads on the drilled basis build and say so.
    let p = spec(&d, "common-4l-1.6", drilled);
    let text = std::fs::read_to_string(&p)
        .unwrap()
        .replace("pad_mm = 0.6", "pad_mm = 0.65");
    std::fs::write(&p, text).unwrap();
    let o = build(&p, &d.join("o3"));
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let notes = std::fs::read_to_string(d.join("o3/J10/J10-fab-notes.md")).unwrap();
    assert!(
        notes.contains("is measured from the drilled hole: the least ring on a plated hole here is 0.175 mm from the finished hole, 0.125 mm from the drilled hole"),
        "{notes}"
    );
    let o = build(
        &spec(
            &d,
            "common-4l-1.6",
            "annular_ring_basis = \"tool\"\nrouter_diameter_mm = 5",
        ),
        &d.join("o4"),
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("fab.annular_ring_basis") && err.contains("finished or drilled"),
        "{err}"
    );
    // A router bit out of its range is named with the range.
    assert!(
        err.contains("fab.router_diameter_mm") && err.contains("0.5") && err.contains("3.2"),
        "{err}"
    );
}
