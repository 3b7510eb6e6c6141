#!/usr/bin/env bash
# Checks that the Python module's build (python/, built by maturin) resolves every shared
# dependency with the same features as the workspace test build (`cargo test --workspace`).
# Cargo compiles a crate once per feature set, so any difference makes CI compile the shared
# dependencies (and everything above them) a second time for the extension: several minutes.
# Prints the crates whose features differ and exits 1 if there are any; runs no compiler.
set -euo pipefail
cd "$(dirname "$0")/.."
features() {
  # one line per package: name@version [features]; lines marked (*) repeat an earlier entry
  cargo tree --quiet "$@" -f '{p} [{f}]' --prefix none | grep -v '(\*)' \
    | awk '{print $1"@"$2" "$NF}' | sort -u
}
tests=$(mktemp); module=$(mktemp)
trap 'rm -f "$tests" "$module"' EXIT
features --workspace -e normal,build,dev >"$tests"
features -p ladderfan-python -e normal,build >"$module"
drift=$(join -j1 "$tests" "$module" | awk '$2 != $3')
if [ -n "$drift" ]; then
  echo "feature-drift: these crates get other features in the Python build than in the tests" >&2
  echo "(name@version, test build, Python build); align them in python/Cargo.toml:" >&2
  echo "$drift" >&2
  exit 1
fi
echo "feature-drift: the Python build and the test build resolve the same features"
