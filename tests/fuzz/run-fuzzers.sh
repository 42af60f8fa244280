#!/bin/sh
# Builds the libFuzzer targets with clang (ASan + UBSan) and runs each for DURATION seconds,
# all targets in parallel. Seeds: the example designs and the malformed corpus (the analysis
# fuzzer starts from an empty corpus: its input steers the design generator).
# Usage: tests/fuzz/run-fuzzers.sh DURATION [BUILD_DIR]
# Crashing inputs land in BUILD_DIR/artifacts/<target>/; logs in BUILD_DIR/logs/.
set -eu
[ $# -ge 1 ] || { echo "usage: $0 DURATION_SECONDS [BUILD_DIR]" >&2; exit 64; }
duration=$1
src=$(cd "$(dirname "$0")/../.." && pwd)
build=${2:-$src/build/fuzz}
jobs=${FUZZ_BUILD_JOBS:-2}

cmake -S "$src" -B "$build" -G Ninja -DCMAKE_BUILD_TYPE=Release \
    -DCMAKE_CXX_COMPILER=clang++ \
    -DCMAKE_CXX_FLAGS="-g -fsanitize=fuzzer-no-link,address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer" \
    -DLOOPSKETCH_BUILD_FUZZERS=ON -DLOOPSKETCH_BUILD_TESTS=OFF \
    -DLOOPSKETCH_BUILD_GUI=OFF -DLOOPSKETCH_BUILD_BENCHMARKS=OFF >/dev/null
cmake --build "$build" -j"$jobs" --target design_fuzzer value_fuzzer cli_fuzzer analysis_fuzzer

mkdir -p "$build/logs"
for target in design_fuzzer value_fuzzer; do
    mkdir -p "$build/corpus/$target" "$build/artifacts/$target"
    cp "$src"/resources/designs/*.loopsketch "$build/corpus/$target/"
    for f in "$src"/tests/data/malformed/*.loopsketch; do
        cp "$f" "$build/corpus/$target/malformed-$(basename "$f")"
    done
done
# Short value texts in the forms the parser accepts, so the value fuzzer starts near them.
i=0
for v in 4k7 R47 2M2 1R0 4n7 2p2 "10 kΩ" "2.2 µF" "1.5 MHz" 100dB -230k 1% 0.5 "3.3 mH" 1e-12 "47 V/V"; do
    i=$((i + 1))
    printf '%s' "$v" >"$build/corpus/value_fuzzer/seed-$i"
done

# Argument lists (NUL between arguments) near the real ones.
mkdir -p "$build/corpus/cli_fuzzer" "$build/artifacts/cli_fuzzer"
i=0
for a in "analyze|demo|--json" "sweep|demo|--csv|out.csv" "spread|demo|--trials|400|--seed|17" \
    "suggest|demo|--parts|RF,CF|--decades|2|--best|5" "export|demo|--pdf|a.pdf|--svg|dir" \
    "--help" "--version" "analyze|demo|--candidate|Fast|--out|-"; do
    i=$((i + 1))
    printf '%s' "$a" | tr '|' '\000' >"$build/corpus/cli_fuzzer/seed-$i"
done

pids=""
for target in design_fuzzer value_fuzzer cli_fuzzer analysis_fuzzer; do
    mkdir -p "$build/corpus/$target" "$build/artifacts/$target"
    maxlen=65536
    [ "$target" = value_fuzzer ] && maxlen=256
    [ "$target" = cli_fuzzer ] && maxlen=1024
    # The analysis fuzzer's bytes steer the design generator: 8 bytes a choice.
    [ "$target" = analysis_fuzzer ] && maxlen=4096
    "$build/tests/fuzz/$target" -max_total_time="$duration" -max_len="$maxlen" -timeout=10 \
        -rss_limit_mb=2048 -print_final_stats=1 \
        -artifact_prefix="$build/artifacts/$target/" "$build/corpus/$target" \
        >"$build/logs/$target.log" 2>&1 &
    pids="$pids $!"
done
status=0
for pid in $pids; do
    wait "$pid" || status=1
done
for target in design_fuzzer value_fuzzer cli_fuzzer analysis_fuzzer; do
    echo "== $target"
    grep -E '^stat::number_of_executed_units|^stat::peak_rss_mb|ERROR|SUMMARY' \
        "$build/logs/$target.log" || true
    ls "$build/artifacts/$target"
done
exit $status
