//! The provenance a probe-factor table carries in its `#` comment lines (probe, field
//! reference, usable band, source), and reading the usable band back for `convert`.
//!
//! The band line reads `usable band: <lo> Hz to <hi> Hz (<why>)`; readers skip comment lines,
//! so a table with them is still a plain `freq_hz,pf_db_s_per_m` CSV.

/// The key of the band line.
pub const BAND_KEY: &str = "usable band:";

/// The band line for `lo`..`hi` Hz with its reason.
pub fn band_line(lo: f64, hi: f64, why: &str) -> String {
    format!("{BAND_KEY} {lo} Hz to {hi} Hz ({why})")
}

/// The usable band `(lo, hi)` in Hz from a table's comment lines, if it states one.
pub fn parse_band(text: &str) -> Option<(f64, f64)> {
    for l in text.lines() {
        let Some(c) = l.trim_start().strip_prefix('#') else {
            continue;
        };
        let Some(rest) = c.trim_start().strip_prefix(BAND_KEY) else {
            continue;
        };
        let mut w = rest.split_whitespace();
        let lo: f64 = w.next()?.parse().ok()?;
        let (hz, to) = (w.next()?, w.next()?);
        let hi: f64 = w.next()?.parse().ok()?;
        let ok = hz == "Hz" && to == "to" && w.next() == Some("Hz");
        return (ok && lo.is_finite() && hi.is_finite() && 0.0 < lo && lo <= hi)
            .then_some((lo, hi));
    }
    None
}

/// Today's date (UTC) as YYYY-MM-DD, or the date of `SOURCE_DATE_EPOCH` (seconds since 1970,
/// the reproducible-builds convention) when that is set, so that outputs can be regenerated
/// byte for byte.
pub fn date_utc() -> String {
    let (y, m, d) = civil_from_days(epoch_secs().div_euclid(86_400));
    format!("{y:04}-{m:02}-{d:02}")
}

/// The same instant as [`date_utc`] with its time, ISO 8601 in UTC (`2026-01-01T00:00:00Z`).
pub fn datetime_utc() -> String {
    let secs = epoch_secs();
    let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
    let t = secs.rem_euclid(86_400);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        t / 3600,
        t % 3600 / 60,
        t % 60
    )
}

/// Seconds since 1970: `SOURCE_DATE_EPOCH` when set, the clock otherwise.
fn epoch_secs() -> i64 {
    std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|v| v.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|d| d.as_secs() as i64)
                .unwrap_or(0)
        })
}

/// The proleptic Gregorian date of a day count from 1970-01-01 (H. Hinnant's `civil_from_days`
/// algorithm, public domain).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_of_known_days() {
        // 1970-01-01 is day 0; 2000-03-01 is day 11017; 2024-02-29 is day 19782 (each by
        // counting: 30 years with 7 leap days, 10957 days, to 2000-01-01, then 31 + 29).
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(10957 + 31 + 29), (2000, 3, 1));
        assert_eq!(civil_from_days(19782), (2024, 2, 29));
        assert_eq!(civil_from_days(-1), (1969, 12, 31));
    }

    #[test]
    fn the_band_line_reads_back() {
        let t = format!(
            "# probe: X\n# {}\nfreq_hz,pf_db_s_per_m\n1,2\n",
            band_line(1e6, 9.1728e8, "why")
        );
        assert_eq!(parse_band(&t), Some((1e6, 9.1728e8)));
        assert_eq!(parse_band("freq_hz,pf_db_s_per_m\n1,2\n"), None);
        assert_eq!(parse_band("# usable band: 5 Hz to 2 Hz\n"), None);
        assert_eq!(parse_band("# usable band: a Hz to 2 Hz\n"), None);
    }
}
