#!/bin/sh
# Runs every fuzz target for N seconds each (default 60), starting from the committed seeds
# and the inputs that once failed, and keeping the growing corpus in fuzz/corpus/ (ignored by
# git). Needs the nightly toolchain and cargo-fuzz (`cargo install cargo-fuzz`). A crash
# leaves its input in fuzz/artifacts/<target>/: copy it to fuzz/regressions/<target>/ so that
# `cargo test` replays it for ever, then fix the bug.
# Usage (from the repository root or from fuzz/):  fuzz/run.sh [seconds] [target ...]
set -eu
cd "$(dirname "$0")"
secs=${1:-60}
[ $# -gt 0 ] && shift
targets=${*:-"probe_spec fixture_spec stackup touchstone table band full_build"}
for t in $targets; do
    mkdir -p "corpus/$t"
    echo "== $t: $secs s"
    cargo +nightly fuzz run "$t" "corpus/$t" "seeds/$t" "regressions/$t" -- \
        -max_total_time="$secs" -timeout=20 -rss_limit_mb=4096 -print_final_stats=1 2>&1 |
        grep -E "^(stat::number_of_executed_units|stat::new_units_added|#[0-9]+ +DONE|==[0-9]+==|SUMMARY|artifact_prefix)" || true
done
