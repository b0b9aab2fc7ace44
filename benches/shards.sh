#!/usr/bin/env bash
# Shards against one run: the single-machine rate of `generate` (the number a cluster's wall
# time is estimated from, docs/shards.md), the same run as 8 shards by GNU parallel two at a
# time, and `join` of those shards (its rate and peak memory). Prints a Markdown table.
#
#   benches/shards.sh                         # 2^26 samples, 3 repetitions
#   SAMPLES=16777216 REPS=1 benches/shards.sh
#
# Needs GNU parallel, GNU time at /usr/bin/time and bash >= 5 ($EPOCHREALTIME).
set -euo pipefail
cd "$(dirname "$0")/.."

SAMPLES=${SAMPLES:-67108864}
REPS=${REPS:-3}
SHARDS=${SHARDS:-8}

cargo build --release --quiet
BIN=$(realpath "${CARGO_TARGET_DIR:-target}/release/noisewright")
WORK=$(mktemp -d)
trap 'rm -rf "$WORK"' EXIT
# Invented demo profile: a 10 nV/√Hz floor with a 100 Hz corner, run at 1 MHz.
cat > "$WORK/bench.toml" <<'EOF'
name = "shard bench"
unit = "V"
sample_rate = "1 MHz"
[band]
low = "1 Hz"
high = "400 kHz"
order = 2
[[floor]]
density = "10 nV/rtHz"
corner = "100 Hz"
EOF

median() { sort -g | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }

# Runs "$@" under /usr/bin/time; prints "wall_s peak_rss_kib".
timed() {
    local t0=$EPOCHREALTIME
    /usr/bin/time -f '%M' -o "$WORK/rss" "$@" >/dev/null
    local t1=$EPOCHREALTIME
    echo "$(echo "$t1 - $t0" | bc -l) $(tail -n 1 "$WORK/rss")"
}

declare -A WALL RSS
for ((r = 0; r < REPS; r++)); do
    cd "$WORK"
    read -r w m < <(timed "$BIN" generate bench.toml -q --samples "$SAMPLES" --seed 1 -o one.wav)
    WALL[one]+="$w "; RSS[one]+="$m "
    read -r w m < <(timed parallel --will-cite -j 2 "$BIN" generate bench.toml -q \
        --samples "$SAMPLES" --seed 1 --shard "{}/$SHARDS" -o 'part-{shard}.wav' \
        ::: $(seq 0 $((SHARDS - 1))))
    WALL[shards]+="$w "; RSS[shards]+="$m "
    read -r w m < <(timed "$BIN" join -q part-*.wav -o joined.wav)
    WALL[join]+="$w "; RSS[join]+="$m "
    cmp one.wav joined.wav
    rm -f ./*.wav ./*.json
    cd "$OLDPWD"
done

echo "Machine: $(nproc) vCPU, $(lscpu | sed -n 's/^Model name: *//p'), load average at end: $(cut -d' ' -f1-3 /proc/loadavg)"
echo
echo "| case | samples | wall s (median of $REPS) | M samples/s | peak RSS MiB | all walls s |"
echo "|---|---:|---:|---:|---:|---|"
for c in one shards join; do
    w=$(tr ' ' '\n' <<<"${WALL[$c]}" | grep . | median)
    m=$(tr ' ' '\n' <<<"${RSS[$c]}" | grep . | median)
    name=$c
    [[ $c == one ]] && name="generate, one run, f32 WAV, all cores"
    [[ $c == shards ]] && name="generate, $SHARDS shards by parallel -j 2"
    [[ $c == join ]] && name="join of the $SHARDS shards"
    printf '| %s | %d | %.2f | %.1f | %.1f | %s|\n' "$name" "$SAMPLES" "$w" \
        "$(echo "$SAMPLES / $w / 1000000" | bc -l)" "$(echo "$m / 1024" | bc -l)" "${WALL[$c]}"
done
