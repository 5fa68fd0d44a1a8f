"""Cross-check of the direct truth prediction: recompute the measurement equation with numpy."""
import numpy as np
import pytest
from conftest import load_export

C = 299792458.0  # speed of light, m/s (exact, SI)


def gaussian_envelope(u, v, major, minor, pa):
    """Fourier transform of a unit-flux elliptical Gaussian (Bracewell, The Fourier Transform and
    its Applications, ch. 6: exp(-pi x^2) <-> exp(-pi s^2), with the similarity and rotation
    theorems), written in the Gaussian's own axes: the major axis points along
    (l, m) = (sin pa, cos pa), pa north through east; sigma = FWHM / (2 sqrt(2 ln 2))."""
    k = 2.0 * np.sqrt(2.0 * np.log(2.0))
    sa, sb = major / k, minor / k
    ua = u * np.sin(pa) + v * np.cos(pa)
    ub = u * np.cos(pa) - v * np.sin(pa)
    return np.exp(-2.0 * np.pi**2 * (sa**2 * ua**2 + sb**2 * ub**2))


@pytest.mark.parametrize("case_index", [0, 1])
def test_prediction_matches_numpy_direct_sum(case_index):
    # V(u,v,w) = sum_c S_c(nu) G_c(u,v) exp(-2 pi i (u l + v m + w (n - 1))), uvw = uvw_m nu / c
    # (the measurement equation, Thompson, Moran & Swenson 3rd ed. eq. 3.7, in this project's
    # sign convention), S(nu) = S0 (nu/nu0)^(alpha + beta ln(nu/nu0)); no beam, so RR = LL.
    # Tolerance 1e-10 relative to the total flux: phases reach ~4e3 rad, so both sides carry
    # ~1e-12 rad of rounding; 1e-10 leaves a margin while any convention error (sign, w-term,
    # envelope orientation, spectrum) is >1e-4.
    d = load_export("predict_no_beam")
    case = d["cases"][case_index]
    nu = np.array(d["frequencies_hz"])
    uvw = np.array(d["uvw_m"])
    scale = nu[None, :] / C
    u, v, w = (uvw[:, i, None] * scale for i in range(3))
    vis = np.zeros(u.shape, dtype=complex)
    total = 0.0
    for c in d["components"]:
        l, m = c["l"], c["m"]
        n = np.sqrt(1.0 - l * l - m * m)
        lr = np.log(nu / c["ref_freq_hz"])
        flux = c["flux_jy"] * (nu / c["ref_freq_hz"]) ** (c["alpha"] + c["beta"] * lr)
        total += abs(c["flux_jy"])
        phase = u * l + v * m + (w * (n - 1.0) if case["w_term"] else 0.0)
        term = flux[None, :] * np.exp(-2j * np.pi * phase)
        if c["gaussian"] is not None:
            g = c["gaussian"]
            term = term * gaussian_envelope(u, v, g["major_fwhm_rad"], g["minor_fwhm_rad"],
                                            g["position_angle_rad"])
        vis += term
    got = (np.array(case["re"]) + 1j * np.array(case["im"])).reshape(case["shape"])
    assert got.shape == (uvw.shape[0], nu.size, 2)
    for p in range(2):
        err = np.max(np.abs(got[:, :, p] - vis))
        assert err < 1e-10 * total, err
    # The Gaussian must matter (its envelope falls well below 1 on the longer baselines), and so
    # must the w-term, or this test could not tell a convention error.
    assert np.min(gaussian_envelope(u, v, 4e-4, 1.5e-4, 0.8)) < 0.5
    if case["w_term"]:
        other = d["cases"][1 - case_index]
        flat = (np.array(other["re"]) + 1j * np.array(other["im"])).reshape(other["shape"])
        assert np.max(np.abs(flat - got)) > 1e-3
