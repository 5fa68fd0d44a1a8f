"""A-kernels of the uv-domain A-projection operator, recomputed with numpy and scipy.

The Rust test `crates/imaging/tests/aproj_kernels.rs` exports samples of one kernel table for a
uniformly illuminated 12 m disc at 1.5 GHz. The kernel is defined as

    K(t) = integral over |xi_x|, |xi_y| < 1 of psi_hat(xi_x) psi_hat(xi_y) A(l, m)
           exp(+2 pi i (xi_x t_x + xi_y t_y)) d xi,

xi in cycles per grid cell, l = -xi_x * pad * cell, m = xi_y * pad * cell, psi_hat the Fourier
transform of the exponential-of-semicircle kernel psi(t) = phi(2t/W),
phi(z) = exp(beta (sqrt(1 - z^2) - 1)) (Barnett, Magland & af Klinteberg 2019, eq. 1.8), and
A = (2 J1(x)/x)^2 with x = pi D r nu / c the Airy power pattern (Born & Wolf, Principles of
Optics, section 8.5.2). Here psi_hat comes from scipy.integrate.quad and the xi integral from a
midpoint sum on a grid unrelated to the Rust side's FFT grid.
"""
import numpy as np
from scipy import integrate, special

from conftest import load_export

C = 299_792_458.0


def psi_hat(xi, w, beta):
    """(W/2) * integral_{-1}^{1} phi(z) cos(pi W xi z) dz, by adaptive quadrature."""
    f = lambda z, x: np.exp(beta * (np.sqrt(1.0 - z * z) - 1.0)) * np.cos(np.pi * w * x * z)
    return np.array([0.5 * w * integrate.quad(f, -1.0, 1.0, args=(x,), limit=200,
                                              epsabs=1e-14)[0] for x in xi])


def test_disc_kernel_matches_numpy_integral():
    e = load_export("aproj_kernels")
    w, beta, pad, cell = e["support_w"], e["beta"], e["pad"], e["cell_rad"]
    d, nu, o = e["dish_diameter_m"], e["freq_hz"], e["oversampling"]
    # Midpoint rule on |xi| < 1 with 400 points per axis (spacing 1/200 cell^-1: the periodic
    # images of K it implies lie 200 cells away, far beyond its support of a few tens of cells).
    n = 400
    xi = -1.0 + (np.arange(n) + 0.5) * 2.0 / n
    dxi = 2.0 / n
    taper = psi_hat(xi, w, beta)
    l = -xi[None, :] * pad * cell
    m = xi[:, None] * pad * cell
    x = np.pi * d * np.hypot(l, m) * nu / C
    x = np.where(x == 0.0, 1e-300, x)
    a = (2.0 * special.j1(x) / x) ** 2
    f = taper[:, None] * taper[None, :] * a
    points = np.array(e["points"])
    peak = None
    for kx, ky, re, im in points:
        tx, ty = kx / o, ky / o
        ph = np.exp(2j * np.pi * xi * tx)[None, :] * np.exp(2j * np.pi * xi * ty)[:, None]
        want = np.sum(f * ph) * dxi * dxi
        if kx == 0 and ky == 0:
            peak = abs(want)
        # The Rust beam is a sampled aperture (<= 6e-6 of the voltage peak against Airy,
        # measured by the beam crate) stored in single precision; the differences measured
        # here are <= 4.7e-6 of the kernel's peak, so 1.5e-5 leaves 3x headroom. The midpoint
        # sum's own error is far below that.
        got = complex(re, im)
        assert peak is not None
        assert abs(got - want) < 1.5e-5 * peak, (kx, ky, got, want)
