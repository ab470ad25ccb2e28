#!/usr/bin/env bash
# Set up (first time) and run the whole test suite headless.
set -uo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh --test || exit 1
export QT_QPA_PLATFORM=offscreen PYQTGRAPH_QT_LIB=PySide6
unset PYTHONDONTWRITEBYTECODE
.venv/bin/python -m ruff check . || exit 1
.venv/bin/python -m mypy || exit 1   # the core; configured in pyproject.toml [tool.mypy]
.venv/bin/python -m pytest "$@"
rc=$?
if [ "$rc" -eq 5 ]; then
  echo "test.sh: pytest collected no tests; that is a failure for this project" >&2
  exit 1
fi
exit "$rc"
