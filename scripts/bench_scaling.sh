#!/usr/bin/env bash
# Scaling benchmark (issue 10): chaining and nesting time per segment for one drawing of
# 1 000 to 1 000 000 loose LINE segments (scripts/bench_scaling.py), one thread, from
# `sectio measure --timings -j 1` (best of 5 per size: the host's load moves single runs by
# up to 2x). Time per segment should stay within 2x across the range for n log n work.
#
# Usage: scripts/bench_scaling.sh [MAX]     (largest size, default 1000000)
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."
MAX="${1:-1000000}"
OUT=bench-out/scaling
mkdir -p "$OUT"
echo "== build (release)"
cargo build --release --quiet
BIN=target/release/sectio
printf "%10s %12s %12s %14s %14s %14s\n" segments "chain s" "nest s" "chain ns/seg" "nest ns/seg" "all ns/seg"
for n in 1000 10000 100000 1000000; do
    [ "$n" -le "$MAX" ] || break
    f="$OUT/scaling-$n.dxf"
    [ -f "$f" ] || python3 scripts/bench_scaling.py "$n" "$f" >/dev/null
    segs=$(( n / 16 * 16 ))
    best_c=""; best_n=""; best_a=""
    for _ in 1 2 3 4 5; do
        t=$("$BIN" measure "$f" --timings -j 1 -o "$OUT/out.csv" 2>&1 >/dev/null)
        c=$(echo "$t" | awk '/^  chain /{print $2}')
        ne=$(echo "$t" | awk '/crossings and nesting/{print $4}')
        al=$(echo "$t" | awk '/all steps/{print $3}')
        if [ -z "$best_c" ] || awk "BEGIN{exit !($c + $ne < $best_c + $best_n)}"; then
            best_c=$c; best_n=$ne; best_a=$al
        fi
    done
    awk -v s="$segs" -v c="$best_c" -v ne="$best_n" -v a="$best_a" 'BEGIN{printf "%10d %12.4f %12.4f %14.1f %14.1f %14.1f\n", s, c, ne, c/s*1e9, ne/s*1e9, a/s*1e9}'
done
