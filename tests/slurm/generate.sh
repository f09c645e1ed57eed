#!/usr/bin/env bash
# slurm.generate: `chaosweep slurm` writes the batch script the options ask for, the script is
# valid bash and holds every fixed line of slurm/template.sh, and bad options or a bad spec
# exit with status 2 and one line. Needs no running Slurm.
# Usage: generate.sh CHAOSWEEP SOURCE_DIR WORK_DIR
set -uo pipefail
CHAOSWEEP=$1
SOURCE_DIR=$2
work=$3
specs=$SOURCE_DIR/tests/slurm/specs
fail() {
  echo "FAIL: $*"
  exit 1
}
rm -rf "$work"
mkdir -p "$work"
cd "$work" || exit 1

# --- a script with every option -----------------------------------------------------------
"$CHAOSWEEP" slurm "$specs/l63-slurm-small.yaml" --nodes 3 --tasks-per-node 8 --time 01:30:00 \
  --partition compute --account climate-lab --max-requeues 4 --launcher srun \
  --site "$SOURCE_DIR/slurm/sites/localhost.sh" >full.sh 2>full.err
[ $? -eq 0 ] || fail "generation failed: $(cat full.err)"
[ ! -s full.err ] || fail "generation printed to stderr: $(cat full.err)"
bash -n full.sh || fail "the generated script is not valid bash"

expect_line() {  # FILE LINE: LINE occurs as a whole line
  grep -qxF -- "$2" "$1" || fail "$1 lacks the line: $2"
}
expect_line full.sh "#!/bin/bash"
expect_line full.sh "#SBATCH --job-name=slurm-l63-small"
expect_line full.sh "#SBATCH --nodes=3"
expect_line full.sh "#SBATCH --ntasks-per-node=8"
expect_line full.sh "#SBATCH --time=01:30:00"
expect_line full.sh "#SBATCH --partition=compute"
expect_line full.sh "#SBATCH --account=climate-lab"
expect_line full.sh "#SBATCH --chdir=$work"
expect_line full.sh "#SBATCH --output=$work/slurm-l63-small-%j.log"
expect_line full.sh "#SBATCH --open-mode=append"
expect_line full.sh "#SBATCH --requeue"
# A small campaign: the checkpoint write is negligible, the margin is the fixed 120 s.
expect_line full.sh "#SBATCH --signal=B:USR1@120"
expect_line full.sh "source '$SOURCE_DIR/slurm/sites/localhost.sh'"
expect_line full.sh "chaosweep='$(readlink -f "$CHAOSWEEP")'"
expect_line full.sh "spec='$(readlink -f "$specs/l63-slurm-small.yaml")'"
expect_line full.sh "workdir='$work'"
expect_line full.sh "max_requeues=4"
# The archive the script checks for: the spec's relative output.archive in the working directory.
expect_line full.sh "archive='$work/slurm-l63-small.h5'"
expect_line full.sh "restart_count=\${SLURM_RESTART_COUNT:-0}"
grep -qE '^ *srun --mpi=pmix "\$chaosweep" run "\$spec" .*&$' full.sh ||
  fail "the run is not started with srun --mpi=pmix in the background"
# Every #SBATCH line comes before the first command, or sbatch ignores it.
first_command=$(grep -nE '^[^#]' full.sh | head -n 1 | cut -d: -f1)
last_sbatch=$(grep -n '^#SBATCH' full.sh | tail -n 1 | cut -d: -f1)
[ "$last_sbatch" -lt "$first_command" ] || fail "#SBATCH lines after the first command"

# Every line of the template without a field is in the script, in the same order.
awk 'NR == FNR { if ($0 !~ /\{\{/) fixed[++n] = $0; next }
     i < n && $0 == fixed[i + 1] { i++ }
     END { if (i < n) { print "missing template line: " fixed[i + 1]; exit 1 } }' \
  "$SOURCE_DIR/slurm/template.sh" full.sh || fail "the script does not follow slurm/template.sh"
! grep -q '{{' full.sh || fail "a template field was left unfilled: $(grep '{{' full.sh)"

# --- mpirun, no partition/account/env, explicit margin, written to a file -----------------
"$CHAOSWEEP" slurm "$specs/l63-slurm-small.yaml" --nodes 1 --tasks-per-node 2 --time 2-00:00:00 \
  --launcher mpirun --signal-margin 300 --script job.sh >job.out 2>&1 || fail "$(cat job.out)"
[ -x job.sh ] || fail "--script did not write an executable job.sh"
bash -n job.sh || fail "job.sh is not valid bash"
expect_line job.sh "#SBATCH --time=2-00:00:00"
expect_line job.sh "#SBATCH --signal=B:USR1@300"
expect_line job.sh "max_requeues=10"
grep -qE '^ *mpirun -np "\$SLURM_NTASKS" "\$chaosweep" run "\$spec" .*&$' job.sh ||
  fail "the run is not started with mpirun in the background"
! grep -qE '^#SBATCH --(partition|account)' job.sh || fail "partition/account lines without the options"
! grep -q '^source ' job.sh || fail "a site file is sourced without --site"

# --- the README's walk-through: its campaign and options ------------------------------------
"$CHAOSWEEP" slurm "$SOURCE_DIR/slurm/example-local.yaml" --nodes 1 --tasks-per-node 2 \
  --time 00:02:00 --signal-margin 60 --site "$SOURCE_DIR/slurm/sites/localhost.sh" \
  --script example.sbatch >example.out 2>&1 || fail "README example: $(cat example.out)"
bash -n example.sbatch || fail "README example: not valid bash"
expect_line example.sbatch "#SBATCH --signal=B:USR1@60"
expect_line example.sbatch "#SBATCH --output=$work/slurm-example-local-%j.log"

# --- the default margin grows with the checkpoint ------------------------------------------
"$CHAOSWEEP" slurm "$specs/l96-slurm-large.yaml" --nodes 8 --tasks-per-node 64 --time 1-00:00:00 \
  >large.sh 2>&1 || fail "$(cat large.sh)"
margin=$(sed -n 's/^#SBATCH --signal=B:USR1@\([0-9]*\)$/\1/p' large.sh)
# About 10^2 GB of checkpoint: twice its write time at 50 MB/s is over an hour.
[ -n "$margin" ] && [ "$margin" -gt 3600 ] || fail "default margin for a large campaign: '$margin'"
[ "$margin" -le 65535 ] || fail "margin $margin beyond what Slurm can store"

# --- bad options and bad specs: status 2, one line on stderr, nothing written --------------
expect_usage_error() {  # DESCRIPTION ARGS...
  local what=$1
  shift
  rm -f bad.sh
  "$CHAOSWEEP" slurm "$@" --script bad.sh >bad.out 2>bad.err
  local status=$?
  [ "$status" -eq 2 ] || fail "$what: status $status, expected 2 ($(cat bad.err))"
  [ "$(wc -l <bad.err)" -eq 1 ] || fail "$what: stderr is not one line: $(cat bad.err)"
  [ ! -s bad.out ] || fail "$what: printed to stdout: $(cat bad.out)"
  [ ! -e bad.sh ] || fail "$what: a script was written"
  echo "ok ($what): $(cat bad.err)"
}
good=("$specs/l63-slurm-small.yaml" --nodes 1 --tasks-per-node 2)
expect_usage_error "time without seconds" "${good[@]}" --time 10:00
expect_usage_error "time with 61 minutes" "${good[@]}" --time 00:61:00
expect_usage_error "zero time" "${good[@]}" --time 00:00:00
expect_usage_error "time word" "${good[@]}" --time soon
expect_usage_error "time shorter than the margin" "${good[@]}" --time 00:01:00 --signal-margin 60
expect_usage_error "time shorter than the default margin" "${good[@]}" --time 00:02:00
expect_usage_error "margin below 60 s" "${good[@]}" --time 01:00:00 --signal-margin 30
expect_usage_error "zero margin" "${good[@]}" --time 01:00:00 --signal-margin 0
expect_usage_error "unknown launcher" "${good[@]}" --time 01:00:00 --launcher aprun
expect_usage_error "partition with a space" "${good[@]}" --time 01:00:00 --partition "a b"
expect_usage_error "account with a quote" "${good[@]}" --time 01:00:00 --account "x'y"
expect_usage_error "missing site file" "${good[@]}" --time 01:00:00 --site "$work/no-such.sh"
expect_usage_error "negative requeues" "${good[@]}" --time 01:00:00 --max-requeues -1
# The script and site options have one name each: the scheduler-like --output and the
# launcher-like --env are not aliases.
expect_usage_error "the name --output" "${good[@]}" --time 01:00:00 --output other.sh
expect_usage_error "the name --env" "${good[@]}" --time 01:00:00 --env "$SOURCE_DIR/slurm/sites/localhost.sh"
"$CHAOSWEEP" slurm --help | grep -qE -- '--output|--env' && fail "--help still names --output or --env"
expect_usage_error "zero nodes" "$specs/l63-slurm-small.yaml" --nodes 0 --tasks-per-node 2 --time 01:00:00
expect_usage_error "no time" "$specs/l63-slurm-small.yaml" --nodes 1 --tasks-per-node 2
expect_usage_error "missing spec" "$work/no-such.yaml" --nodes 1 --tasks-per-node 2 --time 01:00:00
expect_usage_error "invalid spec" "$SOURCE_DIR/tests/fixtures/specs/invalid/batch_size_12.yaml" \
  --nodes 1 --tasks-per-node 2 --time 01:00:00
grep -q 'batch_size_12.yaml:[0-9]*:[0-9]*: ' bad.err || fail "spec error without FILE:LINE:COL"

# --parts: more parts than batches (3 cases x 3 batches), zero parts; and without --script.
expect_usage_error "more parts than batches" "${good[@]}" --time 01:00:00 --parts 10
expect_usage_error "zero parts" "${good[@]}" --time 01:00:00 --parts 0
"$CHAOSWEEP" slurm "${good[@]}" --time 01:00:00 --parts 2 >bad.out 2>bad.err
[ $? -eq 2 ] && [ "$(wc -l <bad.err)" -eq 1 ] && grep -q -- "--parts: needs --script" bad.err ||
  fail "--parts without --script: $(cat bad.err)"

# --- a job array of 3 parts: the array script is the template with one part per task -------
"$CHAOSWEEP" slurm "${good[@]}" --time 01:00:00 --parts 3 --script array.sh >array.out 2>&1 ||
  fail "--parts 3: $(cat array.out)"
for script in array.sh array-merge.sh array-submit.sh; do
  [ -x "$script" ] || fail "$script was not written executable"
  bash -n "$script" || fail "$script is not valid bash"
done
expect_line array.sh "#SBATCH --array=1-3"
expect_line array.sh "#SBATCH --output=$work/slurm-l63-small-%A_%a.log"
expect_line array.sh "archive='$work/slurm-l63-small.part-'\"\$part_index\"'-of-3.h5'"
expect_line array.sh 'part_flags=(--part "$part_index/3" --archive "$archive")'
expect_line array-merge.sh "#SBATCH --ntasks=1"
expect_line array-merge.sh "archive='$work/slurm-l63-small.h5'"
grep -q -- '--dependency=afterok:"$array"' array-submit.sh || fail "the merge job does not wait"
# The part archives the array's tasks write are those the merge job reads (bash expands both).
tasks=$(for i in 1 2 3; do part_index=$i; eval "$(grep '^archive=' array.sh)"; echo "$archive"; done)
merged=$(eval "$(sed -n '/^parts=()/,/^done/p' array-merge.sh)"; printf '%s\n' "${parts[@]}")
[ "$tasks" = "$merged" ] || fail "the tasks write $tasks, the merge reads $merged"

echo "slurm.generate: ok"
