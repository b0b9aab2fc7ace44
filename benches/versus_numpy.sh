#!/usr/bin/env bash
# Side-by-side benchmark: `noisewright generate` against a vectorised numpy script
# (benches/numpy_reference.py) on the same job — white floor 4 nV/√Hz with a 100 Hz corner,
# 48 kHz, f32 WAV at -20 dBFS — at 2^22, 2^24 and 2^26 samples, plus the floor (the same number
# of N(0,1) samples drawn and written as raw f32, examples/floor.rs). Prints a Markdown table.
#
# Usage: benches/versus_numpy.sh     Environment: REPS [3], SIZES ["4194304 16777216 67108864"]
#
# Method: for each size the three programs run REPS times, alternating (noisewright, numpy,
# floor, noisewright, ...), each under GNU time (`%M` peak RSS); wall time from bash's
# $EPOCHREALTIME around the same call. The table gives medians. Needs python3 with numpy and
# scipy (pip install -r tests/python/requirements.txt).
set -euo pipefail
export LC_ALL=C
[[ ${BASH_VERSINFO[0]} -ge 5 ]] || { echo "versus_numpy.sh: needs bash 5" >&2; exit 2; }
REPS=${REPS:-3}
SIZES=${SIZES:-"4194304 16777216 67108864"}
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

# run NAME CMD... → appends "wall_s peak_kib" to $WORK/NAME
run() {
    local name=$1; shift
    local t0 t1
    t0=$EPOCHREALTIME
    $GNU_TIME -f '%M' -o "$WORK/mem" "$@" >/dev/null 2>"$WORK/err" || { cat "$WORK/err" >&2; exit 1; }
    t1=$EPOCHREALTIME
    echo "$(awk -v a="$t0" -v b="$t1" 'BEGIN{printf "%.3f", b-a}') $(tail -n1 "$WORK/mem")" >>"$WORK/$name"
    rm -f "$WORK"/out.*
}
median() { sort -n | awk '{v[NR]=$1} END{print v[int((NR+1)/2)]}'; }

echo "| samples | program | wall s | M samples/s | peak RSS MiB | wall ÷ noisewright wall |"
echo "|---:|---|---:|---:|---:|---:|"
for n in $SIZES; do
    for _ in $(seq "$REPS"); do
        echo "n=$n ..." >&2
        run "nw.$n" "$BIN" generate "$WORK/job.toml" -o "$WORK/out.wav" --samples "$n" --quiet
        run "np.$n" python3 benches/numpy_reference.py "$n" "$WORK/out.wav"
        run "fl.$n" "$FLOOR" "$n" "$WORK/out.raw"
    done
    nw=$(cut -d' ' -f1 "$WORK/nw.$n" | median)
    for prog in nw np fl; do
        wall=$(cut -d' ' -f1 "$WORK/$prog.$n" | median)
        kib=$(cut -d' ' -f2 "$WORK/$prog.$n" | median)
        label=$([[ $prog == nw ]] && echo "noisewright (f32 WAV)" || { [[ $prog == np ]] && echo "numpy script (f32 WAV)" || echo "floor: N(0,1) drawn + raw f32 written"; })
        awk -v n="$n" -v w="$wall" -v k="$kib" -v l="$label" -v r="$nw" 'BEGIN{
            printf "| %d | %s | %.3f | %.1f | %.1f | %.2f |\n", n, l, w, n/w/1e6, k/1024, w/r }'
    done
done
