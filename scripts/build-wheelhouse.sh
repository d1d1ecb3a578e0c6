#!/usr/bin/env bash
# Build a wheelhouse for machines that reach no package index.
#
#   scripts/build-wheelhouse.sh [DIR]        (default DIR: ./wheelhouse)
#
# Run it on a machine that reaches the index (or has the wheels in pip's cache),
# with the same operating system, CPU type and Python minor version as the
# target. It writes a wheel of tdmtui and of every dependency into DIR. Copy DIR
# to the target and install with no index:
#
#   python3 -m venv ~/tdmtui-env
#   ~/tdmtui-env/bin/pip install --no-index --find-links DIR tdmtui
#
# PYTHON selects the interpreter (default: python3).
set -euo pipefail
cd "$(dirname "$0")/.."
out="${1:-wheelhouse}"
py="${PYTHON:-python3}"
mkdir -p "$out"
"$py" -m pip wheel --quiet --disable-pip-version-check --wheel-dir "$out" .
# Check that the wheelhouse is complete on its own: resolve tdmtui from it alone.
check="$(mktemp -d)"
trap 'rm -rf "$check"' EXIT
"$py" -m pip download --quiet --disable-pip-version-check --no-index --find-links "$out" \
    --dest "$check" tdmtui
echo "wheelhouse ready: $(ls "$out" | wc -l) wheels in $out"
