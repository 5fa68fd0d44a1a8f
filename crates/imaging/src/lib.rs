//! Imaging operators: weighting, gridding and degridding, w-terms, PSFs.
//!
//! (Filled by the imaging issue.) Knows nothing about configs, files or deconvolution.
