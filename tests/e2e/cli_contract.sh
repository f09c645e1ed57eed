#!/usr/bin/env bash
# Command-line contract of chaosweep: exit statuses and one-line errors (README, "Using it").
# Usage: cli_contract.sh CHAOSWEEP WORKDIR SOURCE_DIR
set -uo pipefail
prog=$1 work=$2 src=$3
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0

# expect STATUS DESCRIPTION -- COMMAND...: runs COMMAND, checks its exit status, and for a
# non-zero status that stderr holds exactly one line.
expect() {
  local want=$1 what=$2
  shift 3
  "$@" >out.txt 2>err.txt
  local got=$?
  local lines
  lines=$(grep -c '' err.txt)
  if [ "$got" -ne "$want" ]; then
    echo "FAIL: $what: exit $got, expected $want"; cat err.txt; failures=$((failures + 1))
  elif [ "$want" -ne 0 ] && [ "$lines" -ne 1 ]; then
    echo "FAIL: $what: $lines lines on stderr, expected one"; cat err.txt
    failures=$((failures + 1))
  else
    echo "ok: $what (exit $got) $(head -c 200 err.txt)"
  fi
}

spec=$src/tests/e2e/specs/l63-small.yaml
sed 's/members: 40/membres: 40/' "$spec" > typo.yaml
mkdir out
expect 2 "run with an unknown key" -- "$prog" run typo.yaml --archive out/a.h5 --progress none
grep -q "typo.yaml:[0-9]*:[0-9]*: .*did you mean .members." err.txt \
  || { echo "FAIL: message lacks FILE:LINE:COL or did-you-mean"; failures=$((failures + 1)); }
[ -z "$(ls -A out)" ] || { echo "FAIL: a bad spec created files: $(ls out)"; failures=$((failures + 1)); }
expect 2 "check with an unknown key" -- "$prog" check typo.yaml
expect 2 "run with a missing spec file" -- "$prog" run missing.yaml --progress none
grep -q "^chaosweep: error: cannot read spec missing.yaml: No such file or directory$" err.txt \
  || { echo "FAIL: missing spec: $(cat err.txt)"; failures=$((failures + 1)); }
expect 2 "run into a missing directory" -- "$prog" run "$spec" --archive nowhere/a.h5 --progress none
expect 2 "unknown option" -- "$prog" run "$spec" --no-such-option

echo "not an archive" > existing.h5
sum_before=$(md5sum existing.h5)
expect 2 "run onto an existing archive without --overwrite" -- \
  "$prog" run "$spec" --archive existing.h5 --progress none
[ "$(md5sum existing.h5)" = "$sum_before" ] || { echo "FAIL: existing file touched"; failures=$((failures + 1)); }
expect 2 "summary of a file that is not an archive" -- "$prog" summary existing.h5
expect 2 "summary of a missing file" -- "$prog" summary missing.h5
expect 0 "--help" -- "$prog" --help

# Every example config is valid and plans.
for config in "$src"/configs/*.yaml; do
  expect 0 "check $(basename "$config")" -- "$prog" check "$config" --no-calibrate
done

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all command-line contract checks passed"
