"""Captures as a bench records them, made with numpy alone, and the windowed peak-to-peak of
a capture computed directly with SciPy: the references of tests/cli_bench.rs.

Invented scenario (demo data): a 1 kHz capture of a front end with a white floor of
50 nV/sqrt(Hz) and a 1/f rise below 2 Hz, on a bench that adds a 2.5 mV offset, a drift of
4 uV/s, mains hum (fundamental 3 uV RMS, harmonic 2 1 uV, harmonic 3 0.5 uV) and two spurs that
are not mains (73.3 Hz at 0.3 uV RMS, 211.7 Hz at 0.2 uV RMS).

  make OUT MAINS_HZ SEED   writes OUT (raw float64, little-endian, volts) and prints one JSON
                           object: the lines injected, the offset, the slope, and the exact
                           standard deviation of the least-squares slope of the noise alone.
  pp FILE FS LO HI WINDOW  prints the median and the largest max - min over consecutive windows
                           of WINDOW seconds of the record (a least-squares line taken out with
                           numpy.polyfit), band-limited by a 2nd-order Butterworth high-pass at
                           LO and a 4th-order Butterworth low-pass at HI (scipy.signal.butter,
                           second-order sections) run causally by scipy.signal.sosfilt from the
                           steady state of the first sample (scipy.signal.sosfilt_zi); the
                           windows start after ln(1000)/(2 pi LO sin(pi/4)) seconds, where
                           the high-pass's start transient has decayed to 1/1000.
"""

import json
import sys

try:
    import numpy as np
except ImportError as e:  # the test skips or fails with how to install it
    print(e, file=sys.stderr)
    sys.exit(3)

FS = 1000.0
SAMPLES = 400_000
FLOOR = 50e-9  # V/sqrt(Hz)
CORNER = 2.0  # Hz
LOW = 0.01  # Hz: the profile's band starts here
OFFSET = 2.5e-3  # V
SLOPE = 4e-6  # V/s
HUM_RMS = [3e-6, 1e-6, 0.5e-6]  # harmonics 1, 2, 3
SPURS = [(73.3, 0.3e-6), (211.7, 0.2e-6)]


def make(out, mains, seed):
    """White Gaussian noise shaped in one FFT over the whole record: each frequency's
    amplitude is scaled so the one-sided density is FLOOR^2 (1 + CORNER/f) from LOW up to
    fs/2 and zero below (a circular, exactly periodic record, so the noise has no mean)."""
    rng = np.random.default_rng(seed)
    white = rng.standard_normal(SAMPLES)
    f = np.fft.rfftfreq(SAMPLES, 1.0 / FS)
    psd = np.zeros_like(f)
    keep = f >= LOW
    psd[keep] = FLOOR**2 * (1.0 + CORNER / f[keep])
    # A unit-variance white sequence has a one-sided density 2/fs: scale by sqrt(psd*fs/2).
    shaping = np.sqrt(psd * FS / 2.0)
    noise = np.fft.irfft(np.fft.rfft(white) * shaping, n=SAMPLES)
    t = np.arange(SAMPLES) / FS
    x = noise + OFFSET + SLOPE * (t - t.mean())
    lines = []
    for h, rms in enumerate(HUM_RMS, start=1):
        lines.append({"frequency_hz": h * mains, "rms": rms, "mains": h})
    for fr, rms in SPURS:
        lines.append({"frequency_hz": fr, "rms": rms, "mains": None})
    for i, ln in enumerate(lines):
        x += ln["rms"] * np.sqrt(2.0) * np.sin(2 * np.pi * ln["frequency_hz"] * t + 0.7 * i)
    x.astype("<f8").tofile(out)
    # Least-squares slope = sum(c*x) with c = (t - mean)/sum((t - mean)^2). For noise = A w
    # (A circulant with real, even frequency response `shaping`), var = ||A^T c||^2 = ||A c||^2.
    c = (t - t.mean()) / np.sum((t - t.mean()) ** 2)
    ac = np.fft.irfft(np.fft.rfft(c) * shaping, n=SAMPLES)
    print(json.dumps({
        "lines": lines,
        "offset": OFFSET,
        "slope_per_s": SLOPE,
        "noise_slope_sigma": float(np.sqrt(np.sum(ac**2))),
        "samples": SAMPLES,
        "sample_rate_hz": FS,
        "floor_density": FLOOR,
    }))


def pp(path, fs, lo, hi, window):
    try:
        from scipy import signal
    except ImportError as e:
        print(e, file=sys.stderr)
        sys.exit(3)

    x = np.fromfile(path, dtype="<f8")
    t = np.arange(x.size, dtype=np.float64)
    slope, intercept = np.polyfit(t, x, 1)
    y = x - (slope * t + intercept)
    sos = np.vstack([
        signal.butter(2, lo, btype="highpass", fs=fs, output="sos"),
        signal.butter(4, hi, btype="lowpass", fs=fs, output="sos"),
    ])
    zi = signal.sosfilt_zi(sos) * y[0]
    z, _ = signal.sosfilt(sos, y, zi=zi)
    settle = int(round(np.log(1000.0) / (2 * np.pi * lo * np.sin(np.pi / 4)) * fs))
    z = z[settle:]
    w = int(round(window * fs))
    n = z.size // w
    peaks = np.ptp(z[: n * w].reshape(n, w), axis=1)
    print(json.dumps({"windows": int(n), "median": float(np.median(peaks)),
                      "max": float(peaks.max())}))


if __name__ == "__main__":
    if sys.argv[1] == "make":
        make(sys.argv[2], float(sys.argv[3]), int(sys.argv[4]))
    elif sys.argv[1] == "pp":
        pp(sys.argv[2], *(float(a) for a in sys.argv[3:7]))
    else:
        sys.exit(f"unknown command {sys.argv[1]!r}")
