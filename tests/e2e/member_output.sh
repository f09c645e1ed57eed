#!/usr/bin/env bash
# output.members: `all`, `none` and {sample: N} give the same ensemble estimates, bitwise, on
# any rank count; a sample holds exactly the first N members' rows of `all`; `none` has no
# /member group. An unset choice above a million members is refused by check and run with one
# FILE:LINE:COL line naming the archive size `all` would give, and that size equals (h5py) the
# per-member bytes of the same campaign run small, scaled to its member count. `run --resume`
# of a finished campaign exits 0 and removes its leftover checkpoints.
# Usage: member_output.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

# The small forced-loop campaign (3 cases x 40 members, batches of 16) over a shorter window.
sed -e 's/duration: 100/duration: 10/' "$src/tests/e2e/specs/l63-small.yaml" > base.yaml
choose() {  # choose NAME VALUE: base.yaml with output.members: VALUE
  sed -e "s/^  archive: l63-small.h5/  archive: l63-small.h5\n  members: $2/" base.yaml > "$1.yaml"
}
choose all all
choose none none
choose sample '{sample: 5}'
run() {  # run NP NAME [ARGS...]
  local np=$1 name=$2
  shift 2
  "$mpiexec" -np "$np" --oversubscribe "$prog" run "$name.yaml" --archive "$name.h5" \
    --progress none "$@" >>"$name.log" 2>&1
}
sed -e "s/^  archive: l63-small.h5/  archive: l63-small.h5\n  compression: {level: 4}/" all.yaml \
  > deflated.yaml
run 1 all || fail "run with members: all"
run 3 deflated || fail "run with output.compression"
run 2 none || fail "run with members: none"
run 3 sample || fail "run with members: {sample: 5}"
run 2 base || fail "run without output.members (40 x 3 members: all)"

/usr/bin/python3 - all.h5 none.h5 sample.h5 base.h5 <<'PY' || fail "archives of the member choices"
import sys
import h5py
import numpy as np

def datasets(path):
    out = {}
    with h5py.File(path, "r") as f:
        f.visititems(lambda name, obj: out.__setitem__(name, obj[()])
                     if isinstance(obj, h5py.Dataset) else None)
    return out

every, none, sample, unset = (datasets(p) for p in sys.argv[1:])
member = [k for k in every if k.startswith("member/")]
assert member and not [k for k in none if k.startswith("member")], "none: no /member group"
assert sorted(unset) == sorted(every), "unset means all"
# Every dataset outside /member is the same, bitwise (NaN where NaN), whatever is kept.
for other, name in ((none, "none"), (sample, "sample"), (unset, "unset")):
    for key, value in every.items():
        if key.startswith("member/"):
            continue
        got = other[key]
        same = got.shape == value.shape and (
            got.tobytes() == value.tobytes() if value.dtype.kind in "fiu" else
            list(got.ravel()) == list(value.ravel()))
        assert same, f"{name}: {key} differs from the archive with every member"
# A sample holds the first 5 members of every case: the rows of `all`, bitwise.
for key in member:
    value, got = every[key], sample[key]
    if value.ndim >= 2 and value.shape[1] == 40:
        assert got.shape == (value.shape[0], 5) + value.shape[2:], key
        assert got.tobytes() == np.ascontiguousarray(value[:, :5]).tobytes(), key
    elif key == "member/member":
        assert list(got) == list(range(5)), "sample: member coordinate is 0 .. 4"
print(f"ok: {len(member)} member datasets; ensemble datasets identical under all, none, sample")
PY

# Compressed (3 ranks, collective filtered writes): every dataset the same as uncompressed;
# the per-member and trajectory datasets are shuffled and deflated (h5py reads the filters).
/usr/bin/python3 - all.h5 deflated.h5 <<'PY' || fail "the compressed archive"
import sys
import h5py
plain, deflated = (h5py.File(p, "r") for p in sys.argv[1:])
names = []
plain.visititems(lambda n, o: names.append(n) if isinstance(o, h5py.Dataset) else None)
for name in names:
    a, b = plain[name][()], deflated[name][()]
    same = a.tobytes() == b.tobytes() if a.dtype.kind in "fiu" else list(a.ravel()) == list(b.ravel())
    assert same and a.shape == b.shape, f"{name} differs when compressed"
    rows = name.startswith("member/") and plain[name].ndim >= 2 or name == "trajectory/state"
    if rows:
        d = deflated[name]
        assert d.compression == "gzip" and d.compression_opts == 4 and d.shuffle, name
        assert d.chunks[0] == 1, f"{name}: chunks {d.chunks} span cases"
        assert plain[name].compression is None, f"{name} compressed without compression"
print(f"ok: {len(names)} datasets identical compressed; member and trajectory data deflated")
PY

# A sample and a compressed archive, stopped and resumed on another rank count: bitwise the
# archives of the uninterrupted runs.
choose sample-stop '{sample: 5}'
sed -e "s/^  archive: l63-small.h5/  archive: l63-small.h5\n  compression: {level: 4}/" all.yaml \
  > deflated-stop.yaml
# (ROUND_SECONDS 0: a round is one chunk of steps, so the stop comes after rank 0's first
# chunk whatever the machine's speed)
for name in sample-stop deflated-stop; do
  CHAOSWEEP_TEST_ROUND_SECONDS=0 CHAOSWEEP_TEST_STOP=0:1 run 2 "$name"
  status=$?
  [ $status -eq 3 ] || fail "$name: stop exit $status, expected 3"
  run 3 "$name" --resume || fail "$name: resume on 3 ranks"
done
/usr/bin/python3 "$src/tests/e2e/check_archive.py" bitwise sample.h5 sample-stop.h5 \
  || fail "a sample stopped and resumed differs from the uninterrupted one"
/usr/bin/python3 "$src/tests/e2e/check_archive.py" bitwise deflated.h5 deflated-stop.h5 \
  || fail "a compressed archive stopped and resumed differs from the uninterrupted one"

# A million members or more: an unset choice is refused with the size `all` would give.
sed -e 's/members: 40/members: 400000/' base.yaml > big.yaml
"$prog" check big.yaml --no-calibrate > big-check.out 2>&1
status=$?
[ $status -eq 2 ] || fail "check of 1.2e6 members with output.members unset: exit $status, expected 2"
[ "$(wc -l < big-check.out)" -eq 1 ] || fail "check refusal is not one line: $(cat big-check.out)"
grep -Eq "^chaosweep: error: big.yaml:[0-9]+:[0-9]+: ensemble.members: .*output.members is not set.*about [0-9.]+ [KMGT]iB" \
  big-check.out || fail "check refusal does not name the spec position and size: $(cat big-check.out)"
"$mpiexec" -np 2 "$prog" run big.yaml --archive big.h5 --progress none > big-run.out 2>&1
status=$?
[ $status -eq 2 ] || fail "run of 1.2e6 members with output.members unset: exit $status"
[ "$(grep -c 'chaosweep: error' big-run.out)" -eq 1 ] || fail "run refusal not one line: $(cat big-run.out)"
[ ! -e big.h5 ] && [ ! -e big.h5.checkpoints ] || fail "the refused run created files"
# The size named is that of the per-member datasets of the small run (h5py), x 400000 / 40.
/usr/bin/python3 - big-check.out all.h5 <<'PY' || fail "the size named in the refusal"
import re, sys
import h5py
text = open(sys.argv[1]).read()
number, unit = re.search(r"about ([0-9.]+) ([KMGT]iB)", text).groups()
named = float(number) * 1024 ** ("KMGT".index(unit[0]) + 1)
with h5py.File(sys.argv[2], "r") as f:
    per_member = [d for d in f["member"].values() if d.ndim >= 2 and d.shape[1] == 40]
    small = sum(d.size * d.dtype.itemsize for d in per_member)
expected = small * 400000 / 40
# printed with one decimal of its unit
assert abs(named - expected) <= 0.05 * 1024 ** ("KMGT".index(unit[0]) + 1) + 1e-9 * expected, \
    (named, expected)
print(f"ok: refusal names {number} {unit}; the per-member datasets scale to {expected:.4g} bytes")
PY
for choice in none '{sample: 10}' all; do
  sed -e "s/^  archive: l63-small.h5/  archive: big.h5\n  members: $choice/" big.yaml > chosen.yaml
  "$prog" check chosen.yaml --no-calibrate > chosen.out 2>&1 \
    || fail "check with output.members: $choice: $(tail -n 1 chosen.out)"
  grep -q "member output" chosen.out || fail "check does not print the member output"
done

# A finished campaign run again with --resume (a job requeued after it ended): exit 0.
sum_before=$(sha256sum all.h5 | cut -d' ' -f1)
run 2 all --resume
status=$?
[ $status -eq 0 ] || fail "--resume of a complete campaign: exit $status, expected 0"
grep -q "the campaign is complete" all.log || fail "--resume of a complete campaign does not say so"
[ "$(sha256sum all.h5 | cut -d' ' -f1)" = "$sum_before" ] || fail "--resume changed the archive"
# ... also when killed after sealing the archive, before its checkpoints were removed.
choose all-again all
CHAOSWEEP_TEST_ROUND_SECONDS=0 CHAOSWEEP_TEST_STOP=0:1 run 2 all-again
status=$?
[ $status -eq 3 ] && [ -d all-again.h5.checkpoints ] || fail "stop before the leftover case: exit $status"
cp all.h5 all-again.h5
run 1 all-again --resume
status=$?
[ $status -eq 0 ] || fail "--resume with a complete archive and leftover checkpoints: exit $status"
[ ! -e all-again.h5.checkpoints ] || fail "leftover checkpoints of the finished campaign remain"
# ... but an archive of another spec is still refused without --overwrite.
run 1 none --resume
status=$?
[ $status -eq 0 ] || fail "--resume of the finished campaign without members: exit $status"
cp all.h5 other.h5 && cp none.yaml other.yaml
run 1 other --resume
status=$?
[ $status -eq 2 ] || fail "--resume over another spec's archive: exit $status, expected 2"
grep -q "exists; pass --overwrite" other.log || fail "--resume over another spec's archive: $(tail -n 1 other.log)"

[ "$failures" -eq 0 ] || exit 1
echo "ok: member output choices, refusal above a million members, resume of a complete campaign"
