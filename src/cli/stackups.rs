//! `loopwright stackups`: list the built-in stackups or print one.

use crate::error::Error;
use crate::model::stackup::{Layer, builtin, builtin_names, builtin_text, load};

/// Arguments of `loopwright stackups`.
#[derive(Debug, clap::Args)]
pub struct StackupsArgs {
    /// Print this built-in stackup as TOML (a starting point for your own file), or, for a
    /// file path, check it and print its layers.
    #[arg(long, value_name = "NAME|FILE")]
    pub show: Option<String>,
}

pub(super) fn run(a: &StackupsArgs) -> Result<(), Error> {
    match &a.show {
        Some(name) => {
            if let Some(text) = builtin_text(name) {
                out!("{text}");
                return Ok(());
            }
            let s = load(name)?;
            outln!(
                "{}: {} ({:.4} mm)",
                s.name(),
                s.description(),
                s.thickness_mm()
            );
            print_layers(&s);
            Ok(())
        }
        None => {
            for name in builtin_names() {
                let s = builtin(name).expect("built-in stackups are valid");
                outln!("{name:<16} {:.3} mm  {}", s.thickness_mm(), s.description());
            }
            Ok(())
        }
    }
}

fn print_layers(s: &crate::model::stackup::Stackup) {
    if let Some(m) = s.mask_top() {
        outln!("  mask    {:>8.4} mm  εr {:.2}", m.thickness_mm, m.er);
    }
    let mut n = 0;
    for l in s.layers() {
        match l {
            Layer::Copper(c) => {
                n += 1;
                outln!("  L{n:<6} {:>8.4} mm  copper {}", c.thickness_mm, c.name);
            }
            Layer::Dielectric(d) => outln!(
                "          {:>8.4} mm  εr {:.2}  tanδ {:.4}  {}",
                d.thickness_mm,
                d.er,
                d.loss_tangent,
                d.name
            ),
        }
    }
    if let Some(m) = s.mask_bottom() {
        outln!("  mask    {:>8.4} mm  εr {:.2}", m.thickness_mm, m.er);
    }
}
