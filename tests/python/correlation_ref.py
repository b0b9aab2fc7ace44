#!/usr/bin/env python3
"""Reference correlation matrix and coherence from numpy and SciPy, for tests/cli_channels.rs.

Usage: correlation_ref.py INPUT OUTPUT FS CHANNELS NPERSEG

INPUT is raw little-endian float64 interleaved frames of CHANNELS channels. Each channel has its
least-squares line over the sample index taken out first (numpy.polyfit, degree 1), as analyze
does before its density estimate. OUTPUT receives raw little-endian float64:

* the CHANNELS x CHANNELS matrix of numpy.corrcoef, row by row;
* for every pair (i, j), i < j in row order, NPERSEG//2 + 1 values of scipy.signal.coherence,
  then as many of the real and of the imaginary part of scipy.signal.csd(x_i, x_j);
* for every channel, NPERSEG//2 + 1 values of scipy.signal.welch.

All spectra use a periodic Hann window, 50 % overlap and no detrending of the segments.
Prints the numpy and scipy versions on stdout. Exit status 3 means numpy or scipy is missing.
"""

import sys


def main(argv):
    if len(argv) != 6:
        print(__doc__, file=sys.stderr)
        return 2
    try:
        import numpy as np
        import scipy
        from scipy import signal
    except ImportError as exc:
        print(f"correlation_ref.py: {exc}; install with: python3 -m pip install numpy scipy",
              file=sys.stderr)
        return 3
    inp, out, fs = argv[1], argv[2], float(argv[3])
    ch, nperseg = int(argv[4]), int(argv[5])
    x = np.fromfile(inp, dtype="<f8").reshape(-1, ch).T.copy()
    n = np.arange(x.shape[1], dtype=float)
    for i in range(ch):
        slope, offset = np.polyfit(n, x[i], 1)
        x[i] -= slope * n + offset
    kw = dict(fs=fs, window="hann", nperseg=nperseg, noverlap=nperseg // 2, detrend=False)
    parts = [np.corrcoef(x).ravel()]
    for i in range(ch):
        for j in range(i + 1, ch):
            _, c = signal.coherence(x[i], x[j], **kw)
            _, pxy = signal.csd(x[i], x[j], **kw)
            parts += [c, pxy.real, pxy.imag]
    for i in range(ch):
        _, p = signal.welch(x[i], **kw)
        parts.append(p)
    np.concatenate(parts).astype("<f8").tofile(out)
    print(f"numpy {np.__version__}, scipy {scipy.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
