#!/usr/bin/env python3
"""noisewright.generate (the Python package) beside the command line: wall time of 2^24
samples and the peak memory above the returned array. Prints a Markdown table.

Usage: python3 benches/python_generate.py   (the package installed: pip install ./python)
Environment: SAMPLES [16777216 = 2^24], REPS [5], NOISEWRIGHT_BIN [built here with
cargo build --release].

Method: every case runs REPS times round-robin (each case once, then again), each run in a
fresh process; the table gives medians.
- CLI: `noisewright generate PROFILE --samples N --format raw --sample-format f64 -o /dev/null
  -q`, the same samples the package returns; wall time of the whole process (start, parsing,
  design included), peak RSS from wait4's ru_maxrss.
- Python: a fresh `python3` imports noisewright and reads the profile, then times
  `noisewright.generate(profile, N)` alone (design included, interpreter start and import
  not). Peak memory above the array = ru_maxrss after the call - RSS just before it - the
  array's 8 N bytes (the target: at most 64 MiB). Then, in the same process, the first touch
  of a second fresh array of the same size (numpy.zeros, then fill): the page faults that
  generate() pays and the command line, reusing one small buffer, does not.
"""

import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
SAMPLES = int(os.environ.get("SAMPLES", 1 << 24))
REPS = int(os.environ.get("REPS", 5))
PROFILES = [REPO / "profiles" / "mic-preamp.toml", REPO / "profiles" / "flicker-wide.toml"]

CHILD = r"""
import resource, sys, time
import noisewright
def rss():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * resource.getpagesize()
p = noisewright.Profile.from_path(sys.argv[1])
n = int(sys.argv[2])
before = rss()
t0 = time.perf_counter()
x = noisewright.generate(p, n)
wall = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
# The cost of a fresh array's first touch alone (page faults), for the reading of the ratio.
t0 = time.perf_counter()
import numpy
y = numpy.zeros(n)
y.fill(0.5)
touch = time.perf_counter() - t0
print(wall, before, peak, x.nbytes, touch)
"""


def binary():
    given = os.environ.get("NOISEWRIGHT_BIN")
    if given:
        return given
    subprocess.run(["cargo", "build", "--release", "--quiet", "--bin", "noisewright"],
                   cwd=REPO, check=True)
    target = os.environ.get("CARGO_TARGET_DIR", REPO / "target")
    return str(Path(target) / "release" / "noisewright")


def run_cli(bin_path, profile):
    t0 = time.perf_counter()
    p = subprocess.Popen([bin_path, "generate", str(profile), "--samples", str(SAMPLES),
                          "--format", "raw", "--sample-format", "f64", "-o", "/dev/null",
                          "-q"])
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    assert os.waitstatus_to_exitcode(status) == 0, f"generate failed on {profile}"
    return wall, usage.ru_maxrss / 1024


def run_python(profile):
    out = subprocess.run([sys.executable, "-c", CHILD, str(profile), str(SAMPLES)],
                         check=True, stdout=subprocess.PIPE, text=True, cwd="/").stdout
    wall, before, peak, nbytes, touch = (float(v) for v in out.split())
    return wall, (peak - before - nbytes) / 2**20, touch


def main():
    bin_path = binary()
    runs = {(p.stem, k): [] for p in PROFILES for k in ("cli", "py")}
    for rep in range(REPS):
        for p in PROFILES:
            runs[(p.stem, "cli")].append(run_cli(bin_path, p))
            runs[(p.stem, "py")].append(run_python(p))
            print(f"rep {rep + 1}/{REPS} {p.stem}: cli {runs[(p.stem, 'cli')][-1]}, "
                  f"py {runs[(p.stem, 'py')][-1]}", file=sys.stderr)
    mib = SAMPLES * 8 / 2**20
    print(f"{SAMPLES} samples (f64 array {mib:.0f} MiB), median of {REPS}, "
          f"{os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f}\n")
    print("| profile | CLI -o /dev/null, s | CLI peak RSS MiB | generate(), s | ratio "
          "| generate() peak above the array, MiB | first touch of the array, s |")
    print("|---|---:|---:|---:|---:|---:|---:|")
    for p in PROFILES:
        cli = runs[(p.stem, "cli")]
        py = runs[(p.stem, "py")]
        cw = statistics.median(w for w, _ in cli)
        cm = statistics.median(m for _, m in cli)
        pw = statistics.median(w for w, _, _ in py)
        pm = statistics.median(m for _, m, _ in py)
        pt = statistics.median(t for _, _, t in py)
        print(f"| {p.stem} | {cw:.3f} | {cm:.1f} | {pw:.3f} | {pw / cw:.2f} | {pm:.1f} "
              f"| {pt:.3f} |")


if __name__ == "__main__":
    main()
