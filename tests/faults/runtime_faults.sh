#!/usr/bin/env bash
# Runtime faults end in one clear error and lose nothing already computed (the full disk is
# in disk_full.sh):
#   - one rank fails: every rank stops promptly (no hang in a collective), exit non-zero, one
#     line names the rank;
#   - members blow up: counted, excluded, warned about once;
#   - `summary` on a truncated, damaged, edited or newer-format archive, or a file that is not
#     an archive: exit 2, one line, no HDF5 dump; `--no-verify` reads an edited one.
# Usage: runtime_faults.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
check="/usr/bin/python3 $src/tests/e2e/check_archive.py"
spec=$src/tests/e2e/specs/l63-small.yaml
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }
run() {  # run NP ARCHIVE [ARGS...]
  local np=$1 archive=$2
  shift 2
  "$mpiexec" -np "$np" --oversubscribe "$prog" run "$spec" --archive "$archive" \
    --progress none "$@" >>"$archive.log" 2>&1
}
one_error_line() {  # one_error_line LOG: exactly one line from chaosweep says "error"
  local n
  n=$(grep -c "^chaosweep: error" "$1")
  [ "$n" -ge 1 ] || fail "$1: no error line"
  ! grep -q "HDF5-DIAG" "$1" || fail "$1: HDF5 diagnostics leaked"
}

run 2 reference.h5 || fail "reference run"

# 2. One rank fails in the middle of the run: all ranks stop promptly, one line names the rank.
start=$(date +%s)
CHAOSWEEP_TEST_ROUND_SECONDS=0.05 CHAOSWEEP_TEST_THROW=1:1 timeout 60 \
  "$mpiexec" -np 3 --oversubscribe "$prog" run "$spec" --archive thrown.h5 --progress none \
  > thrown.log 2>&1
status=$?
[ $status -ne 0 ] && [ $status -ne 124 ] || fail "failing rank: exit $status (124 = hung)"
[ $(( $(date +%s) - start )) -lt 30 ] || fail "the failure took too long to stop every rank"
grep -q "^chaosweep: error (rank 1): injected failure" thrown.log || fail "no line naming rank 1"
[ ! -e thrown.h5 ] || fail "an archive appeared after a failure"

# 2b. A spin-up to the attractor that diverges (a ring at dt 0.085, accepted by the stable-step
#     check, blows up at F 12 only): `check` integrates every case's spin-up and refuses it
#     with the one line the run gives; the run, too, spins every case up before any file is
#     created, so it exits 2 with that line and creates nothing; with a finer dt the same
#     campaign then passes check and runs.
mkdir spinup && cd spinup || exit 1
cat > ring.yaml <<'YAML'
campaign: {name: ring-coarse-step}
model: {name: lorenz96, parameters: {n: 40}}
sweep:
  - {parameter: F, values: [6, 8, 10, 12]}
ensemble: {members: 16, initial_state: {from: attractor, spinup: 20}, seed: 1}
integration: {dt: 0.085, spinup: 1, duration: 5}
output: {archive: ring.h5}
run: {batch_size: 8}
YAML
"$prog" check ring.yaml --no-calibrate > check.log 2>&1
status=$?
[ $status -eq 2 ] || fail "check of the diverging spin-up: exit $status, expected 2"
[ "$(wc -l < check.log)" -eq 1 ] || fail "check: not one line: $(cat check.log)"
grep -q "^chaosweep: error: ring.yaml:6:19: integration.dt: case 3 (F 12): the spin-up to the attractor .* at dt 0.085; reduce integration.dt$" check.log \
  || fail "check: the error does not name the case and dt: $(cat check.log)"
"$mpiexec" -np 2 --oversubscribe "$prog" run ring.yaml --progress none > run.log 2>&1
status=$?
[ $status -eq 2 ] || fail "diverging spin-up: exit $status, expected 2"
[ "$(grep -c '^chaosweep: error' run.log)" -eq 1 ] || fail "diverging spin-up: not one error line: $(cat run.log)"
grep -q "^chaosweep: error: ring.yaml:6:19: integration.dt: case 3 (F 12): the spin-up to the attractor .* at dt 0.085; reduce integration.dt$" run.log \
  || fail "diverging spin-up: the error does not name the case and dt: $(grep error run.log)"
[ "$(ls)" = "$(printf 'check.log\nring.yaml\nrun.log')" ] || fail "diverging spin-up left files: $(ls)"
sed -i 's/dt: 0.085/dt: 0.02/' ring.yaml
"$prog" check ring.yaml --no-calibrate > check.log 2>&1 || fail "check refused the finer dt: $(cat check.log)"
grep -q "^  spin-ups       every case reaches its attractor state" check.log \
  || fail "check does not report the spin-ups: $(cat check.log)"
"$mpiexec" -np 2 --oversubscribe "$prog" run ring.yaml --progress none > rerun.log 2>&1 \
  || fail "the ring with a finer dt: $(tail -n 2 rerun.log)"
cd .. || exit 1

# 3. Members that blow up: a huge perturbation at the largest accepted dt.
sed -e 's/scale: 1.0e-2/scale: 20.0/' -e 's/dt: 0.005/dt: 0.09/' "$spec" > blowup.yaml
"$mpiexec" -np 2 "$prog" run blowup.yaml --archive blowup.h5 --progress none > blowup.log 2>&1
[ $? -eq 0 ] || fail "run with blow-ups failed: $(tail -n 2 blowup.log)"
warnings=$(grep -c "became non-finite" blowup.log)
[ "$warnings" -eq 1 ] || fail "expected one warning about non-finite members, got $warnings"
/usr/bin/python3 - blowup.h5 <<'PY' || fail "non-finite members not counted and excluded"
import sys, h5py, numpy as np
with h5py.File(sys.argv[1], "r") as f:
    status = f["member/status"][()]
    valid = f["ensemble/valid_members"][()]
    mean = f["member/time_mean"][()]
    ens = f["ensemble/time_mean"][()]
bad = status != 0
assert bad.any() and not bad.all(), "the test needs some but not all members to blow up"
assert (valid == (~bad).sum(axis=1)).all(), "valid_members does not count the valid ones"
assert np.isnan(mean[bad]).all(), "non-finite members must have NaN statistics"
for c in range(mean.shape[0]):
    good = mean[c][~bad[c]]
    if len(good):  # exact: the ensemble mean is over the valid members only (Welford/Chan order)
        assert np.allclose(ens[c], good.mean(axis=0), rtol=1e-12, atol=1e-12), c
print(f"ok: {bad.sum()} of {bad.size} members non-finite, excluded")
PY

# 3b. Every member of one case blows up (2 members, a huge perturbation; with this seed case 0
#     loses both, case 1 keeps one): the archive is written, the run exits 1 with one line
#     naming that case only, so that a dependent job does not go on.
cat > empty-case.yaml <<'YAML'
campaign: {name: one-case-without-members}
model: {name: lorenz63, parameters: {forcing_direction: [0.6, 0.8, 0]}}
sweep:
  - {parameter: forcing, values: [0, 3]}
ensemble:
  members: 2
  initial_state: {from: attractor, spinup: 10}
  perturbation: {distribution: gaussian, scale: 60.0}
  seed: 5
integration: {dt: 0.09, spinup: 10, duration: 20}
output: {archive: empty-case.h5}
YAML
"$mpiexec" -np 2 "$prog" run empty-case.yaml --progress none > empty-case.log 2>&1
status=$?
[ $status -eq 1 ] || fail "a case without valid members: exit $status, expected 1"
[ "$(grep -c 'chaosweep: error' empty-case.log)" -eq 1 ] \
  || fail "a case without valid members: not one error line: $(cat empty-case.log)"
grep -q "chaosweep: error: 1 of 2 cases kept no valid member .*: case 0 (forcing 0)$" \
  empty-case.log || fail "the error line does not name case 0 alone: $(grep error empty-case.log)"
/usr/bin/python3 - empty-case.h5 <<'PY' || fail "the archive of a campaign with an empty case"
import sys, h5py
with h5py.File(sys.argv[1], "r") as f:
    assert f.attrs["status"] in (b"complete", "complete"), f.attrs["status"]
    status = f["member/status"][()]
    valid = f["ensemble/valid_members"][()]
assert list(valid) == list((status == 0).sum(axis=1)) == [0, 1], (valid, status)
print("ok: archive written with case 0 empty; the run exited 1 naming it")
PY

# 4. Archives that cannot be read: truncated, damaged, edited, of a newer format version, not
#    an archive. Each: exit 2 and one line (the archive's seal is checked before HDF5 opens it).
refused() {  # refused FILE WHAT FRAGMENT: summary of FILE exits 2 with one line holding FRAGMENT
  "$prog" summary "$1" > out.txt 2> err.txt
  local status=$?
  [ $status -eq 2 ] || fail "summary of $2: expected exit 2, got $status: $(cat err.txt)"
  [ "$(grep -c '' err.txt)" -eq 1 ] || fail "summary of $2: not one line: $(cat err.txt)"
  grep -q -- "$3" err.txt || fail "summary of $2: no \"$3\" in: $(cat err.txt)"
}
head -c 5000 reference.h5 > truncated.h5
refused truncated.h5 "a truncated archive" "bytes on disk"
cp reference.h5 flipped.h5
/usr/bin/python3 - <<'PY'
import os
size = os.path.getsize("flipped.h5")
with open("flipped.h5", "r+b") as f:  # one bit in the middle of the HDF5 content
    f.seek(size // 2)
    b = f.read(1)
    f.seek(size // 2)
    f.write(bytes([b[0] ^ 0x10]))
PY
refused flipped.h5 "an archive with one bit flipped" "checksum mismatch"
cp reference.h5 edited.h5
/usr/bin/python3 -c "import h5py; f = h5py.File('edited.h5', 'a'); f.attrs['note'] = 'edited'; f.close()"
refused edited.h5 "an archive edited with h5py" "changed after chaosweep wrote it"
"$prog" summary --no-verify edited.h5 > out.txt 2> err.txt || fail "summary --no-verify of an edited archive failed: $(cat err.txt)"
"$prog" summary reference.h5 > reference.txt 2>&1 || fail "summary of the intact archive failed"
cmp -s out.txt reference.txt || fail "summary --no-verify of an edited archive differs from the original's"
cp reference.h5 newer.h5
/usr/bin/python3 -c "
with open('newer.h5', 'r+b') as f:  # the header's second line, 'format N', becomes 'format 9'
    head = f.read(64); at = head.index(b'format ') + 7; f.seek(at); f.write(b'9')"
refused newer.h5 "an archive of a newer format" "newer than this chaosweep"
/usr/bin/python3 -c "import h5py; h5py.File('plain.h5', 'w').create_dataset('x', data=[1.0])"
refused plain.h5 "an HDF5 file that is not an archive" "not a chaosweep archive"
echo "campaign: {name: not-an-archive}" > text.h5
refused text.h5 "a text file" "not a chaosweep archive"

# 5. An archive or another HDF5 file given where a spec belongs is named as such (exit 2, one
#    line), not read as YAML.
not_a_spec() {  # not_a_spec FILE FRAGMENT
  "$prog" check "$1" --no-calibrate > out.txt 2> err.txt
  local status=$?
  [ $status -eq 2 ] || fail "check $1: expected exit 2, got $status: $(cat err.txt)"
  [ "$(grep -c '' err.txt)" -eq 1 ] || fail "check $1: not one line: $(cat err.txt)"
  grep -q -- "$2" err.txt || fail "check $1: no \"$2\" in: $(cat err.txt)"
}
not_a_spec reference.h5 "reference.h5 is a chaosweep archive (HDF5), not a campaign spec"
not_a_spec plain.h5 "plain.h5 is an HDF5 file, not a campaign spec"

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all runtime fault checks passed"
