#!/usr/bin/env bash
# `make demo`: the main job on bundled invented data (PATH has the project's .venv first).
set -euo pipefail
cd "$(dirname "$0")/.."
python demo/demo.py
