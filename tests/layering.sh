#!/usr/bin/env bash
# Checks the layering of src/ (DEVELOPERS.md): which folders may include MPI, HDF5, yaml-cpp
# and spdlog, and that only plan/ rounds a model time to a step count. Usage: layering.sh
# SOURCE_DIR
set -uo pipefail
src=$1/src
failures=0

# forbid FOLDERS PATTERN WHAT: no file in FOLDERS includes a header matching PATTERN.
forbid() {
  local folders=$1 pattern=$2 what=$3
  for folder in $folders; do
    hits=$(grep -rlE "#include *[<\"]($pattern)" "$src/$folder" 2>/dev/null)
    if [ -n "$hits" ]; then
      echo "FAIL: $what included in $folder: $hits"
      failures=$((failures + 1))
    fi
  done
}

numerics="core models integrators stats run plan results"
forbid "$numerics spec archive app" "mpi\.h" "MPI"
forbid "$numerics spec parallel archive app" "hdf5\.h|H5[A-Za-z]*\.h|hdf5_hl\.h" "HDF5"
forbid "$numerics plan parallel h5 archive app" "yaml-cpp/" "yaml-cpp"
forbid "$numerics spec parallel h5 archive" "spdlog/" "logging"

# Rounding a time over dt to a whole number of steps happens in plan/ alone (plan::whole_steps);
# elsewhere a time becomes steps through that function. The pattern must still find plan's own
# rounding, so that a pattern gone stale fails instead of passing silently.
rounding="l?lround\(.*(/ *[A-Za-z_.>-]*dt\b|dt\))"
hits=$(grep -rnE "$rounding" "$src" | grep -v "^$src/plan/")
if [ -n "$hits" ]; then
  echo "FAIL: a time rounded to steps outside plan/ (use plan::whole_steps): $hits"
  failures=$((failures + 1))
fi
if ! grep -qE "$rounding" "$src/plan/plan.cpp"; then
  echo "FAIL: the time-rounding pattern no longer matches plan::whole_steps in plan/plan.cpp"
  failures=$((failures + 1))
fi

[ "$failures" -eq 0 ] || exit 1
echo "layering ok"
