#!/usr/bin/env bash
# Throughput benchmark: `sectio measure` against the parse floor and the `dxf` crate.
#
# Usage: scripts/bench.sh [N]        (N drawings, default 2000, about 77 MB)
#
# Builds release, generates N synthetic drawings into bench-out/dxf (kept and reused while N,
# the seed and the generator are unchanged), then times five runs of each, best of 5 by
# wall clock:
#   floor    examples/parse_floor.rs: read, split code/value pairs, parse codes and floats;
#   dxf      examples/dxf_load.rs: load every file with the dxf crate;
#   measure  target/release/sectio measure bench-out/dxf -o bench-out/result.csv.
# Environment: SEED (default 1); MEASURE_ARGS (default "--layer PROFILE" when `measure`
# has a --layer option: every bench sheet keeps its profile on PROFILE, and its title
# frame is a closed loop of LINEs on TITLE).
# Targets, printed beside the figures: measure within 1.5x the floor's time, and at least
# 5x faster than the dxf crate's load. MB are 10^6 bytes.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."

N="${1:-2000}"
SEED="${SEED:-1}"
OUT=bench-out
DXF_DIR="$OUT/dxf"
RUNS=5

if ! [[ "$N" =~ ^[0-9]+$ ]] || [[ "$N" -eq 0 ]]; then
    echo "usage: scripts/bench.sh [N]   (N a positive number of drawings)" >&2
    exit 2
fi

echo "== build (release)"
cargo build --release --examples --bins

echo "== drawings"
mkdir -p "$OUT"
stamp="n=$N seed=$SEED generator=$(cat scripts/bench_gen.py scripts/make_demo.py | cksum | cut -d' ' -f1)"
if [[ -f "$OUT/stamp" && "$(cat "$OUT/stamp")" == "$stamp" && -d "$DXF_DIR" ]]; then
    echo "reusing $DXF_DIR ($stamp)"
else
    rm -rf "$DXF_DIR" "$OUT/stamp"
    python3 scripts/bench_gen.py "$N" "$DXF_DIR" --seed "$SEED"
    echo "$stamp" >"$OUT/stamp"
fi
files=$(find "$DXF_DIR" -name '*.dxf' | wc -l)
bytes=$(find "$DXF_DIR" -name '*.dxf' -printf '%s\n' | awk '{s += $1} END {printf "%d", s}')
mb=$(awk -v b="$bytes" 'BEGIN {printf "%.1f", b / 1e6}')
echo "$files files, $mb MB"

# best_of NAME CMD...: runs CMD $RUNS times, keeps the fastest wall-clock time in
# secs[NAME] and the output of that run in $OUT/NAME.log. A run that exits with a status
# above 1 (1 is `measure`'s "some profiles failed") stops the timing of NAME: secs[NAME]
# stays unset and status[NAME] says why, so the table shows it and the script goes on.
declare -A secs status
best_of() {
    local name=$1 best="" t0 t1 t rc
    shift
    for _ in $(seq "$RUNS"); do
        t0=$(date +%s.%N)
        rc=0
        "$@" >"$OUT/$name.run.log" 2>&1 || rc=$?
        t1=$(date +%s.%N)
        if [[ $rc -gt 1 ]]; then
            status[$name]="failed (exit $rc)"
            echo "$name failed (exit $rc); last lines of its output:" >&2
            tail -n 5 "$OUT/$name.run.log" >&2
            return 0
        fi
        t=$(awk -v a="$t0" -v b="$t1" 'BEGIN {printf "%.4f", b - a}')
        if [[ -z "$best" ]] || awk -v t="$t" -v b="$best" 'BEGIN {exit !(t < b)}'; then
            best=$t
            mv "$OUT/$name.run.log" "$OUT/$name.log"
        fi
        status[$name]=$([[ $rc -eq 0 ]] && echo ok || echo "ok (exit 1: some profiles failed)")
    done
    rm -f "$OUT/$name.run.log"
    secs[$name]=$best
    echo "$name: best of $RUNS ${best}s  | $(tail -n 1 "$OUT/$name.log")"
}

echo "== timing (best of $RUNS, wall clock)"
best_of floor target/release/examples/parse_floor "$DXF_DIR"
best_of dxf target/release/examples/dxf_load "$DXF_DIR"

sectio=target/release/sectio
measure_rows=""
rm -f "$OUT/result.csv"
# A binary without the subcommand (or a stub that prints nothing) counts as missing.
if [[ -x "$sectio" ]] && help=$("$sectio" measure --help 2>&1) && [[ -n "$help" ]]; then
    if [[ -z "${MEASURE_ARGS+set}" ]]; then
        MEASURE_ARGS=""
        if grep -q -- '--layer' <<<"$help"; then
            MEASURE_ARGS="--layer PROFILE"
        fi
    fi
    # shellcheck disable=SC2086  # MEASURE_ARGS is a list of flags
    best_of measure "$sectio" measure "$DXF_DIR" -o "$OUT/result.csv" $MEASURE_ARGS
    if [[ -n "${secs[measure]:-}" && ! -f "$OUT/result.csv" ]]; then
        unset 'secs[measure]'
        status[measure]="missing (ran, but wrote no $OUT/result.csv)"
    elif [[ -n "${secs[measure]:-}" ]]; then
        # Data rows, and rows whose status column (when there is one) is not ok.
        counts=$(python3 - "$OUT/result.csv" <<'EOF' || echo "? ?"
import csv, sys
with open(sys.argv[1], newline="") as f:
    rows = list(csv.DictReader(f))
status = [r.get("status") for r in rows]
print(len(rows), sum(1 for s in status if s not in (None, "", "ok")))
EOF
        )
        read -r measure_rows measure_errors <<<"$counts"
        [[ "$measure_rows" =~ ^[0-9]+$ ]] || measure_rows=""
        echo "measure: ${measure_rows:-?} rows, $measure_errors not ok (args: ${MEASURE_ARGS:-none})"
        status[measure]="${status[measure]}; $measure_errors of ${measure_rows:-?} rows not ok"
    fi
else
    status[measure]="missing ($sectio measure is not there yet)"
fi

echo
echo "== results: $files files, $mb MB, seed $SEED"
printf '%-8s %10s %10s %12s %8s  %s\n' step seconds files/s profiles/s MB/s status
row() {
    local name=$1 profiles=$2 s=${secs[$1]:-}
    if [[ -z "$s" ]]; then
        printf '%-8s %10s %10s %12s %8s  %s\n' "$name" - - - - "${status[$name]:-missing}"
        return
    fi
    awk -v n="$name" -v s="$s" -v f="$files" -v p="$profiles" -v b="$bytes" -v st="${status[$name]}" \
        'BEGIN {printf "%-8s %10.3f %10.0f %12s %8.1f  %s\n", n, s, f / s, (p == "" ? "-" : sprintf("%.0f", p / s)), b / 1e6 / s, st}'
}
# The generator writes one profile per drawing; measure counts the rows it wrote.
row floor "$files"
row dxf "$files"
row measure "$measure_rows"

echo
ratio() { awk -v a="$1" -v b="$2" 'BEGIN {printf "%.2f", a / b}'; }
if [[ -n "${secs[measure]:-}" && -n "${secs[floor]:-}" && -n "${secs[dxf]:-}" ]]; then
    r1=$(ratio "${secs[measure]}" "${secs[floor]}")
    r2=$(ratio "${secs[dxf]}" "${secs[measure]}")
    v1=$(awk -v r="$r1" 'BEGIN {print (r <= 1.5 ? "met" : "MISSED")}')
    v2=$(awk -v r="$r2" 'BEGIN {print (r >= 5 ? "met" : "MISSED")}')
    printf 'measure/floor     %6s   target <= 1.5   %s\n' "$r1" "$v1"
    printf 'dxf-load/measure  %6s   target >= 5     %s\n' "$r2" "$v2"
else
    echo "ratios need all three timings; measure: ${status[measure]:-missing}"
fi
if [[ -n "${secs[floor]:-}" && -n "${secs[dxf]:-}" ]]; then
    printf 'dxf-load/floor    %6s   (for reference)\n' "$(ratio "${secs[dxf]}" "${secs[floor]}")"
fi
