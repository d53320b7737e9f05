#!/usr/bin/env python3
"""The lean peer of the end-to-end benchmark: the shortest script an engineer would write instead
of tracephase, pandas `read_csv` then one numpy FFT of each channel, nothing else (no frequency
refinement, no fit, no uncertainty). It gives a rough fundamental and phase angle, to compare
speed against, not accuracy.

Usage: lean_pandas.py FILE.csv   (FILE: header `time,v,i` or `time,Va,...`, one row per sample)
Prints one JSON object.
"""

import json
import sys

import numpy as np
import pandas as pd


def main():
    df = pd.read_csv(sys.argv[1])
    t = df.iloc[:, 0].to_numpy()
    fs = (len(t) - 1) / (t[-1] - t[0])
    spectra = {name: np.fft.rfft(df[name].to_numpy()) for name in df.columns[1:]}
    first = next(iter(spectra.values()))
    k = int(np.argmax(np.abs(first[1:]))) + 1
    out = {"frequency_hz": k * fs / len(t)}
    for name, s in spectra.items():
        out[name] = {
            "rms": float(np.abs(s[k]) * np.sqrt(2) / len(t)),
            "angle_deg": float(np.degrees(np.angle(s[k]))),
        }
    print(json.dumps(out))


if __name__ == "__main__":
    main()
