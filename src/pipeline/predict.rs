//! Predictions for a spec: every probe's response at the given options.

use crate::error::Error;
use crate::model::probe::family_from_spec;
use crate::physics::PredictOptions;
use crate::physics::predicted::{Predicted, predict_any};
use crate::solve::probe::solve;
use crate::spec::probe::ProbeFileSpec;
use std::path::Path;

pub use crate::physics::on_fixture::{FixtureCoupling, OnFixture, fixture_coupling, on_fixture};

/// The prediction options' fields, named as `predict`'s flags in errors.
const OPTION_FIELDS: [&str; 4] = ["height", "trace-h", "f-min", "f-max"];

/// Loads a spec and predicts every probe.
pub fn predict_spec(
    spec: &ProbeFileSpec,
    base: &Path,
    o: &PredictOptions,
) -> Result<Vec<Predicted>, Error> {
    // The options' fields are this command's flags.
    let flags = |errs: Vec<crate::error::FieldError>| {
        Error::Invalid(
            errs.into_iter()
                .map(|mut e| {
                    if OPTION_FIELDS.contains(&e.field.as_str()) {
                        e.field = format!("--{}", e.field);
                    }
                    e
                })
                .collect(),
        )
    };
    let errs = o.validate();
    if !errs.is_empty() {
        return Err(flags(errs));
    }
    let family = family_from_spec(spec, base)?;
    // On all cores, in the spec's order (see `build_family`).
    use rayon::prelude::*;
    let results: Vec<Result<Predicted, Error>> = family
        .probes
        .into_par_iter()
        .map(|p| {
            let solved = solve(&p)?;
            let response = predict_any(&p, &solved, o).map_err(|e| match e {
                Error::Invalid(v) => flags(v),
                other => other,
            })?;
            Ok(Predicted {
                probe: p,
                solved,
                response,
            })
        })
        .collect();
    results.into_iter().collect()
}
