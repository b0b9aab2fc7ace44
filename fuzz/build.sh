#!/bin/sh
# Builds the fuzz targets with libFuzzer on the stable toolchain: the same instrumentation
# cargo-fuzz passes (SanitizerCoverage through LLVM options), with debug assertions and
# overflow checks on, no address sanitizer (that one needs nightly's -Zsanitizer).
set -e
cd "$(dirname "$0")"
export RUSTFLAGS="--cfg fuzzing -Cpasses=sancov-module \
 -Cllvm-args=-sanitizer-coverage-level=4 \
 -Cllvm-args=-sanitizer-coverage-inline-8bit-counters \
 -Cllvm-args=-sanitizer-coverage-pc-table \
 -Cllvm-args=-sanitizer-coverage-trace-compares \
 -Cdebug-assertions -Coverflow-checks"
# An explicit --target keeps RUSTFLAGS off build scripts, which cannot link the hooks.
exec cargo build --release --bins --target "$(rustc -vV | sed -n "s/^host: //p")" "$@"
