#!/usr/bin/env bash
# Checks the layering of src/ (DEVELOPERS.md): which folders may include MPI, HDF5, yaml-cpp
# and spdlog. Usage: layering.sh SOURCE_DIR
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

numerics="core models integrators stats run plan"
forbid "$numerics spec archive app" "mpi\.h" "MPI"
forbid "$numerics spec parallel archive app" "hdf5\.h|H5[A-Za-z]*\.h|hdf5_hl\.h" "HDF5"
forbid "$numerics plan parallel h5 archive app" "yaml-cpp/" "yaml-cpp"
forbid "$numerics spec parallel h5 archive" "spdlog/" "logging"

[ "$failures" -eq 0 ] || exit 1
echo "layering ok"
