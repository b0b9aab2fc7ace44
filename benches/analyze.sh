#!/usr/bin/env bash
# Benchmark of `noisewright analyze` beside scipy.signal.welch with the same parameters;
# prints a Markdown table.
#
# Usage: benches/analyze.sh        (from anywhere; builds release first; needs numpy + scipy)
# Environment knobs (defaults in brackets):
#   SAMPLES  samples in the record            [16777216 = 2^24]
#   SEG      Welch segment length L           [65536]; analyze gets --resolution fs/L
#   REPS     repetitions per case             [3]; the table shows the median
#
# Method: as benches/run.sh — every case REPS times round-robin, each under GNU time (`%M` peak
# RSS), wall time from bash's $EPOCHREALTIME around the call, median of the runs. The record
# is one generated white + 1/f noise file at 48 kHz, raw f64 (and the same noise as f32 WAV).
# Both tools use a periodic Hann window, L = SEG, 50 % overlap, no detrending, one-sided
# density scaling. `analyze` does more than the density: it reads the file twice (the second
# pass for moments, σ-fractions and the histogram) and computes the statistics, bands, χ²
# intervals and burst-level detection; SciPy loads the whole record into memory first.
set -euo pipefail
export LC_ALL=C
[[ ${BASH_VERSINFO[0]} -ge 5 ]] || { echo "analyze.sh: needs bash 5 (\$EPOCHREALTIME)" >&2; exit 2; }

SAMPLES=${SAMPLES:-16777216}
SEG=${SEG:-65536}
REPS=${REPS:-3}

cd "$(dirname "$0")/.."
GNU_TIME=/usr/bin/time
[[ -x $GNU_TIME ]] || { echo "analyze.sh: needs GNU time at $GNU_TIME" >&2; exit 2; }
python3 -c 'import numpy, scipy.signal' 2>/dev/null ||
    { echo "analyze.sh: needs numpy and scipy (pip install -r tests/python/requirements.txt)" >&2; exit 2; }

echo "building (release) ..." >&2
cargo build --release --quiet
BIN=target/release/noisewright

WORK=$(mktemp -d "${TMPDIR:-/tmp}/noisewright-bench-analyze.XXXXXX")
trap 'rm -rf "$WORK"' EXIT

cat >"$WORK/flicker.toml" <<'TOML'
# Benchmark record: white floor + 1/f below 100 Hz, 0.1 Hz .. 20 kHz. Invented demo values.
name = "bench analyze"
sample_rate = "48 kHz"
[band]
low = "0.1 Hz"
high = "20 kHz"
order = 2
[[floor]]
density = "4 nV/rtHz"
corner = "100 Hz"
TOML
echo "writing the record ($SAMPLES samples) ..." >&2
$BIN generate "$WORK/flicker.toml" -o "$WORK/rec.f64" --format raw --sample-format f64 --samples "$SAMPLES" -q
$BIN generate "$WORK/flicker.toml" -o "$WORK/rec.wav" --sample-format f32 --samples "$SAMPLES" -q
RES=$(awk -v l="$SEG" 'BEGIN { printf "%.17g", 48000 / l }')

cat >"$WORK/scipy_welch.py" <<'PY'
import sys
import numpy as np
from scipy import signal
x = np.fromfile(sys.argv[1], dtype="<f8")
l = int(sys.argv[2])
f, p = signal.welch(x, fs=48000.0, window="hann", nperseg=l, noverlap=l // 2,
                    detrend=False, scaling="density")
print(p[100])
PY
cat >"$WORK/numpy_load.py" <<'PY'
import sys
import numpy as np
x = np.fromfile(sys.argv[1], dtype="<f8")
print(x[100])
PY

LABELS=()
CMDS=()
add() { LABELS+=("$1"); CMDS+=("$2"); }
add "analyze, raw f64 file" '$BIN analyze $WORK/rec.f64 --rate 48kHz --resolution ${RES}Hz --json > /dev/null'
add "analyze, f32 WAV file" '$BIN analyze $WORK/rec.wav --resolution ${RES}Hz --json > /dev/null'
add "scipy.signal.welch, raw f64 file" 'python3 $WORK/scipy_welch.py $WORK/rec.f64 $SEG > /dev/null'
add "floor: python3 + numpy.fromfile only" 'python3 $WORK/numpy_load.py $WORK/rec.f64 > /dev/null'

export BIN WORK RES SEG
run_case() {
    local t0=$EPOCHREALTIME
    if ! $GNU_TIME -f '%e %M' -o "$WORK/time.txt" bash -c "$1" 2>"$WORK/stderr.txt"; then
        echo "analyze.sh: failed: $1" >&2
        cat "$WORK/stderr.txt" >&2
        exit 1
    fi
    local t1=$EPOCHREALTIME rss
    read -r _ rss < <(tail -n 1 "$WORK/time.txt")
    awk -v a="$t0" -v b="$t1" -v m="$rss" 'BEGIN { printf "%.3f %d\n", b - a, m }'
}
median() { sort -g | awk '{v[NR]=$1} END {print v[int((NR+1)/2)]}'; }

declare -A WALLS RSS
echo "running ${#LABELS[@]} cases x $REPS ..." >&2
for ((r = 1; r <= REPS; r++)); do
    for i in "${!LABELS[@]}"; do
        read -r wall rss < <(run_case "${CMDS[$i]}")
        WALLS[$i]+="$wall "
        RSS[$i]+="$rss "
        echo "  rep $r: ${LABELS[$i]}: $wall s, $rss KiB" >&2
    done
done

echo
echo "Machine: $(nproc) vCPU, $(lscpu | sed -n 's/^Model name: *//p'), load average at end:" \
    "$(cut -d' ' -f1-3 /proc/loadavg)"
echo "$(python3 -c 'import numpy, scipy; print("numpy", numpy.__version__, "scipy", scipy.__version__)')"
echo
echo "$SAMPLES samples at 48 kHz, Hann, L = $SEG, 50 % overlap; median of $REPS runs."
echo
echo "| case | wall s | M samples/s | peak RSS MiB | all runs, wall s |"
echo "|---|---:|---:|---:|---|"
for i in "${!LABELS[@]}"; do
    w=$(tr ' ' '\n' <<<"${WALLS[$i]}" | grep . | median)
    m=$(tr ' ' '\n' <<<"${RSS[$i]}" | grep . | median)
    awk -v l="${LABELS[$i]}" -v n="$SAMPLES" -v w="$w" -v m="$m" -v all="${WALLS[$i]% }" \
        'BEGIN { printf "| %s | %.3f | %.1f | %.1f | %s |\n", l, w, n / w / 1e6, m / 1024, all }'
done
