#!/usr/bin/env bash
# Times planner/gp's fit against scikit-learn's on the same data, kernel and
# restarts, and prints a table with the ratio. Needs Debian's python3-sklearn:
#   apt-get install -y python3-sklearn
# Usage: scripts/gp-vs-sklearn.sh [SIZES]   (SIZES like 50x2,200x6; default below)
# REPEATS (default 5) and RESTARTS (default 1) may be set in the environment.
# Both sides run on one core. It ends with the arrival-to-handoff percentiles.
set -euo pipefail
cd "$(dirname "$0")/.."
sizes="${1:-50x2,50x6,50x10,200x2,200x6,200x10,300x2,300x6,300x10,1000x2,1000x6,1000x10}"
bin="$(mktemp -d)/fitclock"
go build -o "$bin" ./scripts/fitclock
# Debian's python3, where python3-sklearn is installed; OPENBLAS_* tuning
# variables, where a machine sets them, are left out of this one command.
# One core each, as issue 23 compares them: one BLAS thread for numpy, one
# Go processor for the fit (its starts otherwise run side by side).
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 GOMAXPROCS=1 \
	/usr/bin/python3 scripts/gp_vs_sklearn.py "$bin" "$sizes"

# Then the arrival-to-handoff percentiles (p50-ms, p90-ms) and peak memory,
# from a result file landing to the next setpoint file in place. Set
# ARRIVALS=0 to skip them.
if [ "${ARRIVALS:-1}" != 0 ]; then
	echo
	echo "Arrival to handoff (go test ./agent -bench ArrivalToHandoff -benchtime 10x):"
	go test ./agent -run XXX -bench ArrivalToHandoff -benchtime 10x | grep '^Benchmark'
fi
