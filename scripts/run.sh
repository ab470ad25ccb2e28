#!/usr/bin/env bash
# Set up (first time) and open ventset with the demo patient. Extra arguments go to `ventset`,
# e.g. `bash scripts/run.sh plan --species dog --mass 20 kg`.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
exec .venv/bin/ventset "$@"
