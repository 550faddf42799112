#!/bin/sh
# Runs the SciPy cross-check, or reports SKIPPED to ctest (status 77) when the given
# interpreter is missing or lacks SciPy/NumPy.
# Usage: run_scipy_check.sh PYTHON SCRIPT KNEE_BINARY SOURCE_DIR
python="$1"
shift
if [ ! -x "$python" ] || ! "$python" -c "import numpy, scipy.optimize" >/dev/null 2>&1; then
  echo "SKIPPED: $python with numpy and scipy not found (scripts/setup installs python3-scipy)"
  exit 77
fi
exec "$python" "$@"
