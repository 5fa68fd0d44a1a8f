//! File formats: FITS images with WCS, PNG quick-looks and plots, npy visibility sets, HTML.
//!
//! (Filled by the foundation, truth and experiments issues.) The only crate that writes files.
