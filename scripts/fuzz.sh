#!/usr/bin/env bash
# Runs every fuzz target for SECONDS each (default 10) on the stable
# toolchain; fails on the first crash. Needs cargo-fuzz
# (`cargo install cargo-fuzz --locked`).
#
# cargo-fuzz asks for nightly-only compiler flags; RUSTC_BOOTSTRAP=1 lets
# the stable compiler accept them. `-s none` leaves AddressSanitizer out
# (its flag needs a nightly toolchain's sanitizer runtime); libFuzzer's
# coverage guidance and Rust's own bounds and overflow checks (debug
# assertions are on) still find panics.
set -euo pipefail
cd "$(dirname "$0")/../fuzz"
SECONDS_EACH="${1:-10}"
export RUSTC_BOOTSTRAP=1
for target in values case_file batch_reader; do
    mkdir -p "corpus/$target"
    # Run on a scratch copy so new inputs found do not dirty the checkout.
    work="$(mktemp -d)"
    cp -r "corpus/$target/." "$work/"
    echo "fuzz: $target for ${SECONDS_EACH} s"
    log="$work.log"
    status=0
    cargo fuzz run -s none --debug-assertions "$target" "$work" -- \
        -max_total_time="$SECONDS_EACH" -max_len=4096 -rss_limit_mb=2048 \
        -print_final_stats=1 >"$log" 2>&1 || status=$?
    grep -E "^stat::number_of_executed_units|panicked|^SUMMARY|^==[0-9]+== ERROR" "$log" || true
    if [ "$status" != 0 ]; then tail -n 40 "$log" >&2; fi
    rm -f "$log"
    rm -rf "$work"
    if [ "$status" != 0 ]; then
        echo "fuzz: $target crashed (artifacts in fuzz/artifacts/$target)" >&2
        exit 1
    fi
done
