//! Analyzer readings to field strength.
//!
//! V_probe[dBµV] = reading[dBµV] − preamp gain[dB] + attenuator[dB] + cable loss[dB];
//! H[dBµA/m] = V_probe[dBµV] + PF[dB(S/m)] with a loop's factor, E[dBµV/m] = V_probe[dBµV] +
//! EF[dB(1/m)] with an electric probe's; B[dBpT] = H[dBµA/m] + 20·log10(μ0·10⁶ T·m/A / 10⁻⁶)
//! = H + 1.98 dB; dBm → dBµV in 50 Ω: + 10·log10(50 Ω · 1 mW)·… = +106.99 dB.
//! Tables (probe factor, gain) are interpolated linearly in log-frequency.

use crate::error::Error;
use std::path::Path;

/// dBm to dBµV in a 50 Ω system: 10·log10(50·10⁻³) + 120 = 106.9897 dB.
pub fn dbm_to_dbuv_offset() -> f64 {
    10.0 * (50.0f64 * 1e-3).log10() + 120.0
}

/// dBµA/m to dBpT: 20·log10(μ0 · 10⁶), μ0 = 1.25663706127e-6 H/m (CODATA 2022).
pub fn dbua_to_dbpt_offset() -> f64 {
    20.0 * (crate::physics::MU0 * 1e6).log10()
}

/// A frequency table read from a CSV file: strictly increasing frequencies and one value each.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    /// The value column's name.
    pub column: String,
    /// (Hz, value) rows.
    pub rows: Vec<(f64, f64)>,
    /// Each row's line in its file (1 = the first line; LF, CRLF and CR line ends, comment
    /// and blank lines counted), for messages.
    pub lines: Vec<usize>,
}

/// Frequencies any table may hold: 1 Hz to 1 THz (the range the Touchstone reader accepts;
/// no near-field probe or analyzer works outside it).
pub const FREQ_RANGE_HZ: (f64, f64) = (1.0, 1e12);

/// The physical range of each value column, with its unit and the reason for its ends. A value
/// outside is a mistake (a frequency pasted into the level column, a unit slip), not a reading:
/// it is refused with its line, so that no absurd number reaches a result or a plot.
///
/// - `level_dbm`: −200 to +60 dBm. −200 dBm is far below any analyzer's noise floor (thermal
///   noise is −174 dBm in 1 Hz at 290 K); +60 dBm (1 kW) far above any analyzer's or
///   preamplifier's input rating (typically +30 dBm at most; makers' data sheets).
/// - `level_dbuv`: the same range in dBµV in 50 Ω (+106.99 dB): −93.01 to +166.99 dBµV.
/// - `pf_db_s_per_m`: −100 to +250 dB(S/m). Below its corner a loop gives V = ω·μ0·A·H, so a
///   1 mm loop read at 1 Hz is about +224 dB(S/m) (the top of the frequency range, the
///   smallest loop); above the corner the factor flattens at L/(μ0·A·50 Ω), about −3 dB(S/m)
///   for a 100 mm loop. Printed probes lie well inside.
/// - `ef_db_per_m`: 0 to +350 dB(1/m). Below its corner an electrode gives V = ω·ε0·A·R·E, so
///   a 1 mm disc read at 1 Hz is about +313 dB(1/m); above the corner the factor flattens at
///   C_self/(ε0·A), about +70 dB(1/m) for a 20 mm disc (docs/formulas.md §11).
/// - `gain_db`: −100 to +100 dB, as `--gain-db`.
pub fn column_range(column: &str) -> Option<(f64, f64, &'static str)> {
    match column {
        "level_dbm" => Some((-200.0, 60.0, "dBm")),
        "level_dbuv" => Some((-93.01, 166.99, "dBµV")),
        "pf_db_s_per_m" => Some((-100.0, 250.0, "dB(S/m)")),
        "ef_db_per_m" => Some((0.0, 350.0, "dB(1/m)")),
        "gain_db" => Some((-100.0, 100.0, "dB")),
        _ => None,
    }
}

/// Why `v` cannot be a value of `column` (printed as `label`), or `None` when it is inside
/// the column's physical range ([`column_range`]).
pub(crate) fn out_of_range(label: &str, column: &str, v: f64) -> Option<String> {
    let (lo, hi, unit) = column_range(column).filter(|(lo, hi, _)| !(*lo..=*hi).contains(&v))?;
    Some(format!(
        "{label} = {} is outside {lo} to {hi} {unit} (see docs; a frequency or another column \
         pasted here?)",
        crate::error::fmt_num(v)
    ))
}

fn bad(path: &str, line: usize, why: String) -> Error {
    Error::Parse {
        path: path.to_string(),
        message: format!("line {line}: {why}"),
    }
}

/// Reads a two-column CSV table with header `freq_hz,<one of value_columns>`. Line numbers in
/// errors are the file's own lines (1 = the first; LF, CRLF or CR line ends; comment and blank
/// lines counted). Bytes that are not UTF-8 are tolerated in `#` comment lines (instrument
/// exports write `°` or `µ` in Latin-1) and refused with their line anywhere else.
pub fn read_table(path: &Path, value_columns: &[&str]) -> Result<Table, Error> {
    let p = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| Error::Io {
        path: p.clone(),
        source: e,
    })?;
    let text = utf8_or_comment(&bytes, &p)?;
    parse_table(&text, &p, value_columns)
}

/// The file's text: as it is when it is UTF-8; otherwise with the bytes that are not replaced
/// by U+FFFD where they sit in `#` comment lines, and refused naming the first other line.
pub fn utf8_or_comment(bytes: &[u8], p: &str) -> Result<String, Error> {
    if let Ok(s) = std::str::from_utf8(bytes) {
        return Ok(s.to_string());
    }
    for (n, raw) in split_lines(bytes).into_iter().enumerate() {
        if let Err(e) = std::str::from_utf8(raw) {
            let comment = raw.iter().find(|b| !b.is_ascii_whitespace()) == Some(&b'#');
            if !comment {
                let at = e.valid_up_to();
                return Err(bad(
                    p,
                    n + 1,
                    format!(
                        "byte 0x{:02X} at column {} is not UTF-8 text: save the file as UTF-8 \
                         (non-UTF-8 bytes are accepted only in # comment lines)",
                        raw[at],
                        at + 1
                    ),
                ));
            }
        }
    }
    Ok(String::from_utf8_lossy(bytes).into_owned())
}

/// The lines of a file, each without its line end (LF, CRLF or a lone CR).
pub(crate) fn split_lines(b: &[u8]) -> Vec<&[u8]> {
    let mut out = Vec::new();
    let (mut start, mut i) = (0, 0);
    while i < b.len() {
        match b[i] {
            b'\n' => {
                out.push(&b[start..i]);
                start = i + 1;
            }
            b'\r' => {
                out.push(&b[start..i]);
                if b.get(i + 1) == Some(&b'\n') {
                    i += 1;
                }
                start = i + 1;
            }
            _ => {}
        }
        i += 1;
    }
    out.push(&b[start..]);
    out
}

/// Where each line of an LF-only text starts, and whether it holds a record (not blank, not
/// a `#` comment): built once per table, so that naming a row's line costs a binary search.
struct LineIndex {
    starts: Vec<usize>,
    content: Vec<bool>,
}

impl LineIndex {
    fn new(text: &str) -> LineIndex {
        let (mut starts, mut content, mut at) = (Vec::new(), Vec::new(), 0);
        for l in text.split('\n') {
            starts.push(at);
            at += l.len() + 1;
            let s = l.trim();
            content.push(!s.is_empty() && !s.starts_with('#'));
        }
        LineIndex { starts, content }
    }

    /// The line (1 = the first) of the record the CSV reader places at byte `at`: the reader's
    /// position can sit before comment or blank lines it skipped, so those are stepped over.
    fn line_at(&self, at: u64) -> usize {
        let first = self.starts.partition_point(|&s| s <= at as usize).max(1) - 1;
        let mut k = first;
        while k + 1 < self.content.len() && !self.content[k] {
            k += 1;
        }
        k + 1
    }
}

/// [`read_table`] on text.
pub fn parse_table(text: &str, p: &str, value_columns: &[&str]) -> Result<Table, Error> {
    // One line end (LF) for the CSV reader, which skips a comment only up to an LF: a CR-only
    // file would otherwise be one long comment. Lines keep their numbers.
    let text = &text.replace("\r\n", "\n").replace('\r', "\n");
    // The header's own line: comment or blank lines may come before it.
    let header_line = split_lines(text.as_bytes())
        .iter()
        .position(|l| {
            let s = String::from_utf8_lossy(l);
            let s = s.trim();
            !s.is_empty() && !s.starts_with('#')
        })
        .map_or(1, |i| i + 1);
    let index = LineIndex::new(text);
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .flexible(true)
        .from_reader(text.as_bytes());
    let headers = rdr
        .headers()
        .map_err(|e| bad(p, header_line, format!("unreadable header: {e}")))?
        .clone();
    if headers.is_empty() || (headers.len() == 1 && headers[0].is_empty()) {
        return Err(bad(
            p,
            1,
            "the file is empty (a header line is needed)".into(),
        ));
    }
    let want = format!("freq_hz,{}", value_columns.join("|"));
    if headers.len() != 2 || &headers[0] != "freq_hz" || !value_columns.contains(&&headers[1]) {
        return Err(bad(
            p,
            header_line,
            format!(
                "header is '{}', expected {want}",
                headers.iter().collect::<Vec<_>>().join(",")
            ),
        ));
    }
    let column = headers[1].to_string();
    let mut rows: Vec<(f64, f64)> = Vec::new();
    let mut lines: Vec<usize> = Vec::new();
    for rec in rdr.records() {
        let rec = rec.map_err(|e| {
            let line = e.position().map(|q| index.line_at(q.byte())).unwrap_or(0);
            bad(p, line, format!("{e}"))
        })?;
        let line = rec.position().map(|q| index.line_at(q.byte())).unwrap_or(0);
        if rec.len() != 2 {
            return Err(bad(
                p,
                line,
                format!("{} columns, expected 2 (freq_hz,{column})", rec.len()),
            ));
        }
        let num = |i: usize, name: &str| -> Result<f64, Error> {
            let v: f64 = rec[i]
                .parse()
                .map_err(|_| bad(p, line, format!("{name} = '{}' is not a number", &rec[i])))?;
            if !v.is_finite() {
                return Err(bad(p, line, format!("{name} = {} is not finite", &rec[i])));
            }
            Ok(v)
        };
        let f = num(0, "freq_hz")?;
        let v = num(1, &column)?;
        let (fmin, fmax) = FREQ_RANGE_HZ;
        if !(fmin..=fmax).contains(&f) {
            return Err(bad(
                p,
                line,
                format!(
                    "freq_hz = {} is outside 1 Hz to 1 THz (1e12 Hz)",
                    crate::error::fmt_num(f)
                ),
            ));
        }
        if let Some(why) = out_of_range(&column, &column, v) {
            return Err(bad(p, line, why));
        }
        if let Some(&(prev, _)) = rows.last() {
            if f == prev {
                return Err(bad(
                    p,
                    line,
                    format!("freq_hz = {f} repeats the previous line"),
                ));
            }
            if f < prev {
                return Err(bad(
                    p,
                    line,
                    format!(
                        "freq_hz = {f} is below the previous {prev}: frequencies must increase"
                    ),
                ));
            }
        }
        rows.push((f, v));
        lines.push(line);
    }
    if rows.is_empty() {
        return Err(bad(
            p,
            header_line + 1,
            "no data rows after the header".into(),
        ));
    }
    Ok(Table {
        column,
        rows,
        lines,
    })
}

impl Table {
    /// The value at `f`, linear in log-frequency between rows. Outside the table: `None`, or
    /// the end segment extended when `extrapolate` (a single-row table is constant).
    pub fn at(&self, f: f64, extrapolate: bool) -> Option<f64> {
        let r = &self.rows;
        if r.len() == 1 {
            return (extrapolate || f == r[0].0).then_some(r[0].1);
        }
        let (first, last) = (r[0].0, r[r.len() - 1].0);
        if (f < first || f > last) && !extrapolate {
            return None;
        }
        let i = match r.iter().position(|&(x, _)| x >= f) {
            Some(0) => 1,
            Some(i) => i,
            None => r.len() - 1,
        };
        let ((f0, v0), (f1, v1)) = (r[i - 1], r[i]);
        let t = (f.ln() - f0.ln()) / (f1.ln() - f0.ln());
        Some(v0 + t * (v1 - v0))
    }
}

/// The analyzer chain between the probe and the reading.
#[derive(Debug, Clone)]
pub enum Gain {
    /// A fixed preamplifier gain, dB.
    Fixed(f64),
    /// A gain table against frequency (`freq_hz,gain_db`).
    Table(Table),
}

/// What a factor table converts to, by its column: a loop's `pf_db_s_per_m` gives H, an
/// electric probe's `ef_db_per_m` gives E.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// H in dBµA/m (and B in dBpT).
    Magnetic,
    /// E in dBµV/m.
    Electric,
}

impl Quantity {
    /// The quantity a factor table's column gives.
    pub fn of(column: &str) -> Quantity {
        if column == "ef_db_per_m" {
            Quantity::Electric
        } else {
            Quantity::Magnetic
        }
    }

    /// The output's column names after `freq_hz` (without a trace suffix).
    pub fn columns(self) -> &'static [&'static str] {
        match self {
            Quantity::Magnetic => &["h_dbua_per_m", "h_a_per_m", "b_dbpt", "v_probe_dbuv"],
            Quantity::Electric => &["e_dbuv_per_m", "e_v_per_m", "v_probe_dbuv"],
        }
    }

    /// The field's unit in dB, for plots.
    pub fn db_label(self) -> &'static str {
        match self {
            Quantity::Magnetic => "H dBµA/m",
            Quantity::Electric => "E dBµV/m",
        }
    }
}

/// One converted point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FieldPoint {
    /// Hz.
    pub freq_hz: f64,
    /// What the field is.
    pub quantity: Quantity,
    /// The field: dBµA/m (magnetic) or dBµV/m (electric).
    pub field_db: f64,
    /// The field: A/m (magnetic) or V/m (electric).
    pub field: f64,
    /// dBpT (magnetic only).
    pub b_dbpt: Option<f64>,
    /// The voltage at the probe's connector, dBµV.
    pub v_probe_dbuv: f64,
}

impl FieldPoint {
    /// The values of [`Quantity::columns`], in order, formatted.
    fn cells(&self) -> Vec<String> {
        let mut v = vec![
            format!("{:.4}", self.field_db),
            format!("{:.6e}", self.field),
        ];
        if let Some(b) = self.b_dbpt {
            v.push(format!("{b:.4}"));
        }
        v.push(format!("{:.4}", self.v_probe_dbuv));
        v
    }
}

/// Converts readings (dBm or dBµV, per the table's column) into field strength: H with a
/// loop's factor table, E with an electric probe's ([`Quantity::of`] its column).
pub fn convert(
    readings: &Table,
    factor: &Table,
    gain: &Gain,
    atten_db: f64,
    cable_db: f64,
    extrapolate: bool,
) -> Result<Vec<FieldPoint>, Error> {
    let mut out = Vec::with_capacity(readings.rows.len());
    let dbm = readings.column == "level_dbm";
    for (i, &(f, level)) in readings.rows.iter().enumerate() {
        let line = readings.lines.get(i).copied().unwrap_or(i + 2);
        let pf = factor.at(f, extrapolate).ok_or_else(|| {
            Error::Invalid(vec![crate::error::FieldError::new(
                format!("--readings line {line}: freq_hz"),
                f,
                format!(
                    "is outside the probe-factor table ({} to {} Hz); give --extrapolate to extend \
                     its end segments",
                    factor.rows[0].0,
                    factor.rows[factor.rows.len() - 1].0
                ),
            )])
        })?;
        let g = match gain {
            Gain::Fixed(g) => *g,
            Gain::Table(t) => t.at(f, extrapolate).ok_or_else(|| {
                Error::Invalid(vec![crate::error::FieldError::new(
                    format!("--readings line {line}: freq_hz"),
                    f,
                    "is outside the gain table; give --extrapolate to extend it".to_string(),
                )])
            })?,
        };
        let dbuv = if dbm {
            level + dbm_to_dbuv_offset()
        } else {
            level
        };
        let v_probe = dbuv - g + atten_db + cable_db;
        let field = v_probe + pf;
        let quantity = Quantity::of(&factor.column);
        out.push(FieldPoint {
            freq_hz: f,
            quantity,
            field_db: field,
            field: 10f64.powf(field / 20.0) * 1e-6,
            b_dbpt: (quantity == Quantity::Magnetic).then(|| field + dbua_to_dbpt_offset()),
            v_probe_dbuv: v_probe,
        });
    }
    Ok(out)
}

/// The output CSV: `freq_hz` and the columns of the points' [`Quantity`].
pub fn to_csv(points: &[FieldPoint]) -> String {
    let q = points.first().map_or(Quantity::Magnetic, |p| p.quantity);
    let mut s = format!("freq_hz,{}\n", q.columns().join(","));
    for p in points {
        s.push_str(&format!("{},{}\n", p.freq_hz, p.cells().join(",")));
    }
    s
}

/// The output CSV of several traces read at the same frequencies: `freq_hz`, then the columns
/// of [`to_csv`] for each trace with the suffix `_t1`, `_t2`...
pub fn to_csv_traces(traces: &[Vec<FieldPoint>]) -> String {
    let q = traces
        .first()
        .and_then(|t| t.first())
        .map_or(Quantity::Magnetic, |p| p.quantity);
    let mut s = String::from("freq_hz");
    for k in 1..=traces.len() {
        for c in q.columns() {
            s.push_str(&format!(",{c}_t{k}"));
        }
    }
    s.push('\n');
    for (i, p0) in traces[0].iter().enumerate() {
        s.push_str(&format!("{}", p0.freq_hz));
        for t in traces {
            s.push_str(&format!(",{}", t[i].cells().join(",")));
        }
        s.push('\n');
    }
    s
}
