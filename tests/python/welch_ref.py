#!/usr/bin/env python3
"""Reference Welch estimate from SciPy, for tests/welch_reference.rs.

Usage: welch_ref.py INPUT OUTPUT FS NPERSEG [NOVERLAP]

INPUT is raw little-endian float64 samples. OUTPUT receives raw little-endian float64:
the NPERSEG//2 + 1 frequencies in Hz followed by as many one-sided densities in unit^2/Hz,
from scipy.signal.welch with a periodic Hann window, no detrending and density scaling.
NOVERLAP defaults to NPERSEG//2. Prints the numpy and scipy versions on stdout.
Exit status 3 means numpy or scipy is missing.
"""

import sys


def main(argv):
    if len(argv) not in (5, 6):
        print(__doc__, file=sys.stderr)
        return 2
    try:
        import numpy as np
        import scipy
        from scipy import signal
    except ImportError as exc:
        print(f"welch_ref.py: {exc}; install with: python3 -m pip install numpy scipy",
              file=sys.stderr)
        return 3
    inp, out, fs, nperseg = argv[1], argv[2], float(argv[3]), int(argv[4])
    noverlap = int(argv[5]) if len(argv) == 6 else nperseg // 2
    x = np.fromfile(inp, dtype="<f8")
    f, p = signal.welch(x, fs=fs, window="hann", nperseg=nperseg, noverlap=noverlap,
                        detrend=False, scaling="density", return_onesided=True,
                        average="mean")
    np.concatenate([f, p]).astype("<f8").tofile(out)
    print(f"numpy {np.__version__} scipy {scipy.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
