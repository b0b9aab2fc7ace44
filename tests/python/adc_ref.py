#!/usr/bin/env python3
"""Independent check of ADC code files with numpy, for tests/cli_adc.rs.

Usage: adc_ref.py CODES MANIFEST PHYSICAL

CODES is a raw code file written by `generate --bits`, MANIFEST its JSON manifest (the
converter under extra.adc), PHYSICAL the same run's physical samples as raw float64. The codes
are read with numpy.fromfile in the dtype the manifest's container names, quantised again
from PHYSICAL by the documented rule (offset code k = clip(floor((x - lo)/lsb + 1/2), 0,
2^bits - 1), twos = k - 2^(bits-1)), and mapped back to levels lo + (code - code_min)*lsb.
Prints one JSON line: {"n", "equal" (codes equal to the recomputed ones), "code_min",
"code_max" (of the file), "max_abs_error_lsb" (|level - x| over samples inside the range),
"rms_error_lsb"}, then the numpy version. Exit status 3 means numpy is missing.
"""

import json
import sys

DTYPES = {"u8": "<u1", "u16": "<u2", "u32": "<u4", "i8": "<i1", "i16": "<i2", "i32": "<i4"}


def main(argv):
    if len(argv) != 4:
        print(__doc__, file=sys.stderr)
        return 2
    try:
        import numpy as np
    except ImportError as exc:
        print(f"adc_ref.py: {exc}; install with: python3 -m pip install numpy", file=sys.stderr)
        return 3
    with open(argv[2]) as f:
        adc = json.load(f)["extra"]["adc"]
    codes = np.fromfile(argv[1], dtype=DTYPES[adc["container"]]).astype(np.int64)
    x = np.fromfile(argv[3], dtype="<f8")
    lo, hi = adc["range"]
    lsb = adc["lsb"]
    bits = adc["bits"]
    k = np.clip(np.floor((x - lo) / lsb + 0.5), 0, 2**bits - 1).astype(np.int64)
    if adc["coding"] == "twos":
        k -= 2 ** (bits - 1)
    level = lo + (codes - adc["code_min"]) * lsb
    inside = (x >= lo) & (x <= hi - lsb / 2)
    err = (level - x)[inside] / lsb
    out = {
        "n": int(codes.size),
        "equal": int(np.sum(codes == k)),
        "code_min": int(codes.min()),
        "code_max": int(codes.max()),
        "max_abs_error_lsb": float(np.max(np.abs(err))),
        "rms_error_lsb": float(np.sqrt(np.mean(err * err))),
    }
    print(json.dumps(out))
    print(f"numpy {np.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
