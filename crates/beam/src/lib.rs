//! Dish beam models: aperture, tabulated voltage pattern and its time, frequency and polarization effects.
//!
//! (Filled by the beams issue.) Knows nothing about skies, visibilities, configs or files.
