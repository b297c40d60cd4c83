#!/usr/bin/env bash
# Times planner/gp's fit against scikit-learn's on the same data, kernel and
# restarts, and prints a table with the ratio. Needs Debian's python3-sklearn:
#   apt-get install -y python3-sklearn
# Usage: scripts/gp-vs-sklearn.sh [SIZES]   (SIZES like 50x2,200x6; default below)
# REPEATS (default 5) and RESTARTS (default 1) may be set in the environment.
set -euo pipefail
cd "$(dirname "$0")/.."
sizes="${1:-50x2,50x6,200x2,200x6,300x6,1000x2,1000x6}"
bin="$(mktemp -d)/fitclock"
go build -o "$bin" ./scripts/fitclock
# Debian's python3, where python3-sklearn is installed; OPENBLAS_* tuning
# variables, where a machine sets them, are left out of this one command.
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE /usr/bin/python3 scripts/gp_vs_sklearn.py "$bin" "$sizes"
