#!/usr/bin/env python3
"""Side-by-side timing of our gridder against two general-purpose NUFFT libraries.

Cases (all on identical points, double precision, medians of REPS runs):
  * type 1 (non-uniform points -> image): our dirty image (gridding + FFT + correction) against
    finufft.nufft2d1 and ducc0.nufft.nu2u;
  * type 2 (image -> non-uniform points): our degridding against finufft.nufft2d2 and
    ducc0.nufft.u2nu;
  at epsilon 1e-6 and 1e-9, 1 and 2 threads, 1.5 M and 6 M points, 1024^2 and 2048^2 images;
  * wide field (w-term, 3 degree field, 1.5 M visibilities, 1024^2): our w-stacking gridder
    against ducc0.wgridder (vis2dirty / dirty2vis with do_wgridding).

The points come the way a simulated observation delivers them (and the way our gridder is written
for): rows ordered by baseline and time, 16 channels per row over a 2:1 band, uv from an invented
array's Earth-rotation tracks. The libraries get the same points flattened (row-major), exactly as
a general caller would hand them over.

Conventions (our imaging sign, pixel x towards decreasing l, centre pixel n/2):
  image[iy, ix] = Re sum_k c_k exp(+2 pi i (u_k l + v_k m)),  l = -(ix - n/2) cell, m = (iy - n/2) cell
so with x_k = -2 pi u_k cell and y_k = 2 pi v_k cell this is a type-1 NUFFT with sign +1 on modes
(j_y, j_x) = (iy - n/2, ix - n/2), most negative mode first, for both libraries. Type 2 is its
adjoint with sign -1 (our degridding). For ducc0.wgridder the same image is d[(n - ix) % n, iy]
with flip_w=True and divide_by_n=False (established against a direct sum on a small problem, see
check_wgridder_convention below); column ix = 0 has no counterpart there and is left out / zero.

Our side runs crates/imaging/examples/nufft_bench.rs (built by scripts/bench_nufft.sh), timed
inside that program around plan + operator (the libraries plan inside each call too). Each
accuracy line is the relative L2 difference of the result against ducc0's on the same points (the
two sides' own errors are each of order epsilon, so the difference should be too).

Usage: bench_nufft.py BENCH_BINARY [--quick] [--reps N]
"""
import argparse
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

import ducc0
import finufft

C = 299792458.0


def median_time(fn, reps):
    times = []
    out = None
    for _ in range(reps):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return float(np.median(times)), out


def observation(n_points, n_chan, cell_rad, w_scale, seed):
    """Rows (baseline-major, time-ordered) x channels: uvw in metres and the channel frequencies.

    Invented array: antennas uniformly in a disc, one track of hour angles -3 h .. +3 h at
    declination -40 deg, latitude -30 deg (the standard ENU -> uvw rotation). Scaled so that the
    longest projected u or v reaches 0.45 / cell at the top channel; w keeps its natural ratio to
    u, v times `w_scale` (0 for the plain 2-D cases).
    """
    rng = np.random.default_rng(seed)
    freqs = 1.0e9 * (1.0 + np.arange(n_chan) / n_chan)
    n_rows = n_points // n_chan
    n_ant = 1
    while n_ant * (n_ant - 1) // 2 < 300:
        n_ant += 1
    pairs = [(a, b) for a in range(n_ant) for b in range(a + 1, n_ant)]
    n_times = -(-n_rows // len(pairs))
    r = np.sqrt(rng.uniform(0.0, 1.0, n_ant))
    th = rng.uniform(0.0, 2 * np.pi, n_ant)
    east, north = r * np.cos(th), r * np.sin(th)
    lat, dec = np.radians(-30.0), np.radians(-40.0)
    # ENU -> equatorial XYZ (Thompson, Moran & Swenson 2017, eq. 4.15 with zero height).
    X = -np.sin(lat) * north
    Y = east
    Z = np.cos(lat) * north
    H = np.linspace(-np.pi / 4, np.pi / 4, n_times)
    a1 = np.array([p[0] for p in pairs])
    a2 = np.array([p[1] for p in pairs])
    dX, dY, dZ = X[a2] - X[a1], Y[a2] - Y[a1], Z[a2] - Z[a1]
    sH, cH = np.sin(H)[None, :], np.cos(H)[None, :]
    sd, cd = np.sin(dec), np.cos(dec)
    u = sH * dX[:, None] + cH * dY[:, None]
    v = -sd * cH * dX[:, None] + sd * sH * dY[:, None] + cd * dZ[:, None]
    w = cd * cH * dX[:, None] - cd * sH * dY[:, None] + sd * dZ[:, None]
    uvw = np.stack([u.ravel(), v.ravel(), w.ravel()], axis=1)[:n_rows]
    scale = 0.45 / cell_rad * C / freqs[-1] / np.abs(uvw[:, :2]).max()
    uvw = uvw * scale
    uvw[:, 2] *= w_scale
    return np.ascontiguousarray(uvw), freqs


def nufft_coords(uvw, freqs, cell_rad):
    """(y_k, x_k) per (row, channel), row-major: y = 2 pi v cell, x = -2 pi u cell."""
    s = freqs[None, :] / C
    x = (-2 * np.pi * cell_rad * uvw[:, 0:1] * s).ravel()
    y = (2 * np.pi * cell_rad * uvw[:, 1:2] * s).ravel()
    return np.ascontiguousarray(y), np.ascontiguousarray(x)


def ours(binary, d, op, eps, threads, reps, w, n, cell):
    out = subprocess.run(
        [binary, d, op, repr(eps), str(threads), str(reps), str(w), str(n), str(n), repr(float(cell))],
        check=True, capture_output=True, text=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def rel_l2(a, b):
    return float(np.linalg.norm(a - b) / np.linalg.norm(b))


def check_wgridder_convention():
    """Pin ducc0.wgridder's orientation against a direct sum in our convention (small problem)."""
    rng = np.random.default_rng(7)
    n, cell, m = 64, np.radians(0.05), 300
    uvw = rng.uniform(-1, 1, (m, 3)) * np.array([0.4 / cell, 0.4 / cell, 300.0])
    vis = rng.normal(size=(m, 1)) + 1j * rng.normal(size=(m, 1))
    d = ducc0.wgridder.vis2dirty(
        uvw=uvw, freq=np.array([C]), vis=vis, npix_x=n, npix_y=n, pixsize_x=cell,
        pixsize_y=cell, epsilon=1e-12, do_wgridding=True, flip_w=True, divide_by_n=False)
    worst = 0.0
    for ix, iy in [(5, 7), (40, 20), (33, 50), (63, 1)]:
        l, mm = -(ix - n / 2) * cell, (iy - n / 2) * cell
        nn = np.sqrt(1 - l * l - mm * mm)
        ph = 2 * np.pi * (uvw[:, 0] * l + uvw[:, 1] * mm + uvw[:, 2] * (nn - 1))
        exact = np.real(np.sum(vis[:, 0] * np.exp(1j * ph)))
        worst = max(worst, abs(d[(n - ix) % n, iy] - exact) / np.abs(vis).sum())
    assert worst < 1e-10, f"ducc0.wgridder convention check failed ({worst:e})"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--quick", action="store_true", help="1.5 M points, 1024^2 only")
    ap.add_argument("--reps", type=int, default=3)
    args = ap.parse_args()
    reps = max(3, args.reps)
    check_wgridder_convention()
    rows = []

    def add(case, op, t_ours, t_ducc, t_fin, npts, err, extra=""):
        rows.append((case, op, t_ours, t_ducc, t_fin, npts, err, extra))
        print(f"  {case:<34} {op:<7} ours {t_ours:7.3f} s  ducc0 {t_ducc:7.3f} s  "
              f"finufft {'-' if t_fin is None else f'{t_fin:7.3f} s'}  L2 vs ducc0 {err:.2e} {extra}",
              flush=True)

    sizes = [(1_500_000, 1024)] if args.quick else [
        (1_500_000, 1024), (1_500_000, 2048), (6_000_000, 1024), (6_000_000, 2048)]
    with tempfile.TemporaryDirectory() as d:
        for npts, n in sizes:
            cell = np.radians(3.0) / 1024  # 3 degree field at 1024^2; 2048^2 doubles the field
            uvw, freqs = observation(npts, 16, cell, 0.0, seed=npts + n)
            npts = uvw.shape[0] * freqs.size
            rng = np.random.default_rng(1)
            vis = rng.normal(size=(uvw.shape[0], freqs.size)) + 1j * rng.normal(
                size=(uvw.shape[0], freqs.size))
            image = rng.uniform(-1, 1, (n, n))
            image[:, 0] = 0.0
            np.save(os.path.join(d, "uvw_m.npy"), uvw)
            np.save(os.path.join(d, "freq_hz.npy"), freqs)
            np.save(os.path.join(d, "vis.npy"), vis)
            np.save(os.path.join(d, "image.npy"), image)
            y, x = nufft_coords(uvw, freqs, cell)
            coord = np.ascontiguousarray(np.stack([y, x], axis=1))
            c = np.ascontiguousarray(vis.ravel())
            fimg = image.astype(np.complex128)
            for eps in [1e-6, 1e-9]:
                for threads in [1, 2]:
                    case = f"{npts / 1e6:.1f}M pts {n}^2 eps={eps:.0e} {threads}thr"
                    o = ours(args.binary, d, "grid", eps, threads, reps, 0, n, cell)
                    t_d, r_d = median_time(lambda: ducc0.nufft.nu2u(
                        points=c, coord=coord, forward=False, epsilon=eps, nthreads=threads,
                        out=np.empty((n, n), np.complex128)), reps)
                    t_f, r_f = median_time(lambda: finufft.nufft2d1(
                        y, x, c, (n, n), isign=1, eps=eps, nthreads=threads), reps)
                    mine = np.load(os.path.join(d, "ours_grid.npy"))
                    add(case, "type 1", o["median_s"], t_d, t_f, npts, rel_l2(mine, r_d.real),
                        f"(finufft vs ducc0 {rel_l2(r_f.real, r_d.real):.1e}, W={o['support']})")
                    o = ours(args.binary, d, "degrid", eps, threads, reps, 0, n, cell)
                    t_d, r_d = median_time(lambda: ducc0.nufft.u2nu(
                        grid=fimg, coord=coord, forward=True, epsilon=eps, nthreads=threads), reps)
                    t_f, r_f = median_time(lambda: finufft.nufft2d2(
                        y, x, fimg, isign=-1, eps=eps, nthreads=threads), reps)
                    mine = np.load(os.path.join(d, "ours_degrid.npy")).ravel()
                    add(case, "type 2", o["median_s"], t_d, t_f, npts, rel_l2(mine, r_d),
                        f"(finufft vs ducc0 {rel_l2(r_f, r_d):.1e})")

        # Wide field: 3 degree field, 1024^2, 1.5 M visibilities with their natural w.
        n = 1024
        cell = np.radians(3.0) / n
        uvw, freqs = observation(1_500_000, 16, cell, 1.0, seed=99)
        npts = uvw.shape[0] * freqs.size
        rng = np.random.default_rng(2)
        vis = rng.normal(size=(uvw.shape[0], freqs.size)) + 1j * rng.normal(
            size=(uvw.shape[0], freqs.size))
        image = rng.uniform(-1, 1, (n, n))
        image[:, 0] = 0.0
        np.save(os.path.join(d, "uvw_m.npy"), uvw)
        np.save(os.path.join(d, "freq_hz.npy"), freqs)
        np.save(os.path.join(d, "vis.npy"), vis)
        np.save(os.path.join(d, "image.npy"), image)
        idx = (n - np.arange(n)) % n
        dimg = np.ascontiguousarray(image.T[idx, :])
        wmax = np.abs(uvw[:, 2]).max() * freqs[-1] / C
        for eps in [1e-6]:
            for threads in [1, 2]:
                case = f"w 3deg {npts / 1e6:.1f}M vis {n}^2 eps={eps:.0e} {threads}thr"
                o = ours(args.binary, d, "grid", eps, threads, reps, 1, n, cell)
                t_d, r_d = median_time(lambda: ducc0.wgridder.vis2dirty(
                    uvw=uvw, freq=freqs, vis=vis, npix_x=n, npix_y=n, pixsize_x=cell,
                    pixsize_y=cell, epsilon=eps, do_wgridding=True, nthreads=threads,
                    flip_w=True, divide_by_n=False), reps)
                mine = np.load(os.path.join(d, "ours_grid.npy"))
                theirs = r_d[idx, :].T
                add(case, "grid", o["median_s"], t_d, None, npts,
                    rel_l2(mine[:, 1:], theirs[:, 1:]),
                    f"({o['w_planes']} w planes, |w| <= {wmax:.0f} wavelengths)")
                o = ours(args.binary, d, "degrid", eps, threads, reps, 1, n, cell)
                t_d, r_d = median_time(lambda: ducc0.wgridder.dirty2vis(
                    uvw=uvw, freq=freqs, dirty=dimg, pixsize_x=cell, pixsize_y=cell,
                    epsilon=eps, do_wgridding=True, nthreads=threads, flip_w=True,
                    divide_by_n=False), reps)
                mine = np.load(os.path.join(d, "ours_degrid.npy"))
                add(case, "degrid", o["median_s"], t_d, None, npts, rel_l2(mine, r_d))

    print()
    print("| case | op | ours s | ducc0 s | finufft s | ours M pts/s | ducc0 M pts/s | "
          "finufft M pts/s | ducc0 time / ours | finufft time / ours | rel. L2 vs ducc0 |")
    print("|---|---|---|---|---|---|---|---|---|---|---|")
    for case, op, to, td, tf, npts, err, _ in rows:
        fin = "-" if tf is None else f"{tf:.3f}"
        fin_rate = "-" if tf is None else f"{npts / tf / 1e6:.1f}"
        fin_ratio = "-" if tf is None else f"{tf / to:.2f}"
        print(f"| {case} | {op} | {to:.3f} | {td:.3f} | {fin} | {npts / to / 1e6:.1f} | "
              f"{npts / td / 1e6:.1f} | {fin_rate} | {td / to:.2f} | {fin_ratio} | {err:.1e} |")
    print("\n(ratios > 1: ours is faster; medians of", reps, "runs; machine load: "
          f"{os.getloadavg()[0]:.1f})")


if __name__ == "__main__":
    sys.exit(main())
