#!/usr/bin/env bash
# The levelfield benchmark, from nothing: a venv of its own with pandas and polars, a release
# build, then bench/run.py on the sizes given (default 1000000). Not part of the tests.
#   bash bench/run.sh 1000000 10000000 50000000
set -euo pipefail
cd "$(dirname "$0")/.."
VENV="${LEVELFIELD_BENCH_VENV:-/var/tmp/levelfield-bench-venv}"
if [ ! -x "$VENV/bin/python" ]; then
  python3 -m venv "$VENV"
  "$VENV/bin/pip" install --quiet pandas polars numpy
fi
if [ ! -x /usr/bin/time ]; then
  apt-get install -y time >/dev/null
fi
cargo build --release --locked
export LEVELFIELD_BIN="${LEVELFIELD_BIN:-${CARGO_TARGET_DIR:-target}/release/levelfield}"
"$VENV/bin/python" bench/run.py "$@"
