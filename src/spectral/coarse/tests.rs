//! The coarse grid against the full-grid path, which the numpy reference checks separately.

use super::*;
use crate::spectral::band_scale_grid;
use crate::spectral::coherence::CoherencePlan;
use crate::spectral::morlet::tests::normal_series;

/// AR(1) noise with a shared slow component, so pairs range from weakly to strongly coherent.
fn pair(seed: u64, n: usize, shared: f64) -> (Vec<f64>, Vec<f64>) {
    let ar = |e: Vec<f64>, phi: f64| {
        let mut out = vec![0.0; e.len()];
        for i in 1..e.len() {
            out[i] = phi * out[i - 1] + e[i];
        }
        out
    };
    let common = ar(normal_series(seed, n), 0.99);
    let x = ar(normal_series(seed + 1, n), 0.95);
    let y = ar(normal_series(seed + 2, n), 0.95);
    (
        x.iter().zip(&common).map(|(a, c)| a + shared * c).collect(),
        y.iter().zip(&common).map(|(a, c)| a + shared * c).collect(),
    )
}

struct Geometry {
    n: usize,
    dt: f64,
    band: (f64, f64),
    window: Range<usize>,
}

fn geometry(n: usize, dt: f64, band: (f64, f64), window: Range<usize>) -> Geometry {
    Geometry {
        n,
        dt,
        band,
        window,
    }
}

fn both(g: &Geometry, x: &[f64], y: &[f64]) -> (BandCoherence, BandCoherence) {
    let grid = band_scale_grid(g.band.0, g.band.1, 6.0, 12);
    let wavelet = WaveletPlan::new(g.n, g.dt, 6.0, &grid.scales);
    let full = CoherencePlan::new(g.n, g.dt, &grid, g.window.clone());
    let (wx, wy) = (wavelet.transform(x), wavelet.transform(y));
    let mut scratch = vec![Complex64::new(0.0, 0.0); full.scratch_len()];
    let (mut px, mut py) = (vec![0.0; full.power_len()], vec![0.0; full.power_len()]);
    full.smoothed_power_into(&wx, &mut px, &mut scratch);
    full.smoothed_power_into(&wy, &mut py, &mut scratch);
    let exact = full.coherence(&wx, &wy, &px, &py, &mut scratch);
    let coarse = CoarsePlan::new(g.n, g.dt, 6.0, &grid, g.window.clone());
    let mut sc = coarse.scratch();
    let (mx, my) = (coarse.member(x, &mut sc), coarse.member(y, &mut sc));
    (exact, coarse.coherence(&mx, &my, &mut sc))
}

/// Step 1 is exact: the folded inverse FFT returns the full-grid transform at every node.
#[test]
fn nodes_are_the_full_transform() {
    let (n, dt) = (1200, 0.1);
    let grid = band_scale_grid(10.0, 50.0, 6.0, 12);
    let plan = CoarsePlan::new(n, dt, 6.0, &grid, 400..800);
    let x = normal_series(7, n);
    let full = WaveletPlan::new(n, dt, 6.0, &grid.scales).transform(&x);
    let mut sc = plan.scratch();
    let m = plan.member(&x, &mut sc);
    let scale_of_peak = full.iter().map(|z| z.norm()).fold(0.0f64, f64::max);
    let mut checked = 0;
    for st in plan.stages.iter().filter(|s| s.n_nodes > 0) {
        assert!(
            st.step > 1,
            "no decimation at 10 Hz for s = {}",
            grid.scales[st.grid_index]
        );
        for j in 0..st.n_nodes {
            let t = (st.first_node + j) * st.step;
            if t >= n {
                continue;
            }
            let z = full[st.grid_index * n + t];
            let d = Complex64::new(m.re[st.offset + j], m.im[st.offset + j]) - z;
            assert!(
                d.norm() <= 1e-12 * scale_of_peak,
                "stage {} node {j}: {d}",
                st.grid_index
            );
            checked += 1;
        }
    }
    assert!(checked > 100);
}

/// The bound the engine relies on: block-mean R² within 1e-3 of the full grid on random
/// pairs, for 10 Hz with the default context, a short context where the cone clips the band
/// rows, a low sampling rate and a narrow band of short periods.
#[test]
fn block_mean_r2_matches_full_grid() {
    let cases = [
        geometry(2400, 0.1, (10.0, 50.0), 900..1500),
        geometry(1200, 0.1, (10.0, 50.0), 300..900),
        geometry(500, 0.5, (8.0, 30.0), 100..400),
        geometry(1600, 0.25, (3.0, 6.0), 400..1200),
    ];
    let mut worst = 0.0f64;
    for (ci, g) in cases.iter().enumerate() {
        for (k, shared) in [0.0, 0.3, 1.0, 3.0].iter().enumerate() {
            let (x, y) = pair(100 * ci as u64 + 10 * k as u64, g.n, *shared);
            let (exact, coarse) = both(g, &x, &y);
            assert_eq!(exact.n_points, coarse.n_points);
            assert!(exact.n_points > 0);
            let d = (exact.mean_r2() - coarse.mean_r2()).abs();
            eprintln!(
                "case {ci} shared {shared}: {:.3e} (r2 {:.3})",
                exact.mean_r2() - coarse.mean_r2(),
                exact.mean_r2()
            );
            worst = worst.max(d);
            assert!(
                d <= 1e-3,
                "case {ci} shared {shared}: full {} coarse {}",
                exact.mean_r2(),
                coarse.mean_r2()
            );
            if exact.mean_r2() > 0.5 {
                let dp = (exact.mean_phase() - coarse.mean_phase()).abs();
                assert!(
                    dp < 1e-2,
                    "case {ci} shared {shared}: phase differs by {dp}"
                );
            }
        }
    }
    eprintln!("coarse vs full grid: worst block-mean R² difference {worst:.2e}");
}

/// A signal with itself has R² = 1 at every point, since powers and cross-spectrum share the
/// same weights.
#[test]
fn self_coherence_is_one() {
    let (n, dt) = (2400, 0.1);
    let grid = band_scale_grid(10.0, 50.0, 6.0, 12);
    let plan = CoarsePlan::new(n, dt, 6.0, &grid, 900..1500);
    let (x, _) = pair(3, n, 0.5);
    let mut sc = plan.scratch();
    let m = plan.member(&x, &mut sc);
    let c = plan.coherence(&m, &m, &mut sc);
    assert!((c.mean_r2() - 1.0).abs() < 1e-12, "{}", c.mean_r2());
    assert!(c.mean_phase().abs() < 1e-12);
}

/// Simpson with end halves sums polynomials up to cubic exactly, as the full-grid sum over
/// samples does up to the Euler–Maclaurin derivative terms (zero for a linear function).
#[test]
fn row_weights_sum_linear_functions_exactly() {
    let points = 37;
    let w = geometry::tests_simpson(points, 8);
    let total: f64 = w.iter().sum();
    assert!((total - points as f64).abs() < 1e-12);
    let h = (points - 1) as f64 / 8.0;
    let f = |t: f64| 2.0 + 0.5 * t;
    let quad: f64 = w.iter().enumerate().map(|(i, w)| w * f(i as f64 * h)).sum();
    let direct: f64 = (0..points).map(|t| f(t as f64)).sum();
    assert!((quad - direct).abs() < 1e-10, "{quad} vs {direct}");
}

/// Pairs computed side by side (a full group, on the vector path when the CPU has one, plus a
/// remainder) give exactly the bits of pairs computed one at a time, so a pair's value never
/// depends on which pairs it was grouped with.
#[test]
fn grouped_pairs_match_single_pairs_bit_for_bit() {
    let (n, dt) = (1200, 0.1);
    let grid = band_scale_grid(10.0, 50.0, 6.0, 12);
    let plan = CoarsePlan::new(n, dt, 6.0, &grid, 300..900);
    let mut sc = plan.scratch();
    let members: Vec<MemberNodes> = (0..6)
        .map(|k| plan.member(&pair(50 + k, n, 0.5).0, &mut sc))
        .collect();
    let count = GROUP + 3;
    let xs: Vec<&MemberNodes> = (0..count).map(|i| &members[i % 6]).collect();
    let ys: Vec<&MemberNodes> = (0..count).map(|i| &members[(i * 5 + 1) % 6]).collect();
    let mut out = vec![plan.coherence(xs[0], ys[0], &mut sc); count];
    plan.coherence_many(&xs, &ys, &mut out, &mut sc);
    for i in 0..count {
        let single = plan.coherence(xs[i], ys[i], &mut sc);
        assert_eq!(single.sum_r2.to_bits(), out[i].sum_r2.to_bits(), "pair {i}");
        assert_eq!(
            single.sum_cos.to_bits(),
            out[i].sum_cos.to_bits(),
            "pair {i}"
        );
        assert_eq!(
            single.sum_sin.to_bits(),
            out[i].sum_sin.to_bits(),
            "pair {i}"
        );
    }
}

/// Small and awkward geometries: low rates (no decimation at all), windows of one or a few
/// samples, windows at the segment edge where the cone leaves few or no points, and bands of
/// one scale. The point counts always agree with the full grid, an empty band gives NaN on
/// both, and the block mean stays within the bound.
#[test]
fn awkward_geometries_agree_with_the_full_grid() {
    let cases = [
        geometry(64, 1.0, (2.0, 8.0), 20..44),
        geometry(64, 1.0, (2.0, 8.0), 0..64),
        geometry(64, 1.0, (2.0, 8.0), 31..32),
        geometry(64, 1.0, (2.0, 8.0), 0..3),
        geometry(200, 0.5, (4.0, 4.1), 60..140),
        geometry(300, 0.25, (2.0, 30.0), 100..200),
        geometry(40, 1.0, (8.0, 16.0), 10..30),
        geometry(3000, 0.05, (1.0, 3.0), 1000..1001),
    ];
    for (ci, g) in cases.iter().enumerate() {
        let (x, y) = pair(900 + ci as u64, g.n, 0.7);
        let (exact, coarse) = both(g, &x, &y);
        assert_eq!(exact.n_points, coarse.n_points, "case {ci}");
        eprintln!(
            "case {ci}: points {} full {} coarse {}",
            exact.n_points,
            exact.mean_r2(),
            coarse.mean_r2()
        );
        if exact.n_points == 0 {
            assert!(
                exact.mean_r2().is_nan() && coarse.mean_r2().is_nan(),
                "case {ci}"
            );
            continue;
        }
        let d = (exact.mean_r2() - coarse.mean_r2()).abs();
        assert!(
            d <= 1e-3,
            "case {ci}: full {} coarse {}",
            exact.mean_r2(),
            coarse.mean_r2()
        );
    }
}
