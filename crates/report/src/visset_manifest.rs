//! The JSON manifest of a visibility-set folder: what every `.npy` file holds.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

/// Format name in every visibility-set manifest.
pub const VISSET_FORMAT: &str = "beamfloor-visset";
/// Manifest version this crate writes and reads.
pub const VISSET_VERSION: u64 = 1;
/// File name of the manifest inside a visibility-set folder.
pub const VISSET_MANIFEST: &str = "manifest.json";

/// Phase centre in the manifest.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub(crate) struct PhaseCentre {
    pub(crate) ra_rad: f64,
    pub(crate) dec_rad: f64,
}

/// One `.npy` file.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub(crate) struct ArrayEntry {
    pub(crate) file: String,
    /// numpy dtype string, e.g. `<f8`.
    pub(crate) dtype: String,
    pub(crate) shape: Vec<usize>,
    pub(crate) unit: String,
    pub(crate) description: String,
}

/// The manifest as stored (field order is the JSON order).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub(crate) struct Manifest {
    pub(crate) format: String,
    pub(crate) version: u64,
    pub(crate) sign_convention: String,
    pub(crate) uvw_convention: String,
    pub(crate) correlations: Vec<String>,
    pub(crate) n_rows: usize,
    pub(crate) n_channels: usize,
    pub(crate) n_correlations: usize,
    pub(crate) n_times: usize,
    pub(crate) channel_width_hz: f64,
    pub(crate) integration_s: f64,
    pub(crate) phase_centre: PhaseCentre,
    pub(crate) seed: u64,
    pub(crate) truth_hash: String,
    pub(crate) arrays: BTreeMap<String, ArrayEntry>,
}

pub(crate) const SIGN_CONVENTION: &str = "V(u,v,w) = sum_k S_k E_i(l_k,m_k) conj(E_j(l_k,m_k)) \
exp(-2 pi i (u l_k + v m_k + w (n_k - 1))), n = sqrt(1 - l^2 - m^2), (u,v,w) in wavelengths; \
l towards east, m towards north; point flux not divided by n";
pub(crate) const UVW_CONVENTION: &str =
    "uvw_m is in metres for the baseline vector position(antenna2) - \
position(antenna1); multiply by frequency / 299792458 m/s for wavelengths";

/// Shape rule of an array in terms of the set's counts.
#[derive(Clone, Copy, Debug)]
pub(crate) enum ShapeRule {
    Rows,
    RowsBy3,
    Channels,
    Times,
    RowsChannelsPols,
}

/// What each array must be.
pub(crate) struct ArraySpec {
    pub(crate) name: &'static str,
    pub(crate) dtype: &'static str,
    pub(crate) shape: ShapeRule,
    pub(crate) unit: &'static str,
    pub(crate) description: &'static str,
}

/// The arrays of format version 1.
pub(crate) const ARRAYS: [ArraySpec; 10] = [
    ArraySpec {
        name: "uvw_m",
        dtype: "<f8",
        shape: ShapeRule::RowsBy3,
        unit: "m",
        description: "baseline (u, v, w) per row, antenna2 - antenna1",
    },
    ArraySpec {
        name: "antenna1",
        dtype: "<u4",
        shape: ShapeRule::Rows,
        unit: "",
        description: "first antenna index per row",
    },
    ArraySpec {
        name: "antenna2",
        dtype: "<u4",
        shape: ShapeRule::Rows,
        unit: "",
        description: "second antenna index per row",
    },
    ArraySpec {
        name: "time_index",
        dtype: "<u4",
        shape: ShapeRule::Rows,
        unit: "",
        description: "index into hour_angles_rad per row",
    },
    ArraySpec {
        name: "frequencies_hz",
        dtype: "<f8",
        shape: ShapeRule::Channels,
        unit: "Hz",
        description: "channel centre frequencies, increasing",
    },
    ArraySpec {
        name: "hour_angles_rad",
        dtype: "<f8",
        shape: ShapeRule::Times,
        unit: "rad",
        description: "hour angle of the phase centre per time index",
    },
    ArraySpec {
        name: "parallactic_angles_rad",
        dtype: "<f8",
        shape: ShapeRule::Times,
        unit: "rad",
        description: "parallactic angle per time index",
    },
    ArraySpec {
        name: "data",
        dtype: "<c16",
        shape: ShapeRule::RowsChannelsPols,
        unit: "Jy",
        description: "visibilities [row][channel][correlation]",
    },
    ArraySpec {
        name: "weights",
        dtype: "<f8",
        shape: ShapeRule::RowsChannelsPols,
        unit: "Jy^-2",
        description: "1/sigma^2 of one real or imaginary part",
    },
    ArraySpec {
        name: "flags",
        dtype: "|b1",
        shape: ShapeRule::RowsChannelsPols,
        unit: "",
        description: "true = do not use",
    },
];

impl ShapeRule {
    pub(crate) fn shape(self, m: &Manifest) -> Vec<usize> {
        match self {
            ShapeRule::Rows => vec![m.n_rows],
            ShapeRule::RowsBy3 => vec![m.n_rows, 3],
            ShapeRule::Channels => vec![m.n_channels],
            ShapeRule::Times => vec![m.n_times],
            ShapeRule::RowsChannelsPols => vec![m.n_rows, m.n_channels, m.n_correlations],
        }
    }
}

/// Bytes per element of the dtypes above.
pub(crate) fn item_size(dtype: &str) -> Option<u64> {
    match dtype {
        "<f8" => Some(8),
        "<u4" => Some(4),
        "<c16" => Some(16),
        "|b1" => Some(1),
        _ => None,
    }
}
