#!/usr/bin/env bash
# `chaosweep check SPEC --pilot` on cases whose members do not vary independently (README,
# "Planning a campaign"): a fixed point and a periodic orbit are named as such, pass the dt
# check (its floor, not a standard error that falls to rounding, decides), and get no
# decorrelation time, half-width or members x duration; a chaotic case is still called chaotic.
# Usage: pilot_regular.sh CHAOSWEEP WORKDIR SOURCE_DIR PYTHON
set -uo pipefail
prog=$1 work=$2 src=$3 python=$4
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

# expect_pilot NAME SPEC ARGS...: runs the pilot into NAME.txt; exit status 0 expected.
expect_pilot() {
  local name=$1 spec=$2
  shift 2
  "$prog" check "$spec" --pilot "$@" >"$name.txt" 2>"$name.err"
  local status=$?
  [ "$status" -eq 0 ] || fail "$name: exit $status: $(cat "$name.err")"
}

# no_made_up_figures NAME LABEL: the precision rows say LABEL instead of figures, and nothing is
# suggested.
no_made_up_figures() {
  local name=$1 label=$2
  [ "$(grep -c "^  0 .*($label: none)$" "$name.txt")" -eq 3 ] \
    || fail "$name: the precision rows do not all say ($label: none)"
  grep -q "^    no sampling half-width" "$name.txt" || fail "$name: a half-width was printed"
  grep -q "^  to reach every target: nothing to plan from this pilot" "$name.txt" \
    || fail "$name: members or a duration were suggested"
  if grep -q "members at duration\|decorrelation times of" "$name.txt"; then
    fail "$name: a suggestion or a tau warning was printed"
  fi
}

# --- A fixed point --------------------------------------------------------------------------
# Exact: with forcing f along z, z = w + f/beta turns the equations into the unforced Lorenz
# (1963) system in (x, y, w) with rho' = rho - f/beta = 24 - 6/(8/3) = 21.75, whose fixed points
# C+- are (+-sqrt(beta (rho' - 1)), same, rho' - 1); back in z: x = y = +-sqrt(beta (rho - 1) - f)
# = +-7.43863787, z = rho - 1 = 23. Published: C+- are stable for rho' < 470/19 = 24.74
# (Hopf threshold, Strogatz 1994, ch. 9); the spectrum there, -13.48 and -0.0947 +- 9.06 i
# (exact: roots of the characteristic polynomial at C+-, from the Jacobian), leaves after the
# spec's 400 time units of spin-up a transient of e^(-0.0947 x 400) ~ 4e-17 of its start.
fixed=$src/tests/e2e/specs/l63-fixed-point-pilot.yaml
for dt in 0.01 0.02; do
  sed "s/dt: 0.01,/dt: $dt,/" "$fixed" > fixed-$dt.yaml
  expect_pilot fixed-$dt fixed-$dt.yaml --target-halfwidth 0.05
  grep -q "^  0  *fixed point " fixed-$dt.txt || fail "dt $dt: the fixed point is not called one"
  # Exact: RK4 keeps a fixed point of the equations fixed (every stage sees a zero tendency),
  # so dt and dt/2 agree to rounding: any flag would be a false alarm.
  grep -q "^  dt $dt: adequate" fixed-$dt.txt || fail "dt $dt at a fixed point: $(grep "^  dt $dt" fixed-$dt.txt)"
  if grep -q "TOO COARSE" fixed-$dt.txt; then fail "dt $dt at a fixed point: a row flagged"; fi
  no_made_up_figures fixed-$dt "fixed point"
  # The point the members rest at is C+ or C- (above); 1e-8 relative covers the 10 printed
  # digits and the decayed transient.
  "$python" - fixed-$dt.txt <<'PY' || fail "dt $dt: the members do not rest at C+ or C-"
import math, re, sys
text = open(sys.argv[1]).read().replace("\n  ", " ")
m = re.search(r"the members rest at x (\S+), y (\S+), z (\S+) \(", text)
x, y, z = (float(v) for v in m.groups())
beta, rho, f = 2.6666666666666667, 24.0, 6.0
c = math.sqrt(beta * (rho - 1.0) - f)
sign = 1.0 if x > 0 else -1.0
for got, want in ((x, sign * c), (y, sign * c), (z, rho - 1.0)):
    assert abs(got - want) <= 1e-8 * abs(want), (got, want)
print("members at rest at", (x, y, z), "= C" + ("+" if sign > 0 else "-"))
PY
  # Differences at rounding level (exact, above): under 1e-12 of the coordinates.
  "$python" - fixed-$dt.txt <<'PY' || fail "dt $dt: dt and dt/2 differ by more than rounding at a fixed point"
import sys
rows = [l.split() for l in open(sys.argv[1]) if l.startswith("  0 ") and l.rstrip().endswith(" ok")]
assert len(rows) == 3, rows
for r in rows:
    assert abs(float(r[4])) <= 1e-12 * max(abs(float(r[2])), 1.0), r
PY
done

# --- A periodic orbit -------------------------------------------------------------------------
# Outside check that the case is periodic: Debian's scipy (solve_ivp, DOP853, rtol 1e-11)
# integrates Lorenz's (1984) equations at a 0.25, b 4, F 6, G 1; after t = 1000 the values of x
# where y crosses 0 upwards repeat with a period of at most 6 crossings to 1e-6 (a chaotic
# motion would not repeat).
"$python" - <<'PY' || fail "scipy does not find the Lorenz-84 case periodic"
import numpy as np
from scipy.integrate import solve_ivp
a, b, F, G = 0.25, 4.0, 6.0, 1.0
def f(t, s):
    x, y, z = s
    return [-y * y - z * z - a * x + a * F, x * y - b * x * z - y + G, b * x * y + x * z - z]
def crossing(t, s):
    return s[1]
crossing.direction = 1
sol = solve_ivp(f, (0, 1600), [1.0, 0.0, 0.0], method="DOP853", rtol=1e-11, atol=1e-12,
                events=crossing)
x = sol.y_events[0][sol.t_events[0] > 1000][:, 0]
period = next(p for p in range(1, 7) if np.max(np.abs(x[p:] - x[:-p])) < 1e-6)
print("Lorenz-84 at F 6: x at the section repeats every", period, "crossings")
PY
periodic=$src/tests/e2e/specs/l84-periodic-pilot.yaml
expect_pilot periodic "$periodic" --target-halfwidth 0.05
grep -q "^  0  *periodic or collapsed " periodic.txt || fail "the periodic case is not called periodic or collapsed"
# Members that follow one orbit differ by almost nothing (se ~1e-8), while the two step sizes
# sample the window differently (exact: dt (x(T) - x(0)) / (4T) to leading order, ~2e-5 here):
# without the floor every row would be flagged at every dt.
grep -q "^  dt 0.01: adequate" periodic.txt || fail "periodic case: $(grep '^  dt 0.01' periodic.txt)"
if grep -q "TOO COARSE" periodic.txt; then fail "periodic case: a row flagged"; fi
no_made_up_figures periodic "periodic or collapsed"

# --- A chaotic case stays chaotic -------------------------------------------------------------
# Published: Lorenz-63 at sigma 10, rho 28, beta 8/3 is chaotic (leading exponent 0.9056,
# Sprott 2003); case 0 of the pilot test campaign is that system, unforced.
expect_pilot chaotic "$src/tests/e2e/specs/l63-pilot.yaml"
grep -q "^  0 (forcing 0)  *chaotic " chaotic.txt || fail "the unforced Lorenz-63 case is not called chaotic"
grep -q "^  0 (forcing 0)  *x  *[0-9.e+-]*  *\[" chaotic.txt || fail "the chaotic case lost its tau"

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all pilot checks on regular cases passed"
