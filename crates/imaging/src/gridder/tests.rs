//! The tiled passes against their slow, obviously-correct references: every sample's footprint
//! scattered into (or gathered from) the whole padded grid one cell at a time, with the exact
//! kernel φ(z) = exp(β(√(1 − z²) − 1)) of Barnett, Magland & af Klinteberg (2019, eq. 1.8)
//! through [`EsKernel::taps`] and indices wrapped modulo the grid size. The grid sizes below give
//! grids narrower than a tile and than the kernel, one band (footprints wrapping onto
//! themselves), an odd and an even number of bands, and rows and columns that are not multiples
//! of the tile size; the accuracies give every lane count.
use super::*;
use crate::kernel::EsKernel;
use crate::params::{GridderParams, WRange, WTerm};
use beamfloor_core::Correlation;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const GEOMETRIES: [(usize, usize, f64); 4] =
    [(4, 6, 0.05), (10, 12, 0.02), (24, 20, 0.01), (40, 36, 0.006)];
const EPSILONS: [f64; 4] = [1e-3, 1e-6, 1e-9, 1e-13];

fn visset(rng: &mut ChaCha8Rng, g: &ImageGeometry, w_max: f64) -> VisSet {
    let (nr, nc) = (40, 4);
    let freqs: Vec<f64> = (0..nc).map(|c| 1e9 * (1.0 + c as f64 / 3.0)).collect();
    let to_m = SPEED_OF_LIGHT_M_PER_S / freqs[nc - 1];
    // u, v up to 0.49 / cell at the top channel: footprints reach every grid edge.
    let uvw = ndarray::Array2::from_shape_fn((nr, 3), |(_, k)| {
        let lim = if k < 2 { 0.49 / g.cell_rad } else { w_max };
        rng.random_range(-lim..lim) * to_m
    });
    VisSet {
        frequencies_hz: freqs,
        channel_width_hz: 1e6,
        integration_s: 1.0,
        hour_angles_rad: vec![0.0],
        parallactic_angles_rad: vec![0.0],
        phase_centre_ra_rad: 0.0,
        phase_centre_dec_rad: 0.0,
        antenna1: vec![0; nr],
        antenna2: vec![1; nr],
        time_index: vec![0; nr],
        uvw_m: uvw,
        weights: Array3::ones((nr, nc, 1)),
        flags: Array3::from_elem((nr, nc, 1), false),
        data: Array3::zeros((nr, nc, 1)),
        correlations: vec![Correlation::BOTH[0]],
        seed: 0,
        truth_hash: String::new(),
    }
}

/// Exact taps along x, y and the weight of plane `p` for sample `i`, with the first cells and
/// whether the sample is mirrored (placed at −(u, v, w), its value conjugated).
fn exact(
    plan: &GridPlan,
    samples: &Samples,
    i: usize,
    p: usize,
) -> (Vec<f64>, Vec<f64>, f64, i64, i64, bool) {
    let k: &EsKernel = &plan.kernel;
    let w = k.support();
    let key = ((i / samples.n_chan) << samples.shift) | (i % samples.n_chan);
    assert_eq!(samples.index(key), i);
    let (_, sx, sy, sw, flip) = samples.at(plan, key);
    // Mirroring: the half v < 0 (no w planes) or w < 0 (w planes), read off the row's uvw.
    let r = i / samples.n_chan;
    let axis = if plan.planes.is_some() { 2 } else { 1 };
    assert_eq!(flip, samples.uvw[3 * r + axis] < 0.0);
    let (mut kx, mut ky) = (vec![0.0; w], vec![0.0; w]);
    let gx = k.taps(sx, &mut kx);
    let gy = k.taps(sy, &mut ky);
    let weight = match plan.planes {
        None => 1.0,
        Some(_) => k.phi((p as f64 - sw) / (0.5 * w as f64)),
    };
    (kx, ky, weight, gx, gy, flip)
}

fn cases() -> Vec<GridPlan> {
    let mut plans = Vec::new();
    for (nx, ny, cell) in GEOMETRIES {
        let g = ImageGeometry::new(nx, ny, cell);
        for (e, eps) in EPSILONS.iter().enumerate() {
            let w_term = if e % 2 == 0 { WTerm::Stack } else { WTerm::Ignore };
            let params = GridderParams { epsilon: *eps, w_term };
            plans.push(GridPlan::new(g, &params, WRange::new(-40.0, 60.0).unwrap()).unwrap());
        }
    }
    plans
}

/// Tolerance: each polynomial tap is within ε/10 of the exact one (kernel_poly's fit bound), so
/// a product of three taps of size ≤ 1 is within 0.3 ε plus rounding; a grid cell or a sample
/// sums at most all the values involved.
fn tolerance(plan: &GridPlan, total: f64) -> f64 {
    (0.3 * plan.kernel.epsilon() + 1e-13) * total
}

#[test]
fn tiled_spreading_matches_direct_scatter() {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    for plan in cases() {
        let vis = visset(&mut rng, &plan.geometry, 60.0);
        let samples = Samples::new(&plan, &vis);
        let layout = plan.layout(&samples, vis.n_rows());
        let n_samples = vis.n_rows() * vis.n_channels();
        let n_src = 2;
        // Every seventh sample is zero in both sources (skipped by the spreading).
        let summed: Vec<Complex64> = (0..n_samples * n_src)
            .map(|k| match (k / n_src) % 7 {
                3 => ZERO,
                _ => Complex64::new((0.7 * k as f64).sin(), (1.3 * k as f64).cos()),
            })
            .collect();
        // The second output grids the second source with a zero factor in channel 2.
        let outputs = [
            GridOutput { source: 0, channel_factors: vec![1.0, 0.5, -2.0, 0.25] },
            GridOutput { source: 1, channel_factors: vec![0.3, 1.5, 0.0, -1.0] },
        ];
        let n_out = outputs.len();
        let nc = vis.n_channels();
        let value = |i: usize, o: usize| {
            summed[i * n_src + outputs[o].source] * outputs[o].channel_factors[i % nc]
        };
        let values = GridValues { summed: &summed, n_src, outputs: &outputs };
        let total: f64 = layout
            .order
            .iter()
            .map(|&key| samples.index(key))
            .flat_map(|i| (0..n_out).map(move |o| value(i, o).norm()))
            .sum();
        let (px, py) = (plan.pad_nx, plan.pad_ny);
        let mut largest = 0.0f64;
        for p in 0..plan.n_w_planes() {
            let mut grids = vec![vec![ZERO; px * py]; n_out];
            plan.spread_plane(&samples, &layout, &values, plan.plane_arg(p), &mut grids);
            let mut want = vec![vec![ZERO; px * py]; n_out];
            for i in 0..vis.n_rows() * vis.n_channels() {
                let (kx, ky, weight, gx, gy, flip) = exact(&plan, &samples, i, p);
                for (o, want) in want.iter_mut().enumerate() {
                    let v = if flip { value(i, o).conj() } else { value(i, o) };
                    for (j, &b) in ky.iter().enumerate() {
                        for (q, &a) in kx.iter().enumerate() {
                            let x = (gx + q as i64).rem_euclid(px as i64) as usize;
                            let y = (gy + j as i64).rem_euclid(py as i64) as usize;
                            want[y * px + x] += v * (a * b * weight);
                        }
                    }
                }
            }
            let err = grids
                .iter()
                .flatten()
                .zip(want.iter().flatten())
                .map(|(a, b)| (a - b).norm())
                .fold(0.0, f64::max);
            assert!(err <= tolerance(&plan, total), "{:?} plane {p}: {err:e}", plan.padded_size());
            largest = want.iter().flatten().map(|v| v.norm()).fold(largest, f64::max);
        }
        // Not a comparison of empty grids: some cell holds more than one sample's peak share.
        assert!(largest > 1.0, "{largest}");
    }
}

#[test]
fn tiled_interpolation_matches_direct_gather() {
    let mut rng = ChaCha8Rng::seed_from_u64(12);
    for plan in cases() {
        let vis = visset(&mut rng, &plan.geometry, 60.0);
        let samples = Samples::new(&plan, &vis);
        // Measured block rectangles size the tile windows over w planes (as in degridding).
        let mut layout = plan.layout(&samples, vis.n_rows());
        plan.measure_blocks(&samples, &mut layout);
        let (px, py, nc) = (plan.pad_nx, plan.pad_ny, vis.n_channels());
        // Two images; the second has a zero factor in channel 1 (skipped by the fast path).
        let factors = vec![vec![1.0, 0.5, -0.25, 2.0], vec![0.3, 0.0, 1.1, -0.7]];
        // Two correlations per sample: both receive the sample's value.
        let mut got2 = vec![ZERO; 2 * vis.n_rows() * nc];
        // And in layout order (the same sums in the same order: equal to the bit).
        let mut sorted = vec![ZERO; layout.order.len()];
        let mut want = vec![ZERO; vis.n_rows() * nc];
        for p in 0..plan.n_w_planes() {
            let grids: Vec<Vec<Complex64>> = (0..2)
                .map(|_| {
                    (0..px * py)
                        .map(|_| {
                            Complex64::new(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0))
                        })
                        .collect()
                })
                .collect();
            plan.interpolate_plane(
                &samples,
                &layout,
                &grids,
                &factors,
                plan.plane_arg(p),
                &mut got2,
                Destination::Samples(2),
            );
            plan.interpolate_plane(
                &samples,
                &layout,
                &grids,
                &factors,
                plan.plane_arg(p),
                &mut sorted,
                Destination::Sorted,
            );
            for (i, want) in want.iter_mut().enumerate() {
                let (kx, ky, weight, gx, gy, flip) = exact(&plan, &samples, i, p);
                if weight == 0.0 {
                    continue;
                }
                for (grid, f) in grids.iter().zip(&factors) {
                    let mut sum = ZERO;
                    for (j, &b) in ky.iter().enumerate() {
                        for (q, &a) in kx.iter().enumerate() {
                            let x = (gx + q as i64).rem_euclid(px as i64) as usize;
                            let y = (gy + j as i64).rem_euclid(py as i64) as usize;
                            sum += grid[y * px + x] * (a * b);
                        }
                    }
                    let sum = if flip { sum.conj() } else { sum };
                    *want += sum * f[i % nc] * weight;
                }
            }
        }
        assert!(got2.chunks(2).all(|c| c[0] == c[1]));
        let got: Vec<Complex64> = got2.chunks(2).map(|c| c[0]).collect();
        for (&key, v) in layout.order.iter().zip(&sorted) {
            assert_eq!(*v, got[samples.index(key)]);
        }
        // Each sample sums ≤ W³ products of grid values of size ≤ 1 (√2 for complex) per image.
        let w = plan.kernel.support() as f64;
        let tol = tolerance(&plan, 2.0 * 2.2 * 2f64.sqrt() * w.powi(3));
        let err = got.iter().zip(&want).map(|(a, b)| (a - b).norm()).fold(0.0, f64::max);
        assert!(err <= tol, "{:?}: {err:e} > {tol:e}", plan.padded_size());
        assert!(want.iter().any(|v| v.norm() > 0.1));
    }
}

/// The plan keeps its padded grids between calls (`GridPool`): gridding, degridding and
/// gridding again with the same plan give the same bits as with a fresh plan each time, so no
/// stale grid value of an earlier call leaks into a later one. (A self-consistency check: the
/// other tests here check the values themselves against the direct sums.)
#[test]
fn reused_grids_give_the_same_bits_as_fresh_ones() {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    for plan in cases() {
        let g = plan.geometry;
        let mut vis = visset(&mut rng, &g, 40.0);
        vis.data.mapv_inplace(|_| {
            Complex64::new(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0))
        });
        let image = Array2::from_shape_fn((g.ny, g.nx), |_| rng.random_range(-1.0..1.0));
        let outputs: Vec<GridOutput> = (0..2)
            .map(|t| GridOutput { source: 0, channel_factors: vec![1.0 + t as f64; 4] })
            .collect();
        let factors = vec![vec![0.5; 4]];
        let fresh = || plan.clone_without_pool();
        let grid = |p: &GridPlan| p.grid(&vis, &[vis.data.view()], &outputs).unwrap();
        let degrid = |p: &GridPlan| p.degrid(&vis, std::slice::from_ref(&image), &factors).unwrap();
        let (want_grid, want_degrid) = (grid(&fresh()), degrid(&fresh()));
        for _ in 0..2 {
            assert_eq!(grid(&plan), want_grid);
            assert_eq!(degrid(&plan), want_degrid);
        }
    }
}

/// The parallel counting sort gives the serial stable sort's order (std's stable `sort_by_key`
/// on the tile, the reference) for sample counts below, at and far above the number of runs,
/// with left-out samples and empty tiles; the tile starts count the samples before each tile.
#[test]
fn parallel_tile_sort_is_the_stable_sort() {
    let mut rng = ChaCha8Rng::seed_from_u64(9);
    for (n, n_tiles) in [(0, 3), (1, 1), (5, 4), (8, 2), (9, 40), (1000, 7), (20_000, 300)] {
        let tiles: Vec<u32> =
            (0..n)
                .map(|_| {
                    if rng.random_range(0..5) == 0 {
                        NO_TILE
                    } else {
                        rng.random_range(0..n_tiles)
                    }
                })
                .collect();
        let (order, starts) = sort_by_tile(&tiles, n_tiles as usize);
        let mut want: Vec<usize> = (0..n).filter(|&i| tiles[i] != NO_TILE).collect();
        want.sort_by_key(|&i| tiles[i]);
        assert_eq!(order, want, "{n} samples, {n_tiles} tiles");
        assert_eq!(starts.len(), n_tiles as usize + 1);
        for (t, &start) in starts.iter().enumerate() {
            let before = tiles.iter().filter(|&&x| x != NO_TILE && (x as usize) < t).count();
            assert_eq!(start, before);
        }
    }
}
