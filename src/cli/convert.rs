//! `loopwright convert`: spectrum-analyzer readings to field strength.

use crate::calib::convert::{Gain, convert, read_table, to_csv};
use crate::calib::export::Readings;
use crate::error::{Error, FieldError, check_range};
use std::path::{Path, PathBuf};

/// Arguments of `loopwright convert`.
#[derive(Debug, clap::Args)]
#[command(allow_negative_numbers = true, after_help = super::CAUTIONS)]
pub struct ConvertArgs {
    /// Analyzer readings: CSV with header `freq_hz,level_dbm` or `freq_hz,level_dbuv`, or an
    /// analyzer export (metadata lines before a header such as `Frequency [Hz];Level [dBm]`,
    /// `;`, tab or `,` separators, decimal commas, several level columns; docs/file-formats.md).
    #[arg(long, value_name = "FILE.csv")]
    pub readings: PathBuf,
    /// Probe factor: CSV with header `freq_hz,pf_db_s_per_m` (a loop's, predicted or
    /// calibrated: the output is H) or `freq_hz,ef_db_per_m` (an electric probe's: the output
    /// is E).
    #[arg(long, value_name = "FILE.csv")]
    pub factor: PathBuf,
    /// Preamplifier gain, dB (0 when there is none).
    #[arg(long = "gain-db", value_name = "G", conflicts_with = "gain")]
    pub gain_db: Option<f64>,
    /// Preamplifier gain table: CSV with header `freq_hz,gain_db`.
    #[arg(long, value_name = "FILE.csv")]
    pub gain: Option<PathBuf>,
    /// Attenuator between probe and analyzer, dB (added back).
    #[arg(long = "atten-db", value_name = "A", default_value_t = 0.0)]
    pub atten_db: f64,
    /// Cable loss, dB (added back).
    #[arg(long = "cable-db", value_name = "C", default_value_t = 0.0)]
    pub cable_db: f64,
    /// Output CSV (`freq_hz,h_dbua_per_m,h_a_per_m,b_dbpt,v_probe_dbuv` from a loop's factor,
    /// `freq_hz,e_dbuv_per_m,e_v_per_m,v_probe_dbuv` from an electric probe's; with several
    /// level columns, those per trace with the suffix `_t1`, `_t2`...).
    #[arg(long, value_name = "FILE.csv")]
    pub out: PathBuf,
    /// Also draw the field strength against frequency as an SVG plot.
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<PathBuf>,
    /// Extend the probe-factor and gain tables' end segments to readings outside them (not
    /// past the factor's usable band, when its comment lines state one, without --beyond-band).
    #[arg(long)]
    pub extrapolate: bool,
    /// With --extrapolate: let the probe factor reach past its stated usable band too.
    #[arg(long = "beyond-band", requires = "extrapolate")]
    pub beyond_band: bool,
}

pub(super) fn run(a: &ConvertArgs) -> Result<(), Error> {
    let mut errs = Vec::new();
    if let Some(g) = a.gain_db {
        check_range(&mut errs, "--gain-db", g, -100.0, 100.0);
    }
    check_range(&mut errs, "--atten-db", a.atten_db, 0.0, 200.0);
    check_range(&mut errs, "--cable-db", a.cable_db, 0.0, 100.0);
    if a.gain_db.is_none() && a.gain.is_none() {
        errs.push(FieldError::new(
            "--gain-db",
            "(missing)",
            "give the preamplifier gain (--gain-db 0 when there is none) or a table (--gain FILE.csv)",
        ));
    }
    // Outputs must not be inputs, each other, or folders.
    let same = |a: &Path, b: &Path| {
        a == b
            || matches!(
                (std::fs::canonicalize(a), std::fs::canonicalize(b)),
                (Ok(x), Ok(y)) if x == y
            )
    };
    let mut outs: Vec<(&str, &Path)> = vec![("--out", a.out.as_path())];
    if let Some(p) = &a.plot {
        outs.push(("--plot", p.as_path()));
    }
    let mut ins: Vec<(&str, &Path)> = vec![
        ("--readings", a.readings.as_path()),
        ("--factor", a.factor.as_path()),
    ];
    if let Some(g) = &a.gain {
        ins.push(("--gain", g.as_path()));
    }
    for (k, (flag, path)) in outs.iter().enumerate() {
        if path.is_dir() {
            errs.push(FieldError::new(
                *flag,
                path.display(),
                "is a folder; name a file to write",
            ));
        }
        for (other, p) in ins.iter().chain(&outs[..k]) {
            if same(path, p) {
                errs.push(FieldError::new(
                    *flag,
                    path.display(),
                    format!("is also {other}; name a different file"),
                ));
            }
        }
    }
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let export = crate::calib::export::read_readings(&a.readings)?;
    let readings = &export.traces[0];
    let factor = read_table(&a.factor, &["pf_db_s_per_m", "ef_db_per_m"])?;
    let quantity = crate::calib::convert::Quantity::of(&factor.column);
    // The usable band the factor's comment lines state (calibrate writes it).
    let band = std::fs::read_to_string(&a.factor)
        .ok()
        .and_then(|t| crate::calib::band::parse_band(&t));
    let last = factor.rows[factor.rows.len() - 1].0;
    if let Some((_, hi)) = band
        && a.extrapolate
        && !a.beyond_band
    {
        let past: Vec<f64> = readings
            .rows
            .iter()
            .map(|r| r.0)
            .filter(|&f| f > last && f > hi)
            .collect();
        if let (Some(lo), Some(top)) = (past.first(), past.last()) {
            return Err(Error::Invalid(vec![FieldError::new(
                "--extrapolate",
                format!("{} reading(s) from {lo} Hz to {top} Hz", past.len()),
                format!(
                    "would extend the probe factor past its usable band (up to {hi} Hz, stated \
                     in {}); the factor is not known there. Give --beyond-band as well to \
                     accept that",
                    a.factor.display()
                ),
            )]));
        }
    }
    let gain = match (&a.gain, a.gain_db) {
        (Some(p), _) => Gain::Table(read_table(p, &["gain_db"])?),
        (None, Some(g)) => Gain::Fixed(g),
        (None, None) => unreachable!("checked above"),
    };
    let traces: Vec<Vec<crate::calib::convert::FieldPoint>> = export
        .traces
        .iter()
        .map(|t| convert(t, &factor, &gain, a.atten_db, a.cable_db, a.extrapolate))
        .collect::<Result<_, _>>()?;
    let points = &traces[0];
    // Written beside the targets and renamed into place: a refused run writes nothing.
    let io = |path: &PathBuf| {
        let path = path.display().to_string();
        move |e: std::io::Error| Error::Io { path, source: e }
    };
    let above: Vec<f64> = match band {
        Some((_, hi)) => points
            .iter()
            .map(|p| p.freq_hz)
            .filter(|&f| f > hi)
            .collect(),
        None => Vec::new(),
    };
    let table = if traces.len() == 1 {
        to_csv(points)
    } else {
        crate::calib::convert::to_csv_traces(&traces)
    };
    let table = match band {
        Some((_, hi)) => band_column(&table, hi),
        None => table,
    };
    let csv = format!("{}{table}", provenance(a, &export));
    let mut outputs = vec![(a.out.clone(), csv)];
    if let Some(plot) = &a.plot {
        let name = |p: &Path| {
            p.file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default()
        };
        let series: Vec<crate::emit::plot::Series> = traces
            .iter()
            .zip(&export.labels)
            .enumerate()
            .map(|(k, (pts, label))| crate::emit::plot::Series {
                label: if traces.len() == 1 {
                    format!("{} with {}", name(&a.readings), name(&a.factor))
                } else {
                    format!("{label} (t{})", k + 1)
                },
                colour: crate::emit::report::COLOURS[k % crate::emit::report::COLOURS.len()],
                points: pts.iter().map(|p| (p.freq_hz, p.field_db)).collect(),
                corner_hz: None,
                above_hz: band.map(|(_, hi)| hi),
            })
            .collect();
        outputs.push((
            plot.clone(),
            crate::emit::plot::log_plot(
                "Field strength from the analyzer readings",
                quantity.db_label(),
                "field-plot",
                &series,
            ),
        ));
    }
    write_files(&outputs).map_err(|(path, e)| io(&path)(e))?;
    let max = traces
        .iter()
        .flatten()
        .map(|p| p.field_db)
        .fold(f64::NEG_INFINITY, f64::max);
    if let (Some((_, hi)), Some(lo), Some(top)) = (band, above.first(), above.last()) {
        eprintln!(
            "loopwright: warning: {} reading(s) from {lo} Hz to {top} Hz lie above the probe \
             factor's usable band (up to {hi} Hz); their field strengths are marked \
             above_band = true in {}",
            above.len(),
            a.out.display()
        );
    }
    if !export.provenance.is_empty() || traces.len() > 1 {
        outln!("read {}: {}", a.readings.display(), export.form);
    }
    outln!(
        "{} points written to {}; highest field {:.2} {}. Near-field readings locate and rank \
         sources; they do not predict a compliance result.",
        points.len(),
        a.out.display(),
        max,
        match quantity {
            crate::calib::convert::Quantity::Magnetic => "dBµA/m",
            crate::calib::convert::Quantity::Electric => "dBµV/m",
        }
    );
    Ok(())
}

/// Writes every (path, text) or none: each goes to a temporary file beside its target first;
/// existing targets are moved aside and put back if any step fails.
fn write_files(outputs: &[(PathBuf, String)]) -> Result<(), (PathBuf, std::io::Error)> {
    let pid = std::process::id();
    let beside = |path: &Path, tag: &str| {
        let leaf = path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        path.with_file_name(format!(".{leaf}.{tag}-{pid}"))
    };
    let mut staged: Vec<(PathBuf, PathBuf)> = Vec::new();
    for (path, text) in outputs {
        let tmp = beside(path, "tmp");
        if let Err(e) = std::fs::write(&tmp, text) {
            let _ = std::fs::remove_file(&tmp);
            for (t, _) in &staged {
                let _ = std::fs::remove_file(t);
            }
            return Err((path.clone(), e));
        }
        staged.push((tmp, path.clone()));
    }
    // Move the old targets aside, then the new files into place; undo on failure.
    let mut aside: Vec<(PathBuf, PathBuf)> = Vec::new();
    let mut placed: Vec<PathBuf> = Vec::new();
    let mut result = Ok(());
    for (tmp, path) in &staged {
        if path.exists() {
            let old = beside(path, "old");
            if let Err(e) = std::fs::rename(path, &old) {
                result = Err((path.clone(), e));
                break;
            }
            aside.push((old, path.clone()));
        }
        if let Err(e) = std::fs::rename(tmp, path) {
            result = Err((path.clone(), e));
            break;
        }
        placed.push(path.clone());
    }
    if result.is_err() {
        for p in &placed {
            let _ = std::fs::remove_file(p);
        }
        for (old, p) in &aside {
            let _ = std::fs::rename(old, p);
        }
        for (t, _) in &staged {
            let _ = std::fs::remove_file(t);
        }
    } else {
        for (old, _) in &aside {
            let _ = std::fs::remove_file(old);
        }
    }
    result
}

/// The output table with a last column `above_band`: whether each reading lies above the
/// probe factor's usable band (up to `hi` Hz).
fn band_column(csv: &str, hi: f64) -> String {
    let mut o = String::with_capacity(csv.len() + 16 * csv.lines().count());
    for (k, l) in csv.lines().enumerate() {
        o.push_str(l);
        if k == 0 {
            o.push_str(",above_band\n");
        } else {
            let f: f64 = l
                .split(',')
                .next()
                .and_then(|v| v.parse().ok())
                .unwrap_or(0.0);
            o.push_str(if f > hi { ",true\n" } else { ",false\n" });
        }
    }
    o
}

/// The output's `#` comment lines: where the readings came from, when the file said more than
/// its two columns (metadata lines, several traces, left-out columns); none otherwise.
fn provenance(a: &ConvertArgs, r: &Readings) -> String {
    if r.provenance.is_empty() && r.traces.len() == 1 {
        return String::new();
    }
    let mut o = format!("# readings: {} ({})\n", a.readings.display(), r.form);
    for l in &r.provenance {
        o.push_str(&format!("# metadata: {l}\n"));
    }
    if r.traces.len() > 1 {
        for (k, (label, t)) in r.labels.iter().zip(&r.traces).enumerate() {
            o.push_str(&format!("# t{}: {label} ({})\n", k + 1, t.column));
        }
    }
    o
}
