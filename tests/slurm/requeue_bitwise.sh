#!/usr/bin/env bash
# slurm.requeue_bitwise: the whole promise on a real scheduler. A campaign of about 80 s of work
# is submitted through a script written by `chaosweep slurm` with a 2-minute limit and a 60 s
# warning margin, so Slurm's USR1 stops it mid-run: the run checkpoints and exits with status
# 3, the script requeues the job, the next attempt resumes, and so on until it completes. The
# archive must be bitwise identical to an uninterrupted direct run, the log must show at least
# one restart, and every attempt but the last must have ended with status 3.
# Usage: requeue_bitwise.sh CHAOSWEEP SOURCE_DIR WORK_DIR   (SLURM_CONF set by the fixture)
set -uo pipefail
CHAOSWEEP=$1
SOURCE_DIR=$2
work=$3
source "$SOURCE_DIR/tests/slurm/lib.sh"
name=slurm-l63-long
archive=$name.h5
# 80 s of work on 2 idle cores. The reference run below shares the cores with the job's first
# attempt, so that attempt gets through well under half of the work before its warning signal
# (30-60 s in) even if this estimate is off by a factor of two.
spec=$work/$name.yaml
fresh_dir "$work"
scaled_spec "$SOURCE_DIR/tests/slurm/specs/l63-slurm-long.yaml" "$spec" 80

fresh_dir "$work/job"
generate "$work/job" "$spec" --nodes 1 --tasks-per-node 2 --time 00:02:00 \
  --signal-margin 60 --max-requeues 10 --launcher srun
submitted=$SECONDS
id=$(submit "$work/job/job.sh")
note "submitted job $id"

# The uninterrupted reference, alongside the job's first attempt (see above).
fresh_dir "$work/reference"
reference_run "$work/reference" "$spec"

read -r state code < <(wait_for_job "$id" 420)
log=$work/job/$name-$id.log
note "job $id: $state, exit $code, $((SECONDS - submitted)) s after submission"
cat "$log"
[ "$state" = COMPLETED ] && [ "$code" = 0 ] || fail "job $id ended $state $code"

attempts=$(grep -c "attempt [0-9]*, restart count " "$log")
last=$(grep "attempt [0-9]*, restart count " "$log" | tail -n 1 |
       sed -n 's/.*restart count \([0-9]*\) .*/\1/p')
[ "$last" -ge 1 ] || fail "the log shows no restart (last restart count '$last')"
[ "$attempts" = $((last + 1)) ] || fail "$attempts attempts logged for restart count $last"
[ "$(job_field "$id" Restarts)" = "$last" ] || fail "Slurm's restart count differs from the log"
stops=$(grep -c "run ended with status 3 " "$log")
requeues=$(grep -c "run stopped with a checkpoint: requeueing" "$log")
[ "$stops" = "$last" ] && [ "$requeues" = "$last" ] ||
  fail "$last restarts but $stops stops with status 3 and $requeues requeues"
forwarded=$(grep -c "received USR1: forwarded as USR1 to srun" "$log")
[ "$forwarded" -ge "$last" ] || fail "$last restarts but only $forwarded forwarded warnings"
resumed=$(grep -c "started srun (pid [0-9]*): .* --resume" "$log")
[ "$resumed" = "$last" ] || fail "$last restarts but $resumed runs started with --resume"
grep -q "campaign complete" "$log" || fail "the log does not say the campaign is complete"

check_bitwise "$work/reference/$archive" "$work/job/$archive"
echo "slurm.requeue_bitwise: $last requeue(s); archive bitwise identical to the uninterrupted run"
