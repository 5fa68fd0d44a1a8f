//! Visibility sets on disk: one `.npy` file per array plus `manifest.json`, in one folder.

use std::collections::BTreeMap;
use std::f64::consts::FRAC_PI_2;
use std::fs::File;
use std::io::{BufReader, Seek};
use std::path::{Path, PathBuf};

use beamfloor_core::Correlation;
use beamfloor_predict::{VisSet, VisSetError};
use ndarray::{Array, ArrayView1, Dimension};
use ndarray_npy::{read_npy, write_npy, ReadableElement, WritableElement};

use crate::atomic::TempSibling;
use crate::visset_manifest::{
    item_size, ArrayEntry, ArraySpec, Manifest, PhaseCentre, ARRAYS, SIGN_CONVENTION,
    UVW_CONVENTION, VISSET_FORMAT, VISSET_MANIFEST, VISSET_VERSION,
};
use crate::ReportError;

/// Write `vis` into the folder `dir` (created; an existing visibility-set folder there is
/// replaced, anything else is refused).
///
/// The folder holds `uvw_m.npy` (f64 `[row][3]`, m), `antenna1.npy`, `antenna2.npy`,
/// `time_index.npy` (u32 `[row]`), `frequencies_hz.npy` (f64 `[chan]`), `hour_angles_rad.npy`,
/// `parallactic_angles_rad.npy` (f64 `[time]`), `data.npy` (complex128 `[row][chan][pol]`, Jy),
/// `weights.npy` (f64, same shape), `flags.npy` (bool, same shape) and `manifest.json` (format
/// name and version, counts, every file's dtype/shape/unit, the sign convention, correlation
/// order, channel width, integration time, phase centre, seed and truth hash). `numpy.load`
/// reads each array with no help. Everything is written into a temporary folder next to `dir`
/// and renamed into place at the end.
pub fn write_visset(dir: &Path, vis: &VisSet) -> Result<(), ReportError> {
    vis.validate().map_err(|source| ReportError::InvalidVisSet { path: dir.into(), source })?;
    if dir.exists() && !dir.join(VISSET_MANIFEST).is_file() {
        return Err(ReportError::DestinationExists { path: dir.into() });
    }
    let temp = TempSibling::dir(dir)?;
    let t = temp.path();
    let put = |name: &str| t.join(format!("{name}.npy"));
    npy(&put("uvw_m"), &vis.uvw_m)?;
    npy(&put("antenna1"), &ArrayView1::from(&vis.antenna1[..]))?;
    npy(&put("antenna2"), &ArrayView1::from(&vis.antenna2[..]))?;
    npy(&put("time_index"), &ArrayView1::from(&vis.time_index[..]))?;
    npy(&put("frequencies_hz"), &ArrayView1::from(&vis.frequencies_hz[..]))?;
    npy(&put("hour_angles_rad"), &ArrayView1::from(&vis.hour_angles_rad[..]))?;
    npy(&put("parallactic_angles_rad"), &ArrayView1::from(&vis.parallactic_angles_rad[..]))?;
    npy(&put("data"), &vis.data)?;
    npy(&put("weights"), &vis.weights)?;
    npy(&put("flags"), &vis.flags)?;

    let mut manifest = Manifest {
        format: VISSET_FORMAT.into(),
        version: VISSET_VERSION,
        sign_convention: SIGN_CONVENTION.into(),
        uvw_convention: UVW_CONVENTION.into(),
        correlations: vis.correlations.iter().map(|c| c.label().to_string()).collect(),
        n_rows: vis.n_rows(),
        n_channels: vis.n_channels(),
        n_correlations: vis.n_correlations(),
        n_times: vis.n_times(),
        channel_width_hz: vis.channel_width_hz,
        integration_s: vis.integration_s,
        phase_centre: PhaseCentre {
            ra_rad: vis.phase_centre_ra_rad,
            dec_rad: vis.phase_centre_dec_rad,
        },
        seed: vis.seed,
        truth_hash: vis.truth_hash.clone(),
        arrays: BTreeMap::new(),
    };
    for spec in &ARRAYS {
        let shape = spec.shape.shape(&manifest);
        manifest.arrays.insert(
            spec.name.into(),
            ArrayEntry {
                file: format!("{}.npy", spec.name),
                dtype: spec.dtype.into(),
                shape,
                unit: spec.unit.into(),
                description: spec.description.into(),
            },
        );
    }
    let mpath = t.join(VISSET_MANIFEST);
    let text = serde_json::to_string_pretty(&manifest).map_err(|e| ReportError::Manifest {
        path: mpath.clone(),
        why: format!("cannot serialize: {e}"),
    })?;
    std::fs::write(&mpath, text + "\n").map_err(|e| ReportError::io(&mpath, "writing", e))?;
    temp.commit_replacing_dir()
}

fn npy<A, S, D>(path: &Path, array: &ndarray::ArrayBase<S, D>) -> Result<(), ReportError>
where
    A: WritableElement,
    S: ndarray::Data<Elem = A>,
    D: Dimension,
{
    write_npy(path, array).map_err(|source| ReportError::NpyWrite { path: path.into(), source })
}

/// Read a visibility-set folder written by [`write_visset`], checking everything on the way.
///
/// In order: the manifest parses and names format `beamfloor-visset` version 1; it lists every
/// array with the dtype the format requires and a shape that agrees with its own row, channel,
/// correlation and time counts; every file exists, its `.npy` header has that dtype and shape,
/// and its size is exactly header + data (so a truncated file is caught before parsing); finally
/// the assembled set passes [`VisSet::validate`]. Each failure is a [`ReportError`] naming the
/// file.
pub fn read_visset(dir: &Path) -> Result<VisSet, ReportError> {
    let mpath = dir.join(VISSET_MANIFEST);
    if !mpath.is_file() {
        return Err(ReportError::MissingFile { path: mpath });
    }
    let text =
        std::fs::read_to_string(&mpath).map_err(|e| ReportError::io(&mpath, "reading", e))?;
    let manifest = parse_manifest(&mpath, &text)?;
    let m = &manifest;
    let correlations = m
        .correlations
        .iter()
        .map(|c| match c.as_str() {
            "RR" => Ok(Correlation::RR),
            "LL" => Ok(Correlation::LL),
            other => Err(ReportError::Manifest {
                path: mpath.clone(),
                why: format!("unknown correlation {other:?} (known: RR, LL)"),
            }),
        })
        .collect::<Result<Vec<_>, _>>()?;
    if correlations.len() != m.n_correlations {
        return Err(ReportError::Manifest {
            path: mpath,
            why: format!(
                "{} correlations listed but n_correlations = {}",
                correlations.len(),
                m.n_correlations
            ),
        });
    }
    for (what, v) in [("channel_width_hz", m.channel_width_hz), ("integration_s", m.integration_s)]
    {
        if !(v.is_finite() && v > 0.0) {
            return Err(ReportError::Manifest {
                path: mpath,
                why: format!("{what} = {v} must be finite and positive"),
            });
        }
    }
    let f64s = |name: &'static str| -> Result<Vec<f64>, ReportError> {
        Ok(load::<f64, ndarray::Ix1>(dir, &mpath, m, name)?.to_vec())
    };
    let u32s = |name: &'static str| -> Result<Vec<u32>, ReportError> {
        Ok(load::<u32, ndarray::Ix1>(dir, &mpath, m, name)?.to_vec())
    };
    let vis = VisSet {
        frequencies_hz: f64s("frequencies_hz")?,
        channel_width_hz: m.channel_width_hz,
        integration_s: m.integration_s,
        hour_angles_rad: f64s("hour_angles_rad")?,
        parallactic_angles_rad: f64s("parallactic_angles_rad")?,
        phase_centre_ra_rad: m.phase_centre.ra_rad,
        phase_centre_dec_rad: m.phase_centre.dec_rad,
        antenna1: u32s("antenna1")?,
        antenna2: u32s("antenna2")?,
        time_index: u32s("time_index")?,
        uvw_m: load(dir, &mpath, m, "uvw_m")?,
        data: load(dir, &mpath, m, "data")?,
        weights: load(dir, &mpath, m, "weights")?,
        flags: load(dir, &mpath, m, "flags")?,
        correlations,
        seed: m.seed,
        truth_hash: m.truth_hash.clone(),
    };
    vis.validate().map_err(|source| ReportError::InvalidVisSet { path: dir.into(), source })?;
    check_finite(&vis).map_err(|source| ReportError::InvalidVisSet { path: dir.into(), source })?;
    Ok(vis)
}

/// Values `VisSet::validate` leaves to the producer but a set read from disk must not hold: a
/// non-finite unflagged visibility, hour angle, parallactic angle or phase centre (a flagged
/// sample may hold anything, it is never used).
fn check_finite(vis: &VisSet) -> Result<(), VisSetError> {
    let bad = |field, value: String, why| Err(VisSetError::Value { field, value, why });
    for (field, values) in [
        ("hour_angles_rad", &vis.hour_angles_rad),
        ("parallactic_angles_rad", &vis.parallactic_angles_rad),
    ] {
        if let Some((i, v)) = values.iter().enumerate().find(|(_, v)| !v.is_finite()) {
            return bad(field, format!("{v} at index {i}"), "angles must be finite");
        }
    }
    let centre = [vis.phase_centre_ra_rad, vis.phase_centre_dec_rad];
    if centre.iter().any(|v| !v.is_finite()) || vis.phase_centre_dec_rad.abs() > FRAC_PI_2 {
        return bad(
            "phase_centre",
            format!("({}, {})", centre[0], centre[1]),
            "the phase centre must be finite with |dec| ≤ π/2",
        );
    }
    let unflagged_bad = vis
        .data
        .indexed_iter()
        .zip(vis.flags.iter())
        .find(|((_, v), &flag)| !flag && (!v.re.is_finite() || !v.im.is_finite()));
    if let Some((((r, c, p), v), _)) = unflagged_bad {
        return bad(
            "data",
            format!("{v} at row {r}, channel {c}, correlation {p}"),
            "unflagged visibilities must be finite (flag the sample instead)",
        );
    }
    Ok(())
}

fn parse_manifest(mpath: &Path, text: &str) -> Result<Manifest, ReportError> {
    let bad = |why: String| ReportError::Manifest { path: mpath.into(), why };
    // Format and version first, so a future layout gets a version error, not a field error.
    let value: serde_json::Value =
        serde_json::from_str(text).map_err(|e| bad(format!("not valid JSON: {e}")))?;
    let format = value.get("format").and_then(|v| v.as_str()).unwrap_or("<missing>");
    let version = value.get("version").and_then(|v| v.as_u64()).unwrap_or(0);
    if format != VISSET_FORMAT || version != VISSET_VERSION {
        return Err(ReportError::UnsupportedFormat {
            path: mpath.into(),
            format: format.into(),
            version,
            supported_format: VISSET_FORMAT,
            supported_version: VISSET_VERSION,
        });
    }
    let m: Manifest = serde_json::from_value(value).map_err(|e| bad(format!("{e}")))?;
    for spec in &ARRAYS {
        let entry = m
            .arrays
            .get(spec.name)
            .ok_or_else(|| bad(format!("no entry for array `{}`", spec.name)))?;
        check_entry(mpath, &m, spec, entry)?;
    }
    Ok(m)
}

fn check_entry(
    mpath: &Path,
    m: &Manifest,
    spec: &ArraySpec,
    entry: &ArrayEntry,
) -> Result<(), ReportError> {
    let plain = Path::new(&entry.file).file_name().is_some_and(|n| n == entry.file.as_str());
    if !plain || entry.file == ".." || !entry.file.ends_with(".npy") {
        return Err(ReportError::Manifest {
            path: mpath.into(),
            why: format!(
                "array `{}`: file {:?} must be a plain `.npy` file name",
                spec.name, entry.file
            ),
        });
    }
    if entry.dtype != spec.dtype {
        return Err(ReportError::DtypeMismatch {
            path: mpath.into(),
            expected: spec.dtype.into(),
            found: format!("{} (declared for `{}`)", entry.dtype, spec.name),
        });
    }
    let expected = spec.shape.shape(m);
    if entry.shape != expected {
        return Err(ReportError::ShapeMismatch {
            path: mpath.into(),
            expected,
            found: entry.shape.clone(),
        });
    }
    Ok(())
}

/// Load one array after checking its header, dtype, shape and byte count against the manifest.
fn load<A, D>(
    dir: &Path,
    mpath: &Path,
    m: &Manifest,
    name: &'static str,
) -> Result<Array<A, D>, ReportError>
where
    A: ReadableElement,
    D: Dimension,
{
    let entry = m.arrays.get(name).ok_or_else(|| ReportError::Manifest {
        path: mpath.into(),
        why: format!("no entry for array `{name}`"),
    })?;
    let path: PathBuf = dir.join(&entry.file);
    if !path.is_file() {
        return Err(ReportError::MissingFile { path });
    }
    let file = File::open(&path).map_err(|e| ReportError::io(&path, "opening", e))?;
    let file_len =
        file.metadata().map_err(|e| ReportError::io(&path, "reading the size of", e))?.len();
    let mut reader = BufReader::new(file);
    let header = ndarray_npy::npy::header::Header::from_reader(&mut reader)
        .map_err(|e| ReportError::NpyHeader { path: path.clone(), why: e.to_string() })?;
    let header_len = reader.stream_position().map_err(|e| ReportError::io(&path, "reading", e))?;
    // The descriptor prints as a Python literal: a dtype string comes out quoted, '<f8'.
    let found_dtype = header.type_descriptor.to_string().trim_matches(['\'', '"']).to_string();
    if found_dtype != entry.dtype {
        return Err(ReportError::DtypeMismatch {
            path,
            expected: entry.dtype.clone(),
            found: found_dtype,
        });
    }
    if header.shape != entry.shape {
        return Err(ReportError::ShapeMismatch {
            path,
            expected: entry.shape.clone(),
            found: header.shape,
        });
    }
    let item = item_size(&entry.dtype).unwrap_or(1);
    // A corrupt shape may claim more elements than a u64 counts: that can never match the file.
    let expected_bytes = entry
        .shape
        .iter()
        .try_fold(item, |acc, &n| acc.checked_mul(n as u64))
        .and_then(|data| data.checked_add(header_len))
        .unwrap_or(u64::MAX);
    if file_len != expected_bytes {
        return Err(ReportError::WrongFileSize { path, expected_bytes, found_bytes: file_len });
    }
    drop(reader);
    read_npy(&path).map_err(|source| ReportError::NpyRead { path, source })
}
