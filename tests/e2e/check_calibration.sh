#!/usr/bin/env bash
# `chaosweep check`: the cost estimate is calibrated on a piece of the campaign itself, with the
# spec's statistics, in the campaign's proportions of spin-up to accumulation (README, "Using
# it"). The check is on what was calibrated, never on how long it took.
# Usage: check_calibration.sh CHAOSWEEP WORKDIR SOURCE_DIR
set -uo pipefail
prog=$1 work=$2 src=$3
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

# calibration_line SPEC: the check's calibration line (empty when the check failed).
calibration_line() {
  "$prog" check "$1" >check.txt 2>check.err || { fail "check $1: $(cat check.err)"; return; }
  grep "^  calibration " check.txt
}

# Lyapunov exponents: the timed piece computes them as the campaign does.
lyapunov=$src/configs/thermosyphon-lyapunov.yaml
line=$(calibration_line "$lyapunov")
echo "$line"
case "$line" in
  *"Lyapunov exponents (3)"*) ;;
  *) fail "the calibration of a spec with Lyapunov exponents does not include them: $line" ;;
esac
grep -q "^  cost .* member-steps/s per core (measured)" check.txt || fail "no cost line"

# The piece keeps the campaign's proportions: spin-up 20 and duration 300 at dt 0.005 are
# 4000 + 60000 steps, so the piece's spin-up share is 1/16 up to rounding to a whole step.
/usr/bin/python3 - "$line" <<'PY' || fail "the calibration piece is not in the campaign's proportions"
import re, sys
m = re.search(r"x (\d+) steps \((\d+) spin-up \+ (\d+) accumulated\)", sys.argv[1])
total, spin, acc = map(int, m.groups())
assert spin + acc == total and acc >= 1, m.groups()
assert total <= 64000, total                      # never longer than the campaign's own batch
assert abs(spin - total / 16) <= 1, (spin, total)  # rounded to a whole step
print("piece:", total, "steps,", spin, "of them spin-up")
PY

# The same spec without them: the calibration no longer names them.
grep -v "lyapunov:" "$lyapunov" > plain.yaml
line=$(calibration_line plain.yaml)
echo "$line"
case "$line" in
  *Lyapunov*) fail "the calibration of a spec without Lyapunov exponents names them: $line" ;;
  "") ;;
  *"time moments, sign regimes and trajectories"*) ;;
  *) fail "unexpected statistics in the calibration of plain.yaml: $line" ;;
esac

# Twins, snapshots and a schedule are in the timed piece too.
line=$(calibration_line "$src/configs/thermosyphon-ramp-predictability.yaml")
echo "$line"
for what in "Lyapunov exponents (3)" twins snapshots schedule; do
  case "$line" in
    *"$what"*) ;;
    *) fail "the calibration of the ramp predictability campaign leaves out $what: $line" ;;
  esac
done

# A campaign shorter than a timed piece is timed whole: plain.yaml cut to duration 10 is
# 4000 + 2000 steps of one batch of 64 members, a few milliseconds.
sed 's/duration: 300}/duration: 10}/' plain.yaml > short.yaml
line=$(calibration_line short.yaml)
echo "$line"
case "$line" in
  *"x 6000 steps (4000 spin-up + 2000 accumulated)"*) ;;
  *) fail "a short campaign was not timed whole: $line" ;;
esac

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all calibration checks passed"
