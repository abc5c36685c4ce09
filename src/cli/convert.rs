//! `loopwright convert`: spectrum-analyzer readings to field strength.

use crate::calib::convert::{Gain, convert, read_table, to_csv};
use crate::error::{Error, FieldError, check_range};
use std::path::PathBuf;

/// Arguments of `loopwright convert`.
#[derive(Debug, clap::Args)]
#[command(allow_negative_numbers = true, after_help = super::CAUTIONS)]
pub struct ConvertArgs {
    /// Analyzer trace: CSV with header `freq_hz,level_dbm` or `freq_hz,level_dbuv`.
    #[arg(long, value_name = "FILE.csv")]
    pub readings: PathBuf,
    /// Probe factor: CSV with header `freq_hz,pf_db_s_per_m` (predicted or calibrated).
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
    /// Output CSV (`freq_hz,h_dbua_per_m,h_a_per_m,b_dbpt,v_probe_dbuv`).
    #[arg(long, value_name = "FILE.csv")]
    pub out: PathBuf,
    /// Also draw the field strength against frequency as an SVG plot.
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<PathBuf>,
    /// Extend the probe-factor and gain tables' end segments to readings outside them.
    #[arg(long)]
    pub extrapolate: bool,
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
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let readings = read_table(&a.readings, &["level_dbm", "level_dbuv"])?;
    let factor = read_table(&a.factor, &["pf_db_s_per_m"])?;
    let gain = match (&a.gain, a.gain_db) {
        (Some(p), _) => Gain::Table(read_table(p, &["gain_db"])?),
        (None, Some(g)) => Gain::Fixed(g),
        (None, None) => unreachable!("checked above"),
    };
    let points = convert(
        &readings,
        &factor,
        &gain,
        a.atten_db,
        a.cable_db,
        a.extrapolate,
    )?;
    // Written beside the targets and renamed into place: a refused run writes nothing.
    let io = |path: &PathBuf| {
        let path = path.display().to_string();
        move |e: std::io::Error| Error::Io { path, source: e }
    };
    let mut outputs = vec![(a.out.clone(), to_csv(&points))];
    if let Some(plot) = &a.plot {
        let series = crate::emit::plot::Series {
            label: format!(
                "{} with {}",
                a.readings
                    .file_name()
                    .map(|n| n.to_string_lossy().to_string())
                    .unwrap_or_default(),
                a.factor
                    .file_name()
                    .map(|n| n.to_string_lossy().to_string())
                    .unwrap_or_default()
            ),
            colour: "#1f5fa8",
            points: points.iter().map(|p| (p.freq_hz, p.h_dbua_per_m)).collect(),
            marker_hz: None,
        };
        outputs.push((
            plot.clone(),
            crate::emit::plot::log_plot(
                "Field strength from the analyzer readings",
                "H dBµA/m",
                "field-plot",
                &[series],
            ),
        ));
    }
    let mut staged = Vec::new();
    for (path, text) in &outputs {
        let leaf = path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        let tmp = path.with_file_name(format!(".{leaf}.tmp-{}", std::process::id()));
        if let Err(e) = std::fs::write(&tmp, text) {
            let _ = std::fs::remove_file(&tmp);
            for (t, _) in &staged {
                let _ = std::fs::remove_file(t);
            }
            return Err(io(&tmp)(e));
        }
        staged.push((tmp, path.clone()));
    }
    for (k, (tmp, path)) in staged.iter().enumerate() {
        if let Err(e) = std::fs::rename(tmp, path) {
            for (t, _) in &staged[k..] {
                let _ = std::fs::remove_file(t);
            }
            for (_, p) in &staged[..k] {
                let _ = std::fs::remove_file(p);
            }
            return Err(io(path)(e));
        }
    }
    let max = points
        .iter()
        .map(|p| p.h_dbua_per_m)
        .fold(f64::NEG_INFINITY, f64::max);
    outln!(
        "{} points written to {}; highest field {:.2} dBµA/m. Near-field readings locate and rank \
         sources; they do not predict a compliance result.",
        points.len(),
        a.out.display(),
        max
    );
    Ok(())
}
