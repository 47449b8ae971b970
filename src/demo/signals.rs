//! Synthesis of every member's HbO and HbR recording, the ground truth of the demo study.
//!
//! Owns the signal model and its constants; it reads the scenario and writes nothing to disk.
//! Each (member, channel) draws from its own random stream, so a recording does not depend on
//! which other recordings are made or in what order.
//!
//! One channel's signal (processed concentration change, arbitrary units) is the sum of
//! - AR(1) background noise, time constant about 4.9 s whatever the sampling rate;
//! - systemic oscillations near 0.1 Hz (Mayer waves) and 0.25 Hz (respiration), with a random
//!   phase and slightly different frequency for each member, independent across members;
//! - the block-locked response to the dyad's block design (canonical haemodynamic response),
//!   which every member shares and which therefore makes pseudo-pairs look synchronous too;
//! - in `joint` blocks only, for the two members of a real dyad only, and in the prefrontal
//!   and temporoparietal regions only: a slow component shared by the partners (periods
//!   10–16 s, inside the 10–50 s task band), faded in and out over 3 s at the block edges.
//!
//! HbR carries scaled, sign-reversed copies of the response, the systemic oscillations and the
//! shared component, and independent noise of its own.

use std::f64::consts::{PI, TAU};

use crate::demo::hrf;
use crate::demo::scenario::{CONDITIONS, Scenario};
use crate::demo::{Purpose, normal, stream, uniform};

/// Stationary standard deviation of the background noise.
pub const NOISE_SD_HBO: f64 = 0.5;
pub const NOISE_SD_HBR: f64 = 0.2;
/// AR(1) coefficient per sample at 4 Hz; other rates use 0.95^(4 / rate), the same decay per
/// second.
const AR_COEFFICIENT_AT_4HZ: f64 = 0.95;

const MAYER_HZ: f64 = 0.1;
const RESPIRATION_HZ: f64 = 0.25;
/// Members' oscillation frequencies vary by up to this fraction around the nominal one.
const FREQUENCY_SPREAD: f64 = 0.1;
const MAYER_AMPLITUDE: f64 = 0.3;
const RESPIRATION_AMPLITUDE: f64 = 0.1;
const HBR_SYSTEMIC_RATIO: f64 = -0.3;

/// HbR block-locked response relative to HbO.
pub const HBR_EVOKED_RATIO: f64 = -0.3;

/// Root-mean-square amplitude of the shared component in HbO. Each member's own signal in the
/// 10–50 s task band (AR(1) background, about 0.67 × NOISE_SD_HBO = 0.34 RMS, plus the Mayer
/// wave, 0.21 RMS) is about 0.4 RMS, so the shared signal is about three times a member's own
/// in the band: a clear effect for a 12-dyad demo, where a correction over six cells and a
/// condition contrast must find it. The shared periods are kept short (10–16 s) because block
/// coherence smooths over about one period: longer shared periods would carry the joint-block
/// coupling across the 40 s pauses into the estimates of the neighbouring blocks.
pub const COUPLING_AMPLITUDE: f64 = 1.2;
/// HbR counterpart of the shared component relative to HbO (anti-correlated, smaller).
pub const HBR_COUPLING_RATIO: f64 = -0.4;
pub const COUPLING_MIN_PERIOD_S: f64 = 10.0;
pub const COUPLING_MAX_PERIOD_S: f64 = 16.0;
const COUPLING_SINUSOIDS: usize = 6;
/// Cosine fade of the shared component at each edge of a joint block.
pub const COUPLING_RAMP_S: f64 = 3.0;
/// Each member follows the shared component with its own small lag, up to this many seconds.
const MAX_MEMBER_LAG_S: f64 = 0.5;

/// One member's recording: per channel, HbO and HbR samples (NaN for an empty channel).
pub struct Recording {
    pub hbo: Vec<Vec<f64>>,
    pub hbr: Vec<Vec<f64>>,
}

/// Sample times in seconds from 0.
pub fn time_axis(study: &Scenario) -> Vec<f64> {
    (0..study.samples)
        .map(|i| i as f64 / study.sampling_hz)
        .collect()
}

/// Synthesises one member's recording.
pub fn synthesise(study: &Scenario, member: usize) -> Recording {
    let dyad = study.members[member].dyad;
    let times = time_axis(study);
    let evoked = block_response(study, dyad);
    let systemic = systemic_oscillations(study, member, &times);
    let window = coupling_window(study, dyad, &times);
    let lag = uniform(
        &mut stream(study.seed, Purpose::Lag, member, 0),
        -MAX_MEMBER_LAG_S,
        MAX_MEMBER_LAG_S,
    );
    let shared: Vec<Option<Vec<f64>>> = study
        .rois()
        .iter()
        .enumerate()
        .map(|(roi, r)| {
            r.coupled
                .then(|| shared_component(study.seed, dyad, roi).sample(&times, lag))
        })
        .collect();

    let mut hbo = Vec::with_capacity(study.channels.len());
    let mut hbr = Vec::with_capacity(study.channels.len());
    for (c, channel) in study.channels.iter().enumerate() {
        if study.empty_channel == (member, c) {
            hbo.push(vec![f64::NAN; study.samples]);
            hbr.push(vec![f64::NAN; study.samples]);
            continue;
        }
        let mut rng = stream(study.seed, Purpose::Channel, member, c);
        let evoked_gain = uniform(&mut rng, 0.8, 1.2);
        let systemic_gain = uniform(&mut rng, 0.7, 1.3);
        let coupling_gain = uniform(&mut rng, 0.8, 1.2);
        let noise_hbo = ar1(&mut rng, study.samples, study.sampling_hz, NOISE_SD_HBO);
        let noise_hbr = ar1(&mut rng, study.samples, study.sampling_hz, NOISE_SD_HBR);
        let mut o = Vec::with_capacity(study.samples);
        let mut r = Vec::with_capacity(study.samples);
        for i in 0..study.samples {
            let coupled = shared[channel.roi].as_ref().map_or(0.0, |s| {
                study.coupling_amplitude * coupling_gain * window[i] * s[i]
            });
            let e = evoked_gain * evoked[i];
            let y = systemic_gain * systemic[i];
            o.push(e + y + coupled + noise_hbo[i]);
            r.push(
                HBR_EVOKED_RATIO * e
                    + HBR_SYSTEMIC_RATIO * y
                    + HBR_COUPLING_RATIO * coupled
                    + noise_hbr[i],
            );
        }
        hbo.push(o);
        hbr.push(r);
    }
    Recording { hbo, hbr }
}

/// AR(1) noise started from its stationary distribution, so it has no warm-up transient.
fn ar1(rng: &mut rand_chacha::ChaCha8Rng, n: usize, sampling_hz: f64, sd: f64) -> Vec<f64> {
    let phi = AR_COEFFICIENT_AT_4HZ.powf(4.0 / sampling_hz);
    let innovation_sd = sd * (1.0 - phi * phi).sqrt();
    let mut x = sd * normal(rng);
    let mut out = Vec::with_capacity(n);
    for _ in 0..n {
        out.push(x);
        x = phi * x + innovation_sd * normal(rng);
    }
    out
}

/// The dyad's block design (a boxcar per block, height = its condition's amplitude) convolved
/// with the canonical response.
fn block_response(study: &Scenario, dyad: usize) -> Vec<f64> {
    let times = time_axis(study);
    let mut design = vec![0.0; study.samples];
    for block in &study.dyads[dyad].blocks {
        let height = CONDITIONS[block.condition].evoked;
        for (d, &t) in design.iter_mut().zip(&times) {
            if t >= block.onset && t < block.onset + block.duration {
                *d += height;
            }
        }
    }
    hrf::convolve(&design, &hrf::sampled_kernel(study.sampling_hz))
}

fn systemic_oscillations(study: &Scenario, member: usize, times: &[f64]) -> Vec<f64> {
    let mut rng = stream(study.seed, Purpose::Physiology, member, 0);
    let spread = |rng: &mut rand_chacha::ChaCha8Rng| {
        uniform(rng, 1.0 - FREQUENCY_SPREAD, 1.0 + FREQUENCY_SPREAD)
    };
    let mayer_hz = MAYER_HZ * spread(&mut rng);
    let mayer_phase = uniform(&mut rng, 0.0, TAU);
    let respiration_hz = RESPIRATION_HZ * spread(&mut rng);
    let respiration_phase = uniform(&mut rng, 0.0, TAU);
    times
        .iter()
        .map(|&t| {
            MAYER_AMPLITUDE * (TAU * mayer_hz * t + mayer_phase).sin()
                + RESPIRATION_AMPLITUDE * (TAU * respiration_hz * t + respiration_phase).sin()
        })
        .collect()
}

/// 1 inside the dyad's coupled blocks, 0 outside, with raised-cosine fades of
/// COUPLING_RAMP_S inside each block edge.
fn coupling_window(study: &Scenario, dyad: usize, times: &[f64]) -> Vec<f64> {
    let mut w = vec![0.0; times.len()];
    for block in &study.dyads[dyad].blocks {
        if !CONDITIONS[block.condition].coupled {
            continue;
        }
        let end = block.onset + block.duration;
        for (wi, &t) in w.iter_mut().zip(times) {
            if t >= block.onset && t <= end {
                let edge = ((t - block.onset).min(end - t) / COUPLING_RAMP_S).min(1.0);
                *wi = 0.5 * (1.0 - (PI * edge).cos());
            }
        }
    }
    w
}

/// A band-limited signal shared by the two members of one dyad in one region: a sum of
/// sinusoids with random periods and phases, scaled to unit root-mean-square.
pub struct SharedComponent {
    /// (period in seconds, phase, weight)
    parts: Vec<(f64, f64, f64)>,
}

impl SharedComponent {
    fn sample(&self, times: &[f64], lag: f64) -> Vec<f64> {
        times
            .iter()
            .map(|&t| {
                self.parts
                    .iter()
                    .map(|&(period, phase, weight)| {
                        weight * (TAU * (t - lag) / period + phase).sin()
                    })
                    .sum()
            })
            .collect()
    }
}

pub fn shared_component(seed: u64, dyad: usize, roi: usize) -> SharedComponent {
    let mut rng = stream(seed, Purpose::Coupling, dyad, roi);
    let mut parts: Vec<(f64, f64, f64)> = (0..COUPLING_SINUSOIDS)
        .map(|_| {
            let period = uniform(&mut rng, COUPLING_MIN_PERIOD_S, COUPLING_MAX_PERIOD_S);
            let phase = uniform(&mut rng, 0.0, TAU);
            let weight = uniform(&mut rng, 0.5, 1.0);
            (period, phase, weight)
        })
        .collect();
    // A sinusoid of weight a has mean square a²/2; distinct frequencies add in power.
    let rms = (parts.iter().map(|p| p.2 * p.2 / 2.0).sum::<f64>()).sqrt();
    for p in &mut parts {
        p.2 /= rms;
    }
    SharedComponent { parts }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demo::DemoOptions;
    use crate::demo::scenario::Scenario;

    /// Pearson correlation from its definition.
    fn pearson(x: &[f64], y: &[f64]) -> f64 {
        let n = x.len() as f64;
        let (mx, my) = (x.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
        let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
        for (a, b) in x.iter().zip(y) {
            sxy += (a - mx) * (b - my);
            sxx += (a - mx) * (a - mx);
            syy += (b - my) * (b - my);
        }
        sxy / (sxx * syy).sqrt()
    }

    #[test]
    fn pearson_matches_a_hand_computed_example() {
        // x = 1..5, y = (2, 4, 5, 4, 5): Sxy = 6, Sxx = 10, Syy = 6, r = 6 / sqrt(60).
        let r = pearson(&[1.0, 2.0, 3.0, 4.0, 5.0], &[2.0, 4.0, 5.0, 4.0, 5.0]);
        assert!((r - 6.0 / 60f64.sqrt()).abs() < 1e-12);
    }

    /// Centred moving average over `width` samples (shorter at the ends).
    fn moving_average(x: &[f64], width: usize) -> Vec<f64> {
        let half = width / 2;
        (0..x.len())
            .map(|i| {
                let lo = i.saturating_sub(half);
                let hi = (i + half + 1).min(x.len());
                x[lo..hi].iter().sum::<f64>() / (hi - lo) as f64
            })
            .collect()
    }

    /// A crude band-pass: a 5 s moving average minus a 25 s one keeps periods of roughly
    /// 8–40 s, the heart of the 10–50 s task band.
    fn band_pass(x: &[f64], hz: f64) -> Vec<f64> {
        let short = moving_average(x, (5.0 * hz) as usize);
        let long = moving_average(x, (25.0 * hz) as usize);
        short.iter().zip(&long).map(|(s, l)| s - l).collect()
    }

    /// Samples of one condition's blocks, block by block.
    fn block_samples(study: &Scenario, dyad: usize, condition: usize) -> Vec<(usize, usize)> {
        study.dyads[dyad]
            .blocks
            .iter()
            .filter(|b| b.condition == condition)
            .map(|b| {
                let start = (b.onset * study.sampling_hz).ceil() as usize;
                let stop = ((b.onset + b.duration) * study.sampling_hz).floor() as usize;
                (start, stop)
            })
            .collect()
    }

    /// Mean over pairs and channels of the correlation of band-passed HbO within the blocks of
    /// one condition, matching the k-th block of one member with the k-th block of the other.
    fn mean_correlation(
        study: &Scenario,
        filtered: &[Vec<Vec<f64>>],
        pairs: &[(usize, usize)],
        roi: usize,
        condition: usize,
    ) -> f64 {
        let mut values = Vec::new();
        for &(a, b) in pairs {
            let blocks_a = block_samples(study, study.members[a].dyad, condition);
            let blocks_b = block_samples(study, study.members[b].dyad, condition);
            for (c, channel) in study.channels.iter().enumerate() {
                if channel.roi != roi || filtered[a][c][0].is_nan() || filtered[b][c][0].is_nan() {
                    continue;
                }
                let (mut x, mut y) = (Vec::new(), Vec::new());
                for (&(sa, ea), &(sb, eb)) in blocks_a.iter().zip(&blocks_b) {
                    let len = (ea - sa).min(eb - sb);
                    x.extend_from_slice(&filtered[a][c][sa..sa + len]);
                    y.extend_from_slice(&filtered[b][c][sb..sb + len]);
                }
                values.push(pearson(&x, &y));
            }
        }
        values.iter().sum::<f64>() / values.len() as f64
    }

    #[test]
    fn real_partners_share_slow_activity_only_where_the_truth_says() {
        // Expected sizes from the signal model, not from a run: after the band-pass, each
        // member's own signal has about 0.1 power (AR(1) and a damped Mayer wave), the shared
        // component 0.25 (COUPLING_AMPLITUDE²) and the block-locked response, common to every
        // pair, a little less. Real partners in coupled cells should then correlate near 0.7
        // and pseudo-pairs near 0.25; elsewhere both sit near 0.25. Three seeds, so the check
        // is of the model rather than of one draw.
        for seed in [20261201, 1, 77] {
            let study = Scenario::build(&DemoOptions {
                seed,
                ..Default::default()
            });
            let report = compare_real_and_pseudo(&study);
            println!("seed {seed}\n{report}");
        }
    }

    fn compare_real_and_pseudo(study: &Scenario) -> String {
        let hz = study.sampling_hz;
        let filtered: Vec<Vec<Vec<f64>>> = (0..study.members.len())
            .map(|m| {
                synthesise(study, m)
                    .hbo
                    .iter()
                    .map(|x| band_pass(x, hz))
                    .collect()
            })
            .collect();
        let real: Vec<(usize, usize)> = study
            .dyads
            .iter()
            .map(|d| (d.members[0], d.members[1]))
            .collect();
        // Pseudo-pairs: first member of one dyad with second member of another dyad at the
        // same site, never of the same family.
        let mut pseudo = Vec::new();
        for (a, _) in &real {
            for (_, b) in &real {
                let (ma, mb) = (&study.members[*a], &study.members[*b]);
                if ma.dyad != mb.dyad
                    && study.site_of(*a) == study.site_of(*b)
                    && ma.group != mb.group
                {
                    pseudo.push((*a, *b));
                }
            }
        }
        assert_eq!(
            pseudo.len(),
            2 * (6 * 5 - 2),
            "two excluded family pairs per site"
        );
        let joint = 0;
        let parallel = 1;
        let mut report = String::new();
        for (roi, r) in study.rois().iter().enumerate() {
            for condition in [joint, parallel] {
                let re = mean_correlation(study, &filtered, &real, roi, condition);
                let ps = mean_correlation(study, &filtered, &pseudo, roi, condition);
                report += &format!(
                    "{} {}: real {re:.3} pseudo {ps:.3}\n",
                    r.name, CONDITIONS[condition].name
                );
                if r.coupled && condition == joint {
                    assert!(re - ps > 0.3, "{report}");
                } else {
                    // A mean of 24 correlations with few effective degrees of freedom each:
                    // standard error about 0.06.
                    assert!((re - ps).abs() < 0.15, "{report}");
                }
            }
        }
        report
    }

    #[test]
    fn background_noise_has_the_intended_variance_and_memory() {
        // AR(1) theory: stationary variance sd², lag-k autocorrelation φ^k; at 4 Hz, φ = 0.95,
        // so the correlation one second apart is 0.95⁴ ≈ 0.815, at any sampling rate.
        for hz in [4.0, 10.0] {
            let mut rng = stream(3, Purpose::Channel, 0, 0);
            let x = ar1(&mut rng, 400_000, hz, 2.0);
            let n = x.len() as f64;
            let var = x.iter().map(|v| v * v).sum::<f64>() / n;
            let k = hz as usize;
            let lag1s = pearson(&x[..x.len() - k], &x[k..]);
            assert!((var - 4.0).abs() < 0.15, "{hz} Hz variance {var}");
            assert!(
                (lag1s - 0.95f64.powi(4)).abs() < 0.01,
                "{hz} Hz lag-1 s correlation {lag1s}"
            );
        }
    }

    #[test]
    fn the_shared_component_has_unit_power_and_stays_in_band() {
        let c = shared_component(5, 2, 0);
        let times: Vec<f64> = (0..200_000).map(|i| i as f64 * 0.25).collect();
        let x = c.sample(&times, 0.0);
        let ms = x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64;
        assert!((ms - 1.0).abs() < 0.02, "mean square {ms}");
        for &(period, _, _) in &c.parts {
            assert!((COUPLING_MIN_PERIOD_S..=COUPLING_MAX_PERIOD_S).contains(&period));
            assert!((10.0..=50.0).contains(&period), "inside the task band");
        }
    }

    #[test]
    fn the_empty_channel_is_empty_and_the_others_are_not() {
        let study = Scenario::build(&DemoOptions::default());
        let (member, channel) = study.empty_channel;
        let rec = synthesise(&study, member);
        for c in 0..study.channels.len() {
            let all_nan = rec.hbo[c].iter().chain(&rec.hbr[c]).all(|v| v.is_nan());
            let any_nan = rec.hbo[c].iter().chain(&rec.hbr[c]).any(|v| v.is_nan());
            assert_eq!(all_nan, c == channel);
            assert_eq!(any_nan, c == channel);
        }
    }

    #[test]
    fn the_block_response_settles_at_its_amplitude_with_hbr_reversed() {
        // From 10 s into a joint block to its end, the unit step response of the canonical
        // form, (F(t; 6) − F(t; 16) / 6) / (5/6) with F the gamma distribution function, runs
        // from about 1.11 down to 1.00; the last 60 s of a recording hold no response at all.
        // Averaged over every member and channel, HbO therefore rises by about the joint
        // amplitude (1.0) and HbR falls by HBR_EVOKED_RATIO times as much.
        let study = Scenario::build(&DemoOptions::default());
        let hz = study.sampling_hz;
        let settle = (10.0 * hz) as usize;
        let tail = (60.0 * hz) as usize;
        let (mut rise_o, mut rise_r, mut count) = (0.0, 0.0, 0.0);
        for m in 0..study.members.len() {
            let rec = synthesise(&study, m);
            let blocks = block_samples(&study, study.members[m].dyad, 0);
            for c in 0..study.channels.len() {
                if rec.hbo[c][0].is_nan() {
                    continue;
                }
                let change = |x: &[f64]| {
                    let inside: Vec<f64> = blocks
                        .iter()
                        .flat_map(|&(s, e)| x[s + settle..e].to_vec())
                        .collect();
                    let after = &x[x.len() - tail..];
                    inside.iter().sum::<f64>() / inside.len() as f64
                        - after.iter().sum::<f64>() / after.len() as f64
                };
                rise_o += change(&rec.hbo[c]);
                rise_r += change(&rec.hbr[c]);
                count += 1.0;
            }
        }
        let (o, r) = (rise_o / count, rise_r / count);
        assert!((0.9..1.25).contains(&o), "HbO rise {o}");
        assert!((r / o - HBR_EVOKED_RATIO).abs() < 0.05, "HbR/HbO {}", r / o);
    }
}
