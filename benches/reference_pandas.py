#!/usr/bin/env python3
"""Reference job for the end-to-end benchmark: the analysis `tracephase analyze` does, written
with pandas and numpy, to compare speed against (not accuracy: tracephase's own tests do that).

Usage: reference_pandas.py FILE.csv [HARMONICS]   (FILE: header `time,v,i`, one row per sample)

Steps, as in tracephase:
1. read the CSV with pandas; check that time rises and take the rate from it;
2. coarse frequency: Hann-windowed FFT (record block-averaged to at most 2^18 points),
   two-point interpolation of the peak;
3. block-average the record while the highest harmonic stays below 1/16 of the new rate;
4. refine the frequency by the phase slope of harmonic fits on the two halves;
5. least-squares fit of DC and harmonics 1..H to both channels (block-average gain undone);
6. RMS, P and the IEEE 1459 powers over a whole number of cycles, PF, THD, phase angle
   (fit and zero crossings).
Prints one JSON object.
"""

import json
import math
import sys

import numpy as np
import pandas as pd

COARSE_MAX = 1 << 18
KEEP = 16.0


def block_average(y, q):
    n = len(y) // q * q
    return y[:n].reshape(-1, q).mean(axis=1)


def coarse_frequency(y, fs):
    q = max(1, math.ceil(len(y) / COARSE_MAX))
    x = block_average(y, q)
    fs = fs / q
    n = len(x)
    w = 0.5 - 0.5 * np.cos(2 * np.pi * np.arange(n) / n)  # periodic Hann
    mag = np.abs(np.fft.rfft((x - x.mean()) * w))
    k = int(np.argmax(mag[1:-1])) + 1
    left, right = mag[k - 1], mag[k + 1]
    if right >= left:
        a = right / mag[k]
        delta = (2 * a - 1) / (a + 1)
    else:
        a = left / mag[k]
        delta = -(2 * a - 1) / (a + 1)
    return (k + delta) * fs / n


def design(n, theta, order):
    """Columns: 1, cos(h θ k), sin(h θ k) for h = 1..order, k = 0..n-1."""
    ph = np.outer(np.arange(n) * theta, np.arange(1, order + 1))
    return np.hstack([np.ones((n, 1)), np.cos(ph), np.sin(ph)])


def fit(y, theta, order):
    """DC and complex peak amplitudes a_h (y ≈ dc + Σ Re(a_h e^{j h θ k}))."""
    a = design(len(y), theta, order)
    coef, *_ = np.linalg.lstsq(a, y, rcond=None)
    return coef[0], coef[1 : order + 1] - 1j * coef[order + 1 :]


def main():
    path = sys.argv[1]
    harmonics = int(sys.argv[2]) if len(sys.argv) > 2 else 50
    df = pd.read_csv(path)
    t = df.iloc[:, 0].to_numpy(dtype=float)
    v = df.iloc[:, 1].to_numpy(dtype=float)
    i = df.iloc[:, 2].to_numpy(dtype=float)
    if not np.isfinite(df.to_numpy()).all():
        sys.exit(f"{path}: a value is not a finite number")
    dt = np.diff(t)
    if not (dt > 0).all():
        sys.exit(f"{path}: line {int(np.argmin(dt > 0)) + 3}: time must increase")
    mean_dt = (t[-1] - t[0]) / (len(t) - 1)
    fs = 1.0 / mean_dt
    jitter = max(dt.max() - mean_dt, mean_dt - dt.min()) / mean_dt

    f0 = coarse_frequency(v, fs)
    order = max(1, min(harmonics, int(0.95 * fs / 2 / f0)))
    q = max(1, int(fs / (KEEP * order * f0)))
    vd, idd = block_average(v, q), block_average(i, q)
    fsd = fs / q

    # Refinement: fundamental phase on each half; the drift between half centres gives Δf.
    half = len(vd) // 2
    theta = 2 * np.pi * f0 / fsd
    _, a1 = fit(vd[:half], theta, order)
    _, a2 = fit(vd[half : 2 * half], theta, order)
    dphi = np.angle(a2[0] / (a1[0] * np.exp(1j * theta * half)))
    f0 = f0 + dphi / (2 * np.pi * half / fsd)
    theta = 2 * np.pi * f0 / fsd

    # Harmonic phasors of both channels, with the gain of block averaging undone.
    h = np.arange(1, order + 1)
    w = h * 2 * np.pi * f0 / fs
    gain = np.where(q > 1, np.sin(q * w / 2) / (q * np.sin(w / 2)), 1.0)
    dc_v, av = fit(vd, theta, order)
    dc_i, ai = fit(idd, theta, order)
    vh = av / gain / np.sqrt(2)  # RMS phasors
    ih = ai / gain / np.sqrt(2)

    # Whole cycles of the raw record.
    per = fs / f0
    cycles = int(len(v) / per)
    m = int(round(cycles * per))
    vw, iw = v[:m], i[:m]
    v_rms = math.sqrt(np.mean(vw * vw))
    i_rms = math.sqrt(np.mean(iw * iw))
    p = float(np.mean(vw * iw))
    s = v_rms * i_rms
    v1, i1 = abs(vh[0]), abs(ih[0])
    phi = float(np.angle(vh[0] / ih[0]))
    v_h = math.sqrt(float(np.sum(np.abs(vh[1:]) ** 2)))
    i_h = math.sqrt(float(np.sum(np.abs(ih[1:]) ** 2)))
    p1 = v1 * i1 * math.cos(phi)
    q1 = v1 * i1 * math.sin(phi)
    s1 = v1 * i1
    sn = math.sqrt(max(s * s - s1 * s1, 0.0))

    # Zero-crossing phase: mean delay of rising crossings of i behind those of v.
    def rising(y):
        y = y - y.mean()
        k = np.nonzero((y[:-1] < 0) & (y[1:] >= 0))[0]
        return k + (-y[k]) / (y[k + 1] - y[k])

    cv, ci = rising(vw), rising(iw)
    n = min(len(cv), len(ci))
    lag = np.mod(ci[:n] - cv[:n], per)
    zc_deg = float(np.degrees(np.angle(np.mean(np.exp(1j * 2 * np.pi * lag / per)))))

    out = {
        "file": path,
        "sample_rate_hz": fs,
        "samples": len(v),
        "time_jitter": jitter,
        "frequency_hz": f0,
        "whole_cycles": cycles,
        "phase_angle_deg": {"fit": math.degrees(phi), "zero_crossing": zc_deg},
        "displacement_pf": math.cos(phi),
        "true_pf": p / s,
        "voltage": {
            "rms": v_rms,
            "dc": float(dc_v),
            "fundamental_rms": v1,
            "thd_percent": 100 * v_h / v1,
        },
        "current": {
            "rms": i_rms,
            "dc": float(dc_i),
            "fundamental_rms": i1,
            "thd_percent": 100 * i_h / i1,
        },
        "power": {
            "active_w": p,
            "fundamental_active_w": p1,
            "reactive_var": q1,
            "apparent_va": s,
            "fundamental_apparent_va": s1,
            "nonfundamental_apparent_va": sn,
            "current_distortion_var": v1 * i_h,
            "voltage_distortion_var": v_h * i1,
            "harmonic_apparent_va": v_h * i_h,
        },
    }
    print(json.dumps(out))


if __name__ == "__main__":
    main()
