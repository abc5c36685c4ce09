//! Probe boards through the pipeline: spec → model → solved values → geometry → artwork →
//! design-rule check → files in memory, and a family written as one output folder.

use super::output::{FileEntry, artwork_files, write_atomically};
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
    pub response: crate::physics::predicted::ProbeResponse,
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
    let response = crate::physics::predicted::predict_any(
        p,
        &solved,
        &crate::physics::PredictOptions::default(),
    )?;
    let base = &p.folder;
    let (lo, hi) = board.bbox;
    let mut files = artwork_files(
        base,
        &artwork,
        &p.stackup,
        &p.fab,
        (hi.x - lo.x, hi.y - lo.y),
        &format!("{} — {}", p.name, p.size_text()),
    );
    let plot = match &response {
        crate::physics::predicted::ProbeResponse::Loop(r) => emit::plot::probe_factor_plot(
            &format!("{} probe factor (uniform H, 50 Ω)", p.name),
            &[(p.name.as_str(), emit::report::COLOURS[0], r)],
        ),
        crate::physics::predicted::ProbeResponse::Electric(r) => emit::plot::electric_factor_plot(
            &format!(
                "{} electric probe factor (E normal to the face, 50 Ω)",
                p.name
            ),
            &[(p.name.as_str(), emit::report::COLOURS[0], r)],
        ),
    };
    files.push((format!("{base}-response.svg"), plot.into_bytes()));
    files.push((format!("{base}.toml"), spec_copy.as_bytes().to_vec()));
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base}-fab-notes.md");
    names.push(notes_name.clone());
    let mut notes = emit::notes::notes(p, &solved, &board, &artwork, &names, &violations);
    notes.push_str(&match &response {
        crate::physics::predicted::ProbeResponse::Loop(r) => {
            emit::notes::predictions(p, &solved, r)
        }
        crate::physics::predicted::ProbeResponse::Electric(r) => {
            emit::notes::electric_predictions(r)
        }
    });
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
    // The lowest signal layer that still leaves room for every turn and a shield below.
    let lowest = n - p.turns.max(1) as usize;
    let hint = if p.signal_layer < lowest {
        format!(
            "; the signal via's open stub runs from L{} to L{n}: a signal layer nearer the bottom \
             (signal_layer = {lowest}) shortens it",
            p.signal_layer,
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

/// The spec text of one probe of a family: the shared settings and its own `[[probe]]`.
pub fn probe_spec_copy(spec: &ProbeFileSpec, index: usize, stackup_file: Option<&str>) -> String {
    let mut one = spec.clone();
    one.probe = vec![spec.probe[index].clone()];
    one.family = None;
    one.panel = None;
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
    // The probes are built on all cores; each build depends only on its probe (shared field
    // solutions are solved once, whoever asks first), so the files are those of a serial run.
    // The first refusal in the spec's order is reported, as a serial run would.
    use rayon::prelude::*;
    let results: Vec<Result<BuiltProbe, Error>> = family
        .probes
        .par_iter()
        .enumerate()
        .map(|(i, p)| {
            let copy = probe_spec_copy(spec, i, stackup_file.as_ref().map(|(n, _)| n.as_str()));
            build_probe(p, &copy, force)
        })
        .collect();
    let built = results.into_iter().collect::<Result<Vec<_>, _>>()?;
    Ok(FamilyBuild {
        family,
        probes: built,
        stackup_file,
    })
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
    let (family, built, entries) = family_files(spec, base, force, extra)?;
    write_atomically(out, &entries)?;
    Ok((family, built))
}

/// The files of a family's output folder in memory (each probe's folder, the summary, the
/// report, and `extra`); nothing is written.
///
/// A spec with a `[panel]` table also gets its panel's folder and the folders of the fixtures
/// the panel carries (fixture specs read relative to `base`).
#[allow(clippy::type_complexity)]
pub fn family_files(
    spec: &ProbeFileSpec,
    base: &Path,
    force: bool,
    extra: Vec<(PathBuf, Vec<u8>)>,
) -> Result<(Family, Vec<BuiltProbe>, Vec<(PathBuf, Vec<u8>)>), Error> {
    let load = |name: &str| -> Result<(crate::spec::fixture::FixtureFileSpec, PathBuf), Error> {
        let path = base.join(name);
        let text = std::fs::read_to_string(&path).map_err(|e| Error::Io {
            path: path.display().to_string(),
            source: e,
        })?;
        let shown = path.display().to_string();
        let spec: crate::spec::fixture::FixtureFileSpec = crate::spec::parse_toml(&text, &shown)?;
        let dir = path.parent().unwrap_or(Path::new(".")).to_path_buf();
        Ok((spec, dir))
    };
    family_files_with(spec, base, force, extra, &load)
}

/// [`family_files`] with the panel's fixture specs read by `load`.
#[allow(clippy::type_complexity)]
pub fn family_files_with(
    spec: &ProbeFileSpec,
    base: &Path,
    force: bool,
    extra: Vec<(PathBuf, Vec<u8>)>,
    load: &super::panel::FixtureLoader<'_>,
) -> Result<(Family, Vec<BuiltProbe>, Vec<(PathBuf, Vec<u8>)>), Error> {
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
        family_summary(&family, &built).into_bytes(),
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
    if let Some(ps) = &spec.panel {
        let panel = super::panel::build_panel(ps, &fam, &built, load, force)?;
        entries.extend(super::panel::panel_entries(&panel));
    }
    Ok((family, built, entries))
}

/// The family summary of built probes.
pub fn family_summary(family: &Family, built: &[BuiltProbe]) -> String {
    let rows: Vec<emit::summary::Row<'_>> = built
        .iter()
        .map(|b| emit::summary::Row {
            probe: &b.probe,
            solved: &b.solved,
            board: &b.board,
            violations: b.violations.len(),
        })
        .collect();
    emit::summary::summary(family, &rows, &predicted(built))
}
