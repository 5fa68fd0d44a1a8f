//! Numerical guards: a NaN or an infinity in a grid product, image or kernel response stops the
//! run at once, naming the strategy, the stage (which major cycle, which image) and the first
//! offending pixel, instead of flowing on into CLEAN, the metrics and the report.
//!
//! Blanked pixels (NaN by design, below the primary-beam cut-off) appear only after the
//! primary-beam correction, which these guards do not look at.

use beamfloor_deconv::{DeconvError, ResidualImager};
use ndarray::Array2;

use super::RunError;

/// The first non-finite pixel of `images`: (Taylor term, x, y, value).
pub(crate) fn first_non_finite(images: &[Array2<f64>]) -> Option<(usize, usize, usize, f64)> {
    images.iter().enumerate().find_map(|(t, im)| {
        im.indexed_iter().find(|(_, v)| !v.is_finite()).map(|((y, x), v)| (t, x, y, *v))
    })
}

/// Fails with [`RunError::NonFinite`] when any pixel of `images` is NaN or infinite.
pub(crate) fn check_finite(
    strategy: &str,
    stage: &str,
    images: &[Array2<f64>],
) -> Result<(), RunError> {
    match first_non_finite(images) {
        None => Ok(()),
        Some((term, x, y, value)) => Err(RunError::NonFinite {
            strategy: strategy.to_string(),
            stage: stage.to_string(),
            term,
            x,
            y,
            value,
        }),
    }
}

/// A residual imager that refuses non-finite models and residuals, saying which major cycle
/// produced them (cycle 0 is the dirty image).
pub(crate) struct GuardedResiduals<I> {
    inner: I,
    calls: usize,
}

impl<I> GuardedResiduals<I> {
    /// Wraps `inner`.
    pub(crate) fn new(inner: I) -> Self {
        Self { inner, calls: 0 }
    }
}

impl<I: ResidualImager> ResidualImager for GuardedResiduals<I> {
    fn residuals(&mut self, model: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError> {
        let cycle = self.calls;
        self.calls += 1;
        if let Some((t, x, y, v)) = first_non_finite(model) {
            return Err(DeconvError::Imager(format!(
                "major cycle {cycle}: the CLEAN model's Taylor term {t} holds {v} at pixel ({x}, {y}) before it is degridded"
            )));
        }
        let images = self.inner.residuals(model)?;
        if let Some((t, x, y, v)) = first_non_finite(&images) {
            let what = if cycle == 0 { "the dirty image" } else { "the residual image" };
            return Err(DeconvError::Imager(format!(
                "major cycle {cycle}: {what} (gridded, Fourier transformed and grid-corrected) has {v} in Taylor term {t} at pixel ({x}, {y})"
            )));
        }
        Ok(images)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Fixed(Vec<Array2<f64>>);
    impl ResidualImager for Fixed {
        fn residuals(&mut self, _: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError> {
            Ok(self.0.clone())
        }
    }

    #[test]
    fn names_the_cycle_term_and_pixel() {
        let mut bad = Array2::zeros((4, 6));
        bad[[2, 5]] = f64::INFINITY;
        let mut guarded = GuardedResiduals::new(Fixed(vec![Array2::zeros((4, 6)), bad]));
        let zero = vec![Array2::zeros((4, 6)); 2];
        let err = guarded.residuals(&zero).unwrap_err().to_string();
        assert!(
            err.contains("major cycle 0: the dirty image")
                && err.contains("inf in Taylor term 1 at pixel (5, 2)"),
            "{err}"
        );
        let mut model = zero.clone();
        model[0][[1, 1]] = f64::NAN;
        let err = guarded.residuals(&model).unwrap_err().to_string();
        assert!(
            err.contains(
                "major cycle 1: the CLEAN model's Taylor term 0 holds NaN at pixel (1, 1)"
            ),
            "{err}"
        );
        let err = check_finite("w", "spectral PSFs", &zero[..1]).map(|_| ()).err();
        assert!(err.is_none());
        let err = check_finite("w", "spectral PSFs", &model).unwrap_err().to_string();
        assert_eq!(err, "strategy \"w\": spectral PSFs: Taylor term 0 holds NaN at pixel (1, 1); the run stops here");
    }
}
