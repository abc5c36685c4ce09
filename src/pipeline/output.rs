//! The files of a board and how a run's files reach the disk.

use crate::artwork::Artwork;
use crate::emit;
use crate::error::Error;
use std::path::{Path, PathBuf};

/// A file in memory: (name, bytes).
pub type FileEntry = (String, Vec<u8>);

/// The files every board has, from its artwork: Gerber layers, drill files, the Gerber job file,
/// the composite SVG preview and one SVG per layer. Names start with `base`.
pub fn artwork_files(
    base: &str,
    artwork: &Artwork,
    stackup: &crate::model::stackup::Stackup,
    fab: &crate::model::fab::FabProfile,
    size: (f64, f64),
    title: &str,
) -> Vec<FileEntry> {
    let same = format!("loopwright-{base}");
    let gerbers: Vec<(String, String)> = emit::gerber::all(artwork, &same)
        .into_iter()
        .map(|(suffix, text)| (format!("{base}-{suffix}"), text))
        .collect();
    let n = stackup.copper_count();
    let mut files: Vec<(String, Vec<u8>)> = gerbers
        .iter()
        .map(|(name, text)| (name.clone(), text.clone().into_bytes()))
        .collect();
    let mut drills = vec![(
        format!("{base}-PTH.drl"),
        emit::excellon::drill_file(&artwork.drills, true, n),
    )];
    // A non-plated drill file only when there are non-plated holes (an empty drill file is
    // not a file readers accept).
    if artwork.drills.iter().any(|d| !d.plated) {
        drills.push((
            format!("{base}-NPTH.drl"),
            emit::excellon::drill_file(&artwork.drills, false, n),
        ));
    }
    files.extend(
        drills
            .iter()
            .map(|(name, text)| (name.clone(), text.clone().into_bytes())),
    );
    files.push((
        format!("{base}.gbrjob"),
        emit::job::job(base, stackup, fab, size, &gerbers, &drills).into_bytes(),
    ));
    files.push((
        format!("{base}.svg"),
        emit::svg::composite(artwork, title).into_bytes(),
    ));
    for l in &artwork.copper {
        files.push((
            format!("{base}-L{}.svg", l.n),
            emit::svg::copper_layer(artwork, l).into_bytes(),
        ));
    }
    files.push((
        format!("{base}-mask-top.svg"),
        emit::svg::openings_layer(artwork, &artwork.mask_top, "mask-top").into_bytes(),
    ));
    files.push((
        format!("{base}-mask-bottom.svg"),
        emit::svg::openings_layer(artwork, &artwork.mask_bottom, "mask-bottom").into_bytes(),
    ));
    for (strokes, id) in [
        (&artwork.silk_top, "legend-top"),
        (&artwork.silk_bottom, "legend-bottom"),
    ] {
        if !strokes.is_empty() {
            files.push((
                format!("{base}-{id}.svg"),
                emit::svg::legend_layer(artwork, strokes, id).into_bytes(),
            ));
        }
    }
    files
}

/// Writes entries (relative path, bytes) as the output folder `out`: staged beside it and
/// switched into place at once, replacing only an earlier loopwright output (checked against
/// its manifest); see [`crate::output`].
pub fn write_atomically(out: &Path, entries: &[(PathBuf, Vec<u8>)]) -> Result<(), Error> {
    crate::output::write_output(out, entries)
}
