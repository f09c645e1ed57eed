#!/usr/bin/env bash
# Interrupted campaigns finish with the same archive, bitwise, whatever the interruption
# (SIGTERM at several points, SIGKILL of the whole job during a run and during a checkpoint
# write, damaged checkpoint files) and whatever the rank count of the resume.
# Usage: interrupt_resume.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC [SPEC]
# (SPEC defaults to tests/checkpoint/specs/restart.yaml; its seed must be `seed: 3`.)
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
check="/usr/bin/python3 $src/tests/e2e/check_archive.py"
spec=${5:-$src/tests/checkpoint/specs/restart.yaml}
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

# run NP ARCHIVE [ARGS...]: runs the campaign on NP ranks; the exit status is the run's.
run() {
  local np=$1 archive=$2
  shift 2
  "$mpiexec" -np "$np" --oversubscribe "$prog" run "$spec" --archive "$archive" \
    --progress none "$@" >>"$archive.log" 2>&1
}

expect_status() {  # expect_status WANT GOT WHAT
  [ "$2" -eq "$1" ] || fail "$3: exit $2, expected $1 (log: $(tail -n 3 "$4" 2>/dev/null))"
}

run 1 reference.h5 || fail "uninterrupted reference run"
[ ! -e reference.h5.checkpoints ] || fail "checkpoints left after a complete run"
# The members' standard errors (blocking levels saved in every batch state) are in the
# archives compared below, and consistent with the ensemble datasets (duration and dt from the
# spec).
duration=$(sed -n 's/^integration:.*duration: *\([0-9.e+-]*\).*/\1/p' "$spec")
dt=$(sed -n 's/^integration:.*dt: *\([0-9.e+-]*\).*/\1/p' "$spec")
$check stderr-ensemble reference.h5 "$duration" "$dt" || fail "standard errors of the reference run"

# 1. SIGTERM on one rank at a given round, resumed on another rank count (sometimes twice).
export CHAOSWEEP_TEST_ROUND_SECONDS=0.05
i=0
for scenario in "2 1:2 1" "3 0:1 4" "4 3:3 2" "1 0:4 3 2:2 2"; do
  set -- $scenario
  i=$((i + 1))
  archive=term$i.h5
  CHAOSWEEP_TEST_STOP=$2 run "$1" "$archive"
  expect_status 3 $? "SIGTERM scenario $i (ranks $1, stop $2)" "$archive.log"
  if [ $# -eq 5 ]; then  # stopped again during the resume
    CHAOSWEEP_TEST_STOP=$4 run "$3" "$archive" --resume
    expect_status 3 $? "second SIGTERM in scenario $i" "$archive.log"
    shift 2
  fi
  run "$3" "$archive" --resume
  expect_status 0 $? "resume of scenario $i on $3 ranks" "$archive.log"
  grep -q "resuming from" "$archive.log" || fail "scenario $i: the resume did not use the checkpoint"
  $check bitwise reference.h5 "$archive" || fail "scenario $i archive differs"
done

# 2. A second run without --resume refuses to discard the checkpoints; a changed spec is refused.
CHAOSWEEP_TEST_STOP=0:2 run 2 refuse.h5
expect_status 3 $? "stop for the refusal checks" refuse.h5.log
run 2 refuse.h5
expect_status 2 $? "run without --resume over checkpoints" refuse.h5.log
grep -q "pass --resume" refuse.h5.log || fail "message does not say to pass --resume"
sed 's/seed: 3/seed: 4/' "$spec" > changed.yaml
"$mpiexec" -np 1 "$prog" run changed.yaml --archive refuse.h5 --resume --progress none \
  > changed.log 2>&1
expect_status 2 $? "resume with a changed spec" changed.log
grep -q "seed: 3.* is now .*seed: 4" changed.log || fail "changed spec not named: $(cat changed.log)"
run 1 missing.h5 --resume
expect_status 2 $? "resume with no checkpoint" missing.h5.log

# 3. Damaged files: every checkpoint file is corrupted (bytes overwritten or truncated). A
#    resume reports the damage and refuses to start over silently; with
#    --restart-from-scratch it recomputes and still ends bitwise equal.
for f in refuse.h5.checkpoints/done/*.ckpt; do
  printf 'garbage' | dd of="$f" bs=1 seek=100 conv=notrunc status=none
done
for f in refuse.h5.checkpoints/gen-*/batch-*.ckpt; do truncate -s 50 "$f"; done
run 3 refuse.h5 --resume
expect_status 2 $? "resume over nothing but damaged files" refuse.h5.log
grep -q "no usable checkpoint" refuse.h5.log || fail "refusal does not say why"
run 3 refuse.h5 --resume --restart-from-scratch
expect_status 0 $? "resume over damaged files with --restart-from-scratch" refuse.h5.log
grep -q "damaged checkpoint" refuse.h5.log || fail "damage was not reported"
$check bitwise reference.h5 refuse.h5 || fail "archive after damaged checkpoints differs"

# 4. SIGKILL of the whole job, during integration and during a checkpoint write.
kill_job_when() {  # kill_job_when ARCHIVE CONDITION NP: start a run, SIGKILL its group when CONDITION holds
  local archive=$1 condition=$2 np=$3
  setsid "$mpiexec" -np "$np" --oversubscribe "$prog" run "$spec" --archive "$archive" \
    --progress none >>"$archive.log" 2>&1 &
  local pid=$! waited=0
  # up to 300 s: a sanitizer build integrates several times slower than a normal one
  until eval "$condition" || [ $waited -ge 3000 ]; do sleep 0.1; waited=$((waited + 1)); done
  kill -KILL -- -"$pid" 2>/dev/null
  wait "$pid" 2>/dev/null
  [ $waited -lt 3000 ] || fail "$archive: condition never held: $condition"
}
unset CHAOSWEEP_TEST_STOP
export CHAOSWEEP_TEST_ROUND_DELAY=0.2  # slow rounds, so that the kill lands mid-run
# a finished batch and a complete generation after the first (generation numbers grow past 9 on
# a slow build, so any number but 1 counts)
kill_job_when kill1.h5 "ls kill1.h5.checkpoints/done/*.ckpt >/dev/null 2>&1 && ls -d kill1.h5.checkpoints/gen-* 2>/dev/null | grep -v -e '\.partial\$' -e 'gen-00000001\$' | grep -q ." 2
run 4 kill1.h5 --resume
expect_status 0 $? "resume after SIGKILL during integration" kill1.h5.log
$check bitwise reference.h5 kill1.h5 || fail "archive after SIGKILL differs"

export CHAOSWEEP_TEST_CHECKPOINT_DELAY=1.5
kill_job_when kill2.h5 "ls -d kill2.h5.checkpoints/gen-*.partial >/dev/null 2>&1" 2
unset CHAOSWEEP_TEST_CHECKPOINT_DELAY CHAOSWEEP_TEST_ROUND_DELAY
ls -d kill2.h5.checkpoints/gen-*.partial >/dev/null 2>&1 || fail "no partial generation left by the kill"
run 1 kill2.h5 --resume --restart-from-scratch
expect_status 0 $? "resume after SIGKILL during a checkpoint write" kill2.h5.log
$check bitwise reference.h5 kill2.h5 || fail "archive after SIGKILL in a checkpoint write differs"

# 5. Twin experiments: the twins' state, their log-separation series and the spread
#    accumulator are part of each batch's state; SIGTERM, then resume on another rank count.
#    Skipped when the campaign under test has twins itself (sections 1-4 covered them).
if grep -q '^ *twins:' "$spec"; then
  echo "twins: covered by $(basename "$spec")"
else
  spec=$src/tests/checkpoint/specs/restart-twins.yaml
  export CHAOSWEEP_TEST_ROUND_SECONDS=0.05
  run 1 twins-reference.h5 || fail "uninterrupted twins reference run"
  for scenario in "2 1:1 3" "3 0:2 1"; do
    set -- $scenario
    archive=twins-term-$1-$3.h5
    CHAOSWEEP_TEST_STOP=$2 run "$1" "$archive"
    expect_status 3 $? "twins: SIGTERM on $1 ranks (stop $2)" "$archive.log"
    run "$3" "$archive" --resume
    expect_status 0 $? "twins: resume on $3 ranks" "$archive.log"
    grep -q "resuming from" "$archive.log" || fail "twins: the resume did not use the checkpoint"
    $check bitwise twins-reference.h5 "$archive" || fail "twins archive after resume differs"
  done
  unset CHAOSWEEP_TEST_ROUND_SECONDS
fi

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all interruption scenarios ended bitwise equal to the uninterrupted run"
