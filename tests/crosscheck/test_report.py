"""Cross-check of the report crate's files: astropy reads the FITS images and their WCS, numpy
reads the visibility set, both with no help from beamfloor."""
import json

import numpy as np
import pytest
from astropy.io import fits
from astropy.wcs import WCS
from conftest import EXPORT_DIR, load_export


@pytest.fixture(scope="module")
def exp():
    return load_export("report_files")


def sin_inverse(l, m, ra0, dec0):
    """(RA, Dec) in degrees of direction cosines (l, m) about (ra0, dec0) (radians).

    Inverts l = cos d sin(a - a0), m = sin d cos d0 - cos d sin d0 cos(a - a0) with
    n = sin d sin d0 + cos d cos d0 cos(a - a0) = sqrt(1 - l^2 - m^2): the orthographic (SIN)
    projection of Greisen & Calabretta (2002) / Calabretta & Greisen (2002), written out here
    independently of astropy."""
    n = np.sqrt(1.0 - l * l - m * m)
    dec = np.arcsin(m * np.cos(dec0) + n * np.sin(dec0))
    dra = np.arctan2(l, n * np.cos(dec0) - m * np.sin(dec0))
    return np.degrees(ra0 + dra) % 360.0, np.degrees(dec)


def sin_forward(ra_deg, dec_deg, ra0, dec0):
    """(l, m) of (RA, Dec) in degrees: the defining formulas above."""
    a, d = np.radians(ra_deg), np.radians(dec_deg)
    l = np.cos(d) * np.sin(a - ra0)
    m = np.sin(d) * np.cos(dec0) - np.cos(d) * np.sin(dec0) * np.cos(a - ra0)
    return l, m


def wrap_deg(x):
    return (np.asarray(x) + 180.0) % 360.0 - 180.0


def test_taylor_cube_wcs_matches_sin_projection(exp):
    with fits.open(EXPORT_DIR / exp["taylor_fits"]) as hdul:
        hdr = hdul[0].header
        wcs = WCS(hdr)
    assert wcs.wcs.ctype[0] == "RA---SIN" and wcs.wcs.ctype[1] == "DEC--SIN"
    ra0, dec0 = exp["ra0_rad"], exp["dec0_rad"]
    for p in exp["pixels"]:
        # astropy's pixel_to_world_values takes 0-based pixels, the same origin as ImageGeometry.
        ra, dec, term = wcs.pixel_to_world_values(p["x"], p["y"], 0)
        ra_ref, dec_ref = sin_inverse(p["l"], p["m"], ra0, dec0)
        # 1e-9 deg: the header stores values with 15 significant digits (cfitsio), so the
        # printed CRVAL/CDELT contribute < 1e-12 deg; wcslib works in double precision.
        assert abs(wrap_deg(ra - ra_ref)) < 1e-9, (p, ra, ra_ref)
        assert abs(dec - dec_ref) < 1e-9, (p, dec, dec_ref)
        l, m = sin_forward(ra, dec, ra0, dec0)
        assert abs(l - p["l"]) < np.radians(1e-9) and abs(m - p["m"]) < np.radians(1e-9)
        assert term == 0.0
    # The field is wide enough that a linear (non-SIN) mapping would be off by far more than the
    # tolerance: check the corner's SIN correction is significant (> 1e-4 deg).
    corner = exp["pixels"][0]
    lin_dec = np.degrees(dec0 + corner["m"])
    assert abs(sin_inverse(corner["l"], corner["m"], ra0, dec0)[1] - lin_dec) > 1e-4


def test_taylor_cube_data_and_keys(exp):
    with fits.open(EXPORT_DIR / exp["taylor_fits"]) as hdul:
        hdr = hdul[0].header
        data = hdul[0].data
    assert hdr["BITPIX"] == -64 and hdr["NAXIS"] == 3
    assert (hdr["NAXIS1"], hdr["NAXIS2"], hdr["NAXIS3"]) == (exp["nx"], exp["ny"], 3)
    # numpy's axis order is the reverse of FITS's: [taylor][y][x].
    assert data.shape == tuple(exp["shape"])
    want = np.array(exp["values_nan_as_minus_1e300"]).reshape(exp["shape"])
    t, y, x = exp["nan_pixel"]
    assert np.isnan(data[t, y, x])
    want[t, y, x] = np.nan
    np.testing.assert_array_equal(data, want)
    assert hdr["CRPIX1"] == exp["nx"] // 2 + 1 and hdr["CRPIX2"] == exp["ny"] // 2 + 1
    cell_deg = np.degrees(exp["cell_rad"])
    # 15 significant digits in the header: relative 1e-14.
    assert hdr["CDELT1"] == pytest.approx(-cell_deg, rel=1e-14)
    assert hdr["CDELT2"] == pytest.approx(cell_deg, rel=1e-14)
    assert hdr["CTYPE3"] == "TAYTERM"
    assert hdr["NU0_HZ"] == pytest.approx(exp["reference_frequency_hz"], rel=1e-14)
    assert hdr["BUNIT"] == "Jy/beam"
    assert hdr["BMAJ"] == pytest.approx(np.degrees(exp["bmaj_rad"]), rel=1e-14)
    assert hdr["BMIN"] == pytest.approx(np.degrees(exp["bmin_rad"]), rel=1e-14)
    assert hdr["BPA"] == pytest.approx(np.degrees(exp["bpa_rad"]), rel=1e-14)
    assert hdr["RADESYS"] == "FK5" and hdr["EQUINOX"] == 2000.0
    assert hdr["SEED"] == exp["seed"]
    assert hdr["TRUTHASH"] == exp["truth_hash"]
    assert hdr["STRATEGY"] == exp["strategy"]
    assert "EXTNAME" not in hdr
    assert any("crosscheck export" in h for h in hdr["HISTORY"])


def test_frequency_cube_and_plain_image(exp):
    with fits.open(EXPORT_DIR / exp["freq_fits"]) as hdul:
        hdr = hdul[0].header
        data = hdul[0].data
    wcs = WCS(hdr)
    assert hdr["CTYPE3"] == "FREQ" and hdr["BUNIT"] == "Jy/pixel" and "BMAJ" not in hdr
    assert data.shape == (2, exp["ny"], exp["nx"])
    for k in range(2):
        _, _, f = wcs.pixel_to_world_values(3, 4, k)
        assert f == pytest.approx(exp["first_hz"] + k * exp["step_hz"], rel=1e-14)
    with fits.open(EXPORT_DIR / exp["image_fits"]) as hdul:
        hdr = hdul[0].header
        data = hdul[0].data
    assert hdr["NAXIS"] == 2 and data.shape == (exp["ny"], exp["nx"])
    want = np.array(exp["values_nan_as_minus_1e300"]).reshape(exp["shape"])[2]
    np.testing.assert_array_equal(data, want)
    wcs = WCS(hdr)
    p = exp["pixels"][5]
    ra, dec = wcs.pixel_to_world_values(p["x"], p["y"])
    ra_ref, dec_ref = sin_inverse(p["l"], p["m"], exp["ra0_rad"], exp["dec0_rad"])
    assert abs(wrap_deg(ra - ra_ref)) < 1e-9 and abs(dec - dec_ref) < 1e-9


def test_visset_reads_with_plain_numpy(exp):
    v = exp["visset"]
    d = EXPORT_DIR / v["dir"]
    nr, nc, nt = v["n_rows"], v["n_channels"], v["n_times"]
    expected = {
        "uvw_m": (np.float64, (nr, 3), np.array(v["uvw_m"]).reshape(nr, 3)),
        "antenna1": (np.uint32, (nr,), np.array(v["antenna1"])),
        "antenna2": (np.uint32, (nr,), np.array(v["antenna2"])),
        "time_index": (np.uint32, (nr,), np.array(v["time_index"])),
        "frequencies_hz": (np.float64, (nc,), np.array(v["frequencies_hz"])),
        "hour_angles_rad": (np.float64, (nt,), np.array(v["hour_angles_rad"])),
        "parallactic_angles_rad": (np.float64, (nt,), np.array(v["parallactic_angles_rad"])),
        "data": (np.complex128, (nr, nc, 2),
                 (np.array(v["data_re_im"])[:, 0] + 1j * np.array(v["data_re_im"])[:, 1]).reshape(nr, nc, 2)),
        "weights": (np.float64, (nr, nc, 2), np.array(v["weights"]).reshape(nr, nc, 2)),
        "flags": (np.bool_, (nr, nc, 2), np.array(v["flags"]).reshape(nr, nc, 2)),
    }
    with open(d / "manifest.json") as f:
        manifest = json.load(f)
    assert manifest["format"] == "beamfloor-visset" and manifest["version"] == 1
    assert manifest["correlations"] == ["RR", "LL"]
    assert str(manifest["seed"]) == v["seed"] and manifest["truth_hash"] == v["truth_hash"]
    assert manifest["channel_width_hz"] == v["channel_width_hz"]
    assert manifest["integration_s"] == v["integration_s"]
    assert "exp(-2 pi i (u l_k + v m_k + w (n_k - 1)))" in manifest["sign_convention"]
    assert set(manifest["arrays"]) == set(expected)
    for name, (dtype, shape, values) in expected.items():
        a = np.load(d / f"{name}.npy")
        assert a.dtype == dtype, name
        assert a.shape == shape, name
        # Exact: JSON carries shortest round-trip decimals and .npy the raw doubles.
        np.testing.assert_array_equal(a, values.astype(dtype), err_msg=name)
        entry = manifest["arrays"][name]
        assert entry["file"] == f"{name}.npy"
        assert tuple(entry["shape"]) == a.shape
        assert np.dtype(entry["dtype"]) == a.dtype
