//! Touchstone version 1 reader (`.s2p`, `.s3p`): the option line `# <unit> S <RI|MA|DB> R <ohms>`,
//! `!` comments, data lines of one frequency and n² complex parameters (rows may wrap over
//! several lines; for two ports the order is S11 S21 S12 S22). Version 2 keywords (`[Version]`
//! and others in brackets) are refused with a clear message.

use crate::error::Error;

/// A complex number (re, im).
pub type Complex = (f64, f64);

/// An n-port network's S-parameters against frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    /// Number of ports.
    pub ports: usize,
    /// Reference resistance, Ω.
    pub r_ref: f64,
    /// The option line's frequency unit, Hz (1, 1e3, 1e6 or 1e9).
    pub unit_hz: f64,
    /// Frequencies, Hz, strictly increasing.
    pub freqs: Vec<f64>,
    /// S-parameters per frequency, row-major `s[i*n + j]` = S(i+1)(j+1).
    pub s: Vec<Vec<Complex>>,
    /// The file's line number (1-based) where each frequency's point starts.
    pub lines: Vec<usize>,
}

fn err(path: &str, line: usize, why: impl Into<String>) -> Error {
    Error::Parse {
        path: path.to_string(),
        message: format!("line {line}: {}", why.into()),
    }
}

/// Parses Touchstone v1 text for `ports` ports; `path` names the file in errors.
pub fn parse(text: &str, path: &str, ports: usize) -> Result<Network, Error> {
    if !(1..=4).contains(&ports) {
        return Err(err(
            path,
            0,
            format!("{ports} ports: this reader takes 1 to 4"),
        ));
    }
    let mut unit = 1e9; // default GHz
    let mut format = "MA";
    let mut r_ref = 50.0;
    let mut seen_option = false;
    let n2 = ports * ports;
    let per_point = 1 + 2 * n2;
    let mut data_lines: Vec<(usize, Vec<f64>)> = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let line = i + 1;
        let body = raw.split('!').next().unwrap_or("").trim();
        if body.is_empty() {
            continue;
        }
        if body.starts_with('[') {
            return Err(err(
                path,
                line,
                format!(
                    "'{}' is a Touchstone version 2 keyword; this reader takes version 1 files only",
                    body.split(']').next().unwrap_or(body).to_string() + "]"
                ),
            ));
        }
        if let Some(opt) = body.strip_prefix('#') {
            if seen_option {
                return Err(err(path, line, "a second option line"));
            }
            seen_option = true;
            let toks: Vec<String> = opt
                .split_whitespace()
                .map(|t| t.to_ascii_uppercase())
                .collect();
            let mut k = 0;
            while k < toks.len() {
                match toks[k].as_str() {
                    "HZ" => unit = 1.0,
                    "KHZ" => unit = 1e3,
                    "MHZ" => unit = 1e6,
                    "GHZ" => unit = 1e9,
                    "S" => {}
                    "Y" | "Z" | "H" | "G" => {
                        return Err(err(
                            path,
                            line,
                            format!("parameter type {} is not supported; only S", toks[k]),
                        ));
                    }
                    "RI" => format = "RI",
                    "MA" => format = "MA",
                    "DB" => format = "DB",
                    "R" => {
                        let v = toks.get(k + 1).and_then(|t| t.parse::<f64>().ok());
                        match v {
                            Some(r) if r.is_finite() && r > 0.0 => r_ref = r,
                            _ => {
                                return Err(err(
                                    path,
                                    line,
                                    "R must be followed by a positive reference resistance",
                                ));
                            }
                        }
                        k += 1;
                    }
                    other => {
                        return Err(err(
                            path,
                            line,
                            format!(
                                "unknown option '{other}' (allowed: Hz kHz MHz GHz, S, RI MA DB, R <ohms>)"
                            ),
                        ));
                    }
                }
                k += 1;
            }
            continue;
        }
        if !seen_option {
            return Err(err(
                path,
                line,
                "data before the option line ('# <unit> S <format> R <ohms>')",
            ));
        }
        let mut row = Vec::new();
        for tok in body.split_whitespace() {
            let v: f64 = tok
                .parse()
                .map_err(|_| err(path, line, format!("'{tok}' is not a number")))?;
            if !v.is_finite() {
                return Err(err(path, line, format!("'{tok}' is not finite")));
            }
            row.push(v);
        }
        data_lines.push((line, row));
    }
    check_layout(&data_lines, ports, path)?;
    let nums: Vec<(f64, usize)> = data_lines
        .iter()
        .flat_map(|(line, row)| row.iter().map(move |v| (*v, *line)))
        .collect();
    if nums.is_empty() {
        return Err(err(path, text.lines().count().max(1), "no data"));
    }
    if !nums.len().is_multiple_of(per_point) {
        let line = nums.last().map(|n| n.1).unwrap_or(0);
        return Err(err(
            path,
            line,
            format!(
                "{} numbers do not make whole points of 1 + 2×{n2} values: wrong port count ({ports})?",
                nums.len()
            ),
        ));
    }
    let mut freqs = Vec::new();
    let mut s = Vec::new();
    let mut lines = Vec::new();
    for chunk in nums.chunks(per_point) {
        let (f, line) = (crate::math::scaled(chunk[0].0, unit), chunk[0].1);
        if !f.is_finite() {
            return Err(err(
                path,
                line,
                format!(
                    "frequency {} × the unit is not a finite number of Hz",
                    chunk[0].0
                ),
            ));
        }
        if f < 0.0 {
            return Err(err(path, line, format!("frequency {f} Hz is negative")));
        }
        if let Some(&prev) = freqs.last() {
            if f == prev {
                return Err(err(
                    path,
                    line,
                    format!("frequency {f} Hz repeats the previous point"),
                ));
            }
            if f < prev {
                return Err(err(
                    path,
                    line,
                    format!("frequency {f} Hz is below the previous {prev} Hz"),
                ));
            }
        }
        let mut m = Vec::with_capacity(n2);
        for k in 0..n2 {
            let (a, b) = (chunk[1 + 2 * k].0, chunk[2 + 2 * k].0);
            m.push(match format {
                "RI" => (a, b),
                "MA" => {
                    let t = b.to_radians();
                    (a * t.cos(), a * t.sin())
                }
                _ => {
                    let mag = 10f64.powf(a / 20.0);
                    let t = b.to_radians();
                    (mag * t.cos(), mag * t.sin())
                }
            });
        }
        // Two-port files list S11 S21 S12 S22: put them in row-major order.
        if ports == 2 {
            m.swap(1, 2);
        }
        freqs.push(f);
        s.push(m);
        lines.push(line);
    }
    Ok(Network {
        ports,
        r_ref,
        unit_hz: unit,
        freqs,
        s,
        lines,
    })
}

/// Checks the data lines' layout. Version 1 writes one line per point for one and two ports,
/// and for three and four ports the frequency with the matrix's first row, then one line per
/// further row. When the first point follows that layout, every line must, so a missing or
/// extra column is reported on its own line; a file that wraps its points differently is read
/// as a stream of numbers that must make whole points.
fn check_layout(lines: &[(usize, Vec<f64>)], ports: usize, path: &str) -> Result<(), Error> {
    let n2 = ports * ports;
    let per_point = 1 + 2 * n2;
    let rows = if ports <= 2 { 1 } else { ports };
    let first = if ports <= 2 { per_point } else { 1 + 2 * ports };
    let standard = lines.first().is_some_and(|(_, r)| r.len() == first);
    if !standard {
        return Ok(());
    }
    for (k, (line, r)) in lines.iter().enumerate() {
        let row = k % rows;
        let (want, what) = if row == 0 {
            (
                first,
                if ports <= 2 {
                    format!(
                        "a {ports}-port point is one line of {per_point} numbers (frequency and \
                         {n2} complex S-parameters)"
                    )
                } else {
                    format!(
                        "a {ports}-port point starts with a line of {first} numbers (frequency \
                         and the matrix's first row)"
                    )
                },
            )
        } else {
            (
                2 * ports,
                format!(
                    "row {} of a {ports}-port point is a line of {} numbers",
                    row + 1,
                    2 * ports
                ),
            )
        };
        if r.len() != want {
            return Err(err(
                path,
                *line,
                format!(
                    "{} numbers: {what}; a missing or extra column, or the wrong port count",
                    r.len()
                ),
            ));
        }
    }
    Ok(())
}

impl Network {
    /// S(i, j) (1-based) at every frequency.
    pub fn param(&self, i: usize, j: usize) -> Vec<Complex> {
        self.s
            .iter()
            .map(|m| m[(i - 1) * self.ports + (j - 1)])
            .collect()
    }
}
