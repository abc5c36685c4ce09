//! The whole pipeline for probe boards: spec → model → solved values → geometry → artwork →
//! design-rule check → files, written atomically (temporary folder, then rename).

use crate::artwork::{Artwork, compose};
use crate::drc::{Violation, check};
use crate::emit;
use crate::error::Error;
use crate::geom::{Board, build};
use crate::model::probe::{Family, Probe, family_from_spec};
use crate::solve::probe::{SolvedProbe, solve};
use crate::spec::probe::ProbeFileSpec;
use std::path::{Path, PathBuf};

/// One probe carried through the pipeline, with its files in memory.
#[derive(Debug, Clone)]
pub struct BuiltProbe {
    /// The validated probe.
    pub probe: Probe,
    /// Its solved values.
    pub solved: SolvedProbe,
    /// Its board model.
    pub board: Board,
    /// Its artwork.
    pub artwork: Artwork,
    /// Design-rule violations (empty unless forced).
    pub violations: Vec<Violation>,
    /// Warnings (a launch above its return-loss limit).
    pub warnings: Vec<String>,
    /// Predicted response at the default prediction options.
    pub response: crate::physics::Response,
    /// Its files: (name inside the probe's folder, content).
    pub files: Vec<(String, Vec<u8>)>,
}

/// Builds one probe in memory. `spec_copy` is the TOML written beside its files.
pub fn build_probe(p: &Probe, spec_copy: &str, force: bool) -> Result<BuiltProbe, Error> {
    let solved = solve(p)?;
    let mut warnings = Vec::new();
    if let Some(w) = launch_over_limit(p, &solved) {
        if p.connector.refuse_above_limit {
            return Err(Error::Invalid(vec![crate::error::FieldError::new(
                "connector.refuse_above_limit",
                "true",
                w,
            )]));
        }
        warnings.push(w);
    }
    let board = build(p, &solved);
    let artwork = compose(p, &board);
    let violations = check(p, &solved, &board, &artwork);
    if !violations.is_empty() && !force {
        return Err(Error::Drc {
            probe: p.name.clone(),
            violations: violations.clone(),
        });
    }
    let response = crate::physics::predict(p, &solved, &crate::physics::PredictOptions::default())?;
    let base = &p.folder;
    let (lo, hi) = board.bbox;
    let mut files = artwork_files(
        base,
        &artwork,
        &p.stackup,
        &p.fab,
        (hi.x - lo.x, hi.y - lo.y),
        &format!("{} — {}", p.name, p.shape.size_text()),
    );
    files.push((
        format!("{base}-response.svg"),
        emit::plot::probe_factor_plot(
            &format!("{} probe factor (uniform H, 50 Ω)", p.name),
            &[(p.name.as_str(), emit::report::COLOURS[0], &response)],
        )
        .into_bytes(),
    ));
    files.push((format!("{base}.toml"), spec_copy.as_bytes().to_vec()));
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base}-fab-notes.md");
    names.push(notes_name.clone());
    let mut notes = emit::notes::notes(p, &solved, &board, &artwork, &names, &violations);
    notes.push_str(&emit::notes::predictions(p, &solved, &response));
    files.push((notes_name, notes.into_bytes()));
    Ok(BuiltProbe {
        probe: p.clone(),
        solved,
        board,
        artwork,
        violations,
        warnings,
        response,
        files,
    })
}

/// The launch budget's verdict: a message when the launch's worst return loss up to f_max is
/// above the connector's limit, with what would shorten the via's stub.
pub fn launch_over_limit(p: &Probe, s: &SolvedProbe) -> Option<String> {
    let (worst, at) = s.launch.worst_s11;
    let limit = p.connector.return_loss_limit_db;
    if worst.is_nan() || worst <= limit {
        return None;
    }
    let n = p.stackup.copper_count();
    let hint = if p.signal_layer + 1 < n {
        format!(
            "; the signal via's open stub runs from L{} to L{n}: a loop layer nearer the bottom \
             (signal_layer = {}) shortens it",
            p.signal_layer,
            n - 1
        )
    } else {
        String::new()
    };
    Some(format!(
        "probe '{}': the connector launch's worst return loss up to f_max is {worst:.1} dB \
         (at {:.0} MHz), above connector.return_loss_limit_db = {limit}{hint}",
        p.name,
        at / 1e6
    ))
}

/// The files every board has, from its artwork: Gerber layers, drill files, the Gerber job file,
/// the composite SVG preview and one SVG per layer. Names start with `base`.
pub fn artwork_files(
    base: &str,
    artwork: &Artwork,
    stackup: &crate::model::stackup::Stackup,
    fab: &crate::model::fab::FabProfile,
    size: (f64, f64),
    title: &str,
) -> Vec<FileEntry> {
    let same = format!("loopwright-{base}");
    let gerbers: Vec<(String, String)> = emit::gerber::all(artwork, &same)
        .into_iter()
        .map(|(suffix, text)| (format!("{base}-{suffix}"), text))
        .collect();
    let n = stackup.copper_count();
    let mut files: Vec<(String, Vec<u8>)> = gerbers
        .iter()
        .map(|(name, text)| (name.clone(), text.clone().into_bytes()))
        .collect();
    files.push((
        format!("{base}-PTH.drl"),
        emit::excellon::drill_file(&artwork.drills, true, n).into_bytes(),
    ));
    // A non-plated drill file only when there are non-plated holes (an empty drill file is
    // not a file readers accept).
    if artwork.drills.iter().any(|d| !d.plated) {
        files.push((
            format!("{base}-NPTH.drl"),
            emit::excellon::drill_file(&artwork.drills, false, n).into_bytes(),
        ));
    }
    files.push((
        format!("{base}.gbrjob"),
        emit::job::job(base, stackup, fab, size, &gerbers).into_bytes(),
    ));
    files.push((
        format!("{base}.svg"),
        emit::svg::composite(artwork, title).into_bytes(),
    ));
    for l in &artwork.copper {
        files.push((
            format!("{base}-L{}.svg", l.n),
            emit::svg::copper_layer(artwork, l).into_bytes(),
        ));
    }
    files.push((
        format!("{base}-mask-top.svg"),
        emit::svg::openings_layer(artwork, &artwork.mask_top, "mask-top").into_bytes(),
    ));
    files.push((
        format!("{base}-mask-bottom.svg"),
        emit::svg::openings_layer(artwork, &artwork.mask_bottom, "mask-bottom").into_bytes(),
    ));
    for (strokes, id) in [
        (&artwork.silk_top, "legend-top"),
        (&artwork.silk_bottom, "legend-bottom"),
    ] {
        if !strokes.is_empty() {
            files.push((
                format!("{base}-{id}.svg"),
                emit::svg::legend_layer(artwork, strokes, id).into_bytes(),
            ));
        }
    }
    files
}

/// The spec text of one probe of a family: the shared settings and its own `[[probe]]`.
pub fn probe_spec_copy(spec: &ProbeFileSpec, index: usize, stackup_file: Option<&str>) -> String {
    let mut one = spec.clone();
    one.probe = vec![spec.probe[index].clone()];
    one.family = None;
    if let Some(f) = stackup_file {
        one.stackup = Some(f.to_string());
    }
    let body = toml::to_string(&one).unwrap_or_default();
    format!(
        "# Spec of probe '{}', as built by loopwright {}.\n{body}",
        spec.probe[index].name.clone().unwrap_or_default(),
        env!("CARGO_PKG_VERSION")
    )
}

/// A file in memory: (name, bytes).
pub type FileEntry = (String, Vec<u8>);

/// A whole family built in memory.
#[derive(Debug, Clone)]
pub struct FamilyBuild {
    /// The validated family.
    pub family: Family,
    /// Each probe.
    pub probes: Vec<BuiltProbe>,
    /// The stackup file that travels with each probe's spec copy, if the stackup is a file.
    pub stackup_file: Option<FileEntry>,
}

/// Validates and builds every probe of a spec in memory; nothing is written.
pub fn build_family(spec: &ProbeFileSpec, base: &Path, force: bool) -> Result<FamilyBuild, Error> {
    let family = family_from_spec(spec, base)?;
    // A stackup given as a file travels with each probe's spec copy.
    let stackup_file = match &spec.stackup {
        Some(s) if crate::model::stackup::builtin(s).is_none() => {
            let path = base.join(s);
            let text = std::fs::read(&path).map_err(|e| Error::Io {
                path: path.display().to_string(),
                source: e,
            })?;
            Some(("stackup.toml".to_string(), text))
        }
        _ => None,
    };
    let mut built = Vec::new();
    for (i, p) in family.probes.iter().enumerate() {
        let copy = probe_spec_copy(spec, i, stackup_file.as_ref().map(|(n, _)| n.as_str()));
        built.push(build_probe(p, &copy, force)?);
    }
    Ok(FamilyBuild {
        family,
        probes: built,
        stackup_file,
    })
}

/// Writes entries (relative path, bytes) as the output folder `out`: staged beside it and
/// switched into place at once, replacing only an earlier loopwright output (checked against
/// its manifest); see [`crate::output`].
pub fn write_atomically(out: &Path, entries: &[(PathBuf, Vec<u8>)]) -> Result<(), Error> {
    crate::output::write_output(out, entries)
}

/// The family summary (Markdown) written at the top of the output folder.
pub fn summary(family: &Family, built: &[BuiltProbe]) -> String {
    let mut o = format!(
        "# {}: probe family\n\nBuilt by loopwright {}. Size = mean diameter (round) or side \
         lengths (square, rectangle) of the loop trace's centreline.\n\n\
         | probe | shape | size | trace w (mm) | Z0 (Ω) | width from | board (mm) | vias | DRC |\n\
         |---|---|---|---|---|---|---|---|---|\n",
        family.name,
        env!("CARGO_PKG_VERSION")
    );
    for b in built {
        let (lo, hi) = b.board.bbox;
        o.push_str(&format!(
            "| {} | {} | {} | {:.3} | {:.2} | {} | {:.1} × {:.1} | {} | {} |\n",
            b.probe.name,
            b.probe.shape.kind(),
            b.probe.shape.size_text(),
            b.solved.trace_width,
            b.solved.solution.z0,
            b.solved.solution.method,
            hi.x - lo.x,
            hi.y - lo.y,
            b.board.vias.len(),
            if b.violations.is_empty() {
                "clean".to_string()
            } else {
                format!("{} VIOLATIONS (forced)", b.violations.len())
            }
        ));
    }
    o.push_str("\n## Predicted response\n\n");
    o.push_str(&crate::emit::report::comparison_markdown(&predicted(built)));
    o.push_str(&format!("\n{}\n", crate::emit::cautions::CAUTIONS));
    o
}

/// The predictions of built probes, for the report and the summary.
pub fn predicted(built: &[BuiltProbe]) -> Vec<crate::physics::predicted::Predicted> {
    built
        .iter()
        .map(|b| crate::physics::predicted::Predicted {
            probe: b.probe.clone(),
            solved: b.solved.clone(),
            response: b.response.clone(),
        })
        .collect()
}

/// Builds a spec and writes its family under `out`; returns what was built.
pub fn build_to_dir(
    spec: &ProbeFileSpec,
    base: &Path,
    out: &Path,
    force: bool,
    extra: Vec<(PathBuf, Vec<u8>)>,
) -> Result<(Family, Vec<BuiltProbe>), Error> {
    let FamilyBuild {
        family,
        probes: built,
        stackup_file,
    } = build_family(spec, base, force)?;
    let mut entries = extra;
    for b in &built {
        for (name, bytes) in &b.files {
            entries.push((PathBuf::from(&b.probe.folder).join(name), bytes.clone()));
        }
        if let Some((name, bytes)) = &stackup_file {
            entries.push((PathBuf::from(&b.probe.folder).join(name), bytes.clone()));
        }
    }
    let fam = crate::model::probe::sanitise(&family.name).unwrap_or_else(|| "family".into());
    entries.push((
        PathBuf::from(format!("{fam}-summary.md")),
        summary(&family, &built).into_bytes(),
    ));
    let previews: Vec<String> = built
        .iter()
        .map(|b| {
            b.files
                .iter()
                .find(|(n, _)| *n == format!("{}.svg", b.probe.folder))
                .map(|(_, t)| String::from_utf8_lossy(t).to_string())
                .unwrap_or_default()
        })
        .collect();
    entries.push((
        PathBuf::from(format!("{fam}-report.html")),
        crate::emit::report::html(&family.name, &predicted(&built), &previews).into_bytes(),
    ));
    write_atomically(out, &entries)?;
    Ok((family, built))
}

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
    let f = crate::model::fixture::fixture_from_spec(&spec, base)?;
    let s = crate::solve::fixture::solve(&f)?;
    Ok((f, s))
}
