#!/bin/sh
# check-calibration.sh - a small calibration of `check` on fixed seeds (the
# full one, over 200 seeds and three settings, is tests/bench/RESULTS.md,
# made by tests/bench/check_calibration.py): on the coarse grid (50 steps)
# the right differential of each model is consistent on every seed, and on
# 1000 steps with 2000 paths each wrong one (a missing Itô term, the
# diffusion times 1.2, a missing correlation term, a wrong sign) is
# inconsistent on every seed.  (On the coarse grid the check loses power for
# log(v) of the CIR process; see RESULTS.md.)  The models and the hand
# derivations are in the script.  No timing is asserted.
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
command -v python3 > /dev/null 2>&1 || { echo "python3 not installed: skipped"; exit 77; }
# one process at a time under configure --enable-valgrind (ITOX_VALGRIND)
jobs=2
[ -n "${ITOX_VALGRIND:-}" ] && jobs=1
python3 "$src/tests/bench/check_calibration.py" --itox "$ITOX" --quick --seeds 4 --jobs $jobs --power "steps=1000, paths=2000"
