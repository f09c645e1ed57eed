#!/usr/bin/env bash
# slurm.launch_retry: a job step whose tasks fail to start can end with status 0 and run
# nothing. The batch script written by `chaosweep slurm` must not call that a complete
# campaign: it launches again (at most twice) and fails with status 1 and a clear log line
# when no launch runs the campaign. Runs the script outside Slurm with a stand-in `srun` on
# PATH that ends its first FAILURES calls with status 0 without starting anything and runs the
# rest under mpirun, as srun would.
# Usage: launch_retry.sh CHAOSWEEP SOURCE_DIR WORK_DIR
set -uo pipefail
CHAOSWEEP=$1
SOURCE_DIR=$2
work=$3
source "$SOURCE_DIR/tests/slurm/lib.sh"
spec=$SOURCE_DIR/tests/slurm/specs/l63-slurm-small.yaml
archive=slurm-l63-small.h5

fresh_dir "$work/bin"
cat >"$work/bin/srun" <<'SRUN'
#!/usr/bin/env bash
calls=$(($(cat "$FAKE_SRUN_CALLS" 2>/dev/null || echo 0) + 1))
echo "$calls" >"$FAKE_SRUN_CALLS"
if [ "$calls" -le "$FAKE_SRUN_FAILURES" ]; then
  echo "srun: error: task 0 launch failed: Unspecified error" >&2
  exit 0
fi
shift # --mpi=pmix
exec mpirun -np "$SLURM_NTASKS" "$@"
SRUN
chmod +x "$work/bin/srun"

# run_job DIR FAILURES: runs DIR/job.sh as Slurm would (2 tasks) with FAILURES failed launches;
# prints the script's exit status; its output goes to DIR/job.log.
run_job() {
  local dir=$1 failures=$2
  (cd "$dir" && PATH="$work/bin:$PATH" SLURM_NTASKS=2 SLURM_JOB_ID=$failures \
     FAKE_SRUN_CALLS="$dir/calls" FAKE_SRUN_FAILURES=$failures CHAOSWEEP_LAUNCH_RETRY_DELAY=1 \
     bash job.sh >job.log 2>&1)
  echo $?
}

fresh_dir "$work/reference"
reference_run "$work/reference" "$spec"

# One failed launch: the second launch runs the campaign.
fresh_dir "$work/once"
generate "$work/once" "$spec" --nodes 1 --tasks-per-node 2 --time 00:10:00 --launcher srun
code=$(run_job "$work/once" 1)
cat "$work/once/job.log"
[ "$code" = 0 ] || fail "one failed launch: the script ended with status $code"
[ "$(cat "$work/once/calls")" = 2 ] || fail "one failed launch: srun called $(cat "$work/once/calls") times"
grep -q "the launch by srun ran nothing: status 0 after .* s and no archive .*$archive (did the tasks fail to start?); launching again in 1 s (retry 1 of 2)" \
  "$work/once/job.log" || fail "the relaunch is not logged"
grep -q "campaign complete" "$work/once/job.log" || fail "the relaunched campaign is not complete"
check_bitwise "$work/reference/$archive" "$work/once/$archive"

# No launch runs anything: status 1 after three launches, no archive, nothing left behind.
fresh_dir "$work/never"
generate "$work/never" "$spec" --nodes 1 --tasks-per-node 2 --time 00:10:00 --launcher srun
code=$(run_job "$work/never" 9)
cat "$work/never/job.log"
[ "$code" = 1 ] || fail "no launch ran: the script ended with status $code, not 1"
[ "$(cat "$work/never/calls")" = 3 ] || fail "no launch ran: srun called $(cat "$work/never/calls") times, not 3"
grep -q "retry 2 of 2" "$work/never/job.log" || fail "the second relaunch is not logged"
grep -q "no launch by srun ran the campaign: status 0 and no archive .*$archive; nothing was changed" \
  "$work/never/job.log" || fail "the failed campaign is not reported"
! grep -q "campaign complete" "$work/never/job.log" || fail "a campaign that never ran is called complete"
[ "$(ls "$work/never")" = "$(printf 'calls\njob.log\njob.sh')" ] ||
  fail "a campaign that never ran left files: $(ls "$work/never")"
echo "slurm.launch_retry: a launch that ran nothing is retried, and reported when it never runs"
