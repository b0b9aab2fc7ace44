#!/usr/bin/env bash
# Throughput and memory benchmark of `noisewright generate`; prints Markdown tables.
#
# Usage: benches/run.sh            (from anywhere; builds release first)
# Environment knobs (defaults in brackets):
#   SAMPLES  samples per throughput case        [16777216 = 2^24]
#   REPS     repetitions per case               [3]; the table shows the median
#   BIG      samples of the memory check        [1073741824 = 2^30]; 0 skips it
#
# Method: every case runs REPS times, round-robin (case 1, 2, ..., then again), so slow
# phases of a shared machine spread over all cases instead of hitting one. Each run is timed
# under GNU time (`%M` peak RSS in KiB; its `%e` wall seconds have only 10 ms resolution, so the
# wall time is taken from bash's $EPOCHREALTIME around the same call). The table gives the
# median wall time and the median peak RSS of the REPS runs, and throughput = samples / median
# wall. Wall time includes process start, profile parsing and engine design.
set -euo pipefail
export LC_ALL=C # a '.' decimal point in $EPOCHREALTIME and awk
[[ ${BASH_VERSINFO[0]} -ge 5 ]] || { echo "run.sh: needs bash 5 (\$EPOCHREALTIME)" >&2; exit 2; }

SAMPLES=${SAMPLES:-16777216}
REPS=${REPS:-3}
BIG=${BIG:-1073741824}

cd "$(dirname "$0")/.."
GNU_TIME=/usr/bin/time
[[ -x $GNU_TIME ]] || { echo "run.sh: needs GNU time at $GNU_TIME" >&2; exit 2; }

echo "building (release) ..." >&2
cargo build --release --quiet
cargo build --release --quiet --example floor
BIN=target/release/noisewright
FLOOR=target/release/examples/floor

WORK=$(mktemp -d "${TMPDIR:-/tmp}/noisewright-bench.XXXXXX")
trap 'rm -rf "$WORK"' EXIT

# Demo profiles (invented values).
cat >"$WORK/white.toml" <<'EOF'
# Benchmark case (a): a white floor only. Invented demo values.
name = "bench white"
sample_rate = "48 kHz"

[band]
low = "10 Hz"
high = "20 kHz"
order = 2

[[floor]]
density = "4 nV/rtHz"
EOF

cat >"$WORK/flicker.toml" <<'EOF'
# Benchmark case (b): white floor + 1/f below a 100 Hz corner, band 0.02 Hz .. 20 kHz
# (six decades). Invented demo values.
name = "bench white + 1/f"
sample_rate = "48 kHz"

[band]
low = "0.02 Hz"
high = "20 kHz"
order = 2

[[floor]]
density = "4 nV/rtHz"
corner = "100 Hz"
slope = 1.0
EOF

# Case table: label, command (run by bash; $BIN, $FLOOR, $WORK, $N expand at run time),
# samples (default $SAMPLES).
LABELS=()
CMDS=()
COUNTS=()
add() { LABELS+=("$1"); CMDS+=("$2"); COUNTS+=("${3:-$SAMPLES}"); }
add "(a) white, raw f32 file" \
    '$BIN generate $WORK/white.toml -o $WORK/out.f32 --format raw --sample-format f32 --samples $N -q'
add "(a) white, f32 WAV file" \
    '$BIN generate $WORK/white.toml -o $WORK/out.wav --sample-format f32 --samples $N -q'
add "(a) white, -o - > /dev/null" \
    '$BIN generate $WORK/white.toml -o - --sample-format f32 --samples $N -q > /dev/null'
add "(b) white+1/f, raw f32 file" \
    '$BIN generate $WORK/flicker.toml -o $WORK/out.f32 --format raw --sample-format f32 --samples $N -q'
add "(b) white+1/f, f32 WAV file" \
    '$BIN generate $WORK/flicker.toml -o $WORK/out.wav --sample-format f32 --samples $N -q'
add "(b) white+1/f, -o - > /dev/null" \
    '$BIN generate $WORK/flicker.toml -o - --sample-format f32 --samples $N -q > /dev/null'
add "(c) floor: N(0,1) raw f32 file" \
    '$FLOOR $N $WORK/out.f32'
add "(c) floor: N(0,1) > /dev/null" \
    '$FLOOR $N - > /dev/null'
# Fixed cost (start, parse, design, FFT plans): one sample; its throughput column is meaningless.
add "(b) fixed cost: 1 sample, -o -" \
    '$BIN generate $WORK/flicker.toml -o - --sample-format f32 --samples $N -q > /dev/null' 1

# run_case COMMAND N -> prints "wall_s rss_kib"; output files are removed afterwards.
# Wall time comes from $EPOCHREALTIME (µs) and includes GNU time's own fork+exec (~1 ms).
# GNU time measures `bash -c`, which execs a lone command; where it forks, the kernel reports
# the largest RSS among the waited-for descendants (not the sum), so %M is the tool's.
export BIN FLOOR WORK
run_case() {
    export N=$2
    local t0=$EPOCHREALTIME
    if ! $GNU_TIME -f '%e %M' -o "$WORK/time.txt" bash -c "$1" 2>"$WORK/stderr.txt"; then
        echo "run.sh: failed: $1 (N=$N)" >&2
        cat "$WORK/stderr.txt" >&2
        exit 1
    fi
    local t1=$EPOCHREALTIME
    rm -f "$WORK"/out.*
    local rss
    read -r _ rss < <(tail -n 1 "$WORK/time.txt")
    awk -v a="$t0" -v b="$t1" -v m="$rss" 'BEGIN { printf "%.3f %d\n", b - a, m }'
}

median() { sort -g | awk '{v[NR]=$1} END {print v[int((NR+1)/2)]}'; }

declare -A WALLS RSS
echo "running ${#LABELS[@]} cases x $REPS ..." >&2
for ((r = 1; r <= REPS; r++)); do
    for i in "${!LABELS[@]}"; do
        read -r wall rss < <(run_case "${CMDS[$i]}" "${COUNTS[$i]}")
        WALLS[$i]+="$wall "
        RSS[$i]+="$rss "
        echo "  rep $r: ${LABELS[$i]}: $wall s, $rss KiB" >&2
    done
done

echo
echo "Machine: $(nproc) vCPU, $(lscpu | sed -n 's/^Model name: *//p'), load average at end:" \
    "$(cut -d' ' -f1-3 /proc/loadavg)"
echo
echo "Median of $REPS runs, run round-robin; wall includes process start and engine design."
echo
echo "| case | samples | wall s | M samples/s | peak RSS MiB | all runs, wall s |"
echo "|---|---:|---:|---:|---:|---|"
for i in "${!LABELS[@]}"; do
    w=$(tr ' ' '\n' <<<"${WALLS[$i]}" | grep . | median)
    m=$(tr ' ' '\n' <<<"${RSS[$i]}" | grep . | median)
    awk -v l="${LABELS[$i]}" -v n="${COUNTS[$i]}" -v w="$w" -v m="$m" -v all="${WALLS[$i]% }" \
        'BEGIN { r = n > 1000 ? sprintf("%.1f", n / w / 1e6) : "–"
                printf "| %s | %d | %.3f | %s | %.1f | %s |\n", l, n, w, r, m / 1024, all }'
done

if [[ $BIG -gt 0 ]]; then
    echo "memory check: (b) streamed, $BIG samples, once ..." >&2
    read -r wall rss < <(run_case "${CMDS[5]}" "$BIG")
    echo
    echo "Memory check (one run): the engine promises a peak RSS of at most 64 MiB."
    echo
    echo "| case | samples | wall s | M samples/s | peak RSS MiB |"
    echo "|---|---:|---:|---:|---:|"
    awk -v l="${LABELS[5]}" -v n="$BIG" -v w="$wall" -v m="$rss" \
        'BEGIN { printf "| %s | %d | %.1f | %.1f | %.1f |\n", l, n, w, n / w / 1e6, m / 1024 }'
    echo
    mib=$(awk -v m="$rss" 'BEGIN { printf "%.1f", m / 1024 }')
    if ((rss <= 64 * 1024)); then
        echo "Peak RSS $mib MiB: within the 64 MiB promise."
    else
        echo "Peak RSS $mib MiB: OVER the 64 MiB promise."
    fi
fi
