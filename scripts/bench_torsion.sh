#!/usr/bin/env bash
# Torsion benchmark (issue 6): time per profile of the torsion solver at default accuracy,
# its memory, and the batch's use of both cores.
#
# Usage: scripts/bench_torsion.sh [N]     (N typical drawings, default 500)
#
# Builds release, then measures, on one thread (examples/torsion_times.rs times
# `torsion_props` alone, after reading, chaining and nesting):
#   typical  the first N drawings of the throughput benchmark's generator
#            (scripts/bench_gen.py, seed 1: star- and gear-like outlines of 50-2000
#            segments with 0-12 holes);
#   heavy    10 profiles of about 2000 boundary segments with 10 holes, and a simple tube
#            (scripts/torsion_gen.py);
# with peak memory (maximum resident set size) of each run; then the whole
# `sectio measure --torsion` over the typical drawings with -j 1 and -j 2 (wall clock,
# best of 3), for the scaling of the batch.
# Targets (issue 6): typical median under 20 ms, a 2000-segment profile under 0.2 s, on one
# core. Figures vary with the machine's load: compare runs made side by side.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."

N="${1:-500}"
OUT=bench-out/torsion
if ! [[ "$N" =~ ^[0-9]+$ ]] || [[ "$N" -eq 0 ]]; then
    echo "usage: scripts/bench_torsion.sh [N]   (N a positive number of drawings)" >&2
    exit 2
fi

echo "== build (release)"
cargo build --release --example torsion_times --bin sectio

echo "== drawings"
rm -rf "$OUT"
mkdir -p "$OUT"
python3 scripts/bench_gen.py "$N" "$OUT/typical" --seed 1 >/dev/null
python3 scripts/torsion_gen.py "$OUT/heavy" --seed 1
echo "$N typical drawings in $OUT/typical; heavy profiles and a tube in $OUT/heavy"

# peak_rss CMD...: run CMD, print its output, then its peak memory in MB.
peak_rss() {
    /usr/bin/time -f "%M" -o "$OUT/rss" "$@"
    awk '{printf "peak memory: %.0f MB\n", $1 / 1024}' "$OUT/rss"
}

echo
echo "== typical drawings, one thread"
peak_rss target/release/examples/torsion_times "$OUT/typical" --layer PROFILE

echo
echo "== heavy profiles and a tube, one thread"
peak_rss target/release/examples/torsion_times "$OUT/heavy" --layer PROFILE --each

echo
echo "== measure --torsion over the typical drawings, -j 1 and -j 2 (best of 3)"
declare -A best
for j in 1 2; do
    best[$j]=""
    for _ in 1 2 3; do
        t0=$(date +%s.%N)
        target/release/sectio measure "$OUT/typical" --layer PROFILE --torsion -j "$j" \
            -o "$OUT/result-j$j.csv" 2>/dev/null || [[ $? -eq 1 ]]
        t=$(echo "$(date +%s.%N) - $t0" | bc)
        if [[ -z "${best[$j]}" ]] || (($(echo "$t < ${best[$j]}" | bc))); then
            best[$j]=$t
        fi
    done
    printf -- "-j %d: %.2f s\n" "$j" "${best[$j]}"
done
printf "speed-up with two cores: %.2fx\n" "$(echo "${best[1]} / ${best[2]}" | bc -l)"
if cmp -s "$OUT/result-j1.csv" "$OUT/result-j2.csv"; then
    echo "outputs of -j 1 and -j 2 are identical"
else
    echo "outputs of -j 1 and -j 2 DIFFER" >&2
    exit 1
fi
