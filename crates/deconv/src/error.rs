/// Everything that can go wrong in deconvolution; each variant carries the offending values.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DeconvError {
    /// Multi-term CLEAN needs 2N − 1 spectral PSFs for N Taylor terms.
    #[error("{nterms} Taylor terms need {expected} spectral PSFs, got {got}")]
    PsfCount {
        /// Requested number of Taylor terms N.
        nterms: usize,
        /// 2N − 1.
        expected: usize,
        /// Number supplied.
        got: usize,
    },
    /// The number of Taylor terms must be at least 1.
    #[error("number of Taylor terms must be at least 1, got {0}")]
    NoTerms(usize),
    /// Two arrays that must share a shape do not.
    #[error("{what}: expected shape [{expected_ny}, {expected_nx}], got [{got_ny}, {got_nx}]")]
    ShapeMismatch {
        /// Which array is wrong.
        what: &'static str,
        /// Expected rows.
        expected_ny: usize,
        /// Expected columns.
        expected_nx: usize,
        /// Actual rows.
        got_ny: usize,
        /// Actual columns.
        got_nx: usize,
    },
    /// The number of images handed over is not the number of Taylor terms.
    #[error("{what}: expected {expected} Taylor images, got {got}")]
    TermCount {
        /// Which list is wrong.
        what: &'static str,
        /// Expected count.
        expected: usize,
        /// Actual count.
        got: usize,
    },
    /// The PSF's value at its centre pixel is not positive (it must be the peak).
    #[error("PSF peak at the centre pixel ({x}, {y}) is {value}, must be positive and finite")]
    PsfPeak {
        /// Centre pixel x.
        x: usize,
        /// Centre pixel y.
        y: usize,
        /// Value found there.
        value: f64,
    },
    /// An N×N Hessian is not positive definite (a pivot of its Cholesky factor is not positive,
    /// or below 1e-12 of its diagonal entry: singular to working precision).
    #[error("Hessian (scale {scale}) is not positive definite: pivot {pivot} is {value:e}")]
    HessianNotPositiveDefinite {
        /// Index of the scale whose Hessian failed.
        scale: usize,
        /// Index of the failing pivot.
        pivot: usize,
        /// Value of the pivot before the square root.
        value: f64,
    },
    /// A numeric parameter is outside its allowed range.
    #[error("parameter {name} = {value} is outside {allowed}")]
    Parameter {
        /// Parameter name.
        name: &'static str,
        /// Value given.
        value: f64,
        /// Human-readable allowed range.
        allowed: &'static str,
    },
    /// A major cycle's peak residual grew by more than the allowed factor.
    #[error(
        "major cycle {cycle} diverged: peak residual {peak:e} Jy/beam > {factor} × previous \
         {previous:e} Jy/beam"
    )]
    MajorCycleDiverged {
        /// Index of the cycle whose residual grew.
        cycle: usize,
        /// Its peak |residual| (Taylor term 0).
        peak: f64,
        /// Peak of the previous cycle.
        previous: f64,
        /// Allowed growth factor.
        factor: f64,
    },
    /// Inside one minor cycle the peak residual grew by more than the allowed factor.
    #[error(
        "minor cycle diverged at iteration {iteration}: peak residual {peak:e} > {factor} × start \
         {start:e}"
    )]
    MinorCycleDiverged {
        /// Iteration at which the growth was seen.
        iteration: usize,
        /// Peak |residual| then.
        peak: f64,
        /// Peak at the start of the minor cycle.
        start: f64,
        /// Allowed growth factor.
        factor: f64,
    },
    /// A residual image from the imager holds NaN or infinity.
    #[error("residual Taylor image {term} has a non-finite value at pixel ({x}, {y})")]
    NonFinite {
        /// Taylor term.
        term: usize,
        /// Pixel x.
        x: usize,
        /// Pixel y.
        y: usize,
    },
    /// The PSF main lobe could not be fitted by a Gaussian.
    #[error("restoring-beam fit failed: {reason} (value {value})")]
    BeamFit {
        /// What went wrong.
        reason: &'static str,
        /// The number behind it (pixel count, curvature, ...).
        value: f64,
    },
    /// The residual imager reported a failure of its own.
    #[error("residual imager failed: {0}")]
    Imager(String),
}
