#!/usr/bin/env python3
"""Block-band mean wavelet coherence from pycwt, the general-purpose wavelet library on PyPI.

pycwt is the outside reference here: its Morlet wavelet (pycwt.Morlet), its transform
(pycwt.cwt), its coherence (pycwt.wct) and its smoothing (pycwt.Morlet.smooth) do the numerical
work. Nothing here is taken from the Rust code. Every pair gets these readings:

* stock: pycwt.wct(x, y, dt, dj, s0, J, sig=False) as it comes.
* aligned: the same pycwt building blocks with three of pycwt's conventions set to the
  project's:
  (a) scale window. Morlet.smooth convolves over scale with helpers.rect of
      round(2 * deltaj0 / dj) taps, end taps at half weight: 14 taps at 12 scales per octave,
      whose end-tap centres are 13 grid steps = 1.08 octaves apart. The project uses a
      boxcar deltaj0 = 0.60 octave wide in all, the scale-decorrelation length of the Morlet
      wavelet (Torrence & Compo 1998, BAMS 79:61-78, Table 2), as in the coherence smoothing
      of Grinsted, Moore & Jevrejeva 2004 (NPG 11:561-566) after Torrence & Webster 1999.
  (b) zero padding. pycwt.cwt pads only to the next power of two of the signal's length,
      so for the large scales its circular FFT wraps one end of the segment into the other.
      Aligned: the mean-removed segment is handed to pycwt.cwt with zeros appended up to a
      power of two long enough that nothing wraps.
  (c) time smoothing. Morlet.smooth smooths whatever rows it is handed, circularly over the
      next power of two of their length: handed the transform of a padded signal it reads
      the transform inside the padding; handed the bare segment (stock) its Gaussian wraps
      round from one end of the segment to the other. The project takes the transform as
      zero outside the segment. Aligned: rows cut to the segment, then zero-extended far
      enough that Morlet.smooth's circular smoothing never wraps.
* aligned_cut_norm: aligned, and (d) the time-smoothing Gaussian renormalised as the project
  does: pycwt's Gaussian has unit mass over all lags; the project's weights have unit sum over
  the lags |k| <= min(n - 1, ceil(9 s / dt)), so where a segment is shorter than 9 scales its
  weights are pycwt's divided by the mass of pycwt's Gaussian within n - 1 lags. That mass is
  read off Morlet.smooth's response to a unit impulse.
* stock_pipeline: the building blocks with none of (a)-(c) changed; it must reproduce stock,
  which shows that stock and aligned differ by (a)-(c) and nothing else.
* only_scale, only_padding, only_time: aligned except for one of (a), (b), (c) left as pycwt
  has it, to show what each contributes.

Shared definitions (the project's, restated so this file stands alone):

* scale grid: periods min_period * 2**((i - h) / spo), the band being the periods <=
  max_period * (1 + 1e-12); scale = period / pycwt.Morlet(omega0).flambda() (the Fourier
  factor of Torrence & Compo 1998, Table 1). Here h = 7 extra grid steps on each side, what
  pycwt's own scale window reads (the project's boxcar reads 4);
* boxcar weight of grid offset k: length of the overlap of [k - 1/2, k + 1/2] with
  [-deltaj0 * spo / 2, deltaj0 * spo / 2], normalised to unit sum;
* R^2 = |S(W_x conj(W_y) / s)|^2 / (S(|W_x|^2 / s) S(|W_y|^2 / s)) (Grinsted et al. 2004,
  eq. 4), S = scale smoothing after time smoothing;
* a point (s, t) of the band counts when t is in the block window, t dt >= sqrt(2) s and
  (n - 1 - t) dt >= sqrt(2) s (cone of influence by the e-folding time sqrt(2) s, Torrence &
  Compo 1998, Table 1); a block value is the plain mean of R^2 over those points, for every
  reading alike.

Usage: pycwt_ref.py INPUT.json OUTPUT.json
INPUT: {dt, omega0, scales_per_octave, min_period, max_period, window: [start, end],
        pairs: [{x, y}, ...]} (every x and y one segment of n samples)
OUTPUT: {pycwt_version, periods (grid with its extra steps), band: [start, end) into
         periods, boxcar, stock_taps, n_points, stock_padded_len, aligned_padded_len, and one
         block value per pair for each reading: stock, aligned, aligned_cut_norm,
         stock_pipeline, only_scale, only_padding, only_time}
"""

import importlib.metadata
import json
import math
import sys

import numpy as np
import pycwt
from pycwt.helpers import rect

SQRT2 = math.sqrt(2.0)
GAUSS_CUT_SCALES = 9.0  # the project's time-smoothing lag cut, in scales


def next_pow2(k):
    return 1 << (int(k) - 1).bit_length()


def tc_boxcar(spo, deltaj0):
    """Boxcar deltaj0 octave wide, centred, as weights per grid offset -reach..reach."""
    half = deltaj0 * spo / 2.0

    def overlap(k):
        return max(0.0, min(k + 0.5, half) - max(k - 0.5, -half))

    reach = 0
    while overlap(reach + 1) > 0.0:
        reach += 1
    w = np.array([overlap(k) for k in range(-reach, reach + 1)])
    return w / w.sum(), reach


def grid(min_period, max_period, spo, flambda, halo):
    """Periods and scales with `halo` extra grid steps below and above the band."""
    n_band = 1
    while min_period * 2.0 ** (n_band / spo) <= max_period * (1.0 + 1e-12):
        n_band += 1
    periods = np.array(
        [min_period * 2.0 ** ((i - halo) / spo) for i in range(n_band + 2 * halo)]
    )
    return periods, periods / flambda, n_band


def point_masks(n, dt, scales, window):
    t = np.arange(n)
    start, end = window
    return [
        (t >= start) & (t < end) & (t * dt >= SQRT2 * s) & ((n - 1 - t) * dt >= SQRT2 * s)
        for s in scales
    ]


class Reader:
    """pycwt's pieces for one geometry."""

    def __init__(self, n, dt, spo, s0, J, mother, wide_pad, wide_time, tc, band, masks):
        self.n, self.dt, self.spo, self.s0, self.J = n, dt, spo, s0, J
        self.mother, self.wide_pad, self.wide_time = mother, wide_pad, wide_time
        self.tc, self.band, self.masks = tc, band, masks
        # Morlet.smooth's scale window has round(2 * deltaj0 / dj) taps; with
        # dj = 2 * deltaj0 that is rect(1) = [1]: the call then does its time smoothing alone.
        self.one_tap = 2.0 * mother.deltaj0
        assert np.array_equal(
            rect(int(np.round(2 * mother.deltaj0 / self.one_tap)), normalize=True), [1.0]
        )
        self.sj = None
        self.mass = None

    def transform(self, x, padded):
        """pycwt.cwt of the mean-removed segment, with the zeros of (b) when `padded`.

        pycwt.cwt pads to the next power of two of what it is handed, so a segment with zeros
        appended up to a power of two gets exactly that FFT length. Returned uncut: the
        columns past n are the transform inside the padding.
        """
        xp = np.asarray(x, dtype=float)
        xp = xp - xp.mean()
        if padded:
            xp = np.concatenate([xp, np.zeros(self.wide_pad - self.n)])
        w, sj, _, _, _, _ = pycwt.cwt(
            xp, self.dt, dj=1.0 / self.spo, s0=self.s0, J=self.J, wavelet=self.mother
        )
        self.sj = sj
        return w

    def kernel_mass(self):
        """Per scale, the mass of Morlet.smooth's Gaussian within the project's lag cut (d)."""
        if self.mass is None:
            reach = math.ceil(10.0 * self.sj[-1] / self.dt)
            length = next_pow2(2 * reach + 1)
            c = length // 2
            impulse = np.zeros((len(self.sj), length))
            impulse[:, c] = 1.0
            g = self.mother.smooth(impulse, self.dt, self.one_tap, self.sj)
            self.mass = np.empty(len(self.sj))
            for j, s in enumerate(self.sj):
                m = min(self.n - 1, math.ceil(GAUSS_CUT_SCALES * s / self.dt))
                self.mass[j] = g[j, c - m : c + m + 1].sum()
        return self.mass

    def smooth(self, p, scale_ok, time_ok, cut_norm):
        """S(p) at the band rows, p's rows already divided by their scale."""
        n = self.n
        if time_ok:
            p = p[:, :n]
            p = np.concatenate([p, np.zeros((p.shape[0], self.wide_time - n), p.dtype)], axis=1)
        if not scale_ok:
            t = self.mother.smooth(p, self.dt, 1.0 / self.spo, self.sj)[:, :n]
            return [t[j] for j in self.band]
        t = self.mother.smooth(p, self.dt, self.one_tap, self.sj)[:, :n]
        if cut_norm:
            t = t / self.kernel_mass()[:, None]
        weights, reach = self.tc
        return [sum(w * t[j + k - reach] for k, w in enumerate(weights)) for j in self.band]

    def block_mean(self, wx, wy, scale_ok, time_ok, cut_norm=False):
        s = self.sj[:, None]
        args = (scale_ok, time_ok, cut_norm)
        sxx = self.smooth(np.abs(wx) ** 2 / s, *args)
        syy = self.smooth(np.abs(wy) ** 2 / s, *args)
        sxy = self.smooth(wx * np.conj(wy) / s, *args)
        r2 = [np.abs(c) ** 2 / (a * b) for c, a, b in zip(sxy, sxx, syy)]
        return self.mean_over_points(r2, offset=self.band.start)

    def mean_over_points(self, rows, offset=0):
        """Mean over the points of the band rows; rows[j - offset] is grid row j."""
        pts = np.concatenate([rows[j - offset][self.masks[j]] for j in self.band])
        return float(pts.mean()) if pts.size else None


def main():
    with open(sys.argv[1]) as fh:
        cfg = json.load(fh)
    dt = float(cfg["dt"])
    omega0 = float(cfg["omega0"])
    spo = int(cfg["scales_per_octave"])
    window = cfg["window"]
    pairs = cfg["pairs"]
    n = len(pairs[0]["x"])

    mother = pycwt.Morlet(omega0)
    if mother.deltaj0 <= 0:
        sys.exit("pycwt tabulates deltaj0 (Torrence & Compo 1998, Table 2) for omega0 = 6 only")
    tc = tc_boxcar(spo, mother.deltaj0)
    taps = int(np.round(2 * mother.deltaj0 * spo))  # as Morlet.smooth computes its window
    # Morlet.smooth's window (scipy.signal.convolve2d, mode "same") reads up to taps // 2 rows
    # to one side: the grid reaches that far past the band, so that no band row of the stock
    # reading meets the zeros past the grid's ends.
    ext = max(tc[1], taps // 2)
    periods, scales, n_band = grid(
        float(cfg["min_period"]), float(cfg["max_period"]), spo, mother.flambda(), ext
    )
    band = range(ext, ext + n_band)
    masks = point_masks(n, dt, scales, window)
    n_points = int(sum(masks[j].sum() for j in band))

    s_max = scales[-1]
    # (b): N - n >= 8 s_max / dt keeps every wrapped copy of the wavelet below exp(-32) of
    # its peak; (c): L - n >= 10 s_max / dt keeps every wrapped Gaussian lag below exp(-50).
    wide_pad = next_pow2(n + math.ceil(8.0 * s_max / dt))
    wide_time = next_pow2(n + math.ceil(10.0 * s_max / dt))
    rd = Reader(
        n, dt, spo, scales[0], len(scales) - 1, mother, wide_pad, wide_time, tc, band, masks
    )

    # reading: (scale window, padding, time smoothing), True = the project's convention
    readings = {
        "aligned": (True, True, True),
        "stock_pipeline": (False, False, False),
        "only_scale": (False, True, True),
        "only_padding": (True, False, True),
        "only_time": (True, True, False),
    }
    out = {k: [] for k in ["stock", "aligned_cut_norm", *readings]}
    for pair in pairs:
        x = np.asarray(pair["x"], dtype=float)
        y = np.asarray(pair["y"], dtype=float)
        wct, _, _, _, _ = pycwt.wct(
            x, y, dt, dj=1.0 / spo, s0=scales[0], J=len(scales) - 1, sig=False, wavelet=mother
        )
        out["stock"].append(rd.mean_over_points(wct))
        tr = {p: (rd.transform(x, p), rd.transform(y, p)) for p in (True, False)}
        for name, (scale_ok, pad_ok, time_ok) in readings.items():
            out[name].append(rd.block_mean(*tr[pad_ok], scale_ok, time_ok))
        out["aligned_cut_norm"].append(rd.block_mean(*tr[True], True, True, cut_norm=True))

    result = {
        "pycwt_version": importlib.metadata.version("pycwt"),
        "periods": periods.tolist(),
        "band": [band.start, band.stop],
        "boxcar": tc[0].tolist(),
        "stock_taps": taps,
        "n_points": n_points,
        "stock_padded_len": next_pow2(n),
        "aligned_padded_len": wide_pad,
        **out,
    }
    with open(sys.argv[2], "w") as fh:
        json.dump(result, fh)


if __name__ == "__main__":
    main()
