#!/usr/bin/env bash
# Side-by-side benchmark: `noisewright generate` against a vectorised numpy script
# (benches/numpy_reference.py) on the same job — white floor 4 nV/√Hz with a 100 Hz corner,
# 48 kHz, f32 WAV at -20 dBFS — at 2^22, 2^24 and 2^26 samples, plus the floor (the same number
# of N(0,1) samples drawn and written as raw f32, examples/floor.rs). Prints Markdown tables:
# the comparison with ratios (noisewright twice: the band from 0.5 Hz, and from fs/2^24 as low
# as the numpy script's single block reaches at 2^24 samples), then single- and two-thread rows (`--threads 1` / `--threads 2`,
# the speed-up), one memory row at BIG samples streamed to /dev/null, and `analyze`'s density
# of a 2^24-sample file beside scipy.signal.welch (benches/analyze.sh does the full version).
#
# Usage: benches/versus_numpy.sh
# Environment: REPS [3], SIZES ["4194304 16777216 67108864"], THREADS_N [16777216],
#              BIG [1073741824 = 2^30; 0 skips], ANALYZE [1; 0 skips], ANALYZE_N [16777216]
#
# Method: for each size the three programs run REPS times, alternating (noisewright, numpy,
# floor, noisewright, ...), each under GNU time (`%M` peak RSS); wall time from bash's
# $EPOCHREALTIME around the same call, after a `sync` so that no run pays for the previous
# one's writeback. The table gives medians. Needs python3 with numpy and
# scipy (pip install -r tests/python/requirements.txt).
set -euo pipefail
export LC_ALL=C
[[ ${BASH_VERSINFO[0]} -ge 5 ]] || { echo "versus_numpy.sh: needs bash 5" >&2; exit 2; }
REPS=${REPS:-3}
SIZES=${SIZES:-"4194304 16777216 67108864"}
THREADS_N=${THREADS_N:-16777216}
BIG=${BIG:-1073741824}
ANALYZE=${ANALYZE:-1}
cd "$(dirname "$0")/.."
GNU_TIME=/usr/bin/time
echo "building (release) ..." >&2
cargo build --release --quiet
cargo build --release --quiet --example floor
BIN=target/release/noisewright
FLOOR=target/release/examples/floor
WORK=$(mktemp -d "${TMPDIR:-/tmp}/noisewright-vs.XXXXXX")
trap 'rm -rf "$WORK"' EXIT

cat >"$WORK/job.toml" <<'TOML'
# The benchmark job: white floor with a 1/f corner. Invented demo values.
name = "versus numpy"
sample_rate = "48 kHz"
[band]
low = "0.5 Hz"
high = "24 kHz"
order = 0
[[floor]]
density = "4 nV/rtHz"
corner = "100 Hz"
TOML
# The same job reaching as low as the numpy script's single block does at 2^24 samples:
# band.low = fs/2^24 (seven decades below 24 kHz).
sed 's/^low = "0.5 Hz"/low = "0.00286102294921875 Hz"/; s/^name = .*/name = "versus numpy, seven decades"/' \
    "$WORK/job.toml" >"$WORK/job7.toml"
grep -q '^low = "0.0028' "$WORK/job7.toml" || { echo "versus_numpy.sh: job7.toml not made" >&2; exit 2; }

# run NAME CMD... → appends "wall_s peak_kib" to $WORK/NAME
run() {
    local name=$1; shift
    local t0 t1
    # Flush the previous run's dirty pages first, so that no program pays for another's
    # writeback inside its timing.
    sync
    t0=$EPOCHREALTIME
    $GNU_TIME -f '%M' -o "$WORK/mem" "$@" >/dev/null 2>"$WORK/err" || { cat "$WORK/err" >&2; exit 1; }
    t1=$EPOCHREALTIME
    echo "$(awk -v a="$t0" -v b="$t1" 'BEGIN{printf "%.3f", b-a}') $(tail -n1 "$WORK/mem")" >>"$WORK/$name"
    rm -f "$WORK"/out.*
}
median() { sort -n | awk '{v[NR]=$1} END{print v[int((NR+1)/2)]}'; }

# row LABEL N FILE [REF_FILE] → one table line from the medians in $WORK/FILE
row() {
    local wall kib ref=""
    wall=$(cut -d' ' -f1 "$WORK/$3" | median)
    kib=$(cut -d' ' -f2 "$WORK/$3" | median)
    [[ -n ${4:-} ]] && ref=$(cut -d' ' -f1 "$WORK/$4" | median)
    awk -v n="$2" -v w="$wall" -v k="$kib" -v l="$1" -v r="$ref" 'BEGIN{
        x = r == "" ? "–" : sprintf("%.2f", r / w)
        printf "| %d | %s | %.3f | %.1f | %.1f | %s |\n", n, l, w, n/w/1e6, k/1024, x }'
}

echo "Machine: $(nproc) vCPU, $(lscpu | sed -n 's/^Model name: *//p'), load average at start:" \
    "$(cut -d' ' -f1-3 /proc/loadavg)"
echo
echo "Medians of $REPS runs, alternating. Last column: throughput ÷ the reference's (numpy"
echo "script for the first table, one thread for the second)."
echo
echo "| samples | program | wall s | M samples/s | peak RSS MiB | speed ÷ numpy |"
echo "|---:|---|---:|---:|---:|---:|"
for n in $SIZES; do
    for _ in $(seq "$REPS"); do
        echo "n=$n ..." >&2
        run "nw.$n" "$BIN" generate "$WORK/job.toml" -o "$WORK/out.wav" --samples "$n" --quiet
        run "np.$n" python3 benches/numpy_reference.py "$n" "$WORK/out.wav"
        run "n7.$n" "$BIN" generate "$WORK/job7.toml" -o "$WORK/out.wav" --samples "$n" --quiet
        run "fl.$n" "$FLOOR" "$n" "$WORK/out.raw"
    done
    row "noisewright, band from 0.5 Hz (f32 WAV, all cores)" "$n" "nw.$n" "np.$n"
    row "noisewright, band from fs/2^24 (f32 WAV, all cores)" "$n" "n7.$n" "np.$n"
    row "numpy script (f32 WAV)" "$n" "np.$n" "np.$n"
    row "floor: N(0,1) drawn + raw f32 written, one core" "$n" "fl.$n" "np.$n"
    awk -v a="$(cut -d' ' -f1 "$WORK/nw.$n" | median)" -v b="$(cut -d' ' -f1 "$WORK/fl.$n" | median)" \
        'BEGIN{ printf "| | noisewright ÷ floor (throughput) | | %.2f | | |\n", b / a }'
done

n=$THREADS_N
for _ in $(seq "$REPS"); do
    echo "threads, n=$n ..." >&2
    run "t1" "$BIN" generate "$WORK/job.toml" -o "$WORK/out.wav" --samples "$n" --quiet --threads 1
    run "t2" "$BIN" generate "$WORK/job.toml" -o "$WORK/out.wav" --samples "$n" --quiet --threads 2
    run "tf" "$FLOOR" "$n" "$WORK/out.raw"
    run "s1" "$BIN" generate "$WORK/job7.toml" -o "$WORK/out.wav" --samples "$n" --quiet --threads 1
    run "s2" "$BIN" generate "$WORK/job7.toml" -o "$WORK/out.wav" --samples "$n" --quiet --threads 2
done
echo
echo "| samples | program | wall s | M samples/s | peak RSS MiB | speed ÷ one thread |"
echo "|---:|---|---:|---:|---:|---:|"
row "noisewright --threads 1 (f32 WAV)" "$n" t1 t1
row "noisewright --threads 2 (f32 WAV)" "$n" t2 t1
row "floor, one core" "$n" tf t1
awk -v a="$(cut -d' ' -f1 "$WORK/t1" | median)" -v b="$(cut -d' ' -f1 "$WORK/tf" | median)" \
    'BEGIN{ printf "| | one thread ÷ floor (throughput) | | %.2f | | |\n", b / a }'
row "noisewright --threads 1, band from fs/2^24" "$n" s1 s1
row "noisewright --threads 2, band from fs/2^24" "$n" s2 s1
awk -v a="$(cut -d' ' -f1 "$WORK/s1" | median)" -v b="$(cut -d' ' -f1 "$WORK/tf" | median)" \
    'BEGIN{ printf "| | one thread ÷ floor (throughput), band from fs/2^24 | | %.2f | | |\n", b / a }'

if [[ $BIG -gt 0 ]]; then
    echo
    echo "| samples | program | wall s | M samples/s | peak RSS MiB |"
    echo "|---:|---|---:|---:|---:|"
    for job in job job7; do
        echo "memory, $job, n=$BIG ..." >&2
        t0=$EPOCHREALTIME
        $GNU_TIME -f '%M' -o "$WORK/mem" bash -c "\"$BIN\" generate \"$WORK/$job.toml\" -o - --samples $BIG --quiet > /dev/null" ||
            exit 1
        t1=$EPOCHREALTIME
        label=$([[ $job == job ]] && echo "band from 0.5 Hz" || echo "band from fs/2^24")
        awk -v n="$BIG" -v a="$t0" -v b="$t1" -v k="$(tail -n1 "$WORK/mem")" -v l="$label" 'BEGIN{
            printf "| %d | noisewright -o - > /dev/null, %s (one run) | %.1f | %.1f | %.1f |\n", n, l, b-a, n/(b-a)/1e6, k/1024 }'
    done
fi

if [[ $ANALYZE -gt 0 ]]; then
    n=${ANALYZE_N:-16777216}
    echo "analyze, n=$n ..." >&2
    "$BIN" generate "$WORK/job.toml" -o "$WORK/rec.f64" --format raw --sample-format f64 --samples $n --quiet
    cat >"$WORK/welch.py" <<'PY'
import sys
import numpy as np
from scipy import signal
x = np.fromfile(sys.argv[1], dtype="<f8")
f, p = signal.welch(x, fs=48000.0, window="hann", nperseg=65536, noverlap=32768,
                    detrend=False, scaling="density")
print(p[100])
PY
    for _ in $(seq "$REPS"); do
        run "an" "$BIN" analyze "$WORK/rec.f64" --rate 48kHz --resolution 0.732421875Hz --json
        run "sp" python3 "$WORK/welch.py" "$WORK/rec.f64"
    done
    echo
    echo "Density of a $n-sample raw f64 file (Hann, L = 65536, 50 % overlap):"
    echo
    echo "| samples | program | wall s | M samples/s | peak RSS MiB | speed ÷ scipy |"
    echo "|---:|---|---:|---:|---:|---:|"
    row "noisewright analyze --json" "$n" an sp
    row "scipy.signal.welch" "$n" sp sp
fi
