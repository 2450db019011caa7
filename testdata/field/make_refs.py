#!/usr/bin/python3
"""Reference responses for the instrument filters of pipeline/synth/field.

Run once with Debian's python3-scipy:  /usr/bin/python3 make_refs.py
It writes filter_refs.json beside this script. The Go tests read that file;
they never run Python.

For each design: scipy.signal.butter(..., output='sos', fs=fs), its complex
frequency response (sosfreqz) on a grid, and the output of sosfilt (from
rest) on a fixed test input (a unit step followed by a short pulse and a
decaying sine), so that both the design and the way the filter is run are
checked.
"""
import json
import os

import numpy as np
import scipy
from scipy import signal


def test_input(n, fs):
    t = np.arange(n) / fs
    x = np.ones(n)
    x[n // 3: n // 3 + 3] += 5.0
    x += np.exp(-30.0 * t) * np.sin(2 * np.pi * 0.07 * fs * t)
    return x


def main():
    designs = [
        # (name, order, corner Hz, kind, fs Hz)
        ("aa6", 6, 0.4 * 5120, "lowpass", 8 * 5120.0),  # the default anti-alias filter at 5120 Hz, 8x oversampled
        ("aa8", 8, 0.45 * 2000, "lowpass", 16 * 2000.0),
        ("aa5", 5, 300.0, "lowpass", 8 * 1000.0),       # odd order: one first-order section
        ("hp1", 1, 0.5, "highpass", 8 * 5120.0),        # AC coupling at 0.5 Hz
        ("hp1b", 1, 0.16, "highpass", 8 * 200.0),
    ]
    out = {
        "generator": "make_refs.py",
        "scipy_version": scipy.__version__,
        "numpy_version": np.__version__,
        "designs": [],
    }
    for name, order, fc, kind, fs in designs:
        sos = signal.butter(order, fc, btype=kind, output="sos", fs=fs)
        freqs = np.concatenate([np.geomspace(0.01, 0.49 * fs, 40)])
        _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
        n = 400
        x = test_input(n, fs)
        y = signal.sosfilt(sos, x)
        out["designs"].append({
            "name": name, "order": order, "corner_hz": fc, "kind": kind, "fs": fs,
            "freqs": [float(f) for f in freqs],
            "re": [float(v.real) for v in h],
            "im": [float(v.imag) for v in h],
            "x": [float(v) for v in x],
            "y": [float(v) for v in y],
        })
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "filter_refs.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=0)
        f.write("\n")


if __name__ == "__main__":
    main()
