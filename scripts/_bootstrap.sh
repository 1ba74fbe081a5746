# Sourced by scripts/serve and scripts/test: make .venv with stepfence installed.
# Re-installs only when pyproject.toml changed since the last bootstrap.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
VENV="$ROOT/.venv"
PY="${PYTHON:-python3}"
if [ ! -x "$VENV/bin/python" ]; then
    "$PY" -m venv "$VENV"
fi
STAMP="$VENV/.stepfence-installed"
WANT="$(sha256sum "$ROOT/pyproject.toml" | cut -d' ' -f1)"
if [ ! -f "$STAMP" ] || [ "$(cat "$STAMP")" != "$WANT" ]; then
    "$VENV/bin/python" -m pip install --quiet --upgrade pip >/dev/null 2>&1 || true
    "$VENV/bin/python" -m pip install --quiet -e "$ROOT[test]"
    echo "$WANT" > "$STAMP"
fi
