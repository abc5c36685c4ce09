//! A family's fabrication panel through the pipeline: the `[panel]` table validated, its
//! fixtures built, the boards laid out with tabs (geometry), merged into one artwork, checked,
//! and written as the panel's own folder (Gerber layers, one PTH and one NPTH drill file, the
//! job file, an SVG of the panel, the panel notes).

use super::fixture::{BuiltFixture, build_fixture};
use super::output::{FileEntry, artwork_files};
use super::probe::BuiltProbe;
use crate::artwork::Artwork;
use crate::drc::{PanelViolation, check_panel};
use crate::error::{Error, FieldError};
use crate::geom::panel::{Blank, PanelLayout, layout};
use crate::geom::rect;
use crate::model::panel::{Panel, panel_from_spec};
use crate::spec::fixture::FixtureFileSpec;
use crate::spec::panel::PanelSpec;
use geo::Polygon;
use std::path::{Path, PathBuf};

/// Reads a fixture spec a panel names: its parsed spec and the folder its paths are relative
/// to.
pub type FixtureLoader<'a> = dyn Fn(&str) -> Result<(FixtureFileSpec, PathBuf), Error> + 'a;

/// A built panel.
#[derive(Debug, Clone)]
pub struct BuiltPanel {
    /// The validated panel.
    pub panel: Panel,
    /// Its layout.
    pub layout: PanelLayout,
    /// Its merged artwork.
    pub artwork: Artwork,
    /// The name of each placed board.
    pub names: Vec<String>,
    /// The fixtures built for it.
    pub fixtures: Vec<BuiltFixture>,
    /// Panel rule violations (empty unless forced).
    pub violations: Vec<PanelViolation>,
    /// Its files (inside its folder).
    pub files: Vec<FileEntry>,
}

/// Where tabs may not go on a probe (board coordinates), with the reasons: each zone reaches
/// a router bit beyond the board, so a neighbour's tab cannot land on it either.
fn probe_keep_outs(b: &BuiltProbe, router: f64) -> Vec<(Polygon<f64>, String)> {
    let ring_bottom = b.board.edge_y + b.probe.handle.length;
    let con = &b.probe.connector;
    let keep = con.ground_pad_length.max(con.centre_pad_length) + router;
    let (lo, hi) = b.board.bbox;
    let (x0, x1) = (lo.x - router, hi.x + router);
    vec![
        (
            rect(x0, ring_bottom, x1, hi.y + router),
            if b.probe.kind.electrode().is_some() {
                "the face round the electrode (its tip and its sides)".to_string()
            } else {
                "the loop (its tip, its sides and inside it)".to_string()
            },
        ),
        (
            rect(x0, b.board.edge_y - router, x1, b.board.edge_y + keep),
            "the connector edge and the connector's pads".to_string(),
        ),
    ]
}

/// Where tabs may not go on a fixture: both connector edges and their pads (reaching a router
/// bit beyond the board).
fn fixture_keep_outs(f: &BuiltFixture, router: f64) -> Vec<(Polygon<f64>, String)> {
    let con = &f.fixture.connector;
    let keep = con.ground_pad_length.max(con.centre_pad_length) + router;
    let (l2, w2) = (f.fixture.length / 2.0, f.fixture.width / 2.0);
    let (y0, y1) = (-w2 - router, w2 + router);
    let why = "the connector edges and the connectors' pads".to_string();
    vec![
        (rect(-l2 - router, y0, -l2 + keep, y1), why.clone()),
        (rect(l2 - keep, y0, l2 + router, y1), why),
    ]
}

/// A board's impedance requirement, as the panel notes state it.
fn requirement(
    what: &str,
    target: f64,
    line: &crate::solve::impedance::Line,
    layer: usize,
    width: (&str, f64),
    sol: &crate::solve::impedance::Solution,
) -> String {
    format!(
        "{what}, {} Ω {} on L{layer}, {} {:.3} mm ({:.2} Ω by {})",
        crate::model::probe::num(target),
        line.structure().name(),
        width.0,
        width.1,
        sol.z0,
        sol.method
    )
}

/// The outline of an artwork as a polygon (its profile: exterior, then milled interiors).
fn outline_of(a: &Artwork) -> Polygon<f64> {
    let ls = |r: &Vec<kurbo::Point>| {
        geo::LineString::from(r.iter().map(|p| (p.x, p.y)).collect::<Vec<_>>())
    };
    Polygon::new(ls(&a.profile[0]), a.profile[1..].iter().map(ls).collect())
}

/// Builds the panel of a family: `load` reads a fixture spec named in `panel.fixtures` (and
/// gives the folder its paths are relative to).
pub fn build_panel(
    spec: &PanelSpec,
    family: &str,
    probes: &[BuiltProbe],
    load: &FixtureLoader<'_>,
    force: bool,
) -> Result<BuiltPanel, Error> {
    let Some(first) = probes.first() else {
        return Err(Error::Invalid(vec![FieldError::new(
            "panel",
            family,
            "a panel needs at least one probe",
        )]));
    };
    let fab = first.probe.fab;
    let panel = panel_from_spec(spec, family, &fab)?;
    let stackup = &first.probe.stackup;
    let mut fixtures = Vec::new();
    for (i, path) in panel.fixtures.iter().enumerate() {
        let (fs, base) = load(path)?;
        let f = build_fixture(&fs, &base, force)?;
        if f.fixture.stackup != *stackup {
            return Err(Error::Invalid(vec![FieldError::new(
                format!("panel.fixtures[{}]", i + 1),
                path,
                format!(
                    "uses stackup '{}'; a panel holds boards of one stackup (the family's '{}')",
                    f.fixture.stackup.name(),
                    stackup.name()
                ),
            )]));
        }
        fixtures.push(f);
    }
    let mut blanks = Vec::new();
    let mut arts: Vec<&Artwork> = Vec::new();
    let mut kinds: Vec<String> = Vec::new();
    for b in probes {
        for k in 1..=panel.copies {
            let name = if panel.copies > 1 {
                format!("{}-{k}", b.probe.name)
            } else {
                b.probe.name.clone()
            };
            blanks.push(Blank {
                name,
                outline: outline_of(&b.artwork),
                keep_outs: probe_keep_outs(b, panel.router),
            });
            arts.push(&b.artwork);
            kinds.push(requirement(
                "probe",
                b.probe.target_z0,
                &b.solved.line,
                b.probe.signal_layer,
                ("trace", b.solved.trace_width),
                &b.solved.solution,
            ));
        }
    }
    for f in &fixtures {
        blanks.push(Blank {
            name: f.fixture.name.clone(),
            outline: outline_of(&f.artwork),
            keep_outs: fixture_keep_outs(f, panel.router),
        });
        arts.push(&f.artwork);
        kinds.push(requirement(
            "test-line fixture",
            f.fixture.target_z0,
            &f.solved.line,
            f.fixture.line_layer,
            ("line", f.solved.width),
            &f.solved.solution,
        ));
    }
    let lay = layout(&panel, &blanks)?;
    let names: Vec<String> = blanks.iter().map(|b| b.name.clone()).collect();
    let artwork = crate::artwork::panel::compose(&panel, &lay, &arts, &names, fab.silk_width);
    let violations = check_panel(&panel, &lay, &artwork, &names, &fab);
    if !violations.is_empty() && !force {
        return Err(Error::Invalid(
            violations
                .iter()
                .map(|v| FieldError::new("panel", v.rule.name(), v.to_string()))
                .collect(),
        ));
    }
    let base = panel.folder.clone();
    let mut files = artwork_files(
        &base,
        &artwork,
        stackup,
        &fab,
        lay.size,
        &format!("{} — {} boards", panel.name, names.len()),
    );
    let mut listed: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base}-panel-notes.md");
    listed.push(notes_name.clone());
    let notes = crate::emit::notes::panel_notes(
        &panel,
        &lay,
        &names,
        &kinds,
        stackup,
        &fab,
        &violations,
        &listed,
    );
    files.push((notes_name, notes.into_bytes()));
    Ok(BuiltPanel {
        panel,
        layout: lay,
        artwork,
        names,
        fixtures,
        violations,
        files,
    })
}

/// The panel's files, and its fixtures' folders, as entries under the output folder.
pub fn panel_entries(b: &BuiltPanel) -> Vec<(PathBuf, Vec<u8>)> {
    let mut v: Vec<(PathBuf, Vec<u8>)> = b
        .files
        .iter()
        .map(|(n, t)| (Path::new(&b.panel.folder).join(n), t.clone()))
        .collect();
    for f in &b.fixtures {
        v.extend(super::fixture::fixture_entries(f));
    }
    v
}
