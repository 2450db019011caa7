#!/usr/bin/python3
"""Reference vectors for the band-isolation filters and the Hilbert envelope
of package pipeline/modal.

Run once with Debian's python3-scipy:  /usr/bin/python3 make_modal_refs.py
It writes modal_refs.json beside this script. The Go tests read that file;
they never run Python.
"""
import json
import os

import numpy as np
import scipy
from scipy import signal

FS = 1000.0
N = 600


def test_signal():
    """Three decaying modes, an offset, a slow drift and Gaussian noise."""
    t = np.arange(N) / FS
    x = np.zeros(N)
    for fn, zeta, amp, phase in [(35.0, 0.02, 1.0, 0.0),
                                 (50.0, 0.05, 0.7, 0.4),
                                 (180.0, 0.01, 0.4, 1.1)]:
        wn = 2 * np.pi * fn
        wd = wn * np.sqrt(1 - zeta ** 2)
        x += amp * np.exp(-zeta * wn * t) * np.sin(wd * t + phase)
    x += 0.1 + 0.3 * t
    x += 0.02 * np.random.RandomState(20240601).standard_normal(N)
    return x


def r12(v):
    """Round to 12 significant digits to keep the file small."""
    return [float("%.12g" % a) for a in v]


def main():
    x = test_signal()
    out = {
        "generator": "make_modal_refs.py",
        "scipy_version": scipy.__version__,
        "numpy_version": np.__version__,
        "fs": FS,
        "x": [float(a) for a in x],  # full precision: it is the input
        "filters": [],
        "hilbert": [],
    }
    # (kind, order, edges): order is scipy's N.
    designs = [
        ("bandpass", 2, [40.0, 60.0]),
        ("bandpass", 4, [30.0, 75.0]),
        ("bandpass", 3, [150.0, 210.0]),
        ("bandpass", 3, [5.0, 400.0]),   # wide: real poles in the band-pass
        ("lowpass", 4, [100.0]),
        ("lowpass", 3, [60.0]),          # odd: a first-order section
    ]
    fgrid = np.linspace(1.0, 490.0, 25)
    for kind, order, edges in designs:
        wn = edges if kind == "bandpass" else edges[0]
        sos = signal.butter(order, wn, btype=kind, fs=FS, output="sos")
        y = signal.sosfiltfilt(sos, x)
        _, h = signal.sosfreqz(sos, worN=fgrid, fs=FS)
        ntaps = 2 * len(sos) + 1 - min((sos[:, 2] == 0).sum(), (sos[:, 5] == 0).sum())
        out["filters"].append({
            "kind": kind,
            "order": order,
            "edges_hz": edges,
            "padlen": int(3 * ntaps),
            "y": r12(y),
            "freq_hz": [float(f) for f in fgrid],
            "mag": r12(np.abs(h)),
        })
    # Default scipy.signal.hilbert on a power-of-two length, and with N set
    # to the next power of two on a length that is not one.
    x512 = x[:512]
    out["hilbert"].append({"n": 512, "nfft": 512,
                           "env": r12(np.abs(signal.hilbert(x512)))})
    out["hilbert"].append({"n": N, "nfft": 1024,
                           "env": r12(np.abs(signal.hilbert(x, 1024))[:N])})
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "modal_refs.json")
    with open(path, "w") as f:
        json.dump(out, f, separators=(",", ":"))
        f.write("\n")


if __name__ == "__main__":
    main()
