#!/usr/bin/env python3
"""Independent numpy/scipy reference for nevermet's spectral numerics.

Written from the published formulas, not from the Rust code:

* Morlet continuous wavelet transform by FFT: Torrence & Compo (1998), "A practical guide
  to wavelet analysis", BAMS 79:61-78, eqs. 3-6 and Table 1 (numpy.fft as the FFT).
* Wavelet transform coherence: Grinsted, Moore & Jevrejeva (2004), Nonlin. Processes
  Geophys. 11:561-566, eq. 4, with the smoothing of Torrence & Webster (1999), J. Climate
  12:2679-2690: Gaussian exp(-t^2/(2 s^2)) in time, a 0.6-octave boxcar in scale
  (decorrelation length of the Morlet wavelet, Torrence & Compo 1998, Table 2).
* Pearson correlation: scipy.stats.pearsonr.

Conventions fixed by the project (restated here so this file stands alone):

* the segment mean is removed, then zeros are appended up to N samples, N the smallest power
  of two >= n + max(n, ceil(6 * s_eff / dt)), s_eff = min(largest scale,
  (n - 1) * dt / (2 * sqrt(2)));
* omega_k = 2 pi k / (N dt) for k <= N/2, negative above; H(0) = 0;
* scale grid: periods min_period * 2**((i - h) / spo), h = boxcar half-support in grid steps,
  band = periods <= max_period * (1 + 1e-12); scales = period / fourier factor;
* boxcar weight of grid offset k = overlap of [k - 1/2, k + 1/2] with [-0.3 spo, 0.3 spo],
  normalised to unit sum;
* time smoothing at scale s: weights exp(-(k dt / s)^2 / 2) for |k| <= min(n - 1,
  ceil(9 s / dt)), unit sum, series zero outside the segment, no renormalisation at the ends;
* S(f)(s_j, t) = sum_k w_k * time_smooth(f(s_{j+k}) / s_{j+k})(t);
* a point (s, t) counts when t is in the window, t dt >= sqrt(2) s and (n - 1 - t) dt >=
  sqrt(2) s (cone of influence by the e-folding time, Torrence & Compo 1998, Table 1);
* mean phase = atan2(sum sin phi, sum cos phi), phi = arg S(W_x conj(W_y) / s).

Usage: spectral_ref.py INPUT.json OUTPUT.json
INPUT: {dt, omega0, scales_per_octave, min_period, max_period, window: [start, end], x, y}
OUTPUT: {periods, scales, padded_len, wx_re, wx_im, wy_re, wy_im (scale-major, every grid
scale), band_mean_r2, n_points, sum_r2, sum_cos, sum_sin, mean_phase, pearson_r}
"""

import json
import math
import sys

import numpy as np
from scipy import stats

SQRT2 = math.sqrt(2.0)


def fourier_factor(omega0):
    """Torrence & Compo (1998), Table 1: Fourier period / scale for the Morlet wavelet."""
    return 4.0 * math.pi / (omega0 + math.sqrt(2.0 + omega0**2))


def boxcar(spo):
    half = 3 * spo / 10.0  # 0.6 octave wide, in grid steps, centred

    def overlap(k):
        return max(0.0, min(k + 0.5, half) - max(k - 0.5, -half))

    reach = 0
    while overlap(reach + 1) > 0.0:
        reach += 1
    w = np.array([overlap(k) for k in range(-reach, reach + 1)])
    return w / w.sum(), reach


def scale_grid(min_period, max_period, omega0, spo):
    _, halo = boxcar(spo)
    n_band = 1
    while min_period * 2.0 ** (n_band / spo) <= max_period * (1.0 + 1e-12):
        n_band += 1
    periods = np.array(
        [min_period * 2.0 ** ((i - halo) / spo) for i in range(n_band + 2 * halo)]
    )
    return periods, periods / fourier_factor(omega0), halo, n_band


def padded_length(n, dt, scales):
    s_eff = min(max(scales), (n - 1) * dt / (2.0 * SQRT2))
    guard = max(0, math.ceil(6.0 * s_eff / dt))
    need = n + max(n, guard)
    return 1 << (need - 1).bit_length()


def morlet_cwt(x, dt, omega0, scales):
    """Torrence & Compo (1998) eqs. 3-6: W_n(s) = sum_k xhat_k psihat(s omega_k) e^{i omega_k n dt}."""
    n = len(x)
    big_n = padded_length(n, dt, scales)
    xp = np.zeros(big_n)
    xp[:n] = x - np.mean(x)
    spectrum = np.fft.fft(xp)  # = N * xhat_k of eq. 3
    k = np.arange(big_n)
    omega = np.where(k <= big_n // 2, 2.0 * np.pi * k, -2.0 * np.pi * (big_n - k)) / (
        big_n * dt
    )
    out = np.empty((len(scales), n), dtype=complex)
    for j, s in enumerate(scales):
        psi = (
            np.sqrt(2.0 * np.pi * s / dt)
            * np.pi**-0.25
            * np.exp(-0.5 * (s * omega - omega0) ** 2)
            * (omega > 0.0)
        )
        out[j] = np.fft.ifft(spectrum * psi)[:n]  # ifft's 1/N turns N*xhat back into xhat
    return out, big_n


def time_smooth(f, s, dt):
    n = len(f)
    m = min(n - 1, math.ceil(9.0 * s / dt))
    lags = np.arange(-m, m + 1)
    g = np.exp(-0.5 * (lags * dt / s) ** 2)
    g /= g.sum()
    return np.convolve(f, g)[m : m + n]


def smooth(rows, scales, dt, weights, halo, band):
    """S = scale boxcar of Gaussian time smoothing of rows / s, for each band scale."""
    timed = [time_smooth(rows[i] / scales[i], scales[i], dt) for i in range(len(scales))]
    return [
        sum(weights[k] * timed[j + k - halo] for k in range(len(weights))) for j in band
    ]


def main():
    with open(sys.argv[1]) as fh:
        cfg = json.load(fh)
    dt = float(cfg["dt"])
    omega0 = float(cfg["omega0"])
    spo = int(cfg["scales_per_octave"])
    start, end = cfg["window"]
    x = np.asarray(cfg["x"], dtype=float)
    y = np.asarray(cfg["y"], dtype=float)
    n = len(x)

    periods, scales, halo, n_band = scale_grid(
        float(cfg["min_period"]), float(cfg["max_period"]), omega0, spo
    )
    weights, _ = boxcar(spo)
    band = range(halo, halo + n_band)
    wx, big_n = morlet_cwt(x, dt, omega0, scales)
    wy, _ = morlet_cwt(y, dt, omega0, scales)

    sxy = smooth(wx * np.conj(wy), scales, dt, weights, halo, band)
    sxx = smooth(np.abs(wx) ** 2, scales, dt, weights, halo, band)
    syy = smooth(np.abs(wy) ** 2, scales, dt, weights, halo, band)

    t = np.arange(n)
    r2_points, phasors = [], []
    for b, j in enumerate(band):
        reach = SQRT2 * scales[j]
        mask = (t >= start) & (t < end) & (t * dt >= reach) & ((n - 1 - t) * dt >= reach)
        c = sxy[b][mask]
        r2_points.append(np.abs(c) ** 2 / (sxx[b][mask].real * syy[b][mask].real))
        mag = np.abs(c)
        phasors.append(np.where(mag > 0, c / np.where(mag > 0, mag, 1.0), 0.0))
    r2_points = np.concatenate(r2_points)
    phasors = np.concatenate(phasors)
    n_points = int(r2_points.size)
    sum_cos = float(phasors.real.sum())
    sum_sin = float(phasors.imag.sum())

    result = {
        "periods": periods.tolist(),
        "scales": scales.tolist(),
        "padded_len": big_n,
        "wx_re": wx.real.tolist(),
        "wx_im": wx.imag.tolist(),
        "wy_re": wy.real.tolist(),
        "wy_im": wy.imag.tolist(),
        "n_points": n_points,
        "sum_r2": float(r2_points.sum()),
        # null rather than NaN when no point lies outside the cone: keeps the JSON standard
        "band_mean_r2": float(r2_points.mean()) if n_points else None,
        "sum_cos": sum_cos,
        "sum_sin": sum_sin,
        "mean_phase": math.atan2(sum_sin, sum_cos) if n_points else None,
        "pearson_r": float(stats.pearsonr(x, y).statistic),
    }
    with open(sys.argv[2], "w") as fh:
        json.dump(result, fh)


if __name__ == "__main__":
    main()
