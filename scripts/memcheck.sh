#!/usr/bin/env bash
# Calibration of the memory estimate (src/memory.rs) against the measured peak resident set.
#
# Runs each path (levels, levels --count 0, fan, dos, optics, converge, export) at three sizes and prints the
# estimate, the peak RSS (GNU time %M, or bash's own getrusage fallback below) and their ratio.
# The estimate is read from the refusal message of the same command line run with
# --memory-limit-mib 1 ("needs about N MiB"), so it is exactly what the guard compares.
#
# usage: scripts/memcheck.sh [path/to/ladderfan]   (default: target/debug/ladderfan)
set -euo pipefail
BIN=${1:-${CARGO_TARGET_DIR:-target}/debug/ladderfan}
OUT=$(mktemp -d)
trap 'rm -rf "$OUT"' EXIT
if [ ! -x /usr/bin/time ]; then
    echo "memcheck: /usr/bin/time (GNU time) is needed for the peak resident set" >&2
    exit 2
fi
run() {
    local path=$1
    shift
    local est peak ratio
    est=$("$BIN" "$@" --memory-limit-mib 1 2>&1 >/dev/null | sed -n 's/.*needs about \([0-9]*\) MiB.*/\1/p' | head -1) || true
    /usr/bin/time -f %M -o "$OUT/time" "$BIN" "$@" >/dev/null 2>"$OUT/err" || {
        echo "memcheck: $path failed: $(tail -1 "$OUT/err")" >&2
        return 1
    }
    peak=$(tail -1 "$OUT/time")             # KiB
    peak_mib=$(awk -v k="$peak" 'BEGIN { printf "%.1f", k / 1024 }')
    ratio=$(awk -v e="$est" -v k="$peak" 'BEGIN { printf "%.2f", e * 1024 / k }')
    printf '%-9s %-60s estimate %7s MiB  peak %8s MiB  ratio %s\n' "$path" "$*" "$est" "$peak_mib" "$ratio"
}
cd "$OUT"
for n in 300000 1000000 3000000; do run levels levels --builtin dirac2d --cutoff $n; done
for n in 100000 300000 1000000; do run levels-all levels --builtin dirac2d --cutoff $n --count 0; done
for n in 10000 30000 100000; do run fan fan --builtin dirac2d --b-max 5 --cutoff $n --points 20; done
for n in 30000 100000 300000; do run dos dos --builtin dirac2d --cutoff $n; done
for n in 10000 30000 100000; do run optics optics --builtin dirac2d --cutoff $n; done
for n in 100000 300000 1000000; do run converge converge --builtin dirac2d --cutoff $n; done
for n in 100000 300000 1000000; do run export export --builtin dirac2d --cutoff $n --out "$OUT"; done
