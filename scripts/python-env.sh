#!/usr/bin/env bash
# Create (or reuse) the local Python venv with the outside reference packages the cross-checks
# compare against. Prints the venv's python path on the last line.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
venv="$root/.venv"
reqs="$root/tests/crosscheck/requirements.txt"
stamp="$venv/.requirements.sha"
want="$(sha256sum "$reqs" | cut -d' ' -f1)"
if [ ! -x "$venv/bin/python" ] || [ "$(cat "$stamp" 2>/dev/null)" != "$want" ]; then
  echo "setting up Python reference packages in $venv" >&2
  python3 -m venv "$venv"
  "$venv/bin/python" -m pip install --quiet --upgrade pip >&2
  "$venv/bin/python" -m pip install --quiet -r "$reqs" >&2
  echo "$want" > "$stamp"
fi
echo "$venv/bin/python"
