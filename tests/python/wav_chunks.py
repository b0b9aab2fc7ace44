#!/usr/bin/env python3
"""RIFF chunk walker and reference readers for tests/cli_wav_info.rs.

Usage:
  wav_chunks.py walk WAV         one JSON line: the chunk list, the INFO texts, what the
                                 standard library's `wave` module and scipy.io.wavfile read
  wav_chunks.py scipy-write WAV  writes 4000 int16 samples at 8000 Hz with
                                 scipy.io.wavfile.write (no INFO comment)

The walker follows the RIFF layout (Multimedia Programming Interface and Data
Specifications 1.0, IBM/Microsoft 1991, from memory): after "RIFF" size "WAVE", chunks of a
four-character id, a u32 little-endian size and the body, padded to an even length; a LIST
chunk of type INFO holds subchunks of the same form whose bodies are NUL-terminated strings.
Exit status 3 means numpy or scipy is missing.
"""

import json
import struct
import sys
import warnings
import wave


def walk(path):
    b = open(path, "rb").read()
    assert b[:4] == b"RIFF" and b[8:12] == b"WAVE", "not a RIFF WAVE file"
    out = {"riff_size": struct.unpack("<I", b[4:8])[0], "length": len(b), "chunks": [],
           "info": {}}
    at = 12
    while at + 8 <= len(b):
        cid = b[at:at + 4].decode("latin-1")
        size = struct.unpack("<I", b[at + 4:at + 8])[0]
        out["chunks"].append({"id": cid, "at": at, "size": size})
        body = b[at + 8:at + 8 + size]
        if cid == "LIST":
            out["list_type"] = body[:4].decode("latin-1")
            sub = 4
            while sub + 8 <= len(body):
                sid = body[sub:sub + 4].decode("latin-1")
                n = struct.unpack("<I", body[sub + 4:sub + 8])[0]
                text = body[sub + 8:sub + 8 + n]
                out["info"][sid] = {"text": text.rstrip(b"\0").decode("ascii"),
                                    "nul": text.endswith(b"\0"), "size": n}
                sub += 8 + n + (n & 1)
        if cid == "data":
            out["data_at"] = at + 8
            out["data_size"] = size
        at += 8 + size + (size & 1)
    return out


def main(argv):
    try:
        import numpy as np
        from scipy.io import wavfile
    except ImportError as exc:
        print(f"wav_chunks.py: {exc}; install with: python3 -m pip install numpy scipy",
              file=sys.stderr)
        return 3
    if len(argv) == 3 and argv[1] == "walk":
        out = walk(argv[2])
        with wave.open(argv[2], "rb") as w:
            out["wave"] = {"channels": w.getnchannels(), "width": w.getsampwidth(),
                           "rate": w.getframerate(), "frames": w.getnframes(),
                           "first": list(struct.unpack("<4h", w.readframes(4)))}
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            rate, data = wavfile.read(argv[2])
        out["scipy"] = {"rate": int(rate), "n": int(data.shape[0]),
                        "first": [int(v) for v in data[:4]],
                        "warnings": [str(w.message) for w in caught]}
        print(json.dumps(out))
        return 0
    if len(argv) == 3 and argv[1] == "scipy-write":
        rng = np.random.default_rng(11)
        x = np.round(rng.normal(0.0, 3000.0, 4000)).clip(-32767, 32767).astype("<i2")
        wavfile.write(argv[2], 8000, x)
        return 0
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
