//! Floor decomposition: what each simulated effect costs each strategy.
//!
//! The experiment is rerun with the truth's effects (the `[truth]` switches) changed one at a
//! time: once as configured, once with each effect that is present switched off, and once with
//! every effect off but the (static, frequency-independent) beam itself, which leaves each
//! strategy with its own numerical floor (gridding accuracy, PSF model, CLEAN depth). Every
//! variant is an ordinary run in its own folder (`OUT/<variant>/`, with its own resolved config,
//! so any one of them can be rerun alone); the decomposition then tabulates the floors.
//!
//! What an effect costs: residual errors from independent causes add in quadrature, so the cost
//! of effect X for a strategy is c_X = √(max(0, F_all² − F_without X²)), the part of the floor
//! that goes away with X; its share is c_X² / F_all². Effects interact (a squinted beam also
//! rotates), so the shares need not sum to one; the table says so rather than forcing them to.
//!
//! ```text
//! OUT/decomposition.csv  decomposition.json  decomposition-<strategy>.png
//!     all-effects/  without-rotation/  …  numerical-floor/   (ordinary run folders)
//! ```

mod variants;
mod write;

use std::path::{Path, PathBuf};

pub use variants::{decomposition_variants, Variant};
pub use write::write_decomposition;

use crate::config::Config;
use crate::run::{run_experiment, RunError, RunObserver, RunSummary};

/// One strategy's floor in one variant.
#[derive(Debug, Clone, PartialEq)]
pub struct VariantFloor {
    /// The strategy's name.
    pub strategy: String,
    /// Off-source residual RMS, Jy/beam; None when the strategy was skipped (e.g. CLEAN
    /// diverged) in this variant.
    pub floor_jy_per_beam: Option<f64>,
}

/// One rerun of the experiment.
#[derive(Debug, Clone, PartialEq)]
pub struct VariantResult {
    /// The variant.
    pub variant: Variant,
    /// Its run folder.
    pub out_dir: PathBuf,
    /// Predicted thermal noise of the I0 image (the same in every variant), Jy/beam.
    pub sigma_img_jy_per_beam: f64,
    /// Floors per strategy, in config order.
    pub floors: Vec<VariantFloor>,
    /// Strategies skipped in this variant, with the reason.
    pub skipped: Vec<(String, String)>,
}

/// The whole decomposition.
#[derive(Debug, Clone, PartialEq)]
pub struct Decomposition {
    /// Strategy names, in config order.
    pub strategies: Vec<String>,
    /// Every variant run, the configured one first and the all-off one last.
    pub variants: Vec<VariantResult>,
}

impl Decomposition {
    /// Floor of `strategy` in the variant named `variant`.
    pub fn floor(&self, variant: &str, strategy: &str) -> Option<f64> {
        self.variants
            .iter()
            .find(|v| v.variant.name == variant)?
            .floors
            .iter()
            .find(|f| f.strategy == strategy)?
            .floor_jy_per_beam
    }

    /// c_X = √(max(0, F_all² − F_without²)) for `strategy` and the variant named `variant`
    /// (None when either floor is missing).
    pub fn cost(&self, variant: &str, strategy: &str) -> Option<f64> {
        let all = self.floor(variants::ALL_EFFECTS, strategy)?;
        let without = self.floor(variant, strategy)?;
        Some((all * all - without * without).max(0.0).sqrt())
    }
}

/// Called before each variant starts (index, count, variant).
pub type VariantStart<'a> = dyn FnMut(usize, usize, &Variant) + 'a;

/// Reruns the experiment once per variant of [`decomposition_variants`] into `out_dir/<name>`
/// (each an ordinary run folder) and collects the floors. A variant that fails stops the
/// decomposition with its error; strategies skipped inside a variant are recorded.
pub fn run_decomposition(
    config: &Config,
    config_path: Option<&Path>,
    out_dir: &Path,
    observer: &mut dyn RunObserver,
    on_variant: &mut VariantStart<'_>,
) -> Result<Decomposition, RunError> {
    let variants = decomposition_variants(config);
    let strategies: Vec<String> = config.strategy.iter().map(|s| s.name.clone()).collect();
    let mut results = Vec::with_capacity(variants.len());
    for (index, variant) in variants.iter().enumerate() {
        on_variant(index, variants.len(), variant);
        let mut varied = config.clone();
        varied.truth = variant.switches;
        let dir = out_dir.join(&variant.name);
        let summary = run_experiment(&varied, config_path, &dir, observer)?;
        results.push(collect(variant.clone(), &strategies, summary));
    }
    Ok(Decomposition { strategies, variants: results })
}

fn collect(variant: Variant, strategies: &[String], summary: RunSummary) -> VariantResult {
    let floors = strategies
        .iter()
        .map(|name| VariantFloor {
            strategy: name.clone(),
            floor_jy_per_beam: summary
                .strategies
                .iter()
                .find(|s| &s.name == name)
                .map(|s| s.floor_jy_per_beam),
        })
        .collect();
    VariantResult {
        variant,
        out_dir: summary.out_dir,
        sigma_img_jy_per_beam: summary.sigma_img_jy_per_beam,
        floors,
        skipped: summary.skipped,
    }
}
