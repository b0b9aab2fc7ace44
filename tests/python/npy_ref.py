#!/usr/bin/env python3
"""Reference .npy reader from numpy, for tests/cli_formats.rs.

Usage: npy_ref.py NPY OUTPUT [NPY OUTPUT ...]

Each NPY is loaded with numpy.load (allow_pickle=False, no memory mapping). Its values are
written to the OUTPUT that follows it as raw little-endian values of the dtype numpy returned,
in C order. For each file one JSON line goes to stdout:
{"file": NPY, "dtype": "<f4", "shape": [n] or [n, c], "fortran_order": false,
 "version": [1, 0], "data_offset": bytes}.
The last stdout line gives numpy's version.
Exit status 3 means numpy is missing.
"""

import json
import sys


def main(argv):
    if len(argv) < 3 or len(argv) % 2 != 1:
        print(__doc__, file=sys.stderr)
        return 2
    try:
        import numpy as np
        from numpy.lib import format as npformat
    except ImportError as exc:
        print(f"npy_ref.py: {exc}; install with: python3 -m pip install numpy",
              file=sys.stderr)
        return 3
    for npy, out in zip(argv[1::2], argv[2::2]):
        data = np.load(npy, allow_pickle=False)
        with open(npy, "rb") as f:
            version = npformat.read_magic(f)
            if version == (1, 0):
                npformat.read_array_header_1_0(f)
            else:
                npformat.read_array_header_2_0(f)
            offset = f.tell()
        np.ascontiguousarray(data).astype(data.dtype.newbyteorder("<")).tofile(out)
        print(json.dumps({
            "file": npy,
            "dtype": data.dtype.str,
            "shape": list(data.shape),
            "fortran_order": bool(np.isfortran(data)) if data.ndim > 1 else False,
            "version": list(version),
            "data_offset": offset,
        }))
    print(f"numpy {np.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
