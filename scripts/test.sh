#!/usr/bin/env bash
# The README's test command: install Chromium when it is missing (the HTML report's browser
# tests load the page in it; Debian's `chromium` package), then run every test.
# Extra arguments go to `cargo test` (e.g. `bash scripts/test.sh --test report`); without
# them the benchmark target (benches/stages.rs) is also run once, untimed, as a check.
set -euo pipefail
cd "$(dirname "$0")/.."

if [ -z "${SECTIO_CHROMIUM:-}" ] && ! command -v chromium >/dev/null; then
  echo "== installing chromium (for tests/report.rs)"
  if [ "$(id -u)" -eq 0 ]; then
    as_root=()
  elif command -v sudo >/dev/null; then
    as_root=(sudo)
  else
    echo "the browser tests need Chromium: run 'apt-get install chromium' as root, or set SECTIO_CHROMIUM" >&2
    exit 1
  fi
  "${as_root[@]}" apt-get update -qq
  DEBIAN_FRONTEND=noninteractive "${as_root[@]}" apt-get install -y -qq chromium
fi

cargo test --locked "$@"

# The `cargo bench` target, once per drawing without timing: its generator and checks.
if [ "$#" -eq 0 ]; then
  cargo test --locked --bench stages
fi
