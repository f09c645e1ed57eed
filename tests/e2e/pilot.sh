#!/usr/bin/env bash
# `chaosweep check SPEC --pilot`: flags a deliberately coarse dt, accepts a fine one, and refuses
# options it cannot honour with one line and exit 2 (README, "Planning a campaign").
# Usage: pilot.sh CHAOSWEEP WORKDIR SOURCE_DIR PYTHON
set -uo pipefail
prog=$1 work=$2 src=$3 python=$4
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

spec=$src/tests/e2e/specs/l63-pilot.yaml

# Why these two step sizes (Lorenz-63, sigma 10, rho 28, beta 8/3, the pilot's 32 members over
# 100 time units): RK4's global error is O(dt^4) (published: Hairer, Norsett & Wanner 1993), and
# so is the bias of its long-time statistics. At dt 0.08 the time mean of z is about 0.4 below
# dt/2's (23.1 against 23.5), 12-17 times the paired standard error in the unforced case; over
# 25 seeds the largest |difference|/se was 16 to 29, far above the flag threshold 3.6. At
# dt 0.01 the bias is 8^4 = 4096 times smaller (about 1e-4, 0.005 standard errors), so only
# chance can flag it, at the rule's family-wise 1% (1 of 25 seeds when this test was written;
# the threshold is common practice: Bonferroni over the comparisons).

"$prog" check "$spec" --pilot >fine.txt 2>fine.err
status=$?
[ "$status" -eq 0 ] || fail "fine dt: exit $status"
grep -q "^  dt 0.01: adequate" fine.txt || fail "fine dt 0.01 not accepted: $(grep '^  dt ' fine.txt)"
if grep -q "TOO COARSE" fine.txt; then fail "fine dt: a row flagged"; fi
[ "$(grep -c '^  [0-9].* ok$' fine.txt)" -eq 9 ] || fail "fine dt: expected 9 rows marked ok"

sed 's/dt: 0.01,/dt: 0.08,/' "$spec" > coarse.yaml
"$prog" check coarse.yaml --pilot >coarse.txt 2>coarse.err
status=$?
[ "$status" -eq 0 ] || fail "coarse dt: exit $status (a flag is a warning, not a failure)"
grep -q "^  dt 0.08: too coarse" coarse.txt || fail "coarse dt 0.08 not flagged: $(grep '^  dt ' coarse.txt)"
# z is the sensitive observable: its time mean is the most precise (members agree closely).
grep -q "^  0 (forcing 0) .* z .*TOO COARSE$" coarse.txt || fail "coarse dt: z of case 0 not flagged"
grep -q "warning: dt is too coarse" coarse.txt || fail "coarse dt: no warning line"

# Planning figures are printed, and the targets select the columns and the suggestion.
"$prog" check "$spec" --pilot --target-halfwidth x=0.05,z=0.01 --target-slope-halfwidth 0.02 \
  --pilot-members 16 --pilot-duration 50 >targets.txt 2>targets.err
status=$?
[ "$status" -eq 0 ] || fail "targets: exit $status $(cat targets.err)"
grep -q "^pilot: 3 of 3 cases, 16 members each, spin-up 20 + duration 50 " targets.txt \
  || fail "targets: pilot options not honoured"
grep -q "^    [0-9]* members at duration 1000 (the spec's): .* core-hours; decided by" targets.txt \
  || fail "targets: no members suggestion"
grep -q "^    duration [0-9.e+]* at 256 members (the spec's): .* core-hours; decided by" targets.txt \
  || fail "targets: no duration suggestion"

# The pilot's dt run is the campaign's own run of those members, only shorter (exact: the same
# engine, the same (seed, case, member) starts). A campaign of 32 members over the pilot's
# window must give the same ensemble time means as the pilot's mean(dt) column, to the 4
# significant digits printed, in every case (a wrong case index or member start would not).
sed 's/members: 256/members: 32/; s/duration: 1000}/duration: 100}/' "$spec" > short.yaml
"$prog" run short.yaml --archive short.h5 --overwrite --progress none 2>run.err \
  || fail "campaign of the pilot's members: $(tail -1 run.err)"
"$prog" check short.yaml --pilot --pilot-duration 100 >short.txt 2>&1 || fail "pilot on short.yaml"
"$python" - short.h5 short.txt <<'PY' || fail "pilot mean(dt) differs from the campaign's"
import sys, h5py
with h5py.File(sys.argv[1], "r") as f:
    means = f["ensemble/time_mean"][...]
    names = [n.decode() if isinstance(n, bytes) else n for n in f["observable"][...]]
rows = [l.split() for l in open(sys.argv[2]) if l.startswith("  ") and "(forcing" in l
        and l.split()[3] in names and len(l.split()) >= 9 and l.split()[-1] in ("ok", "COARSE")]
assert len(rows) == 9, rows
for r in rows:
    case, name, printed = int(r[0]), r[3], r[4]
    want = "%.4g" % means[case, names.index(name)]
    assert printed == want, (case, name, printed, want)
print("pilot mean(dt) = campaign ensemble mean in all 9 rows")
PY

# expect_refusal DESCRIPTION ARGS...: exit 2, exactly one line on stderr, nothing on stdout.
expect_refusal() {
  local what=$1
  shift
  "$prog" check "$@" >out.txt 2>err.txt
  local got=$?
  if [ "$got" -ne 2 ]; then
    fail "$what: exit $got, expected 2"
  elif [ "$(grep -c '' err.txt)" -ne 1 ] || [ -s out.txt ]; then
    fail "$what: expected one line on stderr and nothing on stdout"; cat err.txt out.txt
  else
    echo "ok: $what: $(cat err.txt)"
  fi
}
expect_refusal "--pilot with --no-calibrate" "$spec" --pilot --no-calibrate
expect_refusal "a target without --pilot" "$spec" --target-halfwidth 0.1
expect_refusal "--pilot-duration without --pilot" "$spec" --pilot-duration 10
expect_refusal "too few pilot members" "$spec" --pilot --pilot-members 4
expect_refusal "a negative pilot duration" "$spec" --pilot --pilot-duration -3
expect_refusal "a pilot shorter than two steps" "$spec" --pilot --pilot-duration 0.001
expect_refusal "a target that is not a number" "$spec" --pilot --target-halfwidth abc
expect_refusal "a target for an unknown observable" "$spec" --pilot --target-halfwidth w=1
grep -v "^sweep:\|parameter: forcing" "$spec" > single.yaml
expect_refusal "a slope target without a sweep" single.yaml --pilot --target-slope-halfwidth 0.1
expect_refusal "a spec with a schedule" "$src/tests/e2e/specs/l63-schedule-constant.yaml" --pilot

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all pilot checks passed"
