#!/bin/sh
# Runs the NumPy baselines of the two steps issue 16 compares, back to back: the drift (1 M
# particles x 48 hourly steps, crates/seekgrid-drift/benches/baselines/drift_baseline.py) and the
# particle density of the open-ocean case (benches/ocean/density_baseline.py). Prints the load
# average before each, as the figures mean little on a busy machine.
#
#   sh benches/ocean/run_baselines.sh [DRIFT_REPEATS] [-- density options]
#
# Both use invented inputs; see benches/ocean/README.md.
set -eu
cd "$(dirname "$0")/../.."
repeats=${1:-3}
[ $# -gt 0 ] && shift
[ "${1:-}" = "--" ] && shift
echo "== drift baseline (load: $(cut -d' ' -f1-3 /proc/loadavg))"
python3 crates/seekgrid-drift/benches/baselines/drift_baseline.py 1000000 "$repeats"
echo "== density baseline (load: $(cut -d' ' -f1-3 /proc/loadavg))"
python3 benches/ocean/density_baseline.py "$@"
