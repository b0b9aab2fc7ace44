#!/usr/bin/env python3
"""Per-output-sample instruction split of `noisewright generate` from two callgrind runs.

Usage: callgrind_split.py SHORT.out LONG.out [SAMPLES]

SHORT.out and LONG.out are `valgrind --tool=callgrind` outputs of the same command at N and
2N samples (SAMPLES = N, default 2^20), e.g.

    valgrind --tool=callgrind --callgrind-out-file=cg.1 target/release/noisewright generate \\
        job.toml -o o.wav --samples 1048576 --quiet --threads 1

Each function's self count in the long run minus the short run, divided by N, is its cost
per output sample (the fixed cost of parsing, design and priming drops out). Functions are
grouped by name into the rows of benches/README.md's "Where the time goes".
"""
import re
import subprocess
import sys

GROUPS = [
    ("FFTs", ("fft::", "rustfft")),
    ("Gaussian draws", ("ziggurat", "chacha", "rand_core", "WhiteStreams")),
    ("pump", ("stats", "sink", "pump", "Scaler", "Tally", "encode", "wide", "wav")),
    ("copies", ("memcpy", "memmove", "memset")),
    ("shaper's loops, rayon", ("shaper", "team", "rayon")),
]


def self_counts(path: str) -> dict:
    """Self instruction count of every function in a callgrind output."""
    out = subprocess.run(
        ["callgrind_annotate", "--auto=no", "--threshold=100", path],
        capture_output=True, text=True, check=True,
    ).stdout
    counts: dict = {}
    for line in out.splitlines():
        m = re.match(r"\s*([\d,]+) \([^)]*\)\s+(.*)", line)
        if m and "PROGRAM TOTALS" not in line:
            counts[m.group(2)] = counts.get(m.group(2), 0) + int(m.group(1).replace(",", ""))
    return counts


def group(name: str) -> str:
    for label, keys in GROUPS:
        if any(k in name for k in keys):
            return label
    return "other"


def main() -> None:
    short, long = self_counts(sys.argv[1]), self_counts(sys.argv[2])
    n = int(sys.argv[3]) if len(sys.argv) > 3 else 1 << 20
    rows: dict = {}
    for name in set(short) | set(long):
        rows[group(name)] = rows.get(group(name), 0.0) + (long.get(name, 0) - short.get(name, 0)) / n
    for label in [g[0] for g in GROUPS] + ["other"]:
        print(f"{label:24s} {rows.get(label, 0.0):7.1f}")
    print(f"{'total':24s} {sum(rows.values()):7.1f}")


if __name__ == "__main__":
    main()
