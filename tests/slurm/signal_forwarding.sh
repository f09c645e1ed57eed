#!/usr/bin/env bash
# slurm.signal_forwarding: the batch script passes stop signals on to the run and reports how
# the run ended. Two jobs of a campaign far longer than they are allowed to run, neither
# requeued (--max-requeues 0):
#   warning  srun,   --time 00:02:00 --signal-margin 60: Slurm's USR1 reaches the shell
#            mid-run, before the time limit, and the shell forwards it to srun;
#   cancel   mpirun, --time 00:10:00: `scancel --batch --signal=TERM` (what a preemption or a
#            user's cancel sends the shell) is forwarded to mpirun as USR1.
# In both, the run must end within seconds of the signal, write no archive, and the job must
# not run into its time limit. A run that handles the signal stops with status 3 (checkpoint
# written), which the script reports as "not requeueing" with exit status 3; with
# EXPECT_CHECKPOINT=0 a run that is killed by the signal instead is accepted as well.
# Usage: signal_forwarding.sh CHAOSWEEP SOURCE_DIR WORK_DIR EXPECT_CHECKPOINT(0|1)
set -uo pipefail
CHAOSWEEP=$1
SOURCE_DIR=$2
work=$3
expect_checkpoint=$4
source "$SOURCE_DIR/tests/slurm/lib.sh"
name=slurm-l63-long
# Five minutes of work: far more than the jobs get before their signals.
spec=$work/$name.yaml
fresh_dir "$work"
scaled_spec "$SOURCE_DIR/tests/slurm/specs/l63-slurm-long.yaml" "$spec" 300

fresh_dir "$work/warning"
generate "$work/warning" "$spec" --nodes 1 --tasks-per-node 2 --time 00:02:00 \
  --signal-margin 60 --max-requeues 0 --launcher srun
fresh_dir "$work/cancel"
generate "$work/cancel" "$spec" --nodes 1 --tasks-per-node 2 --time 00:10:00 \
  --max-requeues 0 --launcher mpirun
warning=$(submit "$work/warning/job.sh")
cancel=$(submit "$work/cancel/job.sh")
note "submitted job $warning (warning signal, srun) and job $cancel (TERM, mpirun)"

# The TERM goes to the batch shell only, some seconds into the run.
cancel_log=$work/cancel/$name-$cancel.log
wait_for_log_line "$cancel_log" "started mpirun \(pid " 120
sleep 8
scancel --batch --signal=TERM "$cancel" || fail "scancel --batch --signal=TERM $cancel failed"

# check_stopped ID LOG SIGNAL LAUNCHER: the log shows SIGNAL forwarded to LAUNCHER and the run's
# end soon after; the job ended as the run's status says.
check_stopped() {
  local id=$1 log=$2 signal=$3 launcher=$4 state code status after
  read -r state code < <(wait_for_job "$id" 240)
  note "job $id: $state, exit $code"
  cat "$log"
  grep -q "received $signal: forwarded as USR1 to $launcher (pid " "$log" ||
    fail "$log: $signal was not forwarded to $launcher"
  line=$(grep ": run ended with status " "$log") || fail "$log: the run's end is not logged"
  [ "$(wc -l <<<"$line")" = 1 ] || fail "$log: the run's end is logged more than once"
  status=$(sed -n 's/.*run ended with status \([0-9]*\) after .*/\1/p' <<<"$line")
  after=$(sed -n 's/.*, \([0-9.]*\) s after the stop signal.*/\1/p' <<<"$line")
  [ -n "$after" ] || fail "$log: the time from signal to the run's end is not logged"
  note "job $id: run status $status, ended $after s after the $signal"
  awk -v a="$after" 'BEGIN { exit !(a < 30) }' || fail "run ended $after s after the signal"
  [ "$state" != TIMEOUT ] || fail "job $id ran into its time limit"
  [ ! -e "$(dirname "$log")/$name.h5" ] || fail "a stopped run wrote the archive"
  if [ "$status" = 3 ]; then
    grep -q "run stopped with a checkpoint, but the job has been requeued 0 times (limit 0)" "$log" ||
      fail "$log: status 3 without the requeue-limit message"
    [ "$code" = 3 ] || fail "job $id: exit $code after a run status 3"
  elif [ "$expect_checkpoint" = 0 ] && [ "$status" -gt 128 ]; then
    note "the run was ended by the signal (no checkpointing in this build)"
    [ "$code" = "$status" ] || fail "job $id: exit $code, run status $status"
  else
    fail "run status $status after the $signal"
  fi
  [ "$(job_field "$id" Restarts)" = 0 ] || fail "job $id was requeued with --max-requeues 0"
}

check_stopped "$cancel" "$cancel_log" TERM mpirun
check_stopped "$warning" "$work/warning/$name-$warning.log" USR1 srun

# Slurm sends the warning once per attempt.
warned=$(grep -c "received USR1" "$work/warning/$name-$warning.log")
[ "$warned" = 1 ] || fail "the warning signal arrived $warned times"
echo "slurm.signal_forwarding: ok"
