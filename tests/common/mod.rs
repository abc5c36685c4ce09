//! Shared helpers of the integration tests: the demo family built once into a temporary
//! folder, and a reader for the Gerber and Excellon files loopwright writes.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

/// The demo family, built once per test binary with the library pipeline.
pub fn demo_dir() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!(
            "loopwright-demo-{}-{}",
            std::process::id(),
            std::thread::current().name().unwrap_or("t").len()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        let spec: loopwright::spec::probe::ProbeFileSpec =
            toml::from_str(loopwright::cli::DEMO_SPEC).unwrap();
        loopwright::pipeline::build_to_dir(&spec, Path::new("data/demo"), &dir, false, Vec::new())
            .expect("demo builds");
        dir
    })
}

/// Every file below a folder, sorted.
pub fn files_under(root: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap().flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push(p);
            }
        }
    }
    out.sort();
    out
}

/// Every file with an extension below a folder.
pub fn files_with_ext(root: &Path, ext: &str) -> Vec<PathBuf> {
    files_under(root)
        .into_iter()
        .filter(|p| p.extension().is_some_and(|x| x == ext))
        .collect()
}

use geo::{BooleanOps, Coord, LineString, MultiPolygon, Polygon};

/// An aperture of our files.
#[derive(Debug, Clone, PartialEq)]
pub struct Ap {
    /// `C` or `R`.
    pub kind: char,
    /// Diameter or width, mm.
    pub a: f64,
    /// Height (rectangles), mm.
    pub b: f64,
    /// The `.AperFunction` in force when it was defined.
    pub function: String,
}

/// A flash read back from a file.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadFlash {
    /// Centre, mm.
    pub x: f64,
    /// Centre, mm.
    pub y: f64,
    /// Its aperture.
    pub ap: Ap,
}

/// What a Gerber file of ours holds, read back independently of the writer.
#[derive(Debug)]
pub struct ReadGerber {
    /// `%TF.` attributes, as raw strings after `TF.`.
    pub file_attrs: Vec<String>,
    /// Dark regions after clear regions are subtracted in order.
    pub regions: MultiPolygon<f64>,
    /// Flashes.
    pub flashes: Vec<ReadFlash>,
    /// Draws (strokes): each a polyline with its aperture.
    pub strokes: Vec<(Vec<(f64, f64)>, Ap)>,
}

fn coord(s: &str, key: char) -> Option<f64> {
    let i = s.find(key)?;
    let rest = &s[i + 1..];
    let end = rest
        .find(|c: char| !(c.is_ascii_digit() || c == '-'))
        .unwrap_or(rest.len());
    rest[..end].parse::<i64>().ok().map(|v| v as f64 / 1e6)
}

fn to_poly(pts: &[(f64, f64)]) -> Polygon<f64> {
    Polygon::new(
        LineString::from(pts.iter().map(|&(x, y)| Coord { x, y }).collect::<Vec<_>>()),
        vec![],
    )
}

/// Reads one of our Gerber files (format 4.6 mm, linear interpolation, regions, flashes).
pub fn read_gerber(path: &Path) -> ReadGerber {
    let text = std::fs::read_to_string(path).unwrap();
    let mut g = ReadGerber {
        file_attrs: Vec::new(),
        regions: MultiPolygon(vec![]),
        flashes: Vec::new(),
        strokes: Vec::new(),
    };
    let mut apertures: std::collections::HashMap<i32, Ap> = Default::default();
    let mut function = String::new();
    let mut current: Option<Ap> = None;
    let mut dark = true;
    let mut in_region = false;
    let mut contour: Vec<(f64, f64)> = Vec::new();
    let mut stroke: Vec<(f64, f64)> = Vec::new();
    let (mut x, mut y) = (0.0, 0.0);
    let flush_stroke = |g: &mut ReadGerber, stroke: &mut Vec<(f64, f64)>, ap: &Option<Ap>| {
        if stroke.len() >= 2 {
            g.strokes
                .push((std::mem::take(stroke), ap.clone().unwrap()));
        }
        stroke.clear();
    };
    for line in text.lines() {
        let l = line.trim();
        if let Some(a) = l.strip_prefix("%TF.") {
            g.file_attrs.push(a.trim_end_matches("*%").to_string());
        } else if let Some(a) = l.strip_prefix("%TA.AperFunction,") {
            function = a.trim_end_matches("*%").to_string();
        } else if l.starts_with("%TD") {
            function.clear();
        } else if let Some(a) = l.strip_prefix("%ADD") {
            let a = a.trim_end_matches("*%");
            let code: i32 = a[..a.find(|c: char| !c.is_ascii_digit()).unwrap()]
                .parse()
                .unwrap();
            let rest = &a[code.to_string().len()..];
            let kind = rest.chars().next().unwrap();
            let nums: Vec<f64> = rest[2..].split('X').map(|v| v.parse().unwrap()).collect();
            apertures.insert(
                code,
                Ap {
                    kind,
                    a: nums[0],
                    b: *nums.get(1).unwrap_or(&nums[0]),
                    function: function.clone(),
                },
            );
        } else if l == "%LPD*%" {
            dark = true;
        } else if l == "%LPC*%" {
            dark = false;
        } else if l == "G36*" {
            flush_stroke(&mut g, &mut stroke, &current);
            in_region = true;
            contour.clear();
        } else if l == "G37*" {
            in_region = false;
            let poly = MultiPolygon(vec![to_poly(&contour)]);
            g.regions = if dark {
                g.regions.union(&poly)
            } else {
                g.regions.difference(&poly)
            };
        } else if l.starts_with('D') && l.ends_with('*') && !l.starts_with("D0") {
            flush_stroke(&mut g, &mut stroke, &current);
            let code: i32 = l[1..l.len() - 1].parse().unwrap();
            current = Some(apertures[&code].clone());
        } else if l.starts_with('X') || l.starts_with('Y') {
            let nx = coord(l, 'X').unwrap_or(x);
            let ny = coord(l, 'Y').unwrap_or(y);
            if l.ends_with("D02*") {
                if in_region {
                    contour.clear();
                } else {
                    flush_stroke(&mut g, &mut stroke, &current);
                }
                contour.push((nx, ny));
                stroke.push((nx, ny));
            } else if l.ends_with("D01*") {
                if in_region {
                    contour.push((nx, ny));
                } else {
                    stroke.push((nx, ny));
                }
            } else if l.ends_with("D03*") {
                flush_stroke(&mut g, &mut stroke, &current);
                g.flashes.push(ReadFlash {
                    x: nx,
                    y: ny,
                    ap: current.clone().unwrap(),
                });
            }
            x = nx;
            y = ny;
        } else if l == "M02*" {
            flush_stroke(&mut g, &mut stroke, &current);
        }
    }
    g
}

/// A flash as a polygon.
pub fn flash_poly(f: &ReadFlash) -> Polygon<f64> {
    if f.ap.kind == 'C' {
        let n = 256;
        let r = f.ap.a / 2.0;
        to_poly(
            &(0..n)
                .map(|i| {
                    let t = i as f64 / n as f64 * std::f64::consts::TAU;
                    (f.x + r * t.cos(), f.y + r * t.sin())
                })
                .collect::<Vec<_>>(),
        )
    } else {
        let (w, h) = (f.ap.a / 2.0, f.ap.b / 2.0);
        to_poly(&[
            (f.x - w, f.y - h),
            (f.x + w, f.y - h),
            (f.x + w, f.y + h),
            (f.x - w, f.y + h),
        ])
    }
}

/// Regions ∪ the flashes that pass `keep`.
pub fn copper(g: &ReadGerber, keep: impl Fn(&ReadFlash) -> bool) -> MultiPolygon<f64> {
    let mut m = g.regions.clone();
    for f in g.flashes.iter().filter(|f| keep(f)) {
        m = m.union(&MultiPolygon(vec![flash_poly(f)]));
    }
    m
}

/// Holes of an Excellon file of ours: (x, y, diameter).
pub fn read_drill(path: &Path) -> Vec<(f64, f64, f64)> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut tools = std::collections::HashMap::new();
    let mut current = 0.0;
    let mut body = false;
    let mut out = Vec::new();
    for l in text.lines() {
        if l == "%" {
            body = true;
        } else if l.starts_with('T') {
            if let Some(c) = l.find('C') {
                tools.insert(l[..c].to_string(), l[c + 1..].parse::<f64>().unwrap());
            } else if body {
                current = tools[l];
            }
        } else if body && l.starts_with('X') {
            let y = l.find('Y').unwrap();
            out.push((
                l[1..y].parse().unwrap(),
                l[y + 1..].parse().unwrap(),
                current,
            ));
        }
    }
    out
}

/// The impedance reference data (`tests/data/impedance_refs.toml`, scipy and scikit-rf values
/// with the calls that produced them).
pub fn impedance_refs() -> toml::Value {
    refs("impedance_refs.toml")
}

/// A reference data file under `tests/data/` (values with the calls that produced them).
pub fn refs(name: &str) -> toml::Value {
    let path = format!("{}/tests/data/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    toml::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

/// A non-empty section of the reference data.
pub fn section(v: &toml::Value, name: &str) -> Vec<toml::Value> {
    let s = v[name].as_array().expect(name).clone();
    assert!(!s.is_empty(), "section {name} is empty");
    s
}

/// A float field of a reference entry.
pub fn f(e: &toml::Value, k: &str) -> f64 {
    e[k].as_float().unwrap_or_else(|| panic!("{k} in {e:?}"))
}

/// Relative difference.
pub fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

/// A stripline in one dielectric.
pub fn stripline(w: f64, h1: f64, h2: f64, t: f64, er: f64) -> loopwright::solve::impedance::Line {
    loopwright::solve::impedance::Line::Stripline(loopwright::solve::impedance::Stripline {
        width: w,
        h1,
        h2,
        t,
        er1: er,
        er2: er,
    })
}

/// An axis-aligned rectangle as a region set, mm.
pub fn rect(x0: f64, y0: f64, x1: f64, y1: f64) -> MultiPolygon<f64> {
    let c = |x, y| Coord { x, y };
    MultiPolygon(vec![Polygon::new(
        LineString::from(vec![c(x0, y0), c(x1, y0), c(x1, y1), c(x0, y1)]),
        vec![],
    )])
}

/// Writes a file in this test binary's temporary folder and returns its path.
pub fn tmp_file(name: &str, text: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "loopwright-test-{}-{}",
        std::process::id(),
        env!("CARGO_CRATE_NAME")
    ));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    write_atomically(&p, text);
    p
}

/// Writes `text` to `p` through a uniquely named file renamed into place: tests running at
/// once that write the same file (the demo spec, say) while another's command reads it never
/// show the reader a truncated file.
pub fn write_atomically(p: &std::path::Path, text: &str) {
    use std::sync::atomic::{AtomicUsize, Ordering};
    static NEXT: AtomicUsize = AtomicUsize::new(0);
    let part = p.with_extension(format!(
        "part{}-{}",
        std::process::id(),
        NEXT.fetch_add(1, Ordering::Relaxed)
    ));
    std::fs::write(&part, text).unwrap();
    std::fs::rename(&part, p).unwrap();
}

/// Distance from hole `i` to its nearest neighbour among `holes` ((x, y, d) in mm).
pub fn nearest_hole(holes: &[(f64, f64, f64)], i: usize) -> f64 {
    let (x, y, _) = holes[i];
    holes
        .iter()
        .enumerate()
        .filter(|(j, _)| *j != i)
        .map(|(_, h)| (h.0 - x).hypot(h.1 - y))
        .fold(f64::INFINITY, f64::min)
}

/// One of the demo's probes, predicted at the default options, and the demo fixture's test line
/// (50 Ω ports).
pub fn demo_probe_and_line(
    name: &str,
) -> (
    loopwright::physics::predicted::Predicted,
    loopwright::physics::coupling::TestLine,
) {
    let spec = loopwright::spec::parse_toml(loopwright::cli::DEMO_SPEC, "demo").unwrap();
    let all = loopwright::pipeline::predict::predict_spec(
        &spec,
        std::path::Path::new("."),
        &Default::default(),
    )
    .unwrap();
    let x = all.into_iter().find(|x| x.probe.name == name).unwrap();
    let fx = loopwright::model::fixture::fixture_from_spec(
        &loopwright::spec::parse_toml(loopwright::cli::demo::DEMO_FIXTURE, "fixture").unwrap(),
        std::path::Path::new("."),
    )
    .unwrap();
    let line = loopwright::solve::fixture::solve(&fx)
        .unwrap()
        .test_line(50.0);
    (x, line)
}

/// A float array field of a reference entry.
pub fn floats(v: &toml::Value, k: &str) -> Vec<f64> {
    v[k].as_array()
        .unwrap_or_else(|| panic!("{k} in {v:?}"))
        .iter()
        .map(|x| x.as_float().unwrap())
        .collect()
}

/// The `sections` array of a reference entry as network sections (`kind` = line, open_stub
/// or lossy_line, with z0, eps_eff, len_m and, for loss, alpha_c_1ghz and alpha_d_1ghz).
pub fn sections_of(v: &toml::Value) -> Vec<loopwright::solve::network::Section> {
    use loopwright::solve::network::Section;
    v["sections"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| {
            let (z0, eps_eff, len_m) = (f(s, "z0"), f(s, "eps_eff"), f(s, "len_m"));
            match s["kind"].as_str().unwrap() {
                "line" => Section::Line { z0, eps_eff, len_m },
                "open_stub" => Section::OpenStub { z0, eps_eff, len_m },
                "lossy_line" => Section::LossyLine {
                    z0,
                    eps_eff,
                    len_m,
                    alpha_c_1ghz: f(s, "alpha_c_1ghz"),
                    alpha_d_1ghz: f(s, "alpha_d_1ghz"),
                },
                k => panic!("unknown section kind {k}"),
            }
        })
        .collect()
}

/// The paths a Gerber job file (`job`, parsed) lists, and the Gerber and drill files in its
/// folder `dir`: the two sets a complete job file makes equal.
pub fn job_listing(
    job: &serde_json::Value,
    dir: &Path,
) -> (
    std::collections::BTreeSet<String>,
    std::collections::BTreeSet<String>,
) {
    let listed = job["FilesAttributes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["Path"].as_str().unwrap().to_string())
        .collect();
    let in_folder = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".gbr") || n.ends_with(".drl"))
        .collect();
    (listed, in_folder)
}

/// A file of the built-in demo's data folder.
#[allow(dead_code)]
pub fn demo_data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("data/demo")
        .join(name)
}

/// A column of a CSV text whose comment lines start with `#`, parsed as numbers.
#[allow(dead_code)]
pub fn csv_column(text: &str, name: &str) -> Vec<f64> {
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let k = head.iter().position(|h| *h == name).unwrap();
    lines
        .map(|l| l.split(',').nth(k).unwrap().parse().unwrap())
        .collect()
}

/// A demo probe's object from `predict` of the demo spec over the demo's fixture at
/// `height_mm` (`--json`).
#[allow(dead_code)]
pub fn demo_probe_on_fixture(name: &str, height_mm: f64) -> serde_json::Value {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args([
            "predict",
            demo_data("fenwick-marsh-probes.toml").to_str().unwrap(),
            "--fixture",
            demo_data("fenwick-marsh-fixture.toml").to_str().unwrap(),
            "--height",
            &height_mm.to_string(),
            "--json",
        ])
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    v["probes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["name"] == name)
        .unwrap_or_else(|| panic!("no demo probe {name}"))
        .clone()
}
