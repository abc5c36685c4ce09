//! SVG previews: all layers composited with a legend, and one file per layer. Board y is up;
//! the SVG is flipped so the tip points up on screen.

use crate::artwork::{Artwork, CopperLayer, Flash, Shape};
use geo::MultiPolygon;
use kurbo::Point;

/// Colours of copper layers, top first (our own palette).
const COPPER_COLOURS: [&str; 6] = [
    "#c8553d", "#d9a521", "#3a7ca5", "#4f9d69", "#8e6bbf", "#b5651d",
];

/// `v` to 4 decimals with trailing zeros (and a bare point) trimmed.
fn f(v: f64) -> String {
    let mut s = String::new();
    push_num(&mut s, v);
    s
}

/// Appends [`f`]'s text of `v`: `format!("{v:.4}")`, trimmed, written by integer arithmetic
/// where that is sure to round as the formatter does (the previews' millions of coordinates
/// spent most of their time in the float formatter). The scaled value's own rounding is under
/// 1e-7 for |v| < 1e5, so only a value within 1e-6 of a rounding tie, or a larger one, takes
/// the formatter.
fn push_num(out: &mut String, v: f64) {
    use std::fmt::Write;
    let x = v.abs() * 1e4;
    let tie = (x - x.floor() - 0.5).abs() < 1e-6;
    if !x.is_finite() || x >= 1e9 || tie {
        let s = format!("{v:.4}");
        out.push_str(s.trim_end_matches('0').trim_end_matches('.'));
        return;
    }
    let n = x.round() as u64;
    if v.is_sign_negative() {
        out.push('-');
    }
    let (int, frac) = (n / 10_000, n % 10_000);
    let _ = write!(out, "{int}");
    if frac != 0 {
        let mut digits = [b'0'; 4];
        let mut k = frac;
        for d in digits.iter_mut().rev() {
            *d = b'0' + (k % 10) as u8;
            k /= 10;
        }
        let len = 4 - digits.iter().rev().take_while(|&&d| d == b'0').count();
        out.push('.');
        out.push_str(std::str::from_utf8(&digits[..len]).unwrap_or("0"));
    }
}

/// An SVG document written straight to text. The layout is the `svg` crate's (which the
/// previews were built with before, and `plot`/`report` still are): attributes in name order,
/// every element on a line of its own, an element without children self-closed, attribute values
/// and text escaped. The previews hold a few million coordinates; building the crate's tree of
/// elements (each attribute a map entry, each value a string escaped by five passes) and then
/// printing it cost more than all the geometry behind them, so these files skip the tree.
struct Doc {
    out: String,
    /// The open elements: name, and whether a child has been written yet.
    open: Vec<(&'static str, bool)>,
}

/// An attribute's value: text (escaped) or a number as [`f`] writes it.
enum Val<'a> {
    Str(&'a str),
    Num(f64),
}

impl Doc {
    fn new() -> Doc {
        Doc {
            out: String::with_capacity(1 << 16),
            open: Vec::new(),
        }
    }

    /// Before a child of the innermost open element: closes its start tag at its first child,
    /// then a line break.
    fn child(&mut self) {
        if let Some((_, has)) = self.open.last_mut() {
            if !*has {
                self.out.push('>');
                *has = true;
            }
            self.out.push('\n');
        }
    }

    /// Opens an element; `attrs` in name order, as the crate sorts them.
    fn begin(&mut self, name: &'static str, attrs: &[(&str, Val)]) {
        debug_assert!(
            attrs.windows(2).all(|w| w[0].0 < w[1].0),
            "{name}: names in order"
        );
        self.child();
        self.out.push('<');
        self.out.push_str(name);
        self.attrs(attrs);
        self.open.push((name, false));
    }

    fn attr_start(&mut self, name: &str) {
        self.out.push(' ');
        self.out.push_str(name);
        self.out.push_str("=\"");
    }

    fn attrs(&mut self, attrs: &[(&str, Val)]) {
        for (k, v) in attrs {
            self.attr_start(k);
            match v {
                Val::Str(s) => escape_into(&mut self.out, s, true),
                Val::Num(x) => push_num(&mut self.out, *x),
            }
            self.out.push('"');
        }
    }

    /// Opens a `path` whose `d` attribute `d` writes (after the names that sort before it: none
    /// of the previews' paths has one), then its other attributes.
    fn path(&mut self, d: impl FnOnce(&mut String), rest: &[(&str, Val)]) {
        debug_assert!(rest.iter().all(|(k, _)| *k > "d"));
        self.child();
        self.out.push_str("<path");
        self.attr_start("d");
        d(&mut self.out);
        self.out.push('"');
        self.attrs(rest);
        self.open.push(("path", false));
        self.end();
    }

    /// Closes the innermost open element.
    fn end(&mut self) {
        if let Some((name, has)) = self.open.pop() {
            if has {
                self.out.push_str("\n</");
                self.out.push_str(name);
                self.out.push('>');
            } else {
                self.out.push_str("/>");
            }
        }
    }

    /// An element without children.
    fn leaf(&mut self, name: &'static str, attrs: &[(&str, Val)]) {
        self.begin(name, attrs);
        self.end();
    }

    /// A text node, escaped.
    fn text(&mut self, s: &str) {
        self.child();
        escape_into(&mut self.out, s, false);
    }

    fn finish(mut self) -> String {
        while !self.open.is_empty() {
            self.end();
        }
        // The run keeps every file's text until it writes them all: no spare capacity.
        self.out.shrink_to_fit();
        self.out
    }
}

/// Appends `s` escaped as the `svg` crate escapes text (`&`, `<`, `>`) and, for attribute
/// values (`attr`), also `"` and `'`.
fn escape_into(out: &mut String, s: &str, attr: bool) {
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' if attr => out.push_str("&quot;"),
            '\'' if attr => out.push_str("&apos;"),
            _ => out.push(c),
        }
    }
}

/// Appends a path's moves and lines through `pts` (y flipped), and a close when the ring is
/// closed (first point = last; a panel's routed edge broken at its tabs is not).
fn push_ring(d: &mut String, pts: impl Iterator<Item = (f64, f64)>) {
    push_path(d, pts, true);
}

/// Appends a path's moves and lines through `pts` (y flipped); with `close_ring`, a close when
/// the path is a closed ring (more than two points, the first equal to the last).
fn push_path(d: &mut String, pts: impl Iterator<Item = (f64, f64)>, close_ring: bool) {
    let (mut n, mut first, mut last) = (0, None, None);
    for (x, y) in pts {
        d.push(if n == 0 { 'M' } else { 'L' });
        push_num(d, x);
        d.push(' ');
        push_num(d, -y);
        d.push(' ');
        first = first.or(Some((x, y)));
        last = Some((x, y));
        n += 1;
    }
    if close_ring && n > 2 && first == last {
        d.push('Z');
    }
}

fn points(pts: &[Point]) -> impl Iterator<Item = (f64, f64)> + '_ {
    pts.iter().map(|p| (p.x, p.y))
}

fn coords(ls: &geo::LineString<f64>) -> impl Iterator<Item = (f64, f64)> + '_ {
    ls.0.iter().map(|c| (c.x, c.y))
}

fn regions_path(doc: &mut Doc, m: &MultiPolygon<f64>, colour: &str, opacity: f64) {
    doc.path(
        |d| {
            for poly in &m.0 {
                push_ring(d, coords(poly.exterior()));
                for h in poly.interiors() {
                    push_ring(d, coords(h));
                }
            }
        },
        &[
            ("fill", Val::Str(colour)),
            ("fill-opacity", Val::Num(opacity)),
            ("fill-rule", Val::Str("evenodd")),
        ],
    );
}

/// A flash, in a group of its own (as the previews have always had it).
fn flash_node(doc: &mut Doc, fl: &Flash, colour: &str, opacity: f64) {
    doc.begin("g", &[]);
    match fl.shape {
        Shape::Circle(d) => doc.leaf(
            "circle",
            &[
                ("cx", Val::Num(fl.at.x)),
                ("cy", Val::Num(-fl.at.y)),
                ("fill", Val::Str(colour)),
                ("fill-opacity", Val::Num(opacity)),
                ("r", Val::Num(d / 2.0)),
            ],
        ),
        Shape::Rect(w, h) => doc.leaf(
            "rect",
            &[
                ("fill", Val::Str(colour)),
                ("fill-opacity", Val::Num(opacity)),
                ("height", Val::Num(h)),
                ("width", Val::Num(w)),
                ("x", Val::Num(fl.at.x - w / 2.0)),
                ("y", Val::Num(-fl.at.y - h / 2.0)),
            ],
        ),
    }
    doc.end();
}

fn copper_group(doc: &mut Doc, l: &CopperLayer, opacity: f64) {
    let colour = COPPER_COLOURS[(l.n - 1) % COPPER_COLOURS.len()];
    let id = format!("copper-L{}", l.n);
    doc.begin("g", &[("id", Val::Str(&id))]);
    regions_path(doc, &l.regions, colour, opacity);
    for fl in &l.flashes {
        flash_node(doc, fl, colour, opacity);
    }
    doc.end();
}

fn strokes_group(doc: &mut Doc, strokes: &[Vec<Point>], width: f64, colour: &str, id: &str) {
    doc.begin("g", &[("id", Val::Str(id))]);
    for s in strokes {
        // An open stroke: never closed, even when it ends where it began.
        doc.path(
            |d| push_path(d, points(s), false),
            &[
                ("fill", Val::Str("none")),
                ("stroke", Val::Str(colour)),
                ("stroke-linecap", Val::Str("round")),
                ("stroke-linejoin", Val::Str("round")),
                ("stroke-width", Val::Num(width)),
            ],
        );
    }
    doc.end();
}

/// The document's frame: the `svg` element (left open) and its background; the view box
/// (x, y, width, height).
fn frame(doc: &mut Doc, art: &Artwork, extra_bottom: f64) -> (f64, f64, f64, f64) {
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for p in art.profile.iter().flatten() {
        x0 = x0.min(p.x);
        x1 = x1.max(p.x);
        y0 = y0.min(-p.y);
        y1 = y1.max(-p.y);
    }
    let m = 1.0;
    // Room for the legend's text when there is one.
    let w = if extra_bottom > 0.0 {
        (x1 - x0 + 2.0 * m).max(32.0)
    } else {
        x1 - x0 + 2.0 * m
    };
    let cx = 0.5 * (x0 + x1);
    let (vx, vy, vw, vh) = (cx - w / 2.0, y0 - m, w, y1 - y0 + 2.0 * m + extra_bottom);
    let view_box = format!("{} {} {} {}", f(vx), f(vy), f(vw), f(vh));
    let (width, height) = (format!("{}mm", f(vw)), format!("{}mm", f(vh)));
    doc.begin(
        "svg",
        &[
            ("height", Val::Str(&height)),
            ("viewBox", Val::Str(&view_box)),
            ("width", Val::Str(&width)),
            ("xmlns", Val::Str("http://www.w3.org/2000/svg")),
        ],
    );
    doc.leaf(
        "rect",
        &[
            ("fill", Val::Str("#1d2b24")),
            ("height", Val::Num(vh)),
            ("width", Val::Num(vw)),
            ("x", Val::Num(vx)),
            ("y", Val::Num(vy)),
        ],
    );
    (vx, vy, vw, vh)
}

fn outline_group(doc: &mut Doc, art: &Artwork) {
    doc.begin("g", &[("id", Val::Str("profile"))]);
    for r in &art.profile {
        doc.path(
            |d| push_ring(d, points(r)),
            &[
                ("fill", Val::Str("none")),
                ("stroke", Val::Str("#f2f2f2")),
                ("stroke-width", Val::Num(0.1)),
            ],
        );
    }
    doc.end();
}

fn drills_group(doc: &mut Doc, art: &Artwork) {
    doc.begin("g", &[("id", Val::Str("drills"))]);
    for d in &art.drills {
        doc.leaf(
            "circle",
            &[
                ("cx", Val::Num(d.at.x)),
                ("cy", Val::Num(-d.at.y)),
                ("fill", Val::Str("#101010")),
                ("r", Val::Num(d.d / 2.0)),
            ],
        );
    }
    doc.end();
}

/// The composited preview with a legend.
pub fn composite(art: &Artwork, title: &str) -> String {
    let rows = art.copper.len() + 3;
    let legend_h = 1.2 * rows as f64 + 2.0;
    let mut doc = Doc::new();
    let (vx, vy, _vw, vh) = frame(&mut doc, art, legend_h);
    outline_group(&mut doc, art);
    for l in art.copper.iter().rev() {
        copper_group(&mut doc, l, 0.55);
    }
    drills_group(&mut doc, art);
    // The top legend, or the bottom one (as seen from the top) on a board that has only that.
    let (silk, legend_id, legend_label) = if art.silk_top.is_empty() && !art.silk_bottom.is_empty()
    {
        (
            &art.silk_bottom,
            "legend-bottom",
            "bottom legend (seen from the top)",
        )
    } else {
        (&art.silk_top, "legend-top", "top legend")
    };
    strokes_group(&mut doc, silk, art.silk_width, "#f5f5dc", legend_id);
    // Legend.
    let mut y = vy + vh - legend_h + 1.2;
    let x = vx + 0.8;
    let text = |doc: &mut Doc, s: &str, y: f64| {
        doc.begin(
            "text",
            &[
                ("fill", Val::Str("#f2f2f2")),
                ("font-family", Val::Str("sans-serif")),
                ("font-size", Val::Num(0.9)),
                ("x", Val::Num(x + 1.4)),
                ("y", Val::Num(y + 0.35)),
            ],
        );
        doc.text(s);
        doc.end();
    };
    let swatch = |doc: &mut Doc, y: f64, colour: &str| {
        doc.leaf(
            "rect",
            &[
                ("fill", Val::Str(colour)),
                ("height", Val::Num(0.8)),
                ("width", Val::Num(1.0)),
                ("x", Val::Num(x)),
                ("y", Val::Num(y - 0.4)),
            ],
        );
    };
    text(&mut doc, title, y);
    y += 1.2;
    for l in &art.copper {
        let colour = COPPER_COLOURS[(l.n - 1) % COPPER_COLOURS.len()];
        let label = format!(
            "L{} copper ({})",
            l.n,
            if l.signal {
                art.layer_roles.0
            } else {
                art.layer_roles.1
            }
        );
        swatch(&mut doc, y, colour);
        text(&mut doc, &label, y);
        y += 1.2;
    }
    swatch(&mut doc, y, "#f5f5dc");
    text(&mut doc, legend_label, y);
    y += 1.2;
    doc.leaf(
        "circle",
        &[
            ("cx", Val::Num(x + 0.5)),
            ("cy", Val::Num(y)),
            ("fill", Val::Str("#101010")),
            ("r", Val::Num(0.35)),
            ("stroke", Val::Str("#f2f2f2")),
            ("stroke-width", Val::Num(0.05)),
        ],
    );
    text(&mut doc, "drilled holes; white line: board outline", y);
    doc.finish()
}

/// One copper layer alone, with the outline and the holes.
pub fn copper_layer(art: &Artwork, l: &CopperLayer) -> String {
    let mut doc = Doc::new();
    frame(&mut doc, art, 0.0);
    outline_group(&mut doc, art);
    copper_group(&mut doc, l, 1.0);
    drills_group(&mut doc, art);
    doc.finish()
}

/// A mask layer (openings), legend or outline alone.
pub fn openings_layer(art: &Artwork, openings: &[Flash], id: &str) -> String {
    let mut doc = Doc::new();
    frame(&mut doc, art, 0.0);
    outline_group(&mut doc, art);
    doc.begin("g", &[("id", Val::Str(id))]);
    for fl in openings {
        flash_node(&mut doc, fl, "#e0e0e0", 1.0);
    }
    doc.end();
    doc.finish()
}

/// A legend layer alone.
pub fn legend_layer(art: &Artwork, strokes: &[Vec<Point>], id: &str) -> String {
    let mut doc = Doc::new();
    frame(&mut doc, art, 0.0);
    outline_group(&mut doc, art);
    strokes_group(&mut doc, strokes, art.silk_width, "#f5f5dc", id);
    doc.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    // The writer lays a document out as the `svg` crate does (the layout every preview had
    // before it): the same small document built both ways, with an empty group, nested groups,
    // a path, text and attribute values that need escaping, and numbers.
    #[test]
    fn the_writer_lays_out_as_the_svg_crate() {
        use svg::node::element::{Circle, Group, Path, Text};
        let mut doc = Doc::new();
        doc.begin(
            "svg",
            &[
                ("height", Val::Str("2mm")),
                ("viewBox", Val::Str("0 0 1 2")),
                ("xmlns", Val::Str("http://www.w3.org/2000/svg")),
            ],
        );
        doc.begin("g", &[("id", Val::Str("empty"))]);
        doc.end();
        doc.begin("g", &[("id", Val::Str("a \"b\" & 'c' <d>"))]);
        doc.begin("g", &[]);
        doc.leaf(
            "circle",
            &[
                ("cx", Val::Num(-0.5)),
                ("fill-opacity", Val::Num(0.55)),
                ("r", Val::Num(1.0)),
            ],
        );
        doc.end();
        doc.path(
            |d| push_ring(d, [(0.5, 0.5), (1.0, 0.25), (0.5, 0.5)].into_iter()),
            &[("fill", Val::Str("none")), ("stroke-width", Val::Num(0.1))],
        );
        doc.end();
        doc.begin(
            "text",
            &[("font-size", Val::Num(0.9)), ("x", Val::Num(1.25))],
        );
        doc.text("L1 & L2 <copper> \"x\"");
        doc.end();
        let ours = doc.finish();

        let crate_doc = svg::Document::new()
            .set("viewBox", "0 0 1 2")
            .set("height", "2mm")
            .add(Group::new().set("id", "empty"))
            .add(
                Group::new()
                    .set("id", "a \"b\" & 'c' <d>")
                    .add(
                        Group::new().add(
                            Circle::new()
                                .set("r", 1.0)
                                .set("cx", -0.5)
                                .set("fill-opacity", 0.55),
                        ),
                    )
                    .add(
                        Path::new()
                            .set("d", "M0.5 -0.5 L1 -0.25 L0.5 -0.5 Z")
                            .set("stroke-width", 0.1)
                            .set("fill", "none"),
                    ),
            )
            .add(
                Text::new("L1 & L2 <copper> \"x\"")
                    .set("x", 1.25)
                    .set("font-size", 0.9),
            );
        assert_eq!(ours, crate_doc.to_string());
    }

    /// The formatter's own text, trimmed: what `push_num` must write.
    fn by_formatter(v: f64) -> String {
        let s = format!("{v:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }

    // The integer path writes exactly what Rust's float formatter writes (rounding of the exact
    // binary value, sign of zero), on values of every size the previews draw, on ties and near
    // ties, and on whole numbers.
    #[test]
    fn numbers_match_the_float_formatter() {
        let mut vals = vec![
            0.0,
            -0.0,
            1e-5,
            -1e-5,
            0.00005,
            -0.00005,
            0.00015,
            0.12345,
            2.5,
            10.0,
            100.0,
            -3.17159,
            0.99995,
            9.99995,
            123.45675,
            1e5,
            1e6,
            -2.7e7,
            f64::MIN_POSITIVE,
        ];
        // A fixed pseudo-random sweep (xorshift) over 1e-6 .. 1e4 mm, both signs.
        let mut s = 0x9e37_79b9_7f4a_7c15_u64;
        for _ in 0..200_000 {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            let mant = (s >> 11) as f64 / (1u64 << 53) as f64;
            let exp = ((s & 0xff) % 11) as i32 - 6;
            let sign = if s & 0x100 == 0 { 1.0 } else { -1.0 };
            vals.push(sign * mant * 10f64.powi(exp + 1));
            // Values on the 4-decimal grid and half-way between its points.
            let k = (s >> 20) % 10_000_000;
            vals.push(k as f64 / 1e4);
            vals.push((k as f64 + 0.5) / 1e4);
        }
        for v in vals {
            assert_eq!(f(v), by_formatter(v), "{v:e}");
        }
    }
}
