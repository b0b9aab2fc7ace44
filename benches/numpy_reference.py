#!/usr/bin/env python3
"""White + 1/f noise the way a practising engineer writes it with numpy: one irfft of a
randomly weighted spectrum shaped to the density, then a float32 WAV.

Usage: numpy_reference.py SAMPLES OUT.wav [SEED]

Density: 4 nV/rtHz white with a 100 Hz 1/f corner, 48 kHz, no DC; scaled so the RMS sits at
-20 dBFS (AES17: full-scale sine = 0 dBFS), as `noisewright generate` does by default.
Used only by benches/versus_numpy.sh as the comparison point of the benchmark.
"""
import sys

import numpy as np
from scipy.io import wavfile

FS = 48_000.0
EW = 4e-9
FC = 100.0


def main() -> None:
    n = int(sys.argv[1])
    out = sys.argv[2]
    seed = int(sys.argv[3]) if len(sys.argv) > 3 else 1
    rng = np.random.default_rng(seed)
    f = np.fft.rfftfreq(n, d=1.0 / FS)
    psd = np.zeros_like(f)
    psd[1:] = EW**2 * (1.0 + FC / f[1:])  # one-sided, V^2/Hz
    # Each bin's real and imaginary parts carry half of S*df; irfft divides by n.
    scale = np.sqrt(psd * FS * n / 4.0)
    spec = (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size)) * scale
    if n % 2 == 0:
        spec[-1] = spec[-1].real * np.sqrt(2.0)
    x = np.fft.irfft(spec, n)
    rms = np.sqrt(np.mean(x * x))
    full_scale = rms / (10 ** (-20 / 20) / np.sqrt(2.0))
    wavfile.write(out, int(FS), (x / full_scale).astype(np.float32))


if __name__ == "__main__":
    main()
