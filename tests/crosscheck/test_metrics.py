"""Cross-check of the metrics crate: mask geometry, floor statistics, radial profile and the
spectral-index extraction, recomputed with numpy and scipy."""
import numpy as np
import scipy.interpolate
import scipy.stats
from conftest import load_export


def _lm_grids(d):
    # Pixel <-> (l, m) mapping of the image geometry: l = -(x - nx//2) cell, m = (y - ny//2) cell.
    y, x = np.mgrid[0:d["ny"], 0:d["nx"]]
    return -(x - d["nx"] // 2) * d["cell_rad"], (y - d["ny"] // 2) * d["cell_rad"]


def test_source_free_mask_by_brute_force():
    d = load_export("metrics_checks")
    nx, ny = d["nx"], d["ny"]
    l, m = _lm_grids(d)
    mx = int(np.ceil(d["edge_margin_fraction"] * nx))
    my = int(np.ceil(d["edge_margin_fraction"] * ny))
    y, x = np.mgrid[0:ny, 0:nx]
    keep = (x >= mx) & (x < nx - mx) & (y >= my) & (y < ny - my) & np.array(d["validity"])
    for s in d["sources"]:
        r = d["exclusion_beams"] * d["beam_major_fwhm_rad"] + s["extent"]
        keep &= np.hypot(l - s["l"], m - s["m"]) > r
    mask = np.array(d["mask"])
    # A pixel exactly on a boundary circle could go either way by rounding; the export's radii
    # (3.68 and 7.18 cells, off-pixel centres) keep every pixel >= 0.01 cell from one.
    r_all = [d["exclusion_beams"] * d["beam_major_fwhm_rad"] + s["extent"] for s in d["sources"]]
    gap = min(np.min(np.abs(np.hypot(l - s["l"], m - s["m"]) - r)) for s, r in zip(d["sources"], r_all))
    assert gap > 0.01 * d["cell_rad"]
    assert np.array_equal(mask, keep)
    assert 0 < mask.sum() < mask.size


def test_floor_statistics_match_numpy_and_scipy():
    d = load_export("metrics_checks")
    v = np.array(d["image"])[np.array(d["mask"])]
    s = d["stats"]
    assert s["n"] == v.size
    # Sums of a few hundred O(1) values: agreement to 1e-12 relative covers rounding order.
    np.testing.assert_allclose(s["mean"], v.mean(), rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(s["rms"], np.sqrt(np.mean(v**2)), rtol=1e-12)
    np.testing.assert_allclose(s["std"], np.std(v, ddof=1), rtol=1e-12)
    # scipy's 'normal' scale is 1/Phi^-1(3/4) (Rousseeuw & Croux 1993); medians are exact.
    np.testing.assert_allclose(
        s["mad_sigma"], scipy.stats.median_abs_deviation(v, scale="normal"), rtol=1e-14
    )


def test_radial_profile_matches_numpy_binning():
    d = load_export("metrics_checks")
    l, m = _lm_grids(d)
    mask = np.array(d["mask"])
    img = np.array(d["image"])
    r = np.hypot(l, m)[mask]
    v = img[mask]
    idx = np.floor(r / d["radial_bin_rad"]).astype(int)
    expected = [i for i in range(idx.max() + 1) if np.any(idx == i)]
    assert len(d["profile"]) == len(expected)
    for b, i in zip(d["profile"], expected):
        sel = idx == i
        np.testing.assert_allclose(b["r_inner"], i * d["radial_bin_rad"], rtol=1e-14)
        assert b["n"] == sel.sum()
        np.testing.assert_allclose(b["r_mean"], r[sel].mean(), rtol=1e-12)
        np.testing.assert_allclose(b["mean"], v[sel].mean(), rtol=1e-12, atol=1e-14)
        np.testing.assert_allclose(b["rms"], np.sqrt(np.mean(v[sel] ** 2)), rtol=1e-12)


def test_alpha_beta_reproduce_the_taylor_terms():
    # A curved power law S0 x^(alpha + beta ln x), x = 1 + t, with the exported alpha and beta
    # must have Taylor coefficients in t equal to the exported terms (I0, I1, I2), the
    # definition of the terms in multi-term MFS (Rau & Cornwell 2011). scipy's
    # approximate_taylor_polynomial fits them from samples at scale 1e-3; its error on the t^2
    # coefficient is ~1e-9 here (measured), so 1e-7 is a safe tolerance, while a wrong sign in
    # the alpha(alpha - 1)/2 term would shift I2 by |alpha| I0 = O(1).
    d = load_export("metrics_checks")
    for e in d["spectral"]:
        i0, i1, i2 = e["terms"]
        a, b = e["alpha"], e["beta"]

        def s(t):
            lx = np.log1p(t)
            return i0 * np.exp(a * lx + b * lx * lx)

        p = scipy.interpolate.approximate_taylor_polynomial(s, 0.0, 4, 1e-3)
        c = p.coeffs[::-1]  # poly1d stores the highest power first
        np.testing.assert_allclose(c[0], i0, rtol=1e-9)
        np.testing.assert_allclose(c[1], i1, rtol=1e-7, atol=1e-7)
        np.testing.assert_allclose(c[2], i2, rtol=1e-7, atol=1e-7)
