#!/usr/bin/env bash
# A campaign run as several jobs (`run --part I/N`, then `merge`) gives the archive of one
# job, dataset by dataset bitwise: parts on different rank counts, one part stopped and
# resumed on another rank count, parts given to merge in any order, merge on 1 or 2 ranks;
# also under stochastic forcing, with twins.
# Bad parts (another spec, a duplicate, a missing one, a damaged file, a whole archive) and
# bad --part values exit 2 with one line naming the part, and write nothing.
# Usage: parts.sh CHAOSWEEP WORKDIR SOURCE_DIR MPIEXEC
set -uo pipefail
prog=$1 work=$2 src=$3 mpiexec=$4
check="/usr/bin/python3 $src/tests/e2e/check_archive.py"
rm -rf "$work" && mkdir -p "$work" && cd "$work" || exit 1
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }
expect_status() {  # expect_status WANT GOT WHAT LOG
  [ "$2" -eq "$1" ] || fail "$3: exit $2, expected $1 ($(tail -n 2 "$4" 2>/dev/null))"
}
# one_line LOG WHAT PATTERN: the log is one error line matching PATTERN
one_line() {
  [ "$(wc -l < "$1")" -eq 1 ] || fail "$2: not one line: $(cat "$1")"
  grep -q -- "$3" "$1" || fail "$2: line does not match '$3': $(cat "$1")"
}
mpirun() { local np=$1; shift; "$mpiexec" -np "$np" --oversubscribe "$prog" "$@"; }

# Every merged statistic over 2 cases x 25 batches (members sampled), and a scheduled campaign
# with stored trajectories and every member archived (2 cases x 2 batches).
many=$src/tests/e2e/specs/l63-many-batches.yaml
ramp=$src/tests/e2e/specs/l63-combo-ramp.yaml

mpirun 2 run "$many" --archive many-whole.h5 --progress none > many-whole.log 2>&1 ||
  fail "single run of the many-batch campaign"
mpirun 1 run "$many" --part 1/4 --archive many-1.h5 --progress none > many-1.log 2>&1 ||
  fail "part 1/4 on 1 rank"
mpirun 2 run "$many" --part 2/4 --archive many-2.h5 --progress none > many-2.log 2>&1 ||
  fail "part 2/4 on 2 ranks"
# part 3 stopped (SIGTERM on rank 1 after its first round, one chunk of steps with
# ROUND_SECONDS 0 whatever the machine's speed), resumed on 3 ranks
CHAOSWEEP_TEST_ROUND_SECONDS=0 CHAOSWEEP_TEST_STOP=1:1 \
  mpirun 2 run "$many" --part 3/4 --archive many-3.h5 --progress none > many-3.log 2>&1
expect_status 3 $? "part 3/4 stopped" many-3.log
grep -q -- "--part 3/4 --archive many-3.h5 --resume" many-3.log ||
  fail "the stopped part's resume command lacks --part: $(grep continue many-3.log)"
[ ! -e many-3.h5 ] || fail "a stopped part left a part archive"
mpirun 3 run "$many" --part 3/4 --archive many-3.h5 --progress none --resume >> many-3.log 2>&1 ||
  fail "part 3/4 resumed on 3 ranks"
grep -q "resuming from" many-3.log || fail "part 3/4 did not resume from its checkpoint"
mpirun 1 run "$many" --part 4/4 --archive many-4.h5 --progress none > many-4.log 2>&1 ||
  fail "part 4/4"
grep -q "part 4 of 4: batches 38 to 49 (12 of them)" many-4.log ||
  fail "part 4/4 does not log its batches: $(grep 'part 4 of 4' many-4.log)"
mpirun 1 merge many-merged.h5 many-3.h5 many-1.h5 many-4.h5 many-2.h5 > merge.log 2>&1 ||
  fail "merge of 4 parts: $(tail -n 2 merge.log)"
$check bitwise many-whole.h5 many-merged.h5 || fail "merged archive differs from the single run"
mpirun 2 merge many-merged2.h5 many-2.h5 many-4.h5 many-1.h5 many-3.h5 > merge2.log 2>&1 ||
  fail "merge on 2 ranks: $(tail -n 2 merge2.log)"
$check bitwise many-whole.h5 many-merged2.h5 || fail "merge on 2 ranks differs from the single run"
# a complete part is not run again
mpirun 1 run "$many" --part 4/4 --archive many-4.h5 --progress none --resume > again.log 2>&1
expect_status 0 $? "--resume of a complete part" again.log
grep -q "part 4 of 4 is complete" again.log || fail "complete part not reported: $(cat again.log)"

mpirun 2 run "$ramp" --archive ramp-whole.h5 --progress none > ramp-whole.log 2>&1 ||
  fail "single run of the scheduled campaign"
for i in 1 2 3; do
  mpirun $((4 - i)) run "$ramp" --part $i/3 --archive ramp-$i.h5 --progress none \
    > ramp-$i.log 2>&1 || fail "scheduled campaign part $i/3"
done
mpirun 1 merge ramp-merged.h5 ramp-2.h5 ramp-3.h5 ramp-1.h5 > ramp-merge.log 2>&1 ||
  fail "merge of the scheduled campaign"
$check bitwise ramp-whole.h5 ramp-merged.h5 || fail "scheduled campaign: merged archive differs"
/usr/bin/python3 - ramp-merged.h5 <<'PY' || fail "the merged archive's attributes"
import sys
import h5py
with h5py.File(sys.argv[1], "r") as f:
    assert f.attrs["parts"] == 3, f.attrs["parts"]
    assert f.attrs["ranks"] == 3 + 2 + 1, f.attrs["ranks"]
    assert f.attrs["status"] == "complete"
    assert f["trajectory/state"].shape[1] == 24  # every stored member came through
PY

# Under stochastic forcing (increments keyed by member and step, not by part): the noisy
# Ornstein-Uhlenbeck campaign in 3 parts and the one with twins sharing their member's noise
# in 2, each merged bitwise into the single run's archive.
for noisy in ou-heun:3 ou-twins:2; do
  name=${noisy%%:*} parts=${noisy##*:}
  spec=$src/tests/e2e/specs/$name.yaml
  mpirun 2 run "$spec" --archive $name-whole.h5 --progress none > $name-whole.log 2>&1 ||
    fail "single run of $name"
  list=()
  for i in $(seq 1 "$parts"); do
    mpirun $((i % 2 + 1)) run "$spec" --part $i/$parts --archive $name-$i.h5 --progress none \
      > $name-$i.log 2>&1 || fail "$name part $i/$parts"
    list=("$name-$i.h5" "${list[@]}")
  done
  mpirun 2 merge $name-merged.h5 "${list[@]}" > $name-merge.log 2>&1 || fail "merge of $name"
  $check bitwise $name-whole.h5 $name-merged.h5 || fail "$name: merged archive differs"
done

# With checkpoint.directory set, each part keeps its checkpoints in its own subdirectory:
# both parts stopped after 6 rounds of one chunk each (ROUND_SECONDS 0; the chunks double from
# 64 steps, so a batch of 800 steps has finished by then), then resumed, each from its own.
sed 's/^run: {batch_size: 8}/run: {batch_size: 8}\ncheckpoint: {directory: shared-ckpt}/' "$many" \
  > shared.yaml
for i in 1 2; do
  CHAOSWEEP_TEST_ROUND_SECONDS=0 CHAOSWEEP_TEST_STOP=0:6 \
    mpirun 1 run shared.yaml --part $i/2 --archive shared-$i.h5 --progress none > shared-$i.log 2>&1
  expect_status 3 $? "part $i/2 with checkpoint.directory stopped" shared-$i.log
done
for i in 1 2; do
  mpirun 1 run shared.yaml --part $i/2 --archive shared-$i.h5 --progress none --resume \
    >> shared-$i.log 2>&1 || fail "part $i/2 with checkpoint.directory resumed"
  grep -q "resuming from shared-ckpt/part-$i-of-2: [1-9]" shared-$i.log ||
    fail "part $i/2 did not resume from its own subdirectory: $(grep resuming shared-$i.log)"
done
mpirun 1 merge shared-merged.h5 shared-2.h5 shared-1.h5 > shared-merge.log 2>&1 ||
  fail "merge of the parts with checkpoint.directory"
mpirun 2 run shared.yaml --archive shared-whole.h5 --progress none > shared-whole.log 2>&1 ||
  fail "single run with checkpoint.directory"
$check bitwise shared-whole.h5 shared-merged.h5 || fail "parts with checkpoint.directory differ"

# Bad parts: one line naming the part, exit 2, no archive written.
bad_merge() {  # bad_merge WHAT PATTERN PART...
  local what=$1 pattern=$2
  shift 2
  "$prog" merge bad.h5 "$@" > bad.log 2>&1
  expect_status 2 $? "$what" bad.log
  one_line bad.log "$what" "$pattern"
  [ ! -e bad.h5 ] || fail "$what: an archive was written"
  rm -f bad.h5
}
bad_merge "a part of another spec" "ramp-1.h5: part of another campaign spec than many-1.h5" \
  many-1.h5 many-2.h5 many-3.h5 ramp-1.h5
bad_merge "a part given twice" "many-2.h5: part 2 of 4 is given twice" \
  many-1.h5 many-2.h5 many-3.h5 many-4.h5 many-2.h5
bad_merge "a missing part" "part 3 of 4 is missing" many-1.h5 many-2.h5 many-4.h5
"$prog" run "$many" --part 2/2 --archive half-2.h5 --progress none > half.log 2>&1 ||
  fail "part 2/2"
bad_merge "a part of another split" "half-2.h5: part 2 of 2, but many-1.h5 is part 1 of 4" \
  many-1.h5 half-2.h5
bad_merge "a whole archive" "many-whole.h5: the archive of a whole campaign, not a part" \
  many-1.h5 many-2.h5 many-whole.h5 many-4.h5
cp many-2.h5 damaged.h5
printf 'XXXX' | dd of=damaged.h5 bs=1 seek=4096 conv=notrunc 2> /dev/null
bad_merge "a damaged part" "damaged.h5: archive is damaged.*run that part again" \
  many-1.h5 damaged.h5 many-3.h5 many-4.h5
bad_merge "a missing file" "nothing.h5: no such part archive" many-1.h5 nothing.h5
"$prog" merge many-merged.h5 many-1.h5 many-2.h5 many-3.h5 many-4.h5 > exists.log 2>&1
expect_status 2 $? "merge over an existing archive" exists.log
one_line exists.log "merge over an existing archive" "exists; pass --overwrite"

# Bad --part values, and more parts than batches.
for value in 0/4 5/4 x 3 1/0; do
  "$prog" run "$many" --part "$value" --archive p.h5 > part.log 2>&1
  expect_status 2 $? "--part $value" part.log
  one_line part.log "--part $value" "--part: \`$value\` is not I/N"
done
"$prog" run "$ramp" --part 1/5 --archive p.h5 > part.log 2>&1
expect_status 2 $? "--part with more parts than batches" part.log
one_line part.log "more parts than batches" "5 parts, but the campaign has only 4 batches"
[ ! -e p.h5 ] && [ ! -e p.h5.checkpoints ] || fail "a refused --part created files"

[ "$failures" -eq 0 ] && echo "ok: parts merge into the single run's archive; bad parts refused"
exit $((failures > 0))
