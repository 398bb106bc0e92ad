#!/usr/bin/env bash
# A short coverage-guided fuzzing pass over the input readers (cargo fuzz on
# nightly; targets in fuzz/fuzz_targets: scenario text and --set lines, map
# shards, state tables). Usage: bash tests/fuzz.sh [SECONDS per target, default 15].
# The build directory lives outside the checkout so that clean clones reuse it.
set -euo pipefail
cd "$(dirname "$0")/../fuzz"
secs="${1:-15}"
rustup toolchain list | grep -q '^nightly' || rustup toolchain install nightly --profile minimal
command -v cargo-fuzz > /dev/null || cargo install --locked cargo-fuzz
target="${ICEFOLD_FUZZ_TARGET:-/var/tmp/icefold-fuzz-target}"
log="$(mktemp)"
trap 'rm -f "$log"' EXIT
for t in scenario shard state; do
    set +e
    cargo +nightly fuzz run --target-dir "$target" "$t" -- -max_total_time="$secs" > "$log" 2>&1
    rc=$?
    set -e
    if [ "$rc" -ne 0 ]; then
        tail -40 "$log" >&2
        echo "fuzz target $t failed (exit $rc); a crash input is kept in fuzz/artifacts/$t" >&2
        exit 1
    fi
    echo "fuzz $t: $(grep -E '^Done' "$log" | tail -1)"
done
