//! Sky models: point and elliptical Gaussian components with curved power-law spectra.
//!
//! (Filled by the foundation issue.) Knows nothing about arrays, beams, configs or files.
