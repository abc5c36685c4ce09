//! Every emitted Gerber file parses with the `gerber_parser` crate without errors.

mod common;

#[test]
fn every_gerber_parses_without_errors() {
    let out = common::demo_dir();
    let mut n = 0;
    for f in common::files_with_ext(out, "gbr") {
        let file = std::fs::File::open(&f).unwrap();
        let doc = gerber_parser::parse(std::io::BufReader::new(file))
            .unwrap_or_else(|(_, e)| panic!("{}: {e:?}", f.display()));
        let errors: Vec<String> = doc.errors().iter().map(|e| e.to_string()).collect();
        assert!(errors.is_empty(), "{}: {errors:#?}", f.display());
        n += 1;
    }
    // 6 probes × (4 copper + 2 mask + 2 legend + 1 profile), the panel's (the same nine) and
    // its four-layer fixture's (4 copper + 2 mask + top legend + profile).
    assert_eq!(n, 54 + 9 + 8);
}

/// Coordinates of a Gerber operation line (`X..Y..D0n*`, format 4.6 in mm, modal), in mm.
fn coords(line: &str, last: &mut (f64, f64)) -> (f64, f64) {
    let num = |tag: char| -> Option<f64> {
        let i = line.find(tag)?;
        let rest = &line[i + 1..];
        let end = rest
            .find(|c: char| !(c.is_ascii_digit() || c == '-'))
            .unwrap_or(rest.len());
        rest[..end].parse::<f64>().ok().map(|v| v * 1e-6)
    };
    if let Some(x) = num('X') {
        last.0 = x;
    }
    if let Some(y) = num('Y') {
        last.1 = y;
    }
    *last
}

/// A clear-polarity region: its aperture function, whether it carries a net, its contour (mm).
type ClearRegion = (String, bool, Vec<(f64, f64)>);

fn inside(p: (f64, f64), ring: &[(f64, f64)]) -> bool {
    let mut c = false;
    for i in 0..ring.len() {
        let (a, b) = (ring[i], ring[(i + 1) % ring.len()]);
        if (a.1 > p.1) != (b.1 > p.1) && p.0 < a.0 + (p.1 - a.1) * (b.0 - a.0) / (b.1 - a.1) {
            c = !c;
        }
    }
    c
}

/// Clearances in copper (clear-polarity regions) are not conductors: none carries a net, and a
/// clearance around a pad is tagged `.AperFunction,AntiPad` (Gerber format, `AntiPad`: a
/// clearance in a plane; clear polarity still required), never `Conductor`. Read back from the
/// demo's copper files; every probe has its connector's clearance on the bottom layer.
#[test]
fn clearances_in_copper_are_antipads_without_a_net() {
    let out = common::demo_dir();
    let mut antipads = 0;
    for f in common::files_with_ext(out, "gbr") {
        let text = std::fs::read_to_string(&f).unwrap();
        if !text.contains("%TF.FileFunction,Copper") {
            continue;
        }
        // Flash centres, and each clear region with its function, net and contour.
        let mut last = (0.0, 0.0);
        let mut flashes = Vec::new();
        let mut clear = false;
        let (mut function, mut net) = (String::new(), false);
        let mut regions: Vec<ClearRegion> = Vec::new();
        let mut contour: Option<Vec<(f64, f64)>> = None;
        for line in text.lines() {
            match line {
                "%LPC*%" => clear = true,
                "%LPD*%" => clear = false,
                "G36*" => contour = Some(Vec::new()),
                "G37*" => {
                    let c = contour.take().unwrap();
                    if clear {
                        regions.push((function.clone(), net, c));
                    }
                }
                "%TD*%" => {
                    function.clear();
                    net = false;
                }
                _ => {
                    if let Some(v) = line.strip_prefix("%TA.AperFunction,") {
                        function = v.trim_end_matches("*%").to_string();
                    } else if line.starts_with("%TO.N,") {
                        net = true;
                    } else if line.ends_with("D03*") {
                        flashes.push(coords(line, &mut last));
                    } else if line.ends_with("D01*") || line.ends_with("D02*") {
                        let p = coords(line, &mut last);
                        if let Some(c) = contour.as_mut() {
                            c.push(p);
                        }
                    }
                }
            }
        }
        for (func, has_net, ring) in &regions {
            assert!(!has_net, "{}: a clearance carries a net", f.display());
            let around = flashes.iter().any(|&p| inside(p, ring));
            assert_eq!(
                func == "AntiPad",
                around,
                "{}: clearance tagged {func}, around a pad: {around}",
                f.display()
            );
            antipads += around as usize;
        }
    }
    assert!(antipads >= 4, "{antipads} antipads in the demo");
}
