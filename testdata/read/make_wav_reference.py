#!/usr/bin/env python3
"""Write WAV files with scipy.io.wavfile, an implementation independent of
ringlog, plus wav_reference.json with the exact sample values they hold.

The Go tests of pipeline/read read the WAV files with ringlog's reader and
compare against the JSON; Python is not needed at test time. Run once from
this folder (Debian python3-scipy):

    /usr/bin/python3 make_wav_reference.py

Samples, channel c (0-based), frame n, at fs = 8000 Hz, 64 frames:

    x_c[n] = 0.9 * exp(-n/25) * sin(2*pi*500*(c+1)*n/fs + 0.3*c)

Integer files hold round(x * (2**(bits-1) - 1)) (8-bit: that plus 128,
unsigned); float files hold x in their precision.
"""
import json

import numpy as np
import scipy
from scipy.io import wavfile

FS = 8000
N = 64


def signal(channels):
    n = np.arange(N)[:, None]
    c = np.arange(channels)[None, :]
    return 0.9 * np.exp(-n / 25.0) * np.sin(2 * np.pi * 500.0 * (c + 1) * n / FS + 0.3 * c)


def main():
    cases = [
        ("ref-uint8-1ch.wav", 1, "uint8", 8),
        ("ref-int16-2ch.wav", 2, "int16", 16),
        ("ref-int16-3ch.wav", 3, "int16", 16),
        ("ref-int32-1ch.wav", 1, "int32", 32),
        ("ref-float32-3ch.wav", 3, "float32", 32),
        ("ref-float64-2ch.wav", 2, "float64", 64),
    ]
    out = {"generator": "scipy.io.wavfile %s, numpy %s" % (scipy.__version__, np.__version__),
           "formula": "x_c[n] = 0.9*exp(-n/25)*sin(2*pi*500*(c+1)*n/8000 + 0.3*c)",
           "files": []}
    for name, channels, dtype, bits in cases:
        x = signal(channels)
        if dtype == "uint8":
            data = (np.round(x * 127) + 128).astype(np.uint8)
        elif dtype.startswith("int"):
            data = np.round(x * (2 ** (bits - 1) - 1)).astype(dtype)
        else:
            data = x.astype(dtype)
        if channels == 1:
            data = data[:, 0]
        wavfile.write(name, FS, data)
        rate, back = wavfile.read(name)
        assert rate == FS and np.array_equal(back, data)
        raw = data.reshape(N, channels)
        out["files"].append({
            "file": name,
            "rate": FS,
            "channels": channels,
            "kind": "float" if dtype.startswith("float") else ("uint" if dtype == "uint8" else "int"),
            "bits": bits,
            "frames": N,
            # frame-major: raw[n][c]
            "raw": [[float(v) if dtype.startswith("float") else int(v) for v in row] for row in raw],
        })
    with open("wav_reference.json", "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
