//! Integration tests of the deconvolution crate, grouped by area.
mod clean;
mod control;
mod dft;
mod major;
mod mfs;
