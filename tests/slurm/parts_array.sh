#!/usr/bin/env bash
# slurm.parts_array: a campaign run as a job array on a real scheduler. `chaosweep slurm
# --parts 4` writes the array's script, the merge job's and the submitting script; the array's
# 4 tasks (one rank each) run parts 1-4, task 2 is stopped by USR1 in mid-run, checkpoints,
# requeues itself and resumes; the merge job starts only when every task has succeeded
# (afterok) and writes the archive, which must be bitwise the direct single run's.
# Usage: parts_array.sh CHAOSWEEP SOURCE_DIR WORK_DIR   (SLURM_CONF set by the fixture)
set -uo pipefail
CHAOSWEEP=$1
SOURCE_DIR=$2
work=$3
source "$SOURCE_DIR/tests/slurm/lib.sh"
name=slurm-l63-long
archive=$name.h5
spec=$work/$name.yaml
fresh_dir "$work"
# About 24 s of work on 2 ranks: each part about 12 s on its one rank.
scaled_spec "$SOURCE_DIR/tests/slurm/specs/l63-slurm-long.yaml" "$spec" 24

fresh_dir "$work/job"
(cd "$work/job" && "$CHAOSWEEP" slurm "$spec" --site "$SOURCE_DIR/slurm/sites/localhost.sh" \
   --nodes 1 --tasks-per-node 1 --time 00:05:00 --signal-margin 60 --max-requeues 3 \
   --launcher srun --parts 4 --script job.sh > generate.out) || fail "chaosweep slurm --parts failed"
for script in job.sh job-merge.sh job-submit.sh; do
  bash -n "$work/job/$script" || fail "$script is not valid bash"
done
grep -qxF "#SBATCH --array=1-4" "$work/job/job.sh" || fail "job.sh is not a 4-task array"

# A launch that starts no task is retried after 2 s, not 15 (tasks starting together).
export CHAOSWEEP_LAUNCH_RETRY_DELAY=2
submitted=$SECONDS
out=$("$work/job/job-submit.sh") || fail "job-submit.sh failed: $out"
note "$out"
array=$(sed -n 's/^submitted job array \([0-9]*\) .*/\1/p' <<<"$out")
merge=$(sed -n 's/.* and merge job \([0-9]*\) .*/\1/p' <<<"$out")
[ -n "$array" ] && [ -n "$merge" ] || fail "no job ids in: $out"
[ "$(job_field "$merge" Dependency)" = "afterok:${array}_*(unfulfilled)" ] ||
  note "merge dependency: $(job_field "$merge" Dependency)"

# Task 2 is stopped once its run has planned its part (stop handlers installed).
log2=$work/job/$name-${array}_2.log
wait_for_log_line "$log2" "part 2 of 4: batches" 180
sleep 1
scancel --batch --signal=USR1 "${array}_2" || fail "cannot signal task 2"
note "sent USR1 to task ${array}_2"

# The reference, run directly while the array works.
fresh_dir "$work/reference"
reference_run "$work/reference" "$spec"

read -r state code < <(wait_for_job "$merge" 420)
note "merge job $merge: $state, exit $code, $((SECONDS - submitted)) s after submission"
for i in 1 2 3 4; do
  echo "--- task $i"
  cat "$work/job/$name-${array}_$i.log"
done
echo "--- merge"
cat "$work/job/$name-merge-$merge.log"
[ "$state" = COMPLETED ] && [ "$code" = 0 ] || fail "merge job $merge ended $state $code"

grep -q "run ended with status 3 " "$log2" || fail "task 2 was not stopped with a checkpoint"
grep -q "run stopped with a checkpoint: requeueing" "$log2" || fail "task 2 did not requeue"
grep -q "started srun (pid [0-9]*): .* --part 2/4 .*--resume" "$log2" ||
  fail "task 2 did not resume its part"
grep -q "part 2 of 4 complete" "$log2" || fail "task 2's part is not complete"
for i in 1 3 4; do
  grep -q "part $i of 4 complete" "$work/job/$name-${array}_$i.log" || fail "part $i not complete"
done
grep -q "campaign complete" "$work/job/$name-merge-$merge.log" || fail "the merge log says no more"
check_bitwise "$work/reference/$archive" "$work/job/$archive"
echo "slurm.parts_array: 4 parts (one requeued) merged; archive bitwise identical to the single run"
