//! Analyzer readings as instruments and spreadsheets write them: loopwright's own two-column
//! form (`freq_hz,level_dbm` or `freq_hz,level_dbuv`) and the common export layouts around it.
//!
//! What is read (README, `convert`):
//! - **Metadata before the header**: every line before the header that is not blank or a `#`
//!   comment (instrument name, settings, `Type;Spectrum Analyzer;`) is kept, in order, as
//!   provenance, and may hold bytes that are not UTF-8 (instruments write `µ` and `°` in
//!   Latin-1; they are read as U+FFFD).
//! - **The header** is the first line whose first cell names the frequency (`freq_hz`,
//!   `Frequency [Hz]`, `Freq (MHz)`, `f [GHz]`: `f`, `freq` or `frequency`, any case, the
//!   unit in brackets or parentheses or as a `_hz`-style suffix; no unit means Hz) and whose
//!   other cells hold at least one level column: `level_dbm`, `level_dbuv`, or any name with
//!   the unit dBm or dBµV (`dBuV`, `dB(µV)`) in brackets or parentheses. Other columns are
//!   left out and listed in the provenance.
//! - **Separators**: `;`, tab or `,`, the first of them present in the header line; the rows
//!   use the header's.
//! - **Decimal commas** (`-41,5`) are read when the separator is not a comma; a number with
//!   both a comma and a point (a thousands separator) is refused.
//! - **Several level columns** (traces) are read at once, each a [`Table`] of its own.
//!
//! Line numbers in messages are the file's own (LF, CRLF or CR; blank, comment and metadata
//! lines counted). A file with no header is refused at its first line that is not a comment,
//! with the forms that are read.

use super::convert::{FREQ_RANGE_HZ, Table};
use crate::error::Error;
use std::path::Path;

/// Readings from one file: one table per level column.
#[derive(Debug, Clone, PartialEq)]
pub struct Readings {
    /// One table per level column, in the file's order; each table's `column` is
    /// `level_dbm` or `level_dbuv`.
    pub traces: Vec<Table>,
    /// Each trace's header cell as the file writes it.
    pub labels: Vec<String>,
    /// The metadata lines before the header, in order, then a line per column left out.
    pub provenance: Vec<String>,
    /// The form read, in words (separator, decimal mark, frequency unit, header line).
    pub form: String,
}

/// The frequency header's names (any case).
const FREQ_NAMES: [&str; 3] = ["f", "freq", "frequency"];

fn bad(path: &str, line: usize, why: String) -> Error {
    Error::Parse {
        path: path.to_string(),
        message: format!("line {line}: {why}"),
    }
}

/// Reads analyzer readings from a file; see the module's documentation.
pub fn read_readings(path: &Path) -> Result<Readings, Error> {
    let p = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| Error::Io {
        path: p.clone(),
        source: e,
    })?;
    parse_readings(&bytes, &p)
}

/// A header cell split into its lower-case name and its unit (lower case, µ and μ as `u`):
/// `Frequency [Hz]` → (`frequency`, `hz`); `level_dbm` → (`level_dbm`, ``).
fn name_and_unit(cell: &str) -> (String, String) {
    let c = cell.trim().trim_matches('"').trim();
    let lower = c
        .to_lowercase()
        .replace(['µ', 'μ'], "u")
        .replace("db(uv)", "dbuv");
    for (open, close) in [('[', ']'), ('(', ')')] {
        if lower.ends_with(close)
            && let Some(i) = lower.rfind(open)
        {
            let unit = lower[i + 1..lower.len() - 1].trim().to_string();
            return (lower[..i].trim().to_string(), unit);
        }
    }
    (lower, String::new())
}

/// The scale to Hz of a frequency header cell, if it is one.
fn freq_scale(cell: &str) -> Option<f64> {
    let (name, unit) = name_and_unit(cell);
    let scale = |u: &str| match u {
        "" | "hz" => Some(1.0),
        "khz" => Some(1e3),
        "mhz" => Some(1e6),
        "ghz" => Some(1e9),
        _ => None,
    };
    if FREQ_NAMES.contains(&name.as_str()) {
        return scale(&unit);
    }
    // `freq_hz`, `frequency_mhz`: the unit as a suffix.
    let (base, suffix) = name.rsplit_once('_')?;
    (FREQ_NAMES.contains(&base) && unit.is_empty())
        .then(|| scale(suffix))
        .flatten()
        .filter(|_| !suffix.is_empty())
}

/// The canonical level column of a header cell, if it is one.
fn level_column(cell: &str) -> Option<&'static str> {
    let (name, unit) = name_and_unit(cell);
    match (name.as_str(), unit.as_str()) {
        ("level_dbm", "") => Some("level_dbm"),
        ("level_dbuv", "") => Some("level_dbuv"),
        (_, "dbm") => Some("level_dbm"),
        (_, "dbuv") => Some("level_dbuv"),
        _ => None,
    }
}

/// The separator of a line: the first of `;`, tab and `,` that it holds.
fn separator(line: &str) -> char {
    [';', '\t', ',']
        .into_iter()
        .find(|c| line.contains(*c))
        .unwrap_or(',')
}

fn cells(line: &str, sep: char) -> Vec<&str> {
    line.split(sep)
        .map(|c| c.trim().trim_matches('"'))
        .collect()
}

/// A header line's level columns: (cell index, canonical column, label), when its first
/// cell names the frequency.
type Header = (f64, Vec<(usize, &'static str, String)>, Vec<String>);

fn header(line: &str, sep: char) -> Option<Header> {
    let c = cells(line, sep);
    let scale = freq_scale(c.first()?)?;
    let mut levels = Vec::new();
    let mut left_out = Vec::new();
    for (i, cell) in c.iter().enumerate().skip(1) {
        match level_column(cell) {
            Some(col) => levels.push((i, col, cell.to_string())),
            None if cell.is_empty() => {}
            None => left_out.push(cell.to_string()),
        }
    }
    (!levels.is_empty()).then_some((scale, levels, left_out))
}

/// [`read_readings`] on a file's bytes; `p` names the file in messages.
pub fn parse_readings(bytes: &[u8], p: &str) -> Result<Readings, Error> {
    let lines: Vec<(String, bool)> = super::convert::split_lines(bytes)
        .into_iter()
        .map(|l| match std::str::from_utf8(l) {
            Ok(s) => (s.to_string(), true),
            Err(_) => (String::from_utf8_lossy(l).into_owned(), false),
        })
        .collect();
    let content = |s: &str| {
        let t = s.trim();
        !t.is_empty() && !t.starts_with('#')
    };
    let mut provenance = Vec::new();
    let mut found = None;
    for (n, (l, _)) in lines.iter().enumerate() {
        if !content(l) {
            continue;
        }
        let sep = separator(l);
        if let Some(h) = header(l, sep) {
            found = Some((n, sep, h));
            break;
        }
        provenance.push(l.trim().to_string());
    }
    let Some((hn, sep, (scale, levels, left_out))) = found else {
        let first = lines.iter().position(|(l, _)| content(l));
        return Err(match first {
            None => bad(p, 1, "the file is empty (a header line is needed)".into()),
            Some(n) => bad(
                p,
                n + 1,
                format!(
                    "header is '{}', expected freq_hz,level_dbm|level_dbuv, or an analyzer \
                     export whose header names the frequency first and levels in dBm or dBµV \
                     (e.g. 'Frequency [Hz];Level [dBm]'; separators ',' ';' or tab; lines \
                     before the header are kept as metadata)",
                    lines[n].0.trim()
                ),
            ),
        });
    };
    for (n, (l, utf8)) in lines.iter().enumerate().skip(hn) {
        if !utf8 && content(l) {
            let col = l.find('\u{FFFD}').map_or(1, |i| l[..i].chars().count() + 1);
            return Err(bad(
                p,
                n + 1,
                format!(
                    "a byte at column {col} is not UTF-8 text: save the file as UTF-8 (non-UTF-8 \
                     bytes are accepted only in # comment lines and the metadata before the \
                     header)"
                ),
            ));
        }
    }
    let need = levels.iter().map(|(i, _, _)| *i).max().unwrap_or(1) + 1;
    let decimal_comma = sep != ',';
    let mut traces: Vec<Table> = levels
        .iter()
        .map(|(_, col, _)| Table {
            column: col.to_string(),
            rows: Vec::new(),
            lines: Vec::new(),
        })
        .collect();
    let freq_label = cells(&lines[hn].0, sep)[0].to_string();
    for (n, (l, _)) in lines.iter().enumerate().skip(hn + 1) {
        if !content(l) {
            continue;
        }
        let line = n + 1;
        let c = cells(l, sep);
        // Trailing empty cells (a separator at the end of the line) do not count.
        let filled = c.iter().rposition(|s| !s.is_empty()).map_or(0, |i| i + 1);
        if filled < need {
            return Err(bad(
                p,
                line,
                format!(
                    "{filled} columns, expected {need} ({})",
                    cells(&lines[hn].0, sep)[..need].join(&sep.to_string())
                ),
            ));
        }
        let num = |i: usize, name: &str| -> Result<f64, Error> {
            let raw = c[i];
            let text = if decimal_comma && raw.contains(',') {
                if raw.contains('.') {
                    return Err(bad(
                        p,
                        line,
                        format!(
                            "{name} = '{raw}' has both a decimal comma and a point: thousands \
                             separators are not read; export without them"
                        ),
                    ));
                }
                raw.replace(',', ".")
            } else {
                raw.to_string()
            };
            let v: f64 = text
                .parse()
                .map_err(|_| bad(p, line, format!("{name} = '{raw}' is not a number")))?;
            if !v.is_finite() {
                return Err(bad(p, line, format!("{name} = {raw} is not finite")));
            }
            Ok(v)
        };
        let f = crate::math::scaled(num(0, &freq_label)?, scale);
        let (fmin, fmax) = FREQ_RANGE_HZ;
        if !(fmin..=fmax).contains(&f) {
            return Err(bad(
                p,
                line,
                format!(
                    "{freq_label} = {} Hz is outside 1 Hz to 1 THz (1e12 Hz)",
                    crate::error::fmt_num(f)
                ),
            ));
        }
        if let Some(prev) = traces[0].rows.last().map(|r| r.0) {
            if f == prev {
                return Err(bad(
                    p,
                    line,
                    format!("{freq_label} = {} repeats the previous line", c[0]),
                ));
            }
            if f < prev {
                return Err(bad(
                    p,
                    line,
                    format!(
                        "{freq_label} = {} is below the previous row's: frequencies must increase",
                        c[0]
                    ),
                ));
            }
        }
        for (t, (i, col, label)) in traces.iter_mut().zip(&levels) {
            let v = num(*i, label)?;
            if let Some(why) = super::convert::out_of_range(label, col, v) {
                return Err(bad(p, line, why));
            }
            t.rows.push((f, v));
            t.lines.push(line);
        }
    }
    if traces[0].rows.is_empty() {
        return Err(bad(p, hn + 2, "no data rows after the header".into()));
    }
    for c in left_out {
        provenance.push(format!("column left out (not a level in dBm or dBµV): {c}"));
    }
    let unit = [(1e3, "kHz"), (1e6, "MHz"), (1e9, "GHz")]
        .into_iter()
        .find(|(k, _)| *k == scale)
        .map_or("Hz", |(_, u)| u);
    let form = format!(
        "header on line {}, separator {}, decimal {}, frequency in {unit}, {} level column(s)",
        hn + 1,
        match sep {
            ';' => "';'",
            '\t' => "tab",
            _ => "','",
        },
        if decimal_comma {
            "comma or point"
        } else {
            "point"
        },
        traces.len()
    );
    Ok(Readings {
        traces,
        labels: levels.into_iter().map(|(_, _, l)| l).collect(),
        provenance,
        form,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    // A MHz column converts to Hz with no binary noise (33.017942 × 1e6 is
    // 33017941.999999996 in floating point).
    #[test]
    fn megahertz_readings_convert_exactly() {
        let r = parse_readings(b"Freq (MHz),Level [dBm]\n33.017942,-40\n", "t").unwrap();
        assert_eq!(r.traces[0].rows, vec![(33017942.0, -40.0)]);
    }

    #[test]
    fn header_cells() {
        assert_eq!(freq_scale("freq_hz"), Some(1.0));
        assert_eq!(freq_scale("Frequency [Hz]"), Some(1.0));
        assert_eq!(freq_scale("FREQ (MHz)"), Some(1e6));
        assert_eq!(freq_scale("frequency_ghz"), Some(1e9));
        assert_eq!(freq_scale("Frequency"), Some(1.0));
        assert_eq!(freq_scale("Freq [dBm]"), None);
        assert_eq!(freq_scale("Type"), None);
        assert_eq!(level_column("Level (dBm)"), Some("level_dbm"));
        assert_eq!(level_column("Trace 1 [dBµV]"), Some("level_dbuv"));
        assert_eq!(level_column("MaxHold [dBuV]"), Some("level_dbuv"));
        assert_eq!(level_column("LEVEL_DBM"), Some("level_dbm"));
        assert_eq!(level_column("level"), None);
        assert_eq!(level_column("Phase [deg]"), None);
    }
}
