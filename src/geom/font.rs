//! A small stroke font of our own for silkscreen text: capitals, digits and a few signs on a
//! 4 × 6 grid, drawn with round-ended strokes of the silk line width.

use kurbo::{Affine, Point};

/// Strokes of a glyph: strokes separated by `;`, points by spaces, each point two grid digits
/// `xy` (x 0–4, y 0–6, y up).
fn glyph(c: char) -> &'static str {
    match c.to_ascii_uppercase() {
        'A' => "00 04 26 44 40;03 43",
        'B' => "00 06 36 45 44 33 03;33 42 41 30 00",
        'C' => "46 16 05 01 10 40",
        'D' => "00 06 36 45 41 30 00",
        'E' => "46 06 00 40;03 33",
        'F' => "46 06 00;03 33",
        'G' => "46 16 05 01 10 40 43 23",
        'H' => "00 06;40 46;03 43",
        'I' => "06 46;26 20;00 40",
        'J' => "46 41 30 10 01",
        'K' => "00 06;46 03 40",
        'L' => "06 00 40",
        'M' => "00 06 23 46 40",
        'N' => "00 06 40 46",
        'O' => "10 01 05 16 36 45 41 30 10",
        'P' => "00 06 36 45 44 33 03",
        'Q' => "10 01 05 16 36 45 41 30 10;22 40",
        'R' => "00 06 36 45 44 33 03;23 40",
        'S' => "45 36 16 05 04 13 33 42 41 30 10 01",
        'T' => "06 46;26 20",
        'U' => "06 01 10 30 41 46",
        'V' => "06 20 46",
        'W' => "06 10 23 30 46",
        'X' => "06 40;00 46",
        'Y' => "06 23 46;23 20",
        'Z' => "06 46 00 40",
        '0' => "10 01 05 16 36 45 41 30 10;41 05",
        '1' => "15 26 20;10 30",
        '2' => "05 16 36 45 44 00 40",
        '3' => "05 16 36 45 44 33 23;33 42 41 30 10 01",
        '4' => "30 36 02 42",
        '5' => "46 06 04 34 43 41 30 10 01",
        '6' => "45 36 16 05 01 10 30 41 42 33 03",
        '7' => "06 46 20",
        '8' => "13 04 05 16 36 45 44 33 13 02 01 10 30 41 42 33",
        '9' => "01 10 30 41 45 36 16 05 04 13 43",
        '-' => "03 33",
        '.' => "10 20 21 11 10",
        ',' => "11 20",
        '/' => "00 46",
        '_' => "00 40",
        ':' => "11 21;15 25",
        '+' => "03 43;21 25",
        '=' => "02 42;04 44",
        ' ' => "",
        _ => "05 16 36 45 44 23 22;20 21",
    }
}

/// Horizontal advance per character, in grid units.
const ADVANCE: f64 = 5.5;

/// Width of a text of `n` characters at height `h`, mm.
pub fn text_width(text: &str, h: f64) -> f64 {
    let n = text.chars().count() as f64;
    (n * ADVANCE - (ADVANCE - 4.0)).max(0.0) * h / 6.0
}

/// Strokes of `text` with cap height `h` (mm), baseline starting at the origin, then mapped by
/// `place`.
pub fn text_strokes(text: &str, h: f64, place: Affine) -> Vec<Vec<Point>> {
    let u = h / 6.0;
    let mut out = Vec::new();
    for (i, c) in text.chars().enumerate() {
        let x0 = i as f64 * ADVANCE;
        for stroke in glyph(c).split(';').filter(|s| !s.is_empty()) {
            let pts: Vec<Point> = stroke
                .split(' ')
                .map(|xy| {
                    let b = xy.as_bytes();
                    let x = (b[0] - b'0') as f64;
                    let y = (b[1] - b'0') as f64;
                    place * Point::new((x0 + x) * u, y * u)
                })
                .collect();
            out.push(pts);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    // Validation accepts exactly what the font draws: every sign it lets through has strokes
    // of its own (or is the space), not the fallback's.
    #[test]
    fn the_signs_validation_accepts_are_drawn() {
        let fallback = glyph('\u{20AC}');
        for c in crate::model::text::SILK_SIGNS.chars().chain('a'..='z') {
            assert!(c == ' ' || glyph(c) != fallback, "{c:?}");
        }
        assert_eq!(glyph(' '), "");
    }

    #[test]
    fn every_glyph_is_well_formed() {
        for c in ('A'..='Z').chain('0'..='9').chain("-./_:+=,?".chars()) {
            for s in glyph(c).split(';').filter(|s| !s.is_empty()) {
                let pts: Vec<_> = s.split(' ').collect();
                assert!(pts.len() >= 2, "{c}");
                for p in pts {
                    let b = p.as_bytes();
                    assert_eq!(b.len(), 2, "{c}");
                    assert!(b[0] <= b'4' && b[1] <= b'6', "{c}: {p}");
                }
            }
        }
    }
}
