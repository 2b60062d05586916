#!/usr/bin/env bash
# Fuzz the readers and the geometry pipeline with cargo-fuzz (libFuzzer, nightly toolchain).
#
#   bash scripts/fuzz.sh [SECONDS] [TARGET...]
#
# SECONDS (default 60) is the time per target; the targets default to all three
# (dxf_reader, svg_reader, pipeline; see fuzz/src/targets.rs). Seeds the corpora in
# fuzz/corpus/TARGET from the fixtures (fixtures/**/*.dxf, *.svg), fuzz/seeds and, when it is
# there, ../shared/corpus/real (files under 100 KB); installs cargo-fuzz when missing.
# Each run stops at the first crash, a run longer than 10 s (-timeout) or more than
# 2048 MB (-rss_limit_mb); libFuzzer writes the input to fuzz/artifacts/TARGET/ and this
# script goes on with the next target, then exits with status 1. Logs: fuzz/logs/TARGET.log.
#
# The fuzz crate builds in fuzz/target, or in $CARGO_TARGET_DIR/fuzz when that is set.
# Environment: SANITIZER (default none: the sectio library's only unsafe code is a prefetch
# hint that reads nothing, and runs without AddressSanitizer are faster; SANITIZER=address
# also checks the dependencies' unsafe code), JOBS (default 1: parallel fuzzing processes
# per target).
# The corpora, artifacts and logs are not committed (fuzz/.gitignore).
set -euo pipefail
cd "$(dirname "$0")/.."

seconds="${1:-60}"
shift || true
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=(dxf_reader svg_reader pipeline)
sanitizer="${SANITIZER:-none}"
jobs="${JOBS:-1}"

# Nightly builds apart from the stable ones: cargo-fuzz's fuzz/target, or a fuzz/
# folder of CARGO_TARGET_DIR when that is set.
if [ -n "${CARGO_TARGET_DIR:-}" ]; then
    export CARGO_TARGET_DIR="$CARGO_TARGET_DIR/fuzz"
fi

if ! rustup toolchain list | grep -q '^nightly'; then
    rustup toolchain install nightly --profile minimal
fi
if ! command -v cargo-fuzz >/dev/null; then
    cargo install cargo-fuzz --locked
fi

# Seed the corpora: copies of the drawings (libFuzzer adds what it finds beside them).
seed() {
    local dir="fuzz/corpus/$1" pattern="$2"
    mkdir -p "$dir"
    {
        find fixtures "fuzz/seeds/$1" -type f -iname "$pattern"
        if [ -d ../shared/corpus/real ]; then
            find ../shared/corpus/real -type f -iname "$pattern" -size -100k
        fi
    } | while read -r f; do
        cp "$f" "$dir/seed-$(basename "$f")"
    done
}
seed dxf_reader '*.dxf'
seed svg_reader '*.svg'
mkdir -p fuzz/corpus/pipeline fuzz/logs

failed=()
for t in "${targets[@]}"; do
    # Options after `--` go to libFuzzer, which runs in fuzz/.
    opts=(-max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -print_final_stats=1)
    case "$t" in
        dxf_reader) opts+=(-dict=dicts/dxf.dict) ;;
        svg_reader) opts+=(-dict=dicts/svg.dict) ;;
        # Soups of up to a few dozen operations from the start: libFuzzer otherwise grows
        # the input length slowly (30 bytes after ten minutes), and a soup that short holds
        # only a few segments.
        pipeline) opts+=(-max_len=512 -len_control=0) ;;
    esac
    # With -jobs libFuzzer writes each process's output to fuzz/fuzz-N.log instead.
    [ "$jobs" -le 1 ] || opts+=(-jobs="$jobs" -workers="$jobs")
    echo "== $t: ${seconds} s"
    if ! (cd fuzz && cargo +nightly fuzz run --sanitizer "$sanitizer" "$t" -- "${opts[@]}") \
        2>&1 | tee "fuzz/logs/$t.log"; then
        failed+=("$t")
    fi
done

if [ ${#failed[@]} -gt 0 ]; then
    echo "fuzz: failures in ${failed[*]}; inputs in fuzz/artifacts/" >&2
    exit 1
fi
echo "fuzz: no crash, hang or memory blow-up in ${targets[*]} (${seconds} s each)"
