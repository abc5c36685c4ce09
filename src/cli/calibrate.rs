//! `loopwright calibrate`: the probe factor from a Touchstone file measured on the test-line
//! fixture, beside the prediction.

use crate::calib::calibrate::calibrate;
use crate::calib::touchstone;
use crate::error::{Error, FieldError};
use crate::physics::PredictOptions;
use crate::spec::parse_toml;
use crate::spec::probe::ProbeFileSpec;
use std::path::{Path, PathBuf};

/// Arguments of `loopwright calibrate`.
#[derive(Debug, clap::Args)]
#[command(after_help = super::CAL_CAUTIONS, allow_negative_numbers = true)]
pub struct CalibrateArgs {
    /// Touchstone version 1 file measured on the fixture (`.s2p`, or `.s3p`/`.s4p` with
    /// --line-port and --probe-port).
    #[arg(long, value_name = "FILE.sNp")]
    pub touchstone: PathBuf,
    /// VNA port on the line's input (default 1 for a two-port file).
    #[arg(long = "line-port", value_name = "N")]
    pub line_port: Option<usize>,
    /// VNA port on the probe's output (default 2 for a two-port file).
    #[arg(long = "probe-port", value_name = "N")]
    pub probe_port: Option<usize>,
    /// The probe or family spec the probe was built from.
    #[arg(long, value_name = "SPEC.toml")]
    pub probes: PathBuf,
    /// The probe's name in that spec (may be left out when the spec has one probe).
    #[arg(long, value_name = "NAME")]
    pub probe: Option<String>,
    /// The fixture spec the test line was built from.
    #[arg(long, value_name = "FIXTURE.toml")]
    pub fixture: PathBuf,
    /// Height of the probe's tip above the line's copper, mm.
    #[arg(long, value_name = "MM")]
    pub height: f64,
    /// Output folder (written whole or not at all).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
}

fn read(path: &Path) -> Result<String, Error> {
    std::fs::read_to_string(path).map_err(|e| Error::Io {
        path: path.display().to_string(),
        source: e,
    })
}

/// The number of ports a Touchstone file name says (`.s2p` → 2).
fn ports_of(path: &Path) -> Result<usize, Error> {
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase())
        .unwrap_or_default();
    let n = ext
        .strip_prefix('s')
        .and_then(|r| r.strip_suffix('p'))
        .and_then(|d| d.parse::<usize>().ok());
    match n {
        Some(n) if (2..=4).contains(&n) => Ok(n),
        _ => Err(Error::Invalid(vec![FieldError::new(
            "touchstone",
            path.display(),
            "must be a Touchstone version 1 file named .s2p, .s3p or .s4p (the extension \
             gives the port count)",
        )])),
    }
}

pub(super) fn run(a: &CalibrateArgs) -> Result<(), Error> {
    let ports = ports_of(&a.touchstone)?;
    let (line_port, probe_port) = match (a.line_port, a.probe_port, ports) {
        (l, p, 2) => (l.unwrap_or(1), p.unwrap_or(2)),
        (Some(l), Some(p), _) => (l, p),
        _ => {
            return Err(Error::Invalid(vec![FieldError::new(
                "line-port",
                a.line_port
                    .map(|v| v.to_string())
                    .unwrap_or("(missing)".into()),
                format!(
                    "a {ports}-port file needs both --line-port and --probe-port (1 to {ports})"
                ),
            )]));
        }
    };
    let mut errs = crate::calib::calibrate::check_ports(ports, line_port, probe_port);
    crate::error::check_range(&mut errs, "height", a.height, 0.0, 100.0);
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    // The probe.
    let probes_text = read(&a.probes)?;
    let spec: ProbeFileSpec = parse_toml(&probes_text, &a.probes.display().to_string())?;
    let base = a.probes.parent().unwrap_or(Path::new("."));
    let family = crate::model::probe::family_from_spec(&spec, base)?;
    let names: Vec<String> = family.probes.iter().map(|p| p.name.clone()).collect();
    let chosen = match &a.probe {
        Some(n) => family.probes.iter().find(|p| &p.name == n),
        None if family.probes.len() == 1 => family.probes.first(),
        None => None,
    };
    let Some(probe) = chosen else {
        return Err(Error::Invalid(vec![FieldError::new(
            "probe",
            a.probe.clone().unwrap_or("(missing)".into()),
            format!("name one of the spec's probes: {}", names.join(", ")),
        )]));
    };
    let solved = crate::solve::probe::solve(probe)?;
    let response = crate::physics::predict(probe, &solved, &PredictOptions::default())?;
    let x = super::predict::Predicted {
        probe: probe.clone(),
        solved,
        response,
    };
    // The fixture.
    let (fx, fs) = crate::pipeline::load_fixture(&a.fixture)?;
    // The measurement.
    let ts_path = a.touchstone.display().to_string();
    let net = touchstone::parse(&read(&a.touchstone)?, &ts_path, ports)?;
    let line = fs.test_line(net.r_ref);
    let cal = calibrate(
        &x.probe,
        &x.solved,
        &x.response,
        line,
        fx.target_z0,
        &net,
        &ts_path,
        (line_port, probe_port),
        a.height,
    )?;
    let base_name = &x.probe.folder;
    let (pf_svg, diff_svg) = crate::emit::calibration::plots(&x.probe.name, &cal, &x.response);
    let mut files: Vec<(String, Vec<u8>)> = vec![
        (
            format!("{base_name}-pf-measured.csv"),
            crate::emit::calibration::pf_csv(&cal, true).into_bytes(),
        ),
        (
            format!("{base_name}-pf-predicted.csv"),
            crate::emit::calibration::pf_csv(&cal, false).into_bytes(),
        ),
        (
            format!("{base_name}-calibration.csv"),
            crate::emit::calibration::detail_csv(&cal).into_bytes(),
        ),
        (format!("{base_name}-calibration.svg"), pf_svg.into_bytes()),
        (format!("{base_name}-difference.svg"), diff_svg.into_bytes()),
    ];
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base_name}-calibration.md");
    names.push(notes_name.clone());
    let source = a
        .touchstone
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    files.push((
        notes_name,
        crate::emit::calibration::notes(&x.probe, &x.response, &fx, &cal, &source, &names)
            .into_bytes(),
    ));
    let entries: Vec<(PathBuf, Vec<u8>)> = files
        .into_iter()
        .map(|(n, b)| (PathBuf::from(n), b))
        .collect();
    crate::pipeline::write_atomically(&a.out, &entries)?;
    outln!(
        "calibrated {} on {} at {} mm: {} points, H_avg/I {:.3} A/m per A, M {:.2} pH",
        x.probe.name,
        fx.name,
        a.height,
        cal.points.len(),
        cal.coupling.h_avg_per_amp,
        cal.coupling.mutual * 1e12
    );
    for w in crate::emit::calibration::warnings(&fx) {
        outln!("note: {w}");
    }
    if let Some((mean, max)) = cal.in_band_diff() {
        outln!(
            "measured − predicted probe factor up to the upper usable frequency: mean {mean:+.2} dB, \
             largest {max:.2} dB"
        );
    }
    outln!(
        "wrote {} (field reference: area-average H over the loop)",
        a.out.display()
    );
    outln!("\n{}", super::CAL_CAUTIONS);
    Ok(())
}
