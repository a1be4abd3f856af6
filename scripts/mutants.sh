#!/usr/bin/env bash
# Mutation testing of the modules that compute what users read, with
# cargo-mutants (installed from crates.io if missing). Slow: every mutant
# is a rebuild and a test run, so this is not part of .ci/run.
#
#   scripts/mutants.sh                      # every module below, one job
#   scripts/mutants.sh sim-core/src/units.rs  # only the files named
#   MUTANTS_SHARD=0/4 scripts/mutants.sh    # one shard of the mutants
#   MUTANTS_JOBS=2 scripts/mutants.sh       # parallel builds (needs cores;
#                                           # default one, not with --in-place)
#   MUTANTS_OUT=dir scripts/mutants.sh      # where cargo-mutants writes
#   MUTANTS_TIMEOUT=150 scripts/mutants.sh  # seconds before a mutant counts as hung (300)
#   MUTANTS_RE='^sim-core/src/units.rs:138:' scripts/mutants.sh  # by name
#   MUTANTS_EXTRA="--in-place" scripts/mutants.sh  # more cargo-mutants options
#                                           # (--in-place: only in a scratch copy)
#
# The test command is restricted to the fast test binaries that check
# these modules: sim-core's unit tests and the cross-crate `tests` binary
# (not the CLI tests, the allocation test or the doc tests), skipping its
# slow modules (the Dopri5 cross-check `reference::`, the README demo
# `readme::`, the fit-accuracy cross-check `fit_accuracy::`; MUTANTS_SKIP
# overrides the skip list). It builds
# with the `mutants` profile (Cargo.toml): our crates unoptimised, so a
# mutant rebuilds in seconds, dependencies optimised, so the simulations
# in the tests still run quickly.
#
# (cargo-mutants 27 tests the mutated package, sim-core; the cross-crate
# tests' package is added to its cargo test command here.)
#
# Results: cargo-mutants writes caught.txt, missed.txt, timeout.txt,
# unviable.txt and outcomes.json under $MUTANTS_OUT/mutants.out; summarise
# them by file with scripts/mutants-summary.sh into benches/results/.
set -euo pipefail
cd "$(dirname "$0")/.."

if ! command -v cargo-mutants >/dev/null 2>&1; then
    cargo install --locked cargo-mutants
fi

FILES=("$@")
if [ ${#FILES[@]} -eq 0 ]; then
    FILES=(
        sim-core/src/metrics.rs
        sim-core/src/units.rs
        sim-core/src/model/controller.rs
        sim-core/src/parts/losses.rs
        sim-core/src/parts/checks.rs
        sim-core/src/parts/thermal.rs
        sim-core/src/parts/bias.rs
        sim-core/src/study/spread/sampling.rs
        sim-core/src/study/spread/stats.rs
        sim-core/src/study/rows.rs
        sim-core/src/study/rows/metric.rs
        sim-core/src/study/rows/verdict.rs
    )
fi
ARGS=()
for f in "${FILES[@]}"; do
    ARGS+=(--file "$f")
done
if [ -n "${MUTANTS_JOBS:-}" ]; then
    ARGS+=(--jobs "$MUTANTS_JOBS")
fi
if [ -n "${MUTANTS_RE:-}" ]; then
    # Only the mutants whose names (as --list prints them) match, e.g. the
    # survivors of an earlier run after new tests were added.
    ARGS+=(--re "$MUTANTS_RE")
fi
if [ -n "${MUTANTS_SHARD:-}" ]; then
    ARGS+=(--shard "$MUTANTS_SHARD" --sharding round-robin)
fi
OUT="${MUTANTS_OUT:-target/mutants-run}"
mkdir -p "$OUT"

# Timing is part of the result: the run prints its own elapsed time too.
start=$(date -u +%s)
set +e
cargo mutants \
    --workspace \
    --no-shuffle \
    --profile mutants \
    --timeout "${MUTANTS_TIMEOUT:-300}" \
    --output "$OUT" \
    "${ARGS[@]}" \
    ${MUTANTS_EXTRA:-} \
    -- --package chopwave-suite --lib --test tests -- ${MUTANTS_SKIP:---skip reference:: --skip readme:: --skip fit_accuracy::}
status=$?
set -e
echo "mutants: $(( $(date -u +%s) - start )) s wall, exit $status (0: all caught; 2: some missed; 3: timeouts; 4: the unmutated tree failed)"
exit "$status"
