# Helpers shared by the Slurm tests (sourced, not run). The tests run against the single-node
# Slurm that the ctest fixture starts with scripts/slurm-localhost; ctest passes its SLURM_CONF.

fail() {
  echo "FAIL: $*"
  exit 1
}

note() { echo "-- $*"; }

# Machine settings for this machine (MPI as root, oversubscription, SLURM_CONF default): the
# same file the generated batch scripts source.
# shellcheck source=../../slurm/sites/localhost.sh
source "$SOURCE_DIR/slurm/sites/localhost.sh"

# A fresh, empty directory.
fresh_dir() {
  rm -rf "$1"
  mkdir -p "$1"
}

# submit SCRIPT: submits and prints the job id.
submit() {
  local id
  id=$(sbatch --parsable "$1") || fail "sbatch $1 failed"
  echo "${id%%;*}"
}

# job_field ID FIELD: one field of `scontrol show job` (empty when the job is unknown).
job_field() {
  scontrol -o show job "$1" 2>/dev/null | tr ' ' '\n' | sed -n "s/^$2=//p" | head -n 1
}

# wait_for_job ID LIMIT_SECONDS: polls once a second until the job is in a final state, seen
# twice in a row (a requeued job passes through short-lived states); prints "STATE EXIT" where
# EXIT is the batch script's exit status. Fails after LIMIT_SECONDS.
wait_for_job() {
  local id=$1 limit=$2 start=$SECONDS state previous=
  while ((SECONDS - start < limit)); do
    state=$(job_field "$id" JobState)
    case $state in
      COMPLETED | FAILED | CANCELLED | TIMEOUT | NODE_FAIL | PREEMPTED | BOOT_FAIL | DEADLINE | OUT_OF_MEMORY)
        if [ "$state" = "$previous" ]; then
          local code
          code=$(job_field "$id" ExitCode)
          echo "$state ${code%%:*}"
          return 0
        fi
        ;;
    esac
    previous=$state
    sleep 1
  done
  scontrol show job "$id" || true
  fail "job $id did not finish within $limit s"
}

# wait_for_log_line LOG PATTERN LIMIT_SECONDS: waits until a line of LOG matches PATTERN.
wait_for_log_line() {
  local log=$1 pattern=$2 limit=$3 start=$SECONDS
  while ((SECONDS - start < limit)); do
    [ -f "$log" ] && grep -qE "$pattern" "$log" && return 0
    sleep 0.5
  done
  [ -f "$log" ] && cat "$log"
  fail "no line matching '$pattern' in $log within $limit s"
}

# generate DIR SPEC OPTIONS...: writes DIR/job.sh with `chaosweep slurm` run inside DIR (the
# job's working directory), sourcing this machine's settings.
generate() {
  local dir=$1 spec=$2
  shift 2
  (cd "$dir" && "$CHAOSWEEP" slurm "$spec" --site "$SOURCE_DIR/slurm/sites/localhost.sh" \
     --script job.sh "$@" >/dev/null) || fail "chaosweep slurm $spec $* failed"
  bash -n "$dir/job.sh" || fail "$dir/job.sh is not valid bash"
}

# reference_run DIR SPEC: the campaign run directly under mpirun on 2 ranks, inside DIR.
reference_run() {
  local dir=$1 spec=$2
  (cd "$dir" && mpirun -np 2 "$CHAOSWEEP" run "$spec" --progress none) ||
    fail "reference run of $spec failed"
}

# scaled_spec BASE OUT SECONDS: writes OUT, a copy of the spec BASE whose integration.duration
# is scaled so that a direct run on 2 ranks takes about SECONDS on this machine now. The
# tests' jobs must outlast Slurm's warning signal whatever the speed of the build and the
# machine, so the length is measured, not assumed: BASE's own duration is run (longer until
# it takes at least 4 s) and scaled. Prints the duration chosen.
scaled_spec() {
  local base=$1 out=$2 target=$3
  local probe_dir=$out.probe duration began elapsed_ms
  duration=$(sed -n 's/.*duration: \([0-9]*\)}.*/\1/p' "$base")
  [ -n "$duration" ] || fail "$base: no integer integration.duration to scale"
  while :; do
    fresh_dir "$probe_dir"
    sed "s/duration: [0-9]*}/duration: $duration}/" "$base" >"$probe_dir/probe.yaml"
    began=$(date +%s%N)
    (cd "$probe_dir" && mpirun -np 2 "$CHAOSWEEP" run probe.yaml --progress none) ||
      fail "probe run of $base failed"
    elapsed_ms=$((($(date +%s%N) - began) / 1000000))
    ((elapsed_ms >= 4000)) && break
    duration=$((duration * 4))
  done
  rm -rf "$probe_dir"
  duration=$((duration * target * 1000 / elapsed_ms))
  sed "s/duration: [0-9]*}/duration: $duration}/" "$base" >"$out"
  note "$(basename "$out"): duration $duration for about $target s on 2 ranks" \
       "(probe: $((elapsed_ms / 1000)).$((elapsed_ms % 1000 / 100)) s)"
}

check_bitwise() {
  /usr/bin/python3 "$SOURCE_DIR/tests/e2e/check_archive.py" bitwise "$@" ||
    fail "archives differ: $*"
}
