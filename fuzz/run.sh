#!/usr/bin/env bash
# Runs a fuzz target (default `loader`; also `overrides`, `study_files`)
# for a bounded time (seconds, default 60) on the stable toolchain:
#   fuzz/run.sh [SECONDS] [TARGET] cargo-fuzz passes nightly-only compiler flags, so
# RUSTC_BOOTSTRAP=1 lets the stable compiler accept them; AddressSanitizer
# is left off (--sanitizer none): Rust's own checks catch panics, and the
# code under test has no unsafe blocks.
set -euo pipefail
cd "$(dirname "$0")"
command -v cargo-fuzz >/dev/null || cargo install cargo-fuzz
seconds="${1:-60}"
target="${2:-loader}"
mkdir -p artifacts "corpus/$target"
RUSTC_BOOTSTRAP=1 cargo fuzz run "$target" --sanitizer none -- \
    -max_total_time="$seconds" -max_len=16384 -timeout=10 "corpus/$target" 2>&1 | tee "artifacts/last-run-$target.log"
