#!/usr/bin/env bash
# Side-by-side timing of ladderfan against numpy/scipy on the same matrices, measured in one run.
#
# Usage: scripts/compare.sh [--quick] [--skip-window] [--dense-sizes 500,1000,2000,4000]
#                          [--before-bin PATH]
#   --quick        smaller sizes (a smoke test of the script, not for the docs)
#   --skip-window  do not time the window solver at N = 1e5 / 1e6 even if it exists
#   --dense-sizes  dense sector sizes (multiples of 4; default 500,1000,2000,4000, with --quick
#                  200,400): at each, real symmetric and complex Hermitian, values only and
#                  with vectors, numpy (LAPACK) against numeric::dense::eigh, ratio and residuals
#
# What it does:
#  * creates a Python venv under target/compare-venv and installs numpy and scipy with pip;
#  * installs GNU time (/usr/bin/time, Debian package `time`) if missing, for peak memory;
#  * pins OpenBLAS / OpenMP / MKL to one thread (two OpenBLAS threads on a shared 2-core machine
#    ran 3-4x slower when measured; one thread is also what one ladderfan sector solve uses);
#  * with --before-bin PATH (a release `ladderfan` built from an older commit, e.g. 852de3c, outside
#    this script: `git worktree add ../old 852de3c && cargo build --release --bin ladderfan` there)
#    also builds this checkout's release `ladderfan` and adds the row "3D sweep before/after": the
#    same `dos --kz-integrate` Fermi sweep (Weyl node, 200 fields) by both, alternating; without
#    --before-bin that row is left out (the old commit is never built here);
#  * builds the bench target tools/compare_probe.rs in release mode (its executable path is
#    read from cargo's JSON messages; CARGO_TARGET_DIR is honoured) and runs scripts/compare.py, which checks
#    its numpy matrix against `ladderfan export`, times both sides, checks that the eigenvalues
#    agree, and prints the table.
set -euo pipefail
cd "$(dirname "$0")/.."
VENV=target/compare-venv
if [ ! -x "$VENV/bin/python" ]; then
    python3 -m venv "$VENV"
fi
if ! "$VENV/bin/python" -c 'import numpy, scipy' 2>/dev/null; then
    "$VENV/bin/pip" install --quiet --disable-pip-version-check numpy scipy
fi
if [ ! -x /usr/bin/time ]; then
    if command -v apt-get >/dev/null; then
        SUDO=""; [ "$(id -u)" -ne 0 ] && SUDO="sudo"
        $SUDO apt-get install -y -qq time >/dev/null
    else
        echo "compare.sh: /usr/bin/time (GNU time) is missing; install it to get peak memory" >&2
    fi
fi
export OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 MKL_NUM_THREADS=1
# the executable of a cargo target, from the compiler-artifact message of its build
executable() {
    "$VENV/bin/python" -c 'import json, sys
name = sys.argv[1]
for line in sys.stdin:
    m = json.loads(line)
    if m.get("reason") == "compiler-artifact" and m["target"]["name"] == name and m.get("executable"):
        print(m["executable"])' "$1"
}
PROBE=$(cargo build --release --quiet --bench compare_probe --message-format=json | executable compare_probe)
# the CLI only exports the matrix for the cross-check (not timed): the dev build is enough
LADDERFAN=$(cargo build --quiet --bin ladderfan --message-format=json | executable ladderfan)
if [ -z "$PROBE" ] || [ -z "$LADDERFAN" ]; then
    echo "compare.sh: cargo did not report the compare_probe or ladderfan executable" >&2
    exit 1
fi
AFTER=()
for arg in "$@"; do
    if [ "$arg" = "--before-bin" ] || [[ "$arg" == --before-bin=* ]]; then
        AFTER_BIN=$(cargo build --release --quiet --bin ladderfan --message-format=json | executable ladderfan)
        AFTER=(--after-bin "$AFTER_BIN")
    fi
done
exec "$VENV/bin/python" scripts/compare.py --probe "$PROBE" --ladderfan "$LADDERFAN" "${AFTER[@]}" "$@"
