//! Test-line fixtures through the pipeline, and a fixture spec loaded for calibration and
//! coupling predictions.

use super::output::{FileEntry, artwork_files};
use crate::artwork::Artwork;
use crate::drc::Violation;
use crate::emit;
use crate::error::Error;
use std::path::{Path, PathBuf};

/// A test-line fixture carried through the pipeline, with its files in memory.
#[derive(Debug, Clone)]
pub struct BuiltFixture {
    /// The validated fixture.
    pub fixture: crate::model::fixture::Fixture,
    /// Its solved values.
    pub solved: crate::solve::fixture::SolvedFixture,
    /// Its board model.
    pub board: crate::geom::fixture::FixtureBoard,
    /// Its artwork.
    pub artwork: Artwork,
    /// Design-rule violations (empty unless forced).
    pub violations: Vec<Violation>,
    /// Its files: (name inside its folder, content).
    pub files: Vec<FileEntry>,
}

/// Builds a fixture in memory. A copy of its spec is written beside its files (with the stackup
/// file, if the stackup is a file, as `stackup.toml`).
pub fn build_fixture(
    spec: &crate::spec::fixture::FixtureFileSpec,
    base: &Path,
    force: bool,
) -> Result<BuiltFixture, Error> {
    let f = crate::model::fixture::fixture_from_spec(spec, base)?;
    let solved = crate::solve::fixture::solve(&f)?;
    let board = crate::geom::fixture::build(&f, &solved);
    let artwork = crate::artwork::fixture::compose(&f, &board);
    let violations = crate::drc::check_fixture(&f, &solved, &board, &artwork);
    if !violations.is_empty() && !force {
        return Err(Error::Drc {
            probe: f.name.clone(),
            violations: violations.clone(),
        });
    }
    let base_name = f.folder.clone();
    let mut files = artwork_files(
        &base_name,
        &artwork,
        &f.stackup,
        &f.fab,
        (f.length, f.width),
        &format!(
            "{} — {} Ω test line, w {:.3} mm",
            f.name,
            crate::model::probe::num(f.target_z0),
            solved.width
        ),
    );
    files.push((
        format!("{base_name}-predicted.s2p"),
        crate::physics::launch::fixture_touchstone(&f, &solved).into_bytes(),
    ));
    let mut spec_copy = spec.clone();
    let stackup_name = spec
        .fixture
        .as_ref()
        .and_then(|x| x.stackup.clone())
        .unwrap_or_default();
    if !stackup_name.is_empty() && crate::model::stackup::builtin(&stackup_name).is_none() {
        let path = base.join(&stackup_name);
        let text = std::fs::read(&path).map_err(|e| Error::Io {
            path: path.display().to_string(),
            source: e,
        })?;
        files.push(("stackup.toml".into(), text));
        if let Some(x) = spec_copy.fixture.as_mut() {
            x.stackup = Some("stackup.toml".into());
        }
    }
    files.push((
        format!("{base_name}.toml"),
        format!(
            "# Spec of fixture '{}', as built by loopwright {}.\n{}",
            f.name,
            env!("CARGO_PKG_VERSION"),
            toml::to_string(&spec_copy).unwrap_or_default()
        )
        .into_bytes(),
    ));
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base_name}-fab-notes.md");
    names.push(notes_name.clone());
    let notes = emit::notes::fixture_notes(&f, &solved, &artwork, &names, &violations);
    files.push((notes_name, notes.into_bytes()));
    Ok(BuiltFixture {
        fixture: f,
        solved,
        board,
        artwork,
        violations,
        files,
    })
}

/// The fixture's files as entries under its folder.
pub fn fixture_entries(b: &BuiltFixture) -> Vec<(PathBuf, Vec<u8>)> {
    b.files
        .iter()
        .map(|(name, bytes)| (PathBuf::from(&b.fixture.folder).join(name), bytes.clone()))
        .collect()
}

/// Reads, validates and solves a fixture spec file (for calibration and coupling predictions).
pub fn load_fixture(
    path: &Path,
) -> Result<
    (
        crate::model::fixture::Fixture,
        crate::solve::fixture::SolvedFixture,
    ),
    Error,
> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::Io {
        path: path.display().to_string(),
        source: e,
    })?;
    let spec: crate::spec::fixture::FixtureFileSpec =
        crate::spec::parse_toml(&text, &path.display().to_string())?;
    let base = path.parent().unwrap_or(Path::new("."));
    let f = crate::model::fixture::fixture_from_spec(&spec, base)
        .map_err(|e| crate::spec::with_lines(&text, e))?;
    let s = crate::solve::fixture::solve(&f)?;
    Ok((f, s))
}
