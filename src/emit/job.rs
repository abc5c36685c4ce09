//! Gerber job file (`.gbrjob`, JSON): board description and the list of image files with
//! their file functions copied from the files themselves.

use crate::model::fab::FabProfile;
use crate::model::stackup::{Layer, Stackup};
use serde_json::{Value, json};

/// The job file of the board `name`. `files` are (path, Gerber text).
pub fn job(
    name: &str,
    stackup: &Stackup,
    fab: &FabProfile,
    size: (f64, f64),
    files: &[(String, String)],
) -> String {
    let mut stack = Vec::new();
    if let Some(m) = stackup.mask_top() {
        stack.push(json!({"Type": "SolderMask", "Thickness": m.thickness_mm, "Name": "Top mask"}));
    }
    let mut n = 0;
    for l in stackup.layers() {
        match l {
            Layer::Copper(c) => {
                n += 1;
                stack.push(
                    json!({"Type": "Copper", "Thickness": c.thickness_mm, "Name": format!("L{n}")}),
                );
            }
            Layer::Dielectric(d) => stack.push(json!({
                "Type": "Dielectric", "Thickness": d.thickness_mm, "Material": "FR4",
                "DielectricConstant": d.er, "LossTangent": d.loss_tangent, "Name": d.name
            })),
        }
    }
    if let Some(m) = stackup.mask_bottom() {
        stack.push(
            json!({"Type": "SolderMask", "Thickness": m.thickness_mm, "Name": "Bottom mask"}),
        );
    }
    let attrs: Vec<Value> = files
        .iter()
        .map(|(path, text)| {
            json!({
                "Path": path,
                "FileFunction": super::gerber::file_function_text(text),
                "FilePolarity": super::gerber::file_polarity_text(text),
            })
        })
        .collect();
    let rules = |layers: &str| {
        json!({
            "Layers": layers,
            "PadToPad": fab.min_space, "PadToTrack": fab.min_space,
            "TrackToTrack": fab.min_space, "MinLineWidth": fab.min_trace,
            "TrackToRegion": fab.min_space, "RegionToRegion": fab.min_space
        })
    };
    let v = json!({
        "Header": {
            "GenerationSoftware": {
                "Vendor": "loopwright project", "Application": "loopwright",
                "Version": env!("CARGO_PKG_VERSION")
            }
        },
        "GeneralSpecs": {
            "ProjectId": {"Name": name, "Revision": "A"},
            "Size": {"X": (size.0 * 1e3).round() / 1e3, "Y": (size.1 * 1e3).round() / 1e3},
            "LayerNumber": stackup.copper_count(),
            "BoardThickness": (stackup.thickness_mm() * 1e4).round() / 1e4,
            "ImpedanceControlled": true
        },
        "DesignRules": [rules("Outer"), rules("Inner")],
        "FilesAttributes": attrs,
        "MaterialStackup": stack
    });
    serde_json::to_string_pretty(&v).expect("plain JSON") + "\n"
}
