#!/usr/bin/env bash
# Interrupted campaigns finish with the same archive, bitwise, whatever the interruption
# (SIGTERM at several points, SIGKILL of the whole job during a run and during a checkpoint
# write, damaged checkpoint files, one damaged record of a finished batch: its payload, its
# header, or a last record cut short) and whatever the rank count of the resume.
# Usage: interrupt_resume.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC [SPEC]
# (SPEC defaults to tests/checkpoint/specs/restart.yaml; its seed must be `seed: 3`.)
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
check="/usr/bin/python3 $src/tests/e2e/check_archive.py"
segments="/usr/bin/python3 $src/tests/checkpoint/damage_segment.py"
spec=${5:-$src/tests/checkpoint/specs/restart.yaml}
given_spec=${5:-}
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

# 3. Damaged files: every record of a finished batch and every file of a batch in progress
#    is corrupted (a flipped byte in each payload, files truncated). A resume reports the
#    damage and refuses to start over silently; with --restart-from-scratch it recomputes and
#    still ends bitwise equal.
for f in refuse.h5.checkpoints/done/segment-*.ckpt; do
  [ -e "$f" ] || continue
  $segments payload "$f" all >/dev/null || fail "cannot damage $f"
done
for f in refuse.h5.checkpoints/gen-*/batch-*.ckpt; do truncate -s 50 "$f"; done
run 3 refuse.h5 --resume
expect_status 2 $? "resume over nothing but damaged files" refuse.h5.log
grep -q "no usable checkpoint" refuse.h5.log || fail "refusal does not say why"
run 3 refuse.h5 --resume --restart-from-scratch
expect_status 0 $? "resume over damaged files with --restart-from-scratch" refuse.h5.log
grep -q "damaged checkpoint" refuse.h5.log || fail "damage was not reported"
$check bitwise reference.h5 refuse.h5 || fail "archive after damaged checkpoints differs"

# 3b. One damaged record among sound ones costs only its batch. A run on 2 ranks is stopped
#     (SIGUSR1 to mpirun) once rank 0's segment holds two finished batches; copies of its
#     checkpoints get a flipped byte in one record's payload, a damaged header, or a last
#     record cut short (as a kill during the append leaves it), and each resumes bitwise.
batches=$(sed -n 's/.*, \([0-9]*\) batches of .*/\1/p' reference.h5.log | head -n 1)
CHAOSWEEP_TEST_ROUND_DELAY=0.3 setsid "$mpiexec" -np 2 --oversubscribe "$prog" run "$spec" \
  --archive segments.h5 --progress none >>segments.h5.log 2>&1 &
pid=$! waited=0
until [ "$($segments check segments.h5.checkpoints/done/segment-00000.ckpt 2>/dev/null |
           grep -o '[0-9]* sound' | cut -d' ' -f1)" -ge 2 ] 2>/dev/null || [ $waited -ge 3000 ]; do
  sleep 0.1
  waited=$((waited + 1))
done
kill -USR1 "$pid"
wait "$pid"
expect_status 3 $? "stop of the run whose records are damaged" segments.h5.log
files=$(find segments.h5.checkpoints -type f | wc -l)
# campaign.yaml, a segment per rank, and per kept generation (keep: 2) a state per rank and
# the manifest: never a file per finished batch
[ "$files" -le 9 ] || fail "$files checkpoint files after a stop on 2 ranks"
for kind in payload header cut; do
  cp -a segments.h5.checkpoints "$kind.h5.checkpoints"
done
seg=done/segment-00000.ckpt
$segments payload payload.h5.checkpoints/$seg 1 > payload.h5.log || fail "damaging a payload"
run 3 payload.h5 --resume
expect_status 0 $? "resume after a damaged payload" payload.h5.log
batch=$(sed -n 's/.*(batch \([0-9]*\),.*/\1/p' payload.h5.log | head -n 1)
grep -q "record of batch $batch at byte .*checksum mismatch.*batch $batch will be recomputed" \
  payload.h5.log || fail "damaged payload of batch $batch not reported: $(grep warn payload.h5.log)"
$check bitwise reference.h5 payload.h5 || fail "archive after a damaged payload differs"

$segments header header.h5.checkpoints/$seg 0 > header.h5.log || fail "damaging a header"
run 1 header.h5 --resume
expect_status 0 $? "resume after a damaged header" header.h5.log
grep -q "damaged checkpoint (record header at byte .*); skipped .* bytes to the next record" \
  header.h5.log || fail "damaged header not reported: $(grep warn header.h5.log)"
$check bitwise reference.h5 header.h5 || fail "archive after a damaged header differs"

# The cut record is ignored and, before rank 0 appends to that segment again, cut off: with
# the archive's path blocked (a directory at ARCHIVE.partial) the run fails after every batch
# finished, and every segment then holds sound records only, every batch among them.
$segments cut cut.h5.checkpoints/$seg > cut.h5.log || fail "cutting the last record"
mkdir cut.h5.partial
run 2 cut.h5 --resume
expect_status 1 $? "resume after a cut record, with the archive blocked" cut.h5.log
grep -q "its last record was cut short" cut.h5.log || fail "cut record not noticed"
$segments check cut.h5.checkpoints/done/segment-*.ckpt --batches "$batches" \
  || fail "segments after appending behind a cut record"
rmdir cut.h5.partial
run 3 cut.h5 --resume
expect_status 0 $? "resume after a cut record" cut.h5.log
grep -q "resuming from .*: $batches batches finished" cut.h5.log \
  || fail "finished batches not read back"
grep -Eq "checkpoints: [0-9]+ files" cut.h5.log || fail "no checkpoint cost line"
$check bitwise reference.h5 cut.h5 || fail "archive after a cut record differs"

# 3c. Checkpoints of the older format (one file per finished batch) are refused in one line.
mkdir -p older.h5.checkpoints/done
cp segments.h5.checkpoints/campaign.yaml older.h5.checkpoints/
printf 'CWCKPT01' > older.h5.checkpoints/done/batch-0000000000.ckpt
run 2 older.h5 --resume
expect_status 2 $? "resume over checkpoints of the older format" older.h5.log
[ "$(grep -c 'holds checkpoints of an older format (one file per finished batch)' older.h5.log)" \
  -eq 1 ] || fail "older format not refused in one line: $(cat older.h5.log)"

# 4. SIGKILL of the whole job, during integration and during a checkpoint write.
kill_job_when() {  # kill_job_when ARCHIVE CONDITION NP: start a run, SIGKILL its group when CONDITION holds
  local archive=$1 condition=$2 np=$3
  setsid "$mpiexec" -np "$np" --oversubscribe "$prog" run "$spec" --archive "$archive" \
    --progress none >>"$archive.log" 2>&1 &
  local pid=$! waited=0
  # up to 300 s: a sanitizer build integrates several times slower than a normal one
  until eval "$condition" || [ $waited -ge 3000 ]; do sleep 0.1; waited=$((waited + 1)); done
  # mpiexec puts every rank in a process group of its own, inside the session setsid opened:
  # kill the whole session and wait until none of it is left, so that no rank of the killed
  # job still commits a checkpoint generation while the resume runs
  pkill -KILL -s "$pid" 2>/dev/null
  wait "$pid" 2>/dev/null
  local gone=0
  while pgrep -s "$pid" >/dev/null && [ $gone -lt 300 ]; do sleep 0.1; gone=$((gone + 1)); done
  pgrep -s "$pid" >/dev/null && fail "$archive: processes of the killed job still run"
  [ $waited -lt 3000 ] || fail "$archive: condition never held: $condition"
}
unset CHAOSWEEP_TEST_STOP
export CHAOSWEEP_TEST_ROUND_DELAY=0.2  # slow rounds, so that the kill lands mid-run
# a finished batch and a complete generation after the first (generation numbers grow past 9 on
# a slow build, so any number but 1 counts)
kill_job_when kill1.h5 "ls kill1.h5.checkpoints/done/segment-*.ckpt >/dev/null 2>&1 && ls -d kill1.h5.checkpoints/gen-* 2>/dev/null | grep -v -e '\.partial\$' -e 'gen-00000001\$' | grep -q ." 2
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

# 5. Twin experiments and response sums: the twins' state, their log-separation series, the spread
#    accumulator and the response sums with their window of past states are part of each
#    batch's state; SIGTERM, then resume on another rank count.
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

# 6. Stops and failures that do not depend on the campaign's statistics (run with the default
#    spec only): what each rank logs, what mpirun returns, the printed resume command, rates
#    after a resume, --overwrite over another spec's checkpoints, and what a failure leaves.
if [ -z "$given_spec" ]; then
  spec=$src/tests/checkpoint/specs/restart.yaml
  export CHAOSWEEP_TEST_ROUND_SECONDS=0.05
  launcher=$(basename "$mpiexec")  # the name the ranks see their signal come from
  # signal_job ARCHIVE SIGNAL [MPIRUN OPTIONS...]: a run with slow rounds, SIGNAL to its mpirun
  # once the run has started; returns mpirun's status
  signal_job() {
    local archive=$1 signal=$2 waited=0
    shift 2
    # a background job of a script starts with SIGINT ignored; mpirun must see it as from a terminal
    CHAOSWEEP_TEST_ROUND_DELAY=0.2 setsid /usr/bin/python3 -c 'import os, signal, sys
signal.signal(signal.SIGINT, signal.SIG_DFL)
os.execvp(sys.argv[1], sys.argv[1:])' "$mpiexec" "$@" -np 2 --oversubscribe "$prog" run "$spec" \
      --archive "$archive" --progress none >>"$archive.log" 2>&1 &
    local pid=$!
    until [ -d "$archive.checkpoints/done" ] || [ $waited -ge 3000 ]; do sleep 0.1; waited=$((waited + 1)); done
    kill -"$signal" "$pid"
    wait "$pid"
  }
  both_ranks_logged() {  # both_ranks_logged LOG TEXT
    for r in 0 1; do
      grep -q "\[rank $r\] received $2" "$1" || fail "$1: rank $r did not log \"received $2\""
    done
  }
  # Ctrl-C reaches mpirun only (the ranks have process groups of their own). Open MPI 4.1's
  # mpirun sends every rank SIGCONT at once, SIGTERM after odls_base_sigkill_timeout seconds
  # (default 1; 3 here, so that the stop always completes before the SIGKILL that follows as
  # long again), and returns 1 whatever the ranks returned.
  signal_job int.h5 INT --mca odls_base_sigkill_timeout 3
  expect_status 1 $? "mpirun after Ctrl-C (SIGINT to mpirun)" int.h5.log
  both_ranks_logged int.h5.log "SIGTERM (signal 15) from $launcher"
  grep -q "continue with: mpirun -np 2 chaosweep run $spec --archive int.h5 --resume" int.h5.log \
    || fail "Ctrl-C: no resume command with mpirun -np 2: $(grep 'continue with' int.h5.log)"
  run 2 int.h5 --resume
  expect_status 0 $? "resume after Ctrl-C" int.h5.log
  $check bitwise reference.h5 int.h5 || fail "archive after Ctrl-C differs"

  # SIGUSR1 to mpirun is forwarded to every rank as it is; mpirun then returns the ranks' 3.
  signal_job usr1.h5 USR1
  expect_status 3 $? "mpirun after SIGUSR1" usr1.h5.log
  both_ranks_logged usr1.h5.log "SIGUSR1 (signal 10) from $launcher"
  run 3 usr1.h5 --resume
  expect_status 0 $? "resume after SIGUSR1" usr1.h5.log
  $check bitwise reference.h5 usr1.h5 || fail "archive after SIGUSR1 differs"
  # Exact: the campaign holds cases x members x (spinup + duration) / dt member-steps
  # (3 x 80 x 4001000 for restart.yaml). The resumed run counts only what it integrated: every
  # finished batch it read back (16 members, all steps) is left out, and of each batch in
  # progress the steps already taken.
  /usr/bin/python3 - usr1.h5.log <<'PY' || fail "member-steps after a resume"
import re, sys
log = open(sys.argv[1]).read().split("resuming from", 1)[1]
finished, running = map(int, re.search(r"(\d+) batches finished, (\d+) in progress", log).groups())
integrated, read_back, campaign = map(int, re.search(
    r"integrated (\d+) member-steps .*; the other (\d+) of the campaign's (\d+) were read back",
    log).groups())
steps = round((5 + 20000) / 0.005)
assert campaign == 3 * 80 * steps, campaign
assert integrated + read_back == campaign
assert finished * 16 * steps <= read_back <= (finished + running) * 16 * steps, \
    (finished, running, read_back)
assert finished + running > 0 and integrated < campaign
print(f"ok: {integrated} of {campaign} member-steps integrated after the resume")
PY

  # --overwrite discards checkpoints, even those of another spec, and says so in one line.
  CHAOSWEEP_TEST_STOP=0:2 "$mpiexec" -np 2 --oversubscribe "$prog" run changed.yaml \
    --archive overwrite.h5 --progress none >>overwrite.h5.log 2>&1
  expect_status 3 $? "stop of the other spec's run" overwrite.h5.log
  run 2 overwrite.h5 --overwrite
  expect_status 0 $? "run --overwrite over another spec's checkpoints" overwrite.h5.log
  [ "$(grep -c "discarding the checkpoints" overwrite.h5.log)" -eq 1 ] \
    || fail "--overwrite did not say once that it discards the checkpoints"
  $check bitwise reference.h5 overwrite.h5 || fail "archive after --overwrite differs"
  [ ! -e overwrite.h5.checkpoints ] || fail "checkpoints left after run --overwrite"

  # A failure after a generation was saved keeps the checkpoints (--resume continues); one
  # before any batch finished or any generation was saved removes the directory it created.
  CHAOSWEEP_TEST_THROW=1:6 run 2 failed-late.h5  # rounds of >= 0.05 s, generations every 0.2 s
  [ $? -ne 0 ] || fail "injected late failure: exit 0"
  ls -d failed-late.h5.checkpoints/gen-* 2>/dev/null | grep -q -v '\.partial$' \
    || fail "late failure: no complete generation kept"
  run 2 failed-late.h5 --resume
  expect_status 0 $? "resume after a failing rank" failed-late.h5.log
  $check bitwise reference.h5 failed-late.h5 || fail "archive after a failing rank differs"
  CHAOSWEEP_TEST_ROUND_SECONDS=0 CHAOSWEEP_TEST_THROW=0:1 run 2 failed-early.h5
  [ $? -ne 0 ] || fail "injected early failure: exit 0"
  grep -q "no batch had finished; failed-early.h5.checkpoints was removed" failed-early.h5.log \
    || fail "early failure: the error line does not say the directory was removed"
  [ ! -e failed-early.h5.checkpoints ] || fail "early failure: checkpoint directory left behind"
  unset CHAOSWEEP_TEST_ROUND_SECONDS
fi

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "all interruption scenarios ended bitwise equal to the uninterrupted run"
