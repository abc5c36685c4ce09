//! Gerber X2 (RS-274X) writer, through the `gerber-types` crate. Coordinates are integer
//! nanometres (format 4.6, metric); every aperture carries `.AperFunction`, copper objects carry
//! the `.N` net; no creation date is written, so the output is the same run to run.

use crate::artwork::{Artwork, CopperLayer, Flash, LocatedNets, Nets, PadFunction, Shape, Side};
use geo::{Area, Contains, MultiPolygon};
use gerber_types::*;
use kurbo::Point;

/// Software identity written into every file.
pub fn generation_software() -> GenerationSoftware {
    GenerationSoftware::new(
        "loopwright project",
        "loopwright",
        Some(env!("CARGO_PKG_VERSION")),
    )
}

fn fmt() -> CoordinateFormat {
    CoordinateFormat::new(ZeroOmission::Leading, CoordinateMode::Absolute, 4, 6)
}

fn nm(v: f64) -> CoordinateNumber {
    CoordinateNumber::new((v * 1e6).round() as i64)
}

fn xy(p: Point) -> Coordinates {
    Coordinates {
        x: Some(nm(p.x)),
        y: Some(nm(p.y)),
        format: fmt(),
    }
}

/// A Gerber file under construction.
struct Writer<'a> {
    cmds: Vec<Command>,
    apertures: Vec<(Shape, ApertureFunction, i32)>,
    next_code: i32,
    /// Copper files carry net attributes.
    nets: Option<LocatedNets<'a>>,
}

fn ext(c: ExtendedCode) -> Command {
    Command::ExtendedCode(c)
}

fn func(c: impl Into<FunctionCode>) -> Command {
    Command::FunctionCode(c.into())
}

impl<'a> Writer<'a> {
    fn new(
        function: FileFunction,
        polarity: FilePolarity,
        same_coords: &str,
        nets: Option<&'a Nets>,
    ) -> Self {
        let cmds = vec![
            ext(ExtendedCode::CoordinateFormat(fmt())),
            ext(ExtendedCode::Unit(Unit::Millimeters)),
            ext(ExtendedCode::FileAttribute(
                FileAttribute::GenerationSoftware(generation_software()),
            )),
            ext(ExtendedCode::FileAttribute(FileAttribute::SameCoordinates(
                Some(Ident::Name(same_coords.to_string())),
            ))),
            ext(ExtendedCode::FileAttribute(FileAttribute::FileFunction(
                function,
            ))),
            ext(ExtendedCode::FileAttribute(FileAttribute::FilePolarity(
                polarity,
            ))),
            ext(ExtendedCode::FileAttribute(FileAttribute::Part(
                Part::Single,
            ))),
        ];
        Writer {
            cmds,
            apertures: Vec::new(),
            next_code: 10,
            nets: nets.map(Nets::located),
        }
    }

    /// Defines (once) and returns the D code of an aperture with a function.
    fn aperture(&mut self, shape: Shape, function: ApertureFunction) -> i32 {
        if let Some((_, _, code)) = self
            .apertures
            .iter()
            .find(|(s, f, _)| *s == shape && *f == function)
        {
            return *code;
        }
        let code = self.next_code;
        self.next_code += 1;
        self.cmds.push(ext(ExtendedCode::ApertureAttribute(
            ApertureAttribute::ApertureFunction(function.clone()),
        )));
        let ap = match shape {
            Shape::Circle(d) => Aperture::Circle(Circle::new(d)),
            Shape::Rect(w, h) => Aperture::Rectangle(Rectangular::new(w, h)),
        };
        self.cmds.push(ext(ExtendedCode::ApertureDefinition(
            ApertureDefinition::new(code, ap),
        )));
        self.cmds.push(ext(ExtendedCode::DeleteAttribute(
            AttributeDeletionCriterion::AllApertureAndObjectAttributes,
        )));
        self.apertures.push((shape, function, code));
        code
    }

    fn net(&mut self, at: Point) {
        if let Some(nets) = &self.nets {
            let net = match nets.at(at) {
                Some(name) => Net::Connected(vec![name.to_string()]),
                None => Net::NotConnected,
            };
            self.cmds
                .push(ext(ExtendedCode::ObjectAttribute(ObjectAttribute::Net(
                    net,
                ))));
        }
    }

    fn clear_attrs(&mut self) {
        self.cmds.push(ext(ExtendedCode::DeleteAttribute(
            AttributeDeletionCriterion::AllApertureAndObjectAttributes,
        )));
    }

    /// Linear interpolation and dark polarity: the start of every image that is not copper.
    fn begin_dark(&mut self) {
        self.cmds
            .push(func(GCode::InterpolationMode(InterpolationMode::Linear)));
        self.polarity(true);
    }

    fn polarity(&mut self, dark: bool) {
        self.cmds.push(ext(ExtendedCode::LoadPolarity(if dark {
            Polarity::Dark
        } else {
            Polarity::Clear
        })));
    }

    /// One closed contour as a region (G36/G37); `dark` ones (copper) carry their net, clear
    /// ones (clearances) none: they are not conductors.
    fn region(&mut self, ring: &[Point], function: &ApertureFunction, dark: bool) {
        self.cmds.push(ext(ExtendedCode::ApertureAttribute(
            ApertureAttribute::ApertureFunction(function.clone()),
        )));
        if dark {
            self.net(ring[0]);
        }
        self.cmds.push(func(GCode::RegionMode(true)));
        self.cmds
            .push(func(DCode::Operation(Operation::Move(Some(xy(ring[0]))))));
        for p in &ring[1..] {
            self.cmds.push(func(DCode::Operation(Operation::Interpolate(
                Some(xy(*p)),
                None,
            ))));
        }
        self.cmds.push(func(GCode::RegionMode(false)));
        self.clear_attrs();
    }

    /// The copper `m` as regions: each polygon dark, then its holes clear. A hole around one of
    /// the layer's `pads` is that pad's clearance in the pour and is tagged `AntiPad`, as the
    /// Gerber format provides for clearances; any other hole keeps the pour's `function`.
    fn regions(&mut self, m: &MultiPolygon<f64>, function: ApertureFunction, pads: &[Point]) {
        // Containers before what they contain: by decreasing exterior area.
        let mut polys: Vec<_> = m.0.iter().collect();
        polys.sort_by(|a, b| {
            let (aa, bb) = (
                geo::Polygon::new(a.exterior().clone(), vec![]).unsigned_area(),
                geo::Polygon::new(b.exterior().clone(), vec![]).unsigned_area(),
            );
            bb.partial_cmp(&aa).unwrap_or(std::cmp::Ordering::Equal)
        });
        for poly in polys {
            let pts = |ls: &geo::LineString<f64>| -> Vec<Point> {
                ls.coords().map(|c| Point::new(c.x, c.y)).collect()
            };
            self.polarity(true);
            self.region(&pts(poly.exterior()), &function, true);
            if !poly.interiors().is_empty() {
                self.polarity(false);
                for hole in poly.interiors() {
                    let area = geo::Polygon::new(hole.clone(), vec![]);
                    let around_pad = pads
                        .iter()
                        .any(|p| area.contains(&geo::Point::new(p.x, p.y)));
                    let f = if around_pad {
                        ApertureFunction::AntiPad
                    } else {
                        function.clone()
                    };
                    self.region(&pts(hole), &f, false);
                }
            }
        }
        self.polarity(true);
    }

    fn flash(&mut self, f: &Flash, function: ApertureFunction) {
        let code = self.aperture(f.shape, function);
        self.cmds.push(func(DCode::SelectAperture(code)));
        self.net(f.at);
        self.cmds
            .push(func(DCode::Operation(Operation::Flash(Some(xy(f.at))))));
        if self.nets.is_some() {
            self.clear_attrs();
        }
    }

    fn stroke(&mut self, pts: &[Point], width: f64, function: ApertureFunction) {
        let code = self.aperture(Shape::Circle(width), function);
        self.cmds.push(func(DCode::SelectAperture(code)));
        self.cmds
            .push(func(DCode::Operation(Operation::Move(Some(xy(pts[0]))))));
        for p in &pts[1..] {
            self.cmds.push(func(DCode::Operation(Operation::Interpolate(
                Some(xy(*p)),
                None,
            ))));
        }
    }

    fn finish(mut self) -> String {
        self.cmds.push(func(MCode::EndOfFile));
        let mut buf = Vec::new();
        self.cmds
            .serialize(&mut buf)
            .expect("writing to memory cannot fail");
        String::from_utf8(buf).expect("Gerber text is ASCII")
    }
}

fn pad_function(f: PadFunction) -> ApertureFunction {
    match f {
        PadFunction::Via => ApertureFunction::ViaPad,
        PadFunction::Connector => ApertureFunction::ConnectorPad,
        PadFunction::Component => ApertureFunction::ComponentPad,
        PadFunction::MaskOpening => ApertureFunction::Material,
        PadFunction::Fiducial => ApertureFunction::FiducialPad(FiducialScope::Panel),
    }
}

/// A copper layer file.
pub fn copper(layer: &CopperLayer, nets: &Nets, same_coords: &str) -> String {
    let pos = match layer.side {
        Side::Top => ExtendedPosition::Top,
        Side::Inner => ExtendedPosition::Inner,
        Side::Bottom => ExtendedPosition::Bottom,
    };
    // Gerber's copper types: Plane (mainly ground), Signal (mainly signal), Mixed (both): a
    // layer that holds signal copper inside its ground pour is Mixed.
    let kind = if layer.mixed {
        CopperType::Mixed
    } else {
        CopperType::Plane
    };
    let mut w = Writer::new(
        FileFunction::Copper {
            layer: layer.n as i32,
            pos,
            copper_type: Some(kind),
        },
        FilePolarity::Positive,
        same_coords,
        Some(nets),
    );
    // Define the flash apertures first, then draw regions, then flash pads over them.
    for f in &layer.flashes {
        w.aperture(f.shape, pad_function(f.function));
    }
    w.cmds
        .push(func(GCode::InterpolationMode(InterpolationMode::Linear)));
    let pads: Vec<Point> = layer.flashes.iter().map(|f| f.at).collect();
    w.regions(&layer.regions, ApertureFunction::Conductor, &pads);
    for f in &layer.flashes {
        w.flash(f, pad_function(f.function));
    }
    w.finish()
}

/// A solder-mask file (negative polarity: the image is the openings).
pub fn mask(openings: &[Flash], top: bool, same_coords: &str) -> String {
    let pos = if top { Position::Top } else { Position::Bottom };
    let mut w = Writer::new(
        FileFunction::SolderMask { pos, index: None },
        FilePolarity::Negative,
        same_coords,
        None,
    );
    w.begin_dark();
    for f in openings {
        w.flash(f, ApertureFunction::Material);
    }
    w.finish()
}

/// A legend (silkscreen) file.
pub fn legend(strokes: &[Vec<Point>], width: f64, top: bool, same_coords: &str) -> String {
    let pos = if top { Position::Top } else { Position::Bottom };
    let mut w = Writer::new(
        FileFunction::Legend { pos, index: None },
        FilePolarity::Positive,
        same_coords,
        None,
    );
    w.begin_dark();
    for s in strokes {
        w.stroke(s, width, ApertureFunction::Other("Legend".into()));
    }
    w.finish()
}

/// The board profile (outline) file.
pub fn profile(rings: &[Vec<Point>], same_coords: &str) -> String {
    let mut w = Writer::new(
        FileFunction::Profile(Some(Profile::NonPlated)),
        FilePolarity::Positive,
        same_coords,
        None,
    );
    w.begin_dark();
    for r in rings {
        w.stroke(r, 0.05, ApertureFunction::Profile);
    }
    w.finish()
}

/// The `.FileFunction` value string of each kind of file, for the job file.
pub fn file_function_text(text: &str) -> String {
    text.lines()
        .find_map(|l| l.strip_prefix("%TF.FileFunction,"))
        .map(|s| s.trim_end_matches("*%").to_string())
        .unwrap_or_default()
}

/// The `.FilePolarity` value of a file.
pub fn file_polarity_text(text: &str) -> String {
    text.lines()
        .find_map(|l| l.strip_prefix("%TF.FilePolarity,"))
        .map(|s| s.trim_end_matches("*%").to_string())
        .unwrap_or_default()
}

/// Every file of an artwork: (file-name suffix, text).
pub fn all(art: &Artwork, same_coords: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    for l in &art.copper {
        out.push((format!("L{}.gbr", l.n), copper(l, &art.nets, same_coords)));
    }
    out.push((
        "mask-top.gbr".into(),
        mask(&art.mask_top, true, same_coords),
    ));
    out.push((
        "mask-bottom.gbr".into(),
        mask(&art.mask_bottom, false, same_coords),
    ));
    // A legend side without strokes gets no file: an image with no aperture is not a file
    // Gerber readers accept (they take it for RS-274D).
    for (strokes, top, name) in [
        (&art.silk_top, true, "legend-top.gbr"),
        (&art.silk_bottom, false, "legend-bottom.gbr"),
    ] {
        if !strokes.is_empty() {
            out.push((
                name.into(),
                legend(strokes, art.silk_width, top, same_coords),
            ));
        }
    }
    out.push(("profile.gbr".into(), profile(&art.profile, same_coords)));
    out
}
