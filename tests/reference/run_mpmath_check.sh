#!/bin/sh
# Runs the mpmath check of the exact law, or reports SKIPPED to ctest (status 77) when the
# given interpreter is missing or lacks mpmath (Debian: python3-mpmath).
# Usage: run_mpmath_check.sh PYTHON SCRIPT KNEE_BINARY SOURCE_DIR
python="$1"
shift
if [ ! -x "$python" ] || ! "$python" -c "import mpmath" >/dev/null 2>&1; then
  echo "SKIPPED: $python with mpmath not found (Debian package python3-mpmath)"
  exit 77
fi
exec "$python" "$@"
