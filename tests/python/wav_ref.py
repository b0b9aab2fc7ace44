#!/usr/bin/env python3
"""Reference WAV reader from SciPy, for tests/cross_check.rs.

Usage: wav_ref.py WAV OUTPUT [WAV OUTPUT ...]

Each WAV is read with scipy.io.wavfile.read (no memory mapping). Its samples are written to
the OUTPUT that follows it as raw little-endian values of the dtype SciPy returned (int16,
int32 or float32 for the files the tests write; SciPy returns 24-bit PCM as left-justified
int32, see its documentation). For each file one JSON line goes to stdout:
{"file": WAV, "rate": Hz, "dtype": "int16", "shape": [n], "warnings": [text, ...]}, where
"warnings" lists any warning SciPy raised while reading (e.g. a chunk it did not understand).
The last stdout line gives the numpy and scipy versions.
Exit status 3 means numpy or scipy is missing.
"""

import json
import sys
import warnings


def main(argv):
    if len(argv) < 3 or len(argv) % 2 != 1:
        print(__doc__, file=sys.stderr)
        return 2
    try:
        import numpy as np
        import scipy
        from scipy.io import wavfile
    except ImportError as exc:
        print(f"wav_ref.py: {exc}; install with: python3 -m pip install numpy scipy",
              file=sys.stderr)
        return 3
    for wav, out in zip(argv[1::2], argv[2::2]):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            rate, data = wavfile.read(wav)
        data.astype(data.dtype.newbyteorder("<")).tofile(out)
        print(json.dumps({
            "file": wav,
            "rate": int(rate),
            "dtype": str(data.dtype),
            "shape": list(data.shape),
            "warnings": [str(w.message) for w in caught],
        }))
    print(f"numpy {np.__version__} scipy {scipy.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
