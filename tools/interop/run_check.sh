#!/usr/bin/env bash
# Check a turbid result file with h5py and xarray (tools/interop/check_output.py).
#
# Usage: tools/interop/run_check.sh RESULT.nc [EXPECTED.json]
#
# Creates the virtual environment .venv-interop at the repository root on
# first use (Python from $PYTHON, default python3) and installs
# tools/interop/requirements.txt into it; reinstalls when that file changes.
set -euo pipefail

if [ $# -lt 1 ] || [ $# -gt 2 ]; then
    echo "usage: $0 RESULT.nc [EXPECTED.json]" >&2
    exit 2
fi

here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/../.." && pwd)"
venv="$repo/.venv-interop"
requirements="$here/requirements.txt"
stamp="$venv/.requirements.sha256"

if [ ! -x "$venv/bin/python" ]; then
    echo "run_check: creating $venv" >&2
    "${PYTHON:-python3}" -m venv "$venv"
fi
want="$(sha256sum "$requirements" | cut -d' ' -f1)"
if [ "$(cat "$stamp" 2>/dev/null || true)" != "$want" ]; then
    echo "run_check: installing $(basename "$requirements") into $venv" >&2
    "$venv/bin/python" -m pip install --quiet --disable-pip-version-check -r "$requirements"
    echo "$want" > "$stamp"
fi

exec "$venv/bin/python" "$here/check_output.py" "$@"
