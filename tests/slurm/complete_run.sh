#!/usr/bin/env bash
# slurm.complete_run: a small campaign submitted through scripts written by `chaosweep slurm`,
# once with srun and once with mpirun as the launcher, runs to completion in one attempt and
# writes an archive bitwise identical to a direct `mpirun -np 2 chaosweep run`.
# Usage: complete_run.sh CHAOSWEEP SOURCE_DIR WORK_DIR   (SLURM_CONF set by the fixture)
set -uo pipefail
CHAOSWEEP=$1
SOURCE_DIR=$2
work=$3
source "$SOURCE_DIR/tests/slurm/lib.sh"
spec=$SOURCE_DIR/tests/slurm/specs/l63-slurm-small.yaml
archive=slurm-l63-small.h5

declare -A job
for launcher in srun mpirun; do
  fresh_dir "$work/$launcher"
  generate "$work/$launcher" "$spec" --nodes 1 --tasks-per-node 2 --time 00:10:00 \
    --launcher "$launcher"
  job[$launcher]=$(submit "$work/$launcher/job.sh")
  note "submitted job ${job[$launcher]} ($launcher)"
done

fresh_dir "$work/reference"
reference_run "$work/reference" "$spec"

for launcher in srun mpirun; do
  id=${job[$launcher]}
  read -r state code < <(wait_for_job "$id" 240)
  log=$work/$launcher/slurm-l63-small-$id.log
  note "job $id ($launcher): $state, exit $code"
  cat "$log"
  [ "$state" = COMPLETED ] && [ "$code" = 0 ] || fail "job $id ($launcher) ended $state $code"
  grep -q "restart count 0 " "$log" || fail "$log does not log restart count 0"
  grep -q "started $launcher (pid " "$log" || fail "$log does not show the $launcher launch"
  grep -q "run ended with status 0 " "$log" || fail "$log does not show the run's status 0"
  grep -q "campaign complete" "$log" || fail "$log does not say the campaign is complete"
  ! grep -q "received " "$log" || fail "$log shows a signal in a run that should not get one"
  [ "$(job_field "$id" Restarts)" = 0 ] || fail "job $id was restarted"
  [ -f "$work/$launcher/$archive" ] || fail "no archive in $work/$launcher"
done

check_bitwise "$work/reference/$archive" "$work/srun/$archive" "$work/mpirun/$archive"
echo "slurm.complete_run: srun and mpirun archives bitwise identical to the direct run"
