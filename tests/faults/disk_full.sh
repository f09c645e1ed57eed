#!/usr/bin/env bash
# The disk fills during the archive write: one clear error, exit 1, the checkpoints and an
# earlier archive intact; once space is freed, a resume completes with the same archive.
# Needs a small tmpfs (mount as root); exits 77 (skipped) where mounting is not allowed.
# Usage: disk_full.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
check="/usr/bin/python3 $src/tests/e2e/check_archive.py"
rm -rf "$work" && mkdir -p "$work/disk" && cd "$work" || exit 1
if ! mount -t tmpfs -o size=160k chaosweep-test "$work/disk" 2>/dev/null; then
  echo "SKIP: cannot mount a tmpfs here (needs root)"; exit 77
fi
trap 'umount "$work/disk" 2>/dev/null' EXIT
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }
# Checkpoints go to the roomy work directory, the archive to the small disk.
sed "s|^run:|checkpoint: {directory: $work/checkpoints}\nrun:|" \
  "$src/tests/e2e/specs/l63-small.yaml" > spec.yaml
run() { "$mpiexec" -np "$1" --oversubscribe "$prog" run spec.yaml --archive "$2" --progress none \
          "${@:3}" >>run.log 2>&1; }

run 2 reference.h5 || fail "reference run"
cp reference.h5 disk/archive.h5   # an earlier archive that must survive (~100 KiB of 160)
sum_before=$(md5sum < disk/archive.h5)
run 2 disk/archive.h5 --overwrite
status=$?
[ $status -eq 1 ] || fail "archive write on a full disk: exit $status, expected 1"
grep -q "^chaosweep: error.*archive.h5.partial" run.log || fail "no error line naming the archive"
! grep -q "HDF5-DIAG" run.log || fail "HDF5 diagnostics leaked"
[ "$(md5sum < disk/archive.h5)" = "$sum_before" ] || fail "the earlier archive was changed"
ls checkpoints/done/segment-*.ckpt >/dev/null 2>&1 || fail "checkpoints lost after the failure"

mount -o remount,size=4m "$work/disk" || fail "cannot enlarge the tmpfs"
run 3 disk/archive.h5 --overwrite --resume
[ $? -eq 0 ] || fail "resume after freeing space: $(tail -n 2 run.log)"
grep -q "resuming from .* 9 batches finished" run.log || fail "resume did not reuse the batches"
$check bitwise reference.h5 disk/archive.h5 || fail "archive after the full disk differs"
[ ! -e checkpoints ] || fail "checkpoints left after the archive was complete"

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "full disk: one error, nothing lost, resume completed bitwise"
