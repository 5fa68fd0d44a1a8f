//! The one place that turns a `[[strategy]]` into an imaging operator.

use beamfloor_core::ImageGeometry;
use beamfloor_imaging::{GridPlan, GridderParams, ImagingOperator, WRange, WTerm};

use super::RunError;
use crate::config::{Config, Gridding, WMethod};

/// The operator of strategy `index` of `config` on `geometry`, for samples whose w
/// (wavelengths) lies in `w_range`.
///
/// `"plain"` is the ES-kernel gridder with the w-term ignored (a flat-sky transform), `"w"` the
/// same gridder with w-stacking. For the A-projection griddings (`"a"`, `"wideband-a"`) this is
/// the w-stacking gridder underneath the A-terms: the PSFs are made with it (the PSF at the phase
/// centre, where the beam is 1), and [`super::aproj::build_a_operator`] wraps it with the beam.
pub fn build_operator(
    config: &Config,
    index: usize,
    geometry: ImageGeometry,
    w_range: WRange,
) -> Result<Box<dyn ImagingOperator>, RunError> {
    let w_term = w_term_of(config, index)?;
    let params = GridderParams { epsilon: config.imaging.accuracy, w_term };
    let plan = GridPlan::new(geometry, &params, w_range).map_err(|source| RunError::Imaging {
        strategy: config.strategy[index].name.clone(),
        source,
    })?;
    Ok(Box::new(plan))
}

/// How the gridder under strategy `index` treats the w-term (see [`build_operator`]); an error
/// for a w setting this build does not implement.
pub fn w_term_of(config: &Config, index: usize) -> Result<WTerm, RunError> {
    let strategy = &config.strategy[index];
    let unsupported = |key, value: String, why| RunError::Unsupported {
        index,
        strategy: strategy.name.clone(),
        key,
        value,
        why,
    };
    let w_term =
        match strategy.gridding {
            Gridding::Plain => WTerm::Ignore,
            Gridding::W => match config.imaging.w_method {
                WMethod::WStacking => WTerm::Stack,
                WMethod::WKernel => return Err(unsupported(
                    "imaging.w_method",
                    "\"w-kernel\"".into(),
                    "only \"w-stacking\" is implemented (it already uses the ES kernel along w)",
                )),
            },
            Gridding::A | Gridding::WidebandA => WTerm::Stack,
        };
    if config.imaging.w_planes.is_some() && w_term == WTerm::Stack {
        return Err(unsupported(
            "imaging.w_planes",
            format!("{:?}", config.imaging.w_planes),
            "the number of w-planes is chosen by the gridder from the field and the accuracy; \
             remove the key",
        ));
    }
    Ok(w_term)
}

/// Checks every strategy can be built (cheaply: on a tiny grid) before any heavy work starts.
///
/// Returns the strategies that are valid but whose gridding this build lacks (the A-projection
/// operators), each with its [`RunError::Unsupported`]: the runner skips them and says so in the
/// report, so that a config (like the demo) that lists them still runs its other strategies.
/// Any other problem is an error.
pub fn check_strategies(config: &Config) -> Result<Vec<(usize, RunError)>, RunError> {
    let mut unavailable = Vec::new();
    for (index, strategy) in config.strategy.iter().enumerate() {
        if strategy.spectral == crate::config::Spectral::Cube {
            return Err(RunError::Unsupported {
                index,
                strategy: strategy.name.clone(),
                key: "spectral",
                value: "\"cube\"".into(),
                why: "per-channel deconvolution is not implemented; use \"multi-term\" or \"mfs\"",
            });
        }
        let cell = (config.imaging.cell_arcsec / 3600.0).to_radians();
        let tiny = ImageGeometry::new(16, 16, cell);
        match build_operator(config, index, tiny, WRange { min_lambda: 0.0, max_lambda: 0.0 }) {
            Ok(_) => {}
            Err(e @ RunError::Unsupported { key: "gridding", .. }) => unavailable.push((index, e)),
            Err(e) => return Err(e),
        }
    }
    if unavailable.len() == config.strategy.len() {
        return Err(unavailable.swap_remove(0).1);
    }
    Ok(unavailable)
}
