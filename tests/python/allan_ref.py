#!/usr/bin/env python3
"""Reference Allan deviation and random walk from numpy, for tests/cli_allan.rs.

Usage:
  allan_ref.py adev FILE M[,M...]      overlapping Allan deviation of the raw little-endian
                                       f64 rates in FILE at averaging factors M (samples),
                                       in the data's unit; prints one JSON object
                                       {"m": [...], "adev": [...]}.
  allan_ref.py walk OUT N Q SEED       writes N samples of a random walk y_k = Q * sum of
                                       k+1 standard normals (numpy.random.default_rng(SEED))
                                       to OUT as raw little-endian f64.

The estimator is the definition in W. J. Riley, Handbook of Frequency Stability Analysis,
NIST SP 1065 (2008): phase x = cumulative sum of the rates (tau0 = 1), then
sigma^2(m) = sum (x[k+2m] - 2 x[k+m] + x[k])^2 / (2 m^2 (N - 2m)) over N phase points.
Exit status 3 means numpy is missing.
"""

import json
import sys


def main(argv):
    try:
        import numpy as np
    except ImportError as exc:
        print(f"allan_ref.py: {exc}; install with: python3 -m pip install numpy", file=sys.stderr)
        return 3
    if len(argv) == 4 and argv[1] == "adev":
        y = np.fromfile(argv[2], dtype="<f8")
        x = np.concatenate(([0.0], np.cumsum(y - y[0], dtype=np.float64)))
        out = {"m": [], "adev": []}
        for m in (int(v) for v in argv[3].split(",")):
            d = x[2 * m:] - 2.0 * x[m:-m] + x[:-2 * m]
            out["m"].append(m)
            out["adev"].append(float(np.sqrt(np.mean(d * d) / (2.0 * m * m))))
        print(json.dumps(out))
        return 0
    if len(argv) == 6 and argv[1] == "walk":
        rng = np.random.default_rng(int(argv[5]))
        y = float(argv[4]) * np.cumsum(rng.standard_normal(int(argv[3])))
        y.astype("<f8").tofile(argv[2])
        return 0
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
