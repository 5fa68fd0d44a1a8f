"""Wideband A-projection at beam level, recomputed from the Airy pattern with scipy.

The Rust test `crates/imaging/tests/aproj_wideband.rs` exports, for a uniformly illuminated
12 m disc, the power-level radii at the reference frequency, the band variation
(max - min)/mean over 1-2 GHz of P(r; nu) P(r; nu_c) for each conjugate-frequency choice, and
the fitted conjugate frequencies. Here the same quantities come from the analytic power
pattern of a uniform circular aperture, P = (2 J1(x)/x)^2 with x = pi D r nu / c
(Born & Wolf, Principles of Optics, section 8.5.2), using scipy.special.j1.
"""
import numpy as np
from scipy import optimize, special

from conftest import load_export

C = 299_792_458.0


def airy_power(r, nu, d):
    x = np.pi * d * np.asarray(r, dtype=float) * nu / C
    x = np.where(x == 0.0, 1e-300, x)
    return (2.0 * special.j1(x) / x) ** 2


def variation(r, freqs, conj, d):
    v = airy_power(r, freqs, d) * airy_power(r, conj, d)
    return (v.max() - v.min()) / v.mean()


def criterion(nu, nu_c, nu0, r0, n_radii, d):
    """Area-weighted mean squared departure of P(nu) P(nu_c) from P(nu0)^2 over the main lobe,
    with the midpoint rule the Rust side documents (the Airy beam has no azimuthal structure)."""
    r = (np.arange(n_radii) + 0.5) * r0 / n_radii
    dev = airy_power(r, nu, d) * airy_power(r, nu_c, d) - airy_power(r, nu0, d) ** 2
    return np.sum(dev**2 * r) / np.sum(r)


def test_radii_and_first_null():
    e = load_export("aproj_wideband")
    d, nu0 = e["dish_diameter_m"], e["ref_freq_hz"]
    for level, r in zip(e["levels"], e["radii_rad"]):
        want = optimize.brentq(lambda x: airy_power(x, nu0, d) - level, 1e-9, 1.2 * C / nu0 / d)
        # The beam crate's sampled aperture departs from the Airy pattern by <= 6e-6 of the
        # field (its own documented measurement); radii agree to ~1e-4 relative.
        assert abs(r - want) < 2e-4 * want, (level, r, want)
    null = special.jn_zeros(1, 1)[0] / np.pi * C / (nu0 * d)
    # The Rust scan steps by 1e-5 rad.
    assert abs(e["first_null_rad"] - null) < 2e-5


def test_band_variation_of_each_choice():
    e = load_export("aproj_wideband")
    d, nu0 = e["dish_diameter_m"], e["ref_freq_hz"]
    freqs = np.array(e["frequencies_hz"])
    choices = {
        "same": freqs,
        "reciprocal": nu0**2 / freqs,
        "gaussian": np.sqrt(2 * nu0**2 - freqs**2),
        "fitted": np.array(e["fitted_hz"]),
    }
    for name, conj in choices.items():
        for r, got in zip(e["radii_rad"], e["variation_" + name]):
            want = variation(r, freqs, conj, d)
            # Pattern error <= 6e-6 of the field against values >= 1e-3 (near the null at the
            # top of the band at the 10% radius): 1% relative on the variation is generous there
            # and 1e-3 covers the main lobe.
            tol = 1e-2 if got > 1.0 else 1e-3
            assert abs(got - want) <= tol * max(want, 1e-3), (name, r, got, want)


def test_fitted_conjugate_is_the_criterion_minimum():
    e = load_export("aproj_wideband")
    d, nu0 = e["dish_diameter_m"], e["ref_freq_hz"]
    r0, n = e["first_null_rad"], e["n_radii"]
    for nu, fit in zip(e["frequencies_hz"], e["fitted_hz"]):
        f = lambda c: criterion(nu, c, nu0, r0, n, d)  # noqa: E731
        best = optimize.minimize_scalar(f, bounds=(0.5e9, 2.9e9), method="bounded",
                                        options={"xatol": 1e2})
        # The minimum is flat: compare criterion values, and the location to 0.2%.
        assert f(fit) <= best.fun * (1 + 1e-3) + 1e-15, (nu, fit, best.x)
        assert abs(fit - best.x) < 2e-3 * best.x, (nu, fit, best.x)
        assert f(fit) <= f(nu0**2 / nu) * (1 + 1e-6) + 1e-15
        assert f(fit) <= f(np.sqrt(2 * nu0**2 - nu**2)) * (1 + 1e-6) + 1e-15


def test_reference_orientation_numbers():
    """Orientation values from the issue (scipy, continuous band) for P^2 and the reciprocal
    choice: our 21-channel sampling of the band reproduces them to a few per cent."""
    e = load_export("aproj_wideband")
    for got, ref in zip(e["variation_same"], [0.59, 1.75, 2.85, 4.79]):
        assert abs(got - ref) < 0.05 * ref
    for got, ref in zip(e["variation_reciprocal"], [0.16, 0.53, 1.01, 1.98]):
        assert abs(got - ref) < 0.05 * ref
