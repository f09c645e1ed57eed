#!/usr/bin/env bash
# Resumes on another rank count than wrote the checkpoints, with one segment damaged, end
# bitwise equal to the uninterrupted run. On a resume each rank reads the record headers of a
# share of the segments only and sends the entries to the ranks that own their batches, so the
# damage must still be found, reported once (on rank 0, whichever rank read the segment) and
# cost only its batches, and the counts must be those of the records left sound.
#
# A campaign of 60 batches is stopped on 3 ranks (SIGUSR1 to mpirun) once each of the three
# segments holds 12 of its rank's 20 batches or more, so that on 2 and 4 ranks some batches of a
# segment belong to another rank than the one that reads it; copies of its checkpoints then get
#   A. the header of segment 2's first record damaged: resumed on 2 ranks and stopped again,
#      then on 4 (the segments now hold records of two runs);
#   B. segment 2's last record cut short and a payload in segment 1 damaged: resumed on 4
#      ranks, oversubscribed (segments 1 and 2 read by other ranks than rank 0, which reports
#      the damage of every segment: an info line of another rank would not be logged);
#   C. segment 2 unreadable (a directory in its place): resumed on 2 ranks.
# Usage: shared_index.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
check="/usr/bin/python3 $src/tests/e2e/check_archive.py"
segments="/usr/bin/python3 $src/tests/checkpoint/damage_segment.py"
spec=$src/tests/checkpoint/specs/restart-many.yaml
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
expect_status() {  # expect_status WANT GOT WHAT LOG
  [ "$2" -eq "$1" ] || fail "$3: exit $2, expected $1 (log: $(tail -n 3 "$4" 2>/dev/null))"
}
sound() {  # sound SEGMENT: its number of records, all sound (empty if any is not)
  $segments check "$1" 2>/dev/null | grep -o '[0-9]* sound' | cut -d' ' -f1
}
lines() {  # lines LOG PATTERN: how many lines of LOG match PATTERN
  grep -c -- "$2" "$1"
}
expect_resume() {  # expect_resume LOG FINISHED DAMAGED: the last resume's counts
  local got
  got=$(grep "resuming from" "$1" | tail -n 1)
  echo "$got" | grep -q ": $2 batches finished, [0-9]* in progress, $3 damaged checkpoints" \
    || fail "$1: expected $2 batches finished and $3 damaged checkpoints: $got"
}

run 1 reference.h5 || fail "uninterrupted reference run"

# The checkpoints of a run on 3 ranks, stopped once every segment holds 12 records or more.
export CHAOSWEEP_TEST_ROUND_SECONDS=0.05
CHAOSWEEP_TEST_ROUND_DELAY=0.3 setsid "$mpiexec" -np 3 --oversubscribe "$prog" run "$spec" \
  --archive written.h5 --progress none >>written.h5.log 2>&1 &
pid=$! waited=0
seg=written.h5.checkpoints/done/segment-0000
until [ "$(sound ${seg}0.ckpt)" -ge 12 ] 2>/dev/null && [ "$(sound ${seg}1.ckpt)" -ge 12 ] 2>/dev/null &&
      [ "$(sound ${seg}2.ckpt)" -ge 12 ] 2>/dev/null || [ $waited -ge 3000 ]; do
  sleep 0.1
  waited=$((waited + 1))
done
kill -USR1 "$pid"
wait "$pid"
expect_status 3 $? "stop of the run on 3 ranks" written.h5.log
n0=$(sound ${seg}0.ckpt) n1=$(sound ${seg}1.ckpt) n2=$(sound ${seg}2.ckpt)
[ -n "$n0" ] && [ -n "$n1" ] && [ -n "$n2" ] || fail "segments of the stopped run not sound"
total=$((n0 + n1 + n2))
echo "written on 3 ranks: $n0 + $n1 + $n2 = $total finished batches of 60"
[ "$total" -lt 60 ] || fail "the run on 3 ranks finished before it was stopped"
for variant in a b c; do cp -a written.h5.checkpoints $variant.h5.checkpoints; done

# A. A damaged header in segment 2: one record lost, reported once by rank 0.
$segments header a.h5.checkpoints/done/segment-00002.ckpt 0 > a.h5.log || fail "damaging a header"
CHAOSWEEP_TEST_STOP=1:2 run 2 a.h5 --resume
expect_status 3 $? "A: resume on 2 ranks, stopped again" a.h5.log
expect_resume a.h5.log $((total - 1)) 1
[ "$(lines a.h5.log 'damaged checkpoint (record header at byte 0)')" -eq 1 ] \
  || fail "A: the damaged header not reported once: $(grep -c warn a.h5.log) warnings"
grep -q "\[rank 0\] .*segment-00002.ckpt: damaged checkpoint (record header at byte 0); skipped" \
  a.h5.log || fail "A: the damaged header not reported by rank 0"
# what the run on 2 ranks appended (to segments 0 and 1) is finished too
m0=$(sound a.h5.checkpoints/done/segment-00000.ckpt) m1=$(sound a.h5.checkpoints/done/segment-00001.ckpt)
run 4 a.h5 --resume
expect_status 0 $? "A: second resume, on 4 ranks" a.h5.log
expect_resume a.h5.log $((total - 1 + m0 - n0 + m1 - n1)) 1
[ "$(lines a.h5.log 'damaged checkpoint (record header at byte 0)')" -eq 2 ] \
  || fail "A: the damaged header not reported once by the second resume"
$check bitwise reference.h5 a.h5 || fail "A: archive after resumes on 2 and 4 ranks differs"

# B. The last record of segment 2 cut short and one payload of segment 1 damaged, on 4 ranks.
$segments cut b.h5.checkpoints/done/segment-00002.ckpt > b.h5.log || fail "cutting a record"
$segments payload b.h5.checkpoints/done/segment-00001.ckpt 1 >> b.h5.log || fail "damaging a payload"
batch=$(sed -n 's/.*payload of record 1 (batch \([0-9]*\),.*/\1/p' b.h5.log)
run 4 b.h5 --resume
expect_status 0 $? "B: resume on 4 ranks" b.h5.log
expect_resume b.h5.log $((total - 2)) 1
[ "$(lines b.h5.log 'its last record was cut short')" -eq 1 ] || fail "B: cut record not noticed once"
grep -q "\[rank 0\] .*segment-00002.ckpt: its last record was cut short" b.h5.log \
  || fail "B: the cut record not reported by rank 0"
[ "$(lines b.h5.log "record of batch $batch at byte .*checksum mismatch.*batch $batch will be recomputed")" \
  -eq 1 ] || fail "B: damaged payload of batch $batch not reported once: $(grep warn b.h5.log)"
$check bitwise reference.h5 b.h5 || fail "B: archive after a resume on 4 ranks differs"

# C. Segment 2 cannot be read: its records are lost, the others restored.
rm c.h5.checkpoints/done/segment-00002.ckpt && mkdir c.h5.checkpoints/done/segment-00002.ckpt
run 2 c.h5 --resume
expect_status 0 $? "C: resume on 2 ranks over an unreadable segment" c.h5.log
expect_resume c.h5.log $((n0 + n1)) 1
[ "$(lines c.h5.log 'segment-00002.ckpt: .*(damaged checkpoint); the batches there will be recomputed')" \
  -eq 1 ] || fail "C: the unreadable segment not reported once: $(grep warn c.h5.log)"
$check bitwise reference.h5 c.h5 || fail "C: archive after an unreadable segment differs"

[ "$failures" -eq 0 ] || { echo "$failures failures"; exit 1; }
echo "resumes on 2 and 4 ranks of checkpoints written on 3, damaged, ended bitwise equal"
