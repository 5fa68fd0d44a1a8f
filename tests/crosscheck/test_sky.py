"""Cross-checks of the sky crate: Taylor fits against numpy, SIN projection against astropy."""
import numpy as np
import pytest
from astropy.wcs import WCS
from conftest import load_export


def test_taylor_fit_matches_numpy_polyfit():
    # numpy.polynomial.polynomial.polyfit minimises sum (w_k (y_k - p(x_k)))^2, so it takes the
    # square root of our inverse-variance weights. Tolerance 1e-12 relative to the largest
    # coefficient: both solve the same well-conditioned (cond ~1e2-1e4) problem by orthogonal
    # factorisation, so they agree to ~1e-14.
    cases = load_export("sky_taylor_fits")["cases"]
    assert len(cases) >= 40
    for c in cases:
        nu = np.array(c["frequencies_hz"])
        nu0 = c["ref_freq_hz"]
        x = (nu - nu0) / nu0
        # Recompute the spectrum from its definition S0 (nu/nu0)^(alpha + beta ln(nu/nu0)).
        lr = np.log(nu / nu0)
        y = c["flux_jy"] * (nu / nu0) ** (c["alpha"] + c["beta"] * lr)
        np.testing.assert_allclose(c["values"], y, rtol=1e-14)
        w = np.sqrt(np.array(c["weights"]))
        ref = np.polynomial.polynomial.polyfit(x, y, c["n_terms"] - 1, w=w)
        got = np.array(c["coefficients"])
        scale = np.max(np.abs(ref))
        assert np.max(np.abs(got - ref)) <= 1e-12 * scale, (c["n_terms"], got, ref)


def test_analytic_taylor_matches_numerical_derivatives():
    # I_t = S^(t)(nu0) nu0^t / t! (Taylor's theorem in x = (nu - nu0)/nu0). Reference: a
    # polynomial fit of degree 8 to the defining formula on a tiny band |x| <= 0.01, whose low
    # coefficients equal the Taylor coefficients up to ~0.01^(9-t); checked to 1e-8 relative
    # for t <= 3.
    cases = load_export("sky_taylor_fits")["cases"]
    for c in cases[::4]:
        x = np.linspace(-0.01, 0.01, 41)
        y = c["flux_jy"] * np.exp(np.log1p(x) * (c["alpha"] + c["beta"] * np.log1p(x)))
        ref = np.polynomial.polynomial.polyfit(x, y, 8)
        got = c["analytic"]
        for t, g in enumerate(got):
            assert abs(g - ref[t]) <= 1e-8 * max(abs(ref[0]), 1.0) * 10.0 ** t, (t, g, ref[t])


@pytest.mark.parametrize("case_index", range(24))
def test_sin_projection_matches_astropy(case_index):
    # astropy.wcs (wcslib) implements the SIN projection of Greisen & Calabretta (2002).
    # With CDELT = 1 deg, PC = identity and CRPIX = 1 (FITS, one-based), the zero-based pixel
    # coordinates equal the intermediate world coordinates (180/pi) (l, m) in degrees, l towards
    # increasing RA. Tolerance 1e-12 in l, m (wcslib works in degrees with double-precision trig,
    # errors ~1e-15).
    c = load_export("sky_sin_projection")["cases"][case_index]
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---SIN", "DEC--SIN"]
    w.wcs.crval = [np.degrees(c["ra0_rad"]), np.degrees(c["dec0_rad"])]
    w.wcs.crpix = [1.0, 1.0]
    w.wcs.cdelt = [1.0, 1.0]
    w.wcs.set()
    world = np.array([[np.degrees(c["ra_rad"]), np.degrees(c["dec_rad"])]])
    res = w.wcs.s2p(world, 0)
    l_ref, m_ref = np.radians(res["pixcrd"][0])
    assert abs(c["l"] - l_ref) < 1e-12 and abs(c["m"] - m_ref) < 1e-12, (c, l_ref, m_ref)
    # And the inverse: astropy's p2s of the same intermediate coordinates.
    back = w.wcs.p2s(res["pixcrd"], 0)["world"][0]
    dra = (c["ra_back_rad"] - np.radians(back[0]) + np.pi) % (2 * np.pi) - np.pi
    assert abs(dra) * np.cos(c["dec_rad"]) < 1e-12
    assert abs(c["dec_back_rad"] - np.radians(back[1])) < 1e-12


def test_gaussian_envelope_matches_numpy_fft():
    # Sample the unit-flux elliptical Gaussian on an n x n grid (l along axis 1, m along axis 0)
    # and take numpy's FFT, whose kernel exp(-2 pi i jk/n) is the measurement-equation sign; the
    # continuous transform is h^2 times the DFT of the origin-shifted samples, up to aliasing
    # exp(-2 pi^2 sigma^2 / h^2) (sigma >= 2.6 cells: ~1e-60) and truncation at the grid edge
    # (half-width 5.1e-3 rad >= 10 sigma: ~exp(-50)), so 1e-12 bounds FFT rounding only. The Gaussian is written in its own axes, the major axis
    # along (l, m) = (sin pa, cos pa), pa from north through east.
    for c in load_export("sky_gaussian_envelopes")["cases"]:
        n, h = c["n"], c["step_rad"]
        k = 2.0 * np.sqrt(2.0 * np.log(2.0))
        sa, sb = c["major_fwhm_rad"] / k, c["minor_fwhm_rad"] / k
        pa = c["position_angle_rad"]
        x = (np.arange(n) - n // 2) * h
        l, m = np.meshgrid(x, x)  # l varies along axis 1
        a = l * np.sin(pa) + m * np.cos(pa)
        b = l * np.cos(pa) - m * np.sin(pa)
        img = np.exp(-0.5 * (a**2 / sa**2 + b**2 / sb**2)) / (2 * np.pi * sa * sb)
        ft = np.fft.fft2(np.fft.ifftshift(img)) * h * h
        got = np.array(c["envelope_v_by_u"])
        assert np.max(np.abs(ft.real - got)) < 1e-12
        assert np.max(np.abs(ft.imag)) < 1e-12
        assert np.sum(got > 1e-3) > 100  # the comparison covers the envelope's main lobe
