#!/usr/bin/env python3
"""Reference magnitude-squared coherence from SciPy, for tests/channel_statistics.rs.

Usage: coherence_ref.py INPUT OUTPUT FS CHANNELS NPERSEG

INPUT is raw little-endian float64 interleaved frames of CHANNELS channels. OUTPUT receives
raw little-endian float64: the NPERSEG//2 + 1 frequencies in Hz, then for every pair (i, j),
i < j in row order, as many coherence values, from scipy.signal.coherence with a periodic
Hann window, 50 % overlap and no detrending. Prints the numpy and scipy versions on stdout.
Exit status 3 means numpy or scipy is missing.
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
        print(f"coherence_ref.py: {exc}; install with: python3 -m pip install numpy scipy",
              file=sys.stderr)
        return 3
    inp, out, fs = argv[1], argv[2], float(argv[3])
    ch, nperseg = int(argv[4]), int(argv[5])
    x = np.fromfile(inp, dtype="<f8").reshape(-1, ch)
    parts = []
    for i in range(ch):
        for j in range(i + 1, ch):
            f, c = signal.coherence(x[:, i], x[:, j], fs=fs, window="hann",
                                    nperseg=nperseg, noverlap=nperseg // 2, detrend=False)
            if not parts:
                parts.append(f)
            parts.append(c)
    np.concatenate(parts).astype("<f8").tofile(out)
    print(f"numpy {np.__version__}, scipy {scipy.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
