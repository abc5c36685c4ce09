//! Predictions for a spec: every probe's response at the given options.

use crate::error::Error;
use crate::model::probe::family_from_spec;
use crate::physics::PredictOptions;
use crate::physics::predicted::{Predicted, predict_any};
use crate::solve::probe::solve;
use crate::spec::probe::ProbeFileSpec;
use std::path::Path;

pub use crate::physics::on_fixture::{FixtureCoupling, OnFixture, fixture_coupling, on_fixture};

/// Loads a spec and predicts every probe.
pub fn predict_spec(
    spec: &ProbeFileSpec,
    base: &Path,
    o: &PredictOptions,
) -> Result<Vec<Predicted>, Error> {
    let errs = o.validate();
    if !errs.is_empty() {
        return Err(Error::Invalid(
            errs.into_iter()
                .map(|mut e| {
                    e.field = format!("--{}", e.field);
                    e
                })
                .collect(),
        ));
    }
    let family = family_from_spec(spec, base)?;
    // On all cores, in the spec's order (see `build_family`).
    use rayon::prelude::*;
    let results: Vec<Result<Predicted, Error>> = family
        .probes
        .into_par_iter()
        .map(|p| {
            let solved = solve(&p)?;
            let response = predict_any(&p, &solved, o)?;
            Ok(Predicted {
                probe: p,
                solved,
                response,
            })
        })
        .collect();
    results.into_iter().collect()
}
