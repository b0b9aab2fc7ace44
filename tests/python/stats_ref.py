#!/usr/bin/env python3
"""Reference statistics from numpy, for tests/cli_analyze.rs.

Usage: stats_ref.py INPUT

INPUT is raw little-endian float64 samples. Prints one JSON line:
{"mean": numpy.mean(x), "rms": sqrt(mean(x**2)), "std": numpy.std(x) (ddof=0),
 "min": x.min(), "max": x.max(), "n": len(x)}, then the numpy version on a second line.
Exit status 3 means numpy is missing.
"""

import json
import sys


def main(argv):
    if len(argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    try:
        import numpy as np
    except ImportError as exc:
        print(f"stats_ref.py: {exc}; install with: python3 -m pip install numpy", file=sys.stderr)
        return 3
    x = np.fromfile(argv[1], dtype="<f8")
    out = {
        "mean": float(np.mean(x)),
        "rms": float(np.sqrt(np.mean(x * x))),
        "std": float(np.std(x)),
        "min": float(x.min()),
        "max": float(x.max()),
        "n": int(x.size),
    }
    print(json.dumps(out))
    print(f"numpy {np.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
