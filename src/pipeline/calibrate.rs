//! Calibration: the probe factor derived from a Touchstone file measured on the test-line
//! fixture, checked for plausibility against the prediction, with its files in memory.

use crate::calib::calibrate::{LineCurrent, calibrate};
use crate::calib::gate::{self, Bench, Candidate, Verdict};
use crate::calib::touchstone;
use crate::error::{Error, FieldError};
use crate::physics::PredictOptions;

use crate::spec::parse_toml;
use crate::spec::probe::ProbeFileSpec;
use std::path::{Path, PathBuf};

/// The calibrated loop with its solved values and prediction.
pub struct Chosen {
    /// The probe.
    pub probe: crate::model::probe::Probe,
    /// Its solved values.
    pub solved: crate::solve::probe::SolvedProbe,
    /// Its response.
    pub response: crate::physics::Response,
}

/// What a calibration reads. Field errors name the command line's flags (`--height`, ...).
#[derive(Debug, Clone)]
pub struct Request {
    /// Touchstone version 1 file measured on the fixture (`.s2p`, `.s3p`, `.s4p`).
    pub touchstone: PathBuf,
    /// VNA port on the line's input (default 1 for a two-port file).
    pub line_port: Option<usize>,
    /// VNA port on the probe's output (default 2 for a two-port file).
    pub probe_port: Option<usize>,
    /// The probe or family spec the probe was built from.
    pub probes: PathBuf,
    /// The probe's name in that spec (may be left out when the spec has one probe).
    pub probe: Option<String>,
    /// The fixture spec the test line was built from.
    pub fixture: PathBuf,
    /// Height of the probe's tip above the line's copper, mm.
    pub height: f64,
    /// Take the line current as V_inc/R_ref, ignoring the fixture's launches.
    pub uniform_line: bool,
    /// A balanced loop's second output's port (default: a 3-port file's remaining port).
    pub second_port: Option<usize>,
    /// Write a calibration that fails the plausibility gate when its largest in-band
    /// |measured − predicted| is at most this many dB.
    pub accept_deviation: Option<f64>,
}

/// A finished calibration: its files (names inside the output folder) and the lines that
/// report it.
#[derive(Debug, Clone)]
pub struct Calibrated {
    /// The files to write.
    pub files: Vec<(PathBuf, Vec<u8>)>,
    /// What to tell the user, a line each.
    pub report: Vec<String>,
    /// What the factor refers to, in a few words.
    pub field_reference: &'static str,
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

/// The command line's flags that a calibration's field errors name.
const FLAGS: [&str; 10] = [
    "touchstone",
    "line-port",
    "probe-port",
    "second-port",
    "probes",
    "probe",
    "fixture",
    "height",
    "uniform-line",
    "accept-deviation",
];

/// Calibrates a probe from a measured Touchstone file; nothing is written. Errors about the
/// request name its flags as the user types them (`--height`).
pub fn run(a: &Request) -> Result<Calibrated, Error> {
    run_request(a).map_err(|e| match e {
        Error::Invalid(v) => Error::Invalid(
            v.into_iter()
                .map(|f| {
                    if FLAGS.contains(&f.field.as_str()) {
                        f.prefixed("--")
                    } else {
                        f
                    }
                })
                .collect(),
        ),
        other => other,
    })
}

fn run_request(a: &Request) -> Result<Calibrated, Error> {
    let ports = ports_of(&a.touchstone)?;
    let ports_needed = || {
        Error::Invalid(vec![FieldError::new(
            "line-port",
            a.line_port
                .map(|v| v.to_string())
                .unwrap_or("(missing)".into()),
            format!("a {ports}-port file needs both --line-port and --probe-port (1 to {ports})"),
        )])
    };
    // A 3-port file of a balanced loop has defaults too (line 1, outputs 2 and 3): known only
    // once the probe is read, so the loop's refusal waits for it.
    let mut defaulted = false;
    let (line_port, probe_port) = match (a.line_port, a.probe_port, ports) {
        (l, p, 2) => (l.unwrap_or(1), p.unwrap_or(2)),
        (Some(l), Some(p), _) => (l, p),
        (l, p, 3) => {
            defaulted = true;
            // The probe's output: the lowest port that is not the line's.
            let l = l.unwrap_or(1);
            (l, p.unwrap_or(if l == 1 { 2 } else { 1 }))
        }
        _ => return Err(ports_needed()),
    };
    let mut errs = crate::calib::calibrate::check_ports(ports, line_port, probe_port);
    crate::error::check_range(&mut errs, "height", a.height, 0.0, 100.0);
    if let Some(d) = a.accept_deviation {
        crate::error::check_range(&mut errs, "accept-deviation", d, 0.0, 100.0);
    }
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    // The probe.
    let probes_text = read(&a.probes)?;
    let spec: ProbeFileSpec = parse_toml(&probes_text, &a.probes.display().to_string())?;
    let base = a.probes.parent().unwrap_or(Path::new("."));
    let family = crate::model::probe::family_from_spec(&spec, base)
        .map_err(|e| crate::spec::with_lines(&probes_text, e))?;
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
    let balanced = probe.kind == crate::model::probe::ProbeKind::Balanced;
    if defaulted && !balanced {
        return Err(ports_needed());
    }
    // A balanced loop's outputs a (--probe-port) and b (--second-port): their difference is
    // calibrated as the probe's output.
    let outputs = if balanced {
        Some(balanced_ports(a, ports, line_port, probe_port)?)
    } else if let Some(b) = a.second_port {
        return Err(Error::Invalid(vec![FieldError::new(
            "second-port",
            b,
            format!(
                "applies only to a balanced loop's second output; '{}' is a {} probe",
                probe.name,
                probe.kind.name()
            ),
        )]));
    } else {
        None
    };
    if probe.kind.electrode().is_some() {
        return run_electric(a, probe, (line_port, probe_port), ports);
    }
    let solved = crate::solve::probe::solve(probe)?;
    let response = crate::physics::predict(probe, &solved, &PredictOptions::default())?;
    let x = Chosen {
        probe: probe.clone(),
        solved,
        response,
    };
    // The fixture.
    let (fx, fs) = crate::pipeline::load_fixture(&a.fixture)?;
    // The measurement.
    let ts_path = a.touchstone.display().to_string();
    let net = touchstone::parse(&read(&a.touchstone)?, &ts_path, ports)?;
    // A balanced loop: the 3-port file becomes the 2-port of its difference (line 1, Δ 2).
    let (net, (line_port, probe_port), separation) = match outputs {
        Some((l, pa, pb)) => {
            let (d, sep) = crate::calib::balanced::difference_network(&net, l, pa, pb);
            (d, (1, 2), Some((l, pa, pb, sep)))
        }
        None => (net, (line_port, probe_port), None),
    };
    let line = fs.test_line(net.r_ref);
    let (source, ratio) = line_current(a, &fx, &fs, &net, false)?;
    let current = LineCurrent {
        source,
        ratio: &*ratio,
    };
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
        &current,
    )?;
    let magnitude = |f: f64| (current.ratio)(f).abs();
    let verdict = gate(
        a,
        &spec,
        base,
        &x,
        &net,
        (line_port, probe_port),
        &cal,
        &magnitude,
    )?;
    let base_name = &x.probe.folder;
    let source = a
        .touchstone
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let spec_name = a
        .probes
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let band: Vec<f64> = cal
        .points
        .iter()
        .filter(|p| p.in_band)
        .map(|p| p.f)
        .collect();
    let (lo, hi) = (band[0], band[band.len() - 1]);
    let common = [
        format!("probe: {} (spec {spec_name})", x.probe.name),
        "field reference: uniform H normal to the loop (from the test line's area-average H); H[dBµA/m] = V_probe[dBµV] + \
         pf_db_s_per_m"
            .to_string(),
        crate::calib::band::band_line(
            lo,
            hi,
            &format!(
                "measured points at or below the predicted upper usable frequency {:.6e} Hz",
                x.response.upper_hz
            ),
        ),
    ];
    let measured_src = format!(
        "source: calibrated from {source} ({}), tip {} mm above the line of {}, on {} by \
         loopwright {}",
        match separation {
            Some((l, pa, pb, _)) =>
                format!("Δ = (S{pa}{l} − S{pb}{l})/√2, a balanced loop's outputs' difference"),
            None => format!("S{probe_port}{line_port}"),
        },
        a.height,
        fx.name,
        crate::calib::band::date_utc(),
        env!("CARGO_PKG_VERSION")
    );
    let mut measured_head = vec!["loopwright probe factor, measured".to_string()];
    measured_head.extend(common.iter().cloned());
    measured_head.push(measured_src.clone());
    measured_head.extend(verdict.lines());
    let mut predicted_head = vec!["loopwright probe factor, predicted".to_string()];
    predicted_head.extend(common.iter().cloned());
    predicted_head.push(format!(
        "source: predicted by loopwright {} (docs/response.md) at the frequencies of {source}",
        env!("CARGO_PKG_VERSION")
    ));
    let mut detail_head = vec!["loopwright calibration detail".to_string()];
    detail_head.extend(common.iter().cloned());
    detail_head.push(measured_src);
    let sep_line = separation.map(|(_, _, _, sep)| {
        format!(
            "balanced loop: the sum Σ = (S(a) + S(b))/√2 over the difference Δ on the line, \
             median {sep:.1} dB (the electric share of the line's coupling; Σ's response to the \
             line is not predicted)"
        )
    });
    detail_head.extend(sep_line.clone());
    detail_head.extend(verdict.lines());
    let (pf_svg, diff_svg) = crate::emit::calibration::plots(&x.probe.name, &cal, &x.response);
    let mut files: Vec<(String, Vec<u8>)> = vec![
        (
            format!("{base_name}-pf-measured.csv"),
            crate::emit::calibration::pf_csv(&cal, true, &measured_head).into_bytes(),
        ),
        (
            format!("{base_name}-pf-predicted.csv"),
            crate::emit::calibration::pf_csv(&cal, false, &predicted_head).into_bytes(),
        ),
        (
            format!("{base_name}-calibration.csv"),
            crate::emit::calibration::detail_csv(&cal, &detail_head).into_bytes(),
        ),
        (format!("{base_name}-calibration.svg"), pf_svg.into_bytes()),
        (format!("{base_name}-difference.svg"), diff_svg.into_bytes()),
    ];
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base_name}-calibration.md");
    names.push(notes_name.clone());
    files.push((
        notes_name,
        crate::emit::calibration::notes(
            &x.probe,
            &x.response,
            &fx,
            &cal,
            &source,
            &names,
            &verdict,
        )
        .into_bytes(),
    ));
    let entries: Vec<(PathBuf, Vec<u8>)> = files
        .into_iter()
        .map(|(n, b)| (PathBuf::from(n), b))
        .collect();
    let mut report = Vec::new();
    report.push(format!(
        "calibrated {} on {} at {} mm: {} points, H_avg/I {:.3} A/m per A, M {:.2} pH",
        x.probe.name,
        fx.name,
        a.height,
        cal.points.len(),
        cal.coupling.h_avg_per_amp,
        cal.coupling.mutual * 1e12
    ));
    report.push(format!(
        "line current under the probe: {}",
        cal.current_source
    ));
    for w in crate::emit::calibration::warnings(&fx) {
        report.push(format!("note: {w}"));
    }
    if let Some((mean, max)) = cal.in_band_diff() {
        report.push(format!(
            "measured − predicted probe factor up to the upper usable frequency: mean {mean:+.2} dB, \
             largest {max:.2} dB"
        ));
    }
    report.extend(sep_line);
    for l in verdict.lines() {
        report.push(l);
    }
    Ok(Calibrated {
        files: entries,
        report,
        field_reference: if separation.is_some() {
            "uniform H normal to the loop, at the outputs' difference Δ = (a − b)/√2"
        } else {
            "uniform H normal to the loop"
        },
    })
}

/// Runs the plausibility gate on a calibration. A failure is diagnosed with every probe of the
/// spec, and refused unless `--accept-deviation` covers the largest in-band difference.
#[allow(clippy::too_many_arguments)]
fn gate(
    a: &Request,
    spec: &ProbeFileSpec,
    base: &Path,
    x: &Chosen,
    net: &touchstone::Network,
    ports: (usize, usize),
    cal: &crate::calib::calibrate::Calibration,
    current: &dyn Fn(f64) -> f64,
) -> Result<Verdict, Error> {
    let in_band: Vec<(f64, f64)> = cal
        .points
        .iter()
        .filter(|p| p.in_band)
        .map(|p| (p.f, p.diff_db()))
        .collect();
    let stated = gate::shape(&in_band);
    // Within the limits and near the prediction: no other probe can fit markedly better.
    if let Some(s) = stated
        && s.passes()
        && s.level_db.abs() <= gate::SIBLING_LEVEL_DB
    {
        return Ok(Verdict::new(stated, &[]));
    }
    // The other probes of the spec, as far as they solve (the named one did).
    let family = crate::model::probe::family_from_spec(spec, base)?;
    let mut others = Vec::new();
    for p in family.probes {
        if p.name == x.probe.name {
            continue;
        }
        let Ok(solved) = crate::solve::probe::solve(&p) else {
            continue;
        };
        let Ok(response) = crate::physics::predict(&p, &solved, &PredictOptions::default()) else {
            continue;
        };
        others.push((p, solved, response));
    }
    let mut candidates = vec![Candidate {
        probe: &x.probe,
        solved: &x.solved,
        response: &x.response,
    }];
    candidates.extend(others.iter().map(|(p, s, r)| Candidate {
        probe: p,
        solved: s,
        response: r,
    }));
    let bench = Bench {
        family: candidates,
        chosen: 0,
        line: cal.line,
        net,
        ports,
        height_mm: a.height,
        current,
    };
    let mut v = Verdict::new(stated, &bench.probe_findings());
    if v.passed() {
        return Ok(v);
    }
    v.findings = bench.diagnose();
    accept_or_refuse(a, v, &format!("probe factor of {}", x.probe.name))
}

/// A failed verdict accepted by `--accept-deviation` when it covers the largest difference,
/// or the refusal (nothing written) with the verdict's lines and what the flag would take;
/// `what` names the factor ("probe factor of FM-R10").
fn accept_or_refuse(a: &Request, mut v: Verdict, what: &str) -> Result<Verdict, Error> {
    if v.passed() {
        return Ok(v);
    }
    if let (Some(d), Some(s)) = (a.accept_deviation, v.shape)
        && s.largest_db <= d
    {
        v.accepted_db = Some(d);
        return Ok(v);
    }
    let mut text = format!(
        "the measured {what} at {} mm disagrees with the prediction beyond the plausibility \
         limits; nothing was written",
        a.height
    );
    for l in v.lines() {
        text.push('\n');
        text.push_str(&l);
    }
    match (a.accept_deviation, v.shape) {
        (Some(d), Some(s)) => text.push_str(&format!(
            "\n--accept-deviation {d} does not cover the largest |measured − predicted| of {:.2} dB",
            s.largest_db
        )),
        (None, Some(s)) => text.push_str(&format!(
            "\nIf the difference is real and understood, --accept-deviation {:.1} writes anyway \
             and records it",
            (s.largest_db * 10.0).ceil() / 10.0
        )),
        _ => {}
    }
    Err(Error::Invalid(vec![FieldError::new(
        "touchstone",
        a.touchstone.display(),
        text,
    )]))
}

/// The current under the probe per V_inc/R_ref (or, with `voltage`, the line voltage there per
/// V_inc), and what it rests on: a uniform matched line (`--uniform-line`) or the fixture's
/// launch model.
#[allow(clippy::type_complexity)]
fn line_current(
    a: &Request,
    fx: &crate::model::fixture::Fixture,
    fs: &crate::solve::fixture::SolvedFixture,
    net: &touchstone::Network,
    voltage: bool,
) -> Result<(String, Box<dyn Fn(f64) -> crate::math::Cx>), Error> {
    use crate::physics::coupling::{launch_current, launch_voltage};
    let r = net.r_ref;
    if a.uniform_line {
        let what = if voltage {
            "V = V_inc"
        } else {
            "I = V_inc/R_ref"
        };
        return Ok((
            format!(
                "a uniform matched line, {what} (--uniform-line: the fixture's launches are \
                 ignored)"
            ),
            Box::new(|_| crate::math::Cx::new(1.0, 0.0)),
        ));
    }
    let secs = crate::solve::fixture::launch_sections(fx, fs)?;
    let mut beyond = secs.clone();
    beyond.reverse();
    let text = launch_text(&secs);
    Ok((
        format!("the fixture's launch model: {text}"),
        if voltage {
            Box::new(move |f| launch_voltage(&secs, &beyond, r, f))
        } else {
            Box::new(move |f| launch_current(&secs, &beyond, r, f))
        },
    ))
}

/// A balanced loop's ports in a 3-port file: (line, output a, output b), output b the
/// `--second-port` or the one port left.
fn balanced_ports(
    a: &Request,
    ports: usize,
    line_port: usize,
    probe_port: usize,
) -> Result<(usize, usize, usize), Error> {
    if ports < 3 || (ports > 3 && a.second_port.is_none()) {
        return Err(Error::Invalid(vec![FieldError::new(
            "touchstone",
            a.touchstone.display(),
            format!(
                "is a {ports}-port file; a balanced loop is calibrated from the line's input and \
                 both its outputs: a 3-port file (.s3p; --line-port, --probe-port, \
                 --second-port, default 1, 2, 3) or a 4-port file with all three named"
            ),
        )]));
    }
    let second = a.second_port.unwrap_or_else(|| 6 - line_port - probe_port);
    if !(1..=ports).contains(&second) || second == line_port || second == probe_port {
        return Err(Error::Invalid(vec![FieldError::new(
            "second-port",
            second,
            format!(
                "must be one of the file's ports 1 to {ports}, neither --line-port ({line_port}) \
                 nor --probe-port ({probe_port})"
            ),
        )]));
    }
    Ok((line_port, probe_port, second))
}

/// The launch sections in words.
fn launch_text(secs: &[crate::solve::network::Section]) -> String {
    let first = secs[0];
    let last = secs[secs.len() - 1];
    if secs.len() == 1 {
        return format!(
            "one uniform line of {:.1} Ω from each port to the probe",
            first.z0()
        );
    }
    let taper: f64 = secs[1..secs.len() - 1].iter().map(|s| s.len_m()).sum();
    format!(
        "from each port {:.2} mm of {:.1} Ω (connector pad in its coplanar gap, εeff {:.3}), a \
         {:.2} mm constant-impedance taper in {} steps, then {:.2} mm of {:.1} Ω (εeff {:.3}) to \
         the probe; lossless sections, Z0 and εeff from the 2-D field solver",
        first.len_m() * 1e3,
        first.z0(),
        first.eps_eff(),
        taper * 1e3,
        secs.len() - 2,
        last.len_m() * 1e3,
        last.z0(),
        last.eps_eff()
    )
}

/// An electric probe's calibration: its factor from the line voltage under it, checked by the
/// gate's level, slope and ripple against the prediction (the loops' diagnosis of single causes
/// is not run for it: the causes it names are a loop's).
fn run_electric(
    a: &Request,
    probe: &crate::model::probe::Probe,
    (line_port, probe_port): (usize, usize),
    ports: usize,
) -> Result<Calibrated, Error> {
    let solved = crate::solve::probe::solve(probe)?;
    let r = crate::physics::electric_probe::predict(probe, &solved, &PredictOptions::default())?;
    let (fx, fs) = crate::pipeline::load_fixture(&a.fixture)?;
    let ts_path = a.touchstone.display().to_string();
    let net = touchstone::parse(&read(&a.touchstone)?, &ts_path, ports)?;
    let (source, ratio) = line_current(a, &fx, &fs, &net, true)?;
    let current = LineCurrent {
        source,
        ratio: &*ratio,
    };
    let cal = crate::calib::electric::calibrate_electric(
        &r,
        &fx,
        &fs,
        &net,
        &ts_path,
        (line_port, probe_port),
        a.height,
        &current,
    )?;
    let in_band: Vec<(f64, f64)> = cal
        .points
        .iter()
        .filter(|p| p.in_band)
        .map(|p| (p.f, p.diff_db()))
        .collect();
    let verdict = accept_or_refuse(
        a,
        Verdict::new(gate::shape(&in_band), &[]),
        &format!("electric probe factor of {}", probe.name),
    )?;
    let base_name = &probe.folder;
    let source = a
        .touchstone
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let band: Vec<f64> = in_band.iter().map(|p| p.0).collect();
    let common = [
        format!("probe: {} (electric)", probe.name),
        "field reference: E normal to the probe's face averaged over the electrode's collecting \
         area, the probe held flat; E[dBµV/m] = V_probe[dBµV] + ef_db_per_m"
            .to_string(),
        match (band.first(), band.last()) {
            (Some(lo), Some(hi)) => crate::calib::band::band_line(
                *lo,
                *hi,
                &format!(
                    "measured points at or below the predicted upper usable frequency {:.6e} Hz",
                    r.upper_hz
                ),
            ),
            _ => "band: no measured point at or below the upper usable frequency".to_string(),
        },
    ];
    let measured_src = format!(
        "source: calibrated from {source} (S{probe_port}{line_port}), face {} mm above the line \
         of {}, on {} by loopwright {}",
        a.height,
        fx.name,
        crate::calib::band::date_utc(),
        env!("CARGO_PKG_VERSION")
    );
    let head = |title: &str, src: &str, gate_lines: bool| {
        let mut h = vec![title.to_string()];
        h.extend(common.iter().cloned());
        h.push(src.to_string());
        if gate_lines {
            h.extend(verdict.lines());
        }
        h
    };
    let predicted_src = format!(
        "source: predicted by loopwright {} (docs/formulas.md §11) at the frequencies of {source}",
        env!("CARGO_PKG_VERSION")
    );
    let mut files: Vec<(String, Vec<u8>)> = vec![
        (
            format!("{base_name}-ef-measured.csv"),
            crate::emit::calibration::ef_csv(
                &cal,
                true,
                &head(
                    "loopwright electric probe factor, measured",
                    &measured_src,
                    true,
                ),
            )
            .into_bytes(),
        ),
        (
            format!("{base_name}-ef-predicted.csv"),
            crate::emit::calibration::ef_csv(
                &cal,
                false,
                &head(
                    "loopwright electric probe factor, predicted",
                    &predicted_src,
                    false,
                ),
            )
            .into_bytes(),
        ),
        (
            format!("{base_name}-calibration.csv"),
            crate::emit::calibration::ef_detail_csv(
                &cal,
                &head("loopwright calibration detail", &measured_src, true),
            )
            .into_bytes(),
        ),
        (
            format!("{base_name}-calibration.svg"),
            crate::emit::calibration::ef_plot(&probe.name, &cal, &r).into_bytes(),
        ),
    ];
    let mut names: Vec<String> = files.iter().map(|(n, _)| n.clone()).collect();
    let notes_name = format!("{base_name}-calibration.md");
    names.push(notes_name.clone());
    files.push((
        notes_name,
        crate::emit::calibration::ef_notes(probe, &r, &fx, &cal, &source, &names, &verdict)
            .into_bytes(),
    ));
    let mut report = vec![format!(
        "calibrated {} (electric) on {} at {} mm: {} points, C_c {:.2} fF, {:.1} V/m per line volt",
        probe.name,
        fx.name,
        a.height,
        cal.points.len(),
        cal.on.coupling_f * 1e15,
        cal.on.e_per_volt
    )];
    report.push(format!(
        "line voltage under the probe: {}",
        cal.current_source
    ));
    for w in crate::emit::calibration::warnings(&fx) {
        report.push(format!("note: {w}"));
    }
    report.extend(verdict.lines());
    Ok(Calibrated {
        files: files
            .into_iter()
            .map(|(n, b)| (PathBuf::from(n), b))
            .collect(),
        report,
        field_reference: "E normal to the face over the electrode, the probe held flat",
    })
}
