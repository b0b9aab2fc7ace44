#!/bin/sh
# Rebuilds the seed corpora in fuzz/corpus/ (not committed): the bundled profiles, and small
# captures made by the project's own `generate`, each behind the selector byte the `capture`
# target reads (0/1 WAV, 2/3 CSV, 4 manifest JSON, 21 raw i16; see fuzz/harness.rs),
# and the same captures behind the extension and options bytes the `analyze` target reads
# (with and without its profile, the fit, pictures, and a manifest; see fuzz_targets/analyze.rs).
set -e
cd "$(dirname "$0")/.."
cargo build --release --quiet
B=target/release/noisewright
S=$(mktemp -d)
for f in i16 i24 f32; do
  $B generate -q profiles/white-reference.toml --samples 64 --sample-format $f -o "$S/w_$f.wav"
done
$B generate -q profiles/white-reference.toml --samples 32 -o "$S/c.csv" --columns sources
$B generate -q profiles/popcorn-opamp.toml --samples 32 -o "$S/p.csv"
$B generate -q profiles/white-reference.toml --samples 64 -o "$S/r.i16"
mkdir -p fuzz/corpus/profile_text fuzz/corpus/profile_structured fuzz/corpus/quantity \
  fuzz/corpus/capture fuzz/corpus/analyze
cp profiles/*.toml fuzz/corpus/profile_text/
C=fuzz/corpus/capture
add() { { printf "$(printf '\\%03o' "$1")"; cat "$2"; } > "$C/$(basename "$2").seed"; }
add 0 "$S/w_i16.wav"; add 32 "$S/w_f32.wav"; add 1 "$S/w_i24.wav"
add 2 "$S/c.csv"; add 3 "$S/p.csv"; add 4 "$S/w_i16.wav.json"; add 21 "$S/r.i16"
A=fuzz/corpus/analyze
byte() { printf "$(printf '\\%03o' "$1")"; }
# analyze: extension 0 .wav, 1 .csv, 2 .i16; options bit 0 profile, 4 pictures, 5 JSON,
# 6 manifest before a blank line, 7 fit.
for o in 0 1 129 49; do
  { byte 0; byte $o; cat "$S/w_i16.wav"; } > "$A/w_i16.wav.$o"
  { byte 1; byte $o; cat "$S/c.csv"; } > "$A/c.csv.$o"
  { byte 2; byte $o; cat "$S/r.i16"; } > "$A/r.i16.$o"
done
{ byte 2; byte 64; cat "$S/r.i16.json"; printf '\n\n'; cat "$S/r.i16"; } > "$A/r.i16.manifest"
rm -r "$S"
