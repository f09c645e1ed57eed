#!/bin/bash
# Batch script for the chaosweep campaign "{{CAMPAIGN}}", written by
#   {{COMMAND_LINE}}
#
# Runs the campaign as one MPI job step in the background and waits for it. Slurm sends this
# shell USR1 {{MARGIN}} s before the time limit ({{MARGIN_REASON}});
# the shell passes USR1 on to the run (a TERM from scancel or preemption is passed on as
# USR1 too), the run stops at its next step chunk, writes a checkpoint and exits with status
# 3. The shell then requeues the job, at most {{MAX_REQUEUES}} times, and the next attempt
# resumes from the checkpoint. Every attempt appends to the same log.
#
# A launcher that ends with status 0 but leaves no archive did not run the campaign (a job
# step whose tasks failed to start can end so): the launch is tried again, at most
# {{LAUNCH_RETRIES}} more times, CHAOSWEEP_LAUNCH_RETRY_DELAY seconds apart (default 15).
#
# Exit status: 0 campaign complete; 3 stopped with a checkpoint and not requeued (resume by
# submitting this script again with CHAOSWEEP_RESUME=1 in the environment); 1 the launcher
# never ran the campaign; anything else is the run's own failure status.
#
{{ARRAY_NOTE}}
# This text comes from slurm/template.sh; `chaosweep slurm` fills in its fields.
#SBATCH --job-name={{JOB_NAME}}
#SBATCH --nodes={{NODES}}
#SBATCH --ntasks-per-node={{TASKS_PER_NODE}}
#SBATCH --time={{TIME}}
{{SBATCH_ARRAY}}
{{SBATCH_PLACEMENT}}
#SBATCH --chdir={{WORKDIR}}
#SBATCH --output={{LOG}}
#SBATCH --open-mode=append
#SBATCH --requeue
#SBATCH --signal=B:USR1@{{MARGIN}}

# Site specifics (modules, MPI settings): one file per site, slurm/sites/<site>.sh.
{{SITE_SOURCE}}

chaosweep={{CHAOSWEEP}}
spec={{SPEC}}
workdir={{WORKDIR_QUOTED}}
max_requeues={{MAX_REQUEUES}}
restart_count=${SLURM_RESTART_COUNT:-0}
launcher_name={{LAUNCHER_NAME}}
{{PART_LINES}}
archive={{ARCHIVE_QUOTED}}
{{PART_FLAGS}}
launch_retries={{LAUNCH_RETRIES}}
launch_retry_delay=${CHAOSWEEP_LAUNCH_RETRY_DELAY:-15}

log() { echo "$(date -u +%Y-%m-%dT%H:%M:%SZ) job ${SLURM_JOB_ID:-none}: $*"; }
now() { date +%s.%N; }
seconds_since() { awk -v a="$1" -v b="$(now)" 'BEGIN { printf "%.1f", b - a }'; }

log "$what: attempt $((restart_count + 1)), restart count $restart_count" \
    "(requeues allowed: $max_requeues), ${SLURM_NTASKS:-?} tasks on ${SLURM_JOB_NODELIST:-?}"

# The spec's relative paths (archive, checkpoints) are taken from here, also when this script
# is run by another one (a job array's script) that ignores its #SBATCH lines.
cd "$workdir" || { log "cannot enter $workdir"; exit 1; }

# Later attempts continue from the checkpoints of the earlier ones; one that finds none (Slurm
# requeued the job after a node failure before anything was saved) starts over. A first
# attempt starts afresh unless CHAOSWEEP_RESUME=1 (a new submission continuing a stopped
# campaign, which must find its checkpoints).
resume_flag=
if [ "$restart_count" -gt 0 ]; then
  resume_flag="--resume --restart-from-scratch"
elif [ "${CHAOSWEEP_RESUME:-0}" = 1 ]; then
  resume_flag=--resume
fi

# srun forwards USR1 to every task (a TERM would make it kill the tasks at once); mpirun
# forwards USR1 too (on TERM it kills the tasks after a short grace time). So the run is always
# asked to stop with USR1.
run_pid=
signal_time=
on_signal() {
  interrupted=1
  if [ -n "$signal_time" ]; then
    log "received $1 again; the run is already stopping"
    return
  fi
  signal_time=$(now)
  if [ -z "$run_pid" ]; then
    log "received $1 before the run started"
    return
  fi
  log "received $1: forwarded as USR1 to $launcher_name (pid $run_pid); the run writes a checkpoint and stops"
  kill -USR1 "$run_pid" 2>/dev/null || log "could not signal $launcher_name (pid $run_pid): it has ended"
}
trap 'on_signal USR1' USR1
trap 'on_signal TERM' TERM
trap 'on_signal INT' INT

# run_once FLAGS...: launches the run in the background and waits until it has ended; sets
# status. `wait` returns early when a trapped signal arrives: wait again until the run has
# ended. A second wait for a run already collected fails with 127; the first status stands.
run_once() {
  {{LAUNCH}} "$chaosweep" run "$spec" --progress log "${part_flags[@]}" "$@" &
  run_pid=$!
  log "started $launcher_name (pid $run_pid): $chaosweep run $spec --progress log" \
      "${part_flags[*]}" "$*"
  status=
  while :; do
    interrupted=0
    wait "$run_pid"
    code=$?
    if [ "$code" -eq 127 ] && [ -n "$status" ]; then break; fi
    status=$code
    [ "$interrupted" = 1 ] || break
  done
}

started=$(now)
if [ -n "$signal_time" ]; then
  log "not starting the run: a stop signal arrived first; nothing was changed"
  exit 1
fi
# shellcheck disable=SC2086 # the flags are separate words
run_once $resume_flag
launch=0
while [ "$status" = 0 ] && [ ! -e "$archive" ] && [ -z "$signal_time" ] &&
      [ "$launch" -lt "$launch_retries" ]; do
  launch=$((launch + 1))
  log "the launch by $launcher_name ran nothing: status 0 after $(seconds_since "$started") s" \
      "and no archive $archive (did the tasks fail to start?); launching again in" \
      "$launch_retry_delay s (retry $launch of $launch_retries)"
  sleep "$launch_retry_delay" &
  wait $! # (a trapped signal ends the wait early)
  if [ -n "$signal_time" ]; then
    log "not launching again: a stop signal arrived"
    exit 1
  fi
  # Whatever the failed launch left behind is taken up; with nothing saved it starts afresh.
  run_once --resume --restart-from-scratch
done

if [ -n "$signal_time" ]; then
  log "run ended with status $status after $(seconds_since "$started") s," \
      "$(seconds_since "$signal_time") s after the stop signal"
else
  log "run ended with status $status after $(seconds_since "$started") s"
fi

case $status in
  0)
    if [ ! -e "$archive" ]; then
      log "no launch by $launcher_name ran the campaign: status 0 and no archive $archive;" \
          "nothing was changed"
      exit 1
    fi
    log "$what complete"
    exit 0
    ;;
  3)
    if [ "$restart_count" -ge "$max_requeues" ]; then
      log "run stopped with a checkpoint, but the job has been requeued $restart_count times" \
          "(limit $max_requeues): not requeueing; submit this script again with" \
          "CHAOSWEEP_RESUME=1 to continue"
      exit 3
    fi
    log "run stopped with a checkpoint: requeueing (requeue $((restart_count + 1)) of $max_requeues)"
    trap '' USR1 TERM INT
    if ! scontrol requeue "$SLURM_JOB_ID"; then
      log "scontrol requeue failed: submit this script again with CHAOSWEEP_RESUME=1 to continue"
      exit 3
    fi
    exit 0
    ;;
  *)
    log "run failed with status $status: not requeueing"
    exit "$status"
    ;;
esac
