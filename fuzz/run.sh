#!/usr/bin/env bash
# Runs the loader fuzz target for a bounded time (seconds, default 60) on
# the stable toolchain. cargo-fuzz passes nightly-only compiler flags, so
# RUSTC_BOOTSTRAP=1 lets the stable compiler accept them; AddressSanitizer
# is left off (--sanitizer none): Rust's own checks catch panics, and the
# code under test has no unsafe blocks.
set -euo pipefail
cd "$(dirname "$0")"
command -v cargo-fuzz >/dev/null || cargo install cargo-fuzz
seconds="${1:-60}"
mkdir -p artifacts
RUSTC_BOOTSTRAP=1 cargo fuzz run loader --sanitizer none -- \
    -max_total_time="$seconds" -max_len=8192 -timeout=10 corpus/loader 2>&1 | tee artifacts/last-run.log
