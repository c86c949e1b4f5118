#!/usr/bin/env bash
# Run the whole suite with every dependency at its declared minimum version.
#
# Builds a virtual environment, installs relbasis with its test and cluster extras under the
# exact pins of .ci/minimum-versions.txt (pip constraints), checks that the pins took effect,
# and runs `python -m pytest` from the repository root.  Nothing outside VENV_DIR is installed.
#
#   scripts/check_minimum_versions.sh [VENV_DIR] [-- PYTEST_ARGS...]
#
# VENV_DIR defaults to a new temporary directory, removed afterwards.  PYTHON picks the
# interpreter for the venv (default python3; the floors are measured on Python 3.11).
# Installing takes about 1.5 minutes with a warm pip cache; the suite as long as usual.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
constraints="$root/.ci/minimum-versions.txt"
venv=""
if [[ $# -gt 0 && "$1" != "--" ]]; then venv="$1"; shift; fi
if [[ $# -gt 0 && "$1" == "--" ]]; then shift; fi
if [[ -z "$venv" ]]; then
    scratch="$(mktemp -d)"
    trap 'rm -rf "$scratch"' EXIT
    venv="$scratch/venv"
fi

"${PYTHON:-python3}" -m venv "$venv"
py="$venv/bin/python"
"$py" -m pip install --quiet -c "$constraints" "$root[test,cluster]"

# pip may satisfy a constraint with an already installed version only if it is the pinned one;
# still, say what is installed and stop if any pin did not take effect.
"$py" - "$constraints" <<'PY'
import sys
from importlib.metadata import version

bad = []
for line in open(sys.argv[1], encoding="utf-8"):
    line = line.split("#")[0].strip()
    if not line:
        continue
    name, want = line.split("==")
    have = version(name)
    print(f"{name:14} {have}")
    if have != want:
        bad.append(f"{name} {have} (pinned {want})")
print(f"python         {sys.version.split()[0]}")
if bad:
    sys.exit("not at the pinned minimum: " + ", ".join(bad))
PY

cd "$root"
start=$(date +%s)
status=0
"$py" -m pytest -p no:cacheprovider "$@" || status=$?
echo "minimum versions: pytest exit status $status after $(( $(date +%s) - start )) s"
exit "$status"
