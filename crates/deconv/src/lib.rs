//! Deconvolution: minor cycles (Hogbom, multi-scale, multi-term MFS), major cycles, restoration.
//!
//! (Filled by the deconvolution issue.) Knows nothing about configs or files.
