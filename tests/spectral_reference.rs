//! Compares the spectral module with the independent numpy/scipy reference
//! (/work/main/tests/reference/spectral_ref.py) on random signals.
use nevermet::spectral::coarse::CoarsePlan;
use nevermet::spectral::coherence::CoherencePlan;
use nevermet::spectral::correlation::pearson;
use nevermet::spectral::morlet::WaveletPlan;
use nevermet::spectral::{Complex64, band_scale_grid};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::{Value, json};
use std::process::Command;

const SCRIPT: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/reference/spectral_ref.py"
);

fn python() -> std::path::PathBuf {
    crate::util::python().to_path_buf()
}

fn normal(rng: &mut ChaCha8Rng) -> f64 {
    let u1: f64 = 1.0 - rng.random::<f64>();
    let u2: f64 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn rows(re: &Value, im: &Value) -> Vec<Vec<Complex64>> {
    re.as_array()
        .unwrap()
        .iter()
        .zip(im.as_array().unwrap())
        .map(|(r, i)| {
            floats(r)
                .into_iter()
                .zip(floats(i))
                .map(|(a, b)| Complex64::new(a, b))
                .collect()
        })
        .collect()
}

struct Geometry {
    n: usize,
    dt: f64,
    omega0: f64,
    spo: usize,
    band: (f64, f64),
    window: std::ops::Range<usize>,
}

#[test]
fn matches_numpy_reference() {
    let geometries = [
        Geometry {
            n: 600,
            dt: 0.1,
            omega0: 6.0,
            spo: 12,
            band: (2.0, 12.0),
            window: 0..600,
        },
        Geometry {
            n: 777,
            dt: 0.25,
            omega0: 6.0,
            spo: 10,
            band: (3.0, 30.0),
            window: 200..500,
        },
        Geometry {
            n: 512,
            dt: 0.5,
            omega0: 8.0,
            spo: 8,
            band: (4.0, 40.0),
            window: 0..256,
        },
        Geometry {
            n: 901,
            dt: 0.2,
            omega0: 6.0,
            spo: 12,
            band: (1.0, 16.0),
            window: 700..901,
        },
        Geometry {
            n: 1500,
            dt: 0.1,
            omega0: 6.0,
            spo: 12,
            band: (2.0, 16.0),
            window: 0..1500,
        },
    ];
    let dir = std::env::temp_dir().join(format!("spectral-ref-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let mut worst = [0.0f64; 5];
    for (gi, g) in geometries.iter().enumerate() {
        let mut rng = ChaCha8Rng::seed_from_u64(77);
        rng.set_stream(gi as u64);
        // Coloured, partly shared signals so that R² is neither ~0 nor ~1.
        let common: Vec<f64> = (0..g.n).map(|_| normal(&mut rng)).collect();
        let mut x: Vec<f64> = (0..g.n)
            .map(|t| 0.7 * common[t] + normal(&mut rng) + 3.0)
            .collect();
        let mut y: Vec<f64> = (0..g.n)
            .map(|t| 0.7 * common[t] + normal(&mut rng) - 1.0)
            .collect();
        for t in 1..g.n {
            x[t] += 0.8 * x[t - 1];
            y[t] += 0.6 * y[t - 1];
        }
        let input = json!({
            "dt": g.dt, "omega0": g.omega0, "scales_per_octave": g.spo,
            "min_period": g.band.0, "max_period": g.band.1,
            "window": [g.window.start, g.window.end], "x": x, "y": y,
        });
        let inp = dir.join(format!("in{gi}.json"));
        let outp = dir.join(format!("out{gi}.json"));
        std::fs::write(&inp, input.to_string()).unwrap();
        let status = Command::new(python())
            .arg(SCRIPT)
            .arg(&inp)
            .arg(&outp)
            .status()
            .unwrap();
        assert!(status.success(), "reference script failed on geometry {gi}");
        let reference: Value =
            serde_json::from_str(&std::fs::read_to_string(&outp).unwrap()).unwrap();

        let grid = band_scale_grid(g.band.0, g.band.1, g.omega0, g.spo);
        let ref_periods = floats(&reference["periods"]);
        assert_eq!(
            ref_periods.len(),
            grid.periods.len(),
            "geometry {gi}: grid size"
        );
        for (a, b) in grid.periods.iter().zip(&ref_periods) {
            assert!(
                (a / b - 1.0).abs() < 1e-14,
                "geometry {gi}: period {a} vs {b}"
            );
        }
        let wplan = WaveletPlan::new(g.n, g.dt, g.omega0, &grid.scales);
        assert_eq!(
            wplan.padded_len() as u64,
            reference["padded_len"].as_u64().unwrap()
        );
        let wx = wplan.transform(&x);
        let wy = wplan.transform(&y);
        for (w, (re, im)) in [(&wx, ("wx_re", "wx_im")), (&wy, ("wy_re", "wy_im"))] {
            let r = rows(&reference[re], &reference[im]);
            for (j, row) in r.iter().enumerate() {
                let scale_max = row.iter().map(|z| z.norm()).fold(0.0, f64::max);
                let diff = row
                    .iter()
                    .zip(&w[j * g.n..(j + 1) * g.n])
                    .map(|(a, b)| (a - b).norm())
                    .fold(0.0, f64::max);
                let rel = diff / scale_max;
                worst[0] = worst[0].max(rel);
                assert!(rel < 1e-9, "geometry {gi} {re} scale {j}: relative {rel:e}");
            }
        }
        let cplan = CoherencePlan::new(g.n, g.dt, &grid, g.window.clone());
        let mut scratch = vec![Complex64::new(0.0, 0.0); cplan.scratch_len()];
        let mut px = vec![0.0; cplan.power_len()];
        let mut py = vec![0.0; cplan.power_len()];
        cplan.smoothed_power_into(&wx, &mut px, &mut scratch);
        cplan.smoothed_power_into(&wy, &mut py, &mut scratch);
        let c = cplan.coherence(&wx, &wy, &px, &py, &mut scratch);
        assert_eq!(
            c.n_points as u64,
            reference["n_points"].as_u64().unwrap(),
            "geometry {gi}"
        );
        let d_r2 = (c.mean_r2() - reference["band_mean_r2"].as_f64().unwrap()).abs();
        let d_phase = (c.mean_phase() - reference["mean_phase"].as_f64().unwrap()).abs();
        let d_r = (pearson(&x, &y) - reference["pearson_r"].as_f64().unwrap()).abs();
        worst[1] = worst[1].max(d_r2);
        worst[2] = worst[2].max(d_phase);
        worst[3] = worst[3].max(d_r);
        println!(
            "geometry {gi}: n_points {} mean R² {:.6} (ref {:.6}) |ΔR²| {d_r2:.2e} |Δphase| {d_phase:.2e} |Δr| {d_r:.2e}",
            c.n_points,
            c.mean_r2(),
            reference["band_mean_r2"].as_f64().unwrap()
        );
        assert!(d_r2 < 1e-6, "geometry {gi}: mean R² differs by {d_r2:e}");
        assert!(
            d_phase < 1e-6,
            "geometry {gi}: mean phase differs by {d_phase:e}"
        );
        assert!(d_r < 1e-12, "geometry {gi}: pearson differs by {d_r:e}");
        // The coarse time grid the engine uses by default, against the same numpy values:
        // the same points, and block-mean R² within its documented 1e-3.
        let coarse = CoarsePlan::new(g.n, g.dt, g.omega0, &grid, g.window.clone());
        let mut sc = coarse.scratch();
        let (mx, my) = (coarse.member(&x, &mut sc), coarse.member(&y, &mut sc));
        let cc = coarse.coherence(&mx, &my, &mut sc);
        assert_eq!(cc.n_points, c.n_points, "geometry {gi}: coarse points");
        let d_coarse = (cc.mean_r2() - reference["band_mean_r2"].as_f64().unwrap()).abs();
        worst[4] = worst[4].max(d_coarse);
        assert!(
            d_coarse <= 1e-3,
            "geometry {gi}: coarse-grid mean R² differs by {d_coarse:e}"
        );
    }
    println!(
        "worst: transform rel {:.2e}, R² {:.2e}, phase {:.2e}, pearson {:.2e}, coarse-grid R² {:.2e}",
        worst[0], worst[1], worst[2], worst[3], worst[4]
    );
    std::fs::remove_dir_all(&dir).ok();
}
