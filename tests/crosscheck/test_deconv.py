"""Cross-check of the deconvolution crate against numpy / scipy."""
from collections import deque

import numpy as np
from numpy.polynomial import polynomial as P
from scipy.optimize import curve_fit

from conftest import load_export


def test_hessian_is_mean_of_taylor_weight_products():
    # H_ij = sum_nu w_i w_j / sum_nu 1 with w_t = ((nu - nu0)/nu0)^t and equal channel weights
    # (Rau & Cornwell 2011, A&A 532, A71): the PSFs' centre values, computed here directly.
    d = load_export("deconv_mfs")
    nu = np.array(d["frequencies_hz"])
    w = (nu - d["ref_freq_hz"]) / d["ref_freq_hz"]
    want = np.array([[np.mean(w ** (i + j)) for j in range(3)] for i in range(3)])
    # The Rust side sums a DFT at the phase centre: exact but for rounding.
    np.testing.assert_allclose(d["hessian"], want, rtol=1e-12, atol=1e-14)


def test_clean_alpha_is_least_squares_taylor_fit():
    # The least-squares Taylor polynomial of S = (nu/nu0)^alpha over the channels (numpy
    # polyfit in x = (nu - nu0)/nu0) gives alpha_hat = c1/c0 and beta_hat = c2/c0 - a(a-1)/2.
    d = load_export("deconv_mfs")
    nu = np.array(d["frequencies_hz"])
    nu0 = d["ref_freq_hz"]
    x = (nu - nu0) / nu0
    s = (nu / nu0) ** d["alpha_true"]
    for entry in d["cleaned"]:
        c = P.polyfit(x, s, entry["nterms"] - 1)
        a = c[1] / c[0]
        # 1e-3: the tolerance the Rust tests use (see crates/deconv/tests/integration/mfs.rs).
        assert abs(entry["alpha"] - a) < 1e-3, (entry, a)
        if entry["nterms"] >= 3:
            b = c[2] / c[0] - a * (a - 1) / 2
            assert abs(entry["beta"] - b) < 1e-3, (entry, b)


def test_beam_fit_matches_scipy_curve_fit():
    # Independent fit of the same main lobe (4-connected pixels >= 35 % of the peak) by
    # scipy.optimize.curve_fit with an elliptical Gaussian of unit peak at the centre.
    d = load_export("deconv_mfs")
    psf = np.array(d["psf_patch"])
    psf = psf / psf[psf.shape[0] // 2, psf.shape[1] // 2]
    c = psf.shape[0] // 2
    seen = np.zeros_like(psf, dtype=bool)
    seen[c, c] = True
    todo = deque([(c, c)])
    pts = []
    while todo:
        y, x = todo.popleft()
        pts.append((y, x))
        for yy, xx in ((y - 1, x), (y + 1, x), (y, x - 1), (y, x + 1)):
            if not seen[yy, xx] and psf[yy, xx] >= d["lobe_fraction"]:
                seen[yy, xx] = True
                todo.append((yy, xx))
    ys, xs = np.array(pts).T
    cell = d["cell_rad"]
    # Sky offsets: l grows towards decreasing x, m with y (image convention of the project).
    l = -(xs - c) * cell
    m = (ys - c) * cell
    vals = psf[ys, xs]

    def model(lm, major, minor, pa):
        ll, mm = lm
        a = ll * np.sin(pa) + mm * np.cos(pa)
        b = ll * np.cos(pa) - mm * np.sin(pa)
        return np.exp(-4 * np.log(2) * (a**2 / major**2 + b**2 / minor**2))

    beam = d["beam"]
    p0 = [beam["major_fwhm_rad"] * 1.1, beam["minor_fwhm_rad"] * 0.9, beam["position_angle_rad"] + 0.1]
    (major, minor, pa), _ = curve_fit(model, (l, m), vals, p0=p0)
    if major < minor:
        major, minor, pa = minor, major, pa + np.pi / 2
    pa = (pa + np.pi / 2) % np.pi - np.pi / 2
    # Both minimise the same sum of squares; 1e-6 relative allows for the optimisers' stopping.
    np.testing.assert_allclose(major, beam["major_fwhm_rad"], rtol=1e-6)
    np.testing.assert_allclose(minor, beam["minor_fwhm_rad"], rtol=1e-6)
    assert abs(pa - beam["position_angle_rad"]) < 1e-5
