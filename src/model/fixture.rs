//! The validated test-line fixture: a 50 Ω line on an outer layer between two coaxial
//! edge-launch footprints, over ground planes stitched with vias.

use super::fab::FabProfile;
use super::probe::{
    Connector, Vias, connector_from_spec, sanitise, stackup_from_spec, vias_from_spec,
};
use super::stackup::Stackup;
use crate::error::{Error, FieldError, check_range};
use crate::spec::fixture::FixtureFileSpec;
use std::path::Path;

/// The test line's structure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FixtureLine {
    /// Microstrip (coated when the stackup has mask on the line's side), ground pour kept
    /// `keepout` away from the line's edges.
    Microstrip {
        /// Line edge to ground pour, mm.
        keepout: Option<f64>,
    },
    /// Grounded coplanar waveguide with this gap, mm.
    Cpwg {
        /// Line edge to coplanar ground, mm.
        gap: f64,
    },
}

impl FixtureLine {
    /// The spec's spelling.
    pub fn name(&self) -> &'static str {
        match self {
            FixtureLine::Microstrip { .. } => "microstrip",
            FixtureLine::Cpwg { .. } => "cpwg",
        }
    }
}

/// Defaults of the fixture format.
pub mod defaults {
    /// Built-in stackup: the two-layer 1.6 mm build (a wide line over a thick dielectric).
    pub const STACKUP: &str = "common-2l-1.6";
    /// Board length along the line, mm (three times a 20 mm loop, plus the connectors).
    pub const LENGTH: f64 = 80.0;
    /// Board width, mm.
    pub const WIDTH: f64 = 40.0;
    /// Microstrip keepout in dielectric heights (common practice: coplanar ground three
    /// heights or more from the edge leaves a microstrip nearly unchanged; no single source).
    pub const KEEPOUT_H: f64 = 3.0;
    /// Grounded-coplanar gap, mm (our default: a few fab minimum spaces).
    pub const CPWG_GAP: f64 = 0.3;
    /// Taper length per mm of width change from the line to the connector's centre pad (our
    /// construction rule, no source: a gentle step whose length stays electrically short).
    pub const TAPER_RATIO: f64 = 1.5;
    /// Shortest uniform line between the tapers, mm (our rule: room for a small probe on the
    /// centre mark away from the tapers' fields).
    pub const MIN_UNIFORM: f64 = 10.0;
}

/// A validated fixture.
#[derive(Debug, Clone, PartialEq)]
pub struct Fixture {
    /// Name as given.
    pub name: String,
    /// Folder-safe name.
    pub folder: String,
    /// Stackup.
    pub stackup: Stackup,
    /// Copper layer of the line (1 or the last).
    pub line_layer: usize,
    /// Structure.
    pub line: FixtureLine,
    /// Target Z0, Ω.
    pub target_z0: f64,
    /// Board length along the line, mm.
    pub length: f64,
    /// Board width, mm.
    pub width: f64,
    /// Stitching vias.
    pub vias: Vias,
    /// Connector footprint (both ends).
    pub connector: Connector,
    /// Fab profile.
    pub fab: FabProfile,
    /// Extra silkscreen text.
    pub silk_text: String,
}

impl Fixture {
    /// True when the line is on the top layer.
    pub fn on_top(&self) -> bool {
        self.line_layer == 1
    }
}

/// Validates a fixture spec; `base` is the spec file's folder. Every problem is reported.
pub fn fixture_from_spec(spec: &FixtureFileSpec, base: &Path) -> Result<Fixture, Error> {
    let mut out = Vec::new();
    let f = spec.fixture.clone().unwrap_or_else(|| {
        out.push(FieldError::new(
            "fixture",
            "(missing)",
            "a [fixture] table with at least a name",
        ));
        Default::default()
    });
    let name = f.name.clone().unwrap_or_else(|| "test-line".into());
    let folder = match sanitise(&name) {
        Some(s) => s,
        None => {
            out.push(FieldError::new(
                "fixture.name",
                format!("\"{name}\""),
                "must contain a letter or digit (it names the output folder)",
            ));
            "fixture".into()
        }
    };
    crate::model::probe::check_name_length(&mut out, "fixture.name", &name, &folder);
    crate::model::probe::check_text(&mut out, "fixture.name", &name, true);
    let stackup_name = f
        .stackup
        .clone()
        .unwrap_or_else(|| defaults::STACKUP.into());
    let stackup = stackup_from_spec("fixture.stackup", &stackup_name, base, &mut out);
    let n = stackup.as_ref().map(|s| s.copper_count()).unwrap_or(2);
    // Signed, so that a negative layer is refused here with its range.
    let line_raw = f.line_layer.unwrap_or(1);
    let line_layer = usize::try_from(line_raw).unwrap_or(1);
    if line_raw != 1 && line_raw != n as i64 {
        out.push(FieldError::new(
            "fixture.line_layer",
            line_raw,
            format!("must be an outer layer of the stackup: 1 or {n}"),
        ));
    }
    let fab = FabProfile::from_spec(spec.fab.as_ref(), &mut out);
    let line = match f.structure.as_deref() {
        None | Some("microstrip") => {
            if let Some(k) = f.ground_keepout_mm {
                check_range(
                    &mut out,
                    "fixture.ground_keepout_mm",
                    k,
                    fab.min_space,
                    50.0,
                );
            }
            if let Some(g) = f.cpwg_gap_mm {
                out.push(FieldError::new(
                    "fixture.cpwg_gap_mm",
                    g,
                    "applies to structure = \"cpwg\" only (microstrip takes ground_keepout_mm)",
                ));
            }
            FixtureLine::Microstrip {
                keepout: f.ground_keepout_mm,
            }
        }
        Some("cpwg") => {
            let gap = f.cpwg_gap_mm.unwrap_or(defaults::CPWG_GAP);
            check_range(&mut out, "fixture.cpwg_gap_mm", gap, fab.min_space, 5.0);
            if let Some(k) = f.ground_keepout_mm {
                out.push(FieldError::new(
                    "fixture.ground_keepout_mm",
                    k,
                    "applies to structure = \"microstrip\" only (cpwg takes cpwg_gap_mm)",
                ));
            }
            FixtureLine::Cpwg { gap }
        }
        Some(other) => {
            out.push(FieldError::new(
                "fixture.structure",
                format!("\"{other}\""),
                "must be \"microstrip\" or \"cpwg\"",
            ));
            FixtureLine::Microstrip { keepout: None }
        }
    };
    let target_z0 = f.target_z0_ohms.unwrap_or(50.0);
    check_range(&mut out, "fixture.target_z0_ohms", target_z0, 10.0, 200.0);
    let length = f.length_mm.unwrap_or(defaults::LENGTH);
    check_range(&mut out, "fixture.length_mm", length, 20.0, 500.0);
    let width = f.width_mm.unwrap_or(defaults::WIDTH);
    check_range(&mut out, "fixture.width_mm", width, 10.0, 300.0);
    let vias = vias_from_spec(spec.via.as_ref(), &fab, &mut out);
    let connector = connector_from_spec(spec.connector.as_ref(), &fab, &mut out);
    crate::model::probe::edge_rule_fits_connector(&connector, &fab, &mut out);
    if connector.ground_hole_drill > 0.0 {
        out.push(FieldError::new(
            "connector.ground_hole_drill_mm",
            connector.ground_hole_drill,
            "must be 0 on a fixture: its ground pads reach the planes through the tab vias \
             beside them",
        ));
    }
    let need =
        2.0 * (connector.ground_pad_offset + connector.ground_pad_width / 2.0 + fab.copper_to_edge);
    if width.is_finite() && width < need {
        out.push(FieldError::new(
            "fixture.width_mm",
            width,
            format!("must hold the connector's ground pads: at least {need:.3} mm"),
        ));
    }
    let silk_text = f.silk_text.clone().unwrap_or_default();
    match stackup {
        Some(stackup) if out.is_empty() => Ok(Fixture {
            name,
            folder,
            stackup,
            line_layer,
            line,
            target_z0,
            length,
            width,
            vias,
            connector,
            fab,
            silk_text,
        }),
        _ => Err(Error::Invalid(out)),
    }
}
