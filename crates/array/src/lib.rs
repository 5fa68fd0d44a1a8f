//! Array geometry: antenna layouts, site, timeline, uvw and parallactic angle.
//!
//! (Filled by the foundation issue.) Knows nothing about beams, skies, configs or files.
