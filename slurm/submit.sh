#!/bin/bash
# Submits the chaosweep campaign "{{CAMPAIGN}}" as a job array of {{PARTS}} parts and its merge
# job, written by
#   {{COMMAND_LINE}}
#
# Array task I runs part I of {{PARTS}} ({{ARRAY_NAME}}); the merge job ({{MERGE_NAME}}) waits
# for every task to succeed (--dependency=afterok on the array), requeued tasks included, and
# then writes the archive. Prints both job ids. Extra arguments go to both sbatch calls.
#
# This text comes from slurm/submit.sh; `chaosweep slurm --parts` fills in its fields.
set -euo pipefail
here={{DIR_QUOTED}}
array=$(sbatch --parsable "$@" "$here"/{{ARRAY_NAME}})
array=${array%%;*}
merge=$(sbatch --parsable "$@" --dependency=afterok:"$array" "$here"/{{MERGE_NAME}})
merge=${merge%%;*}
echo "submitted job array $array ({{PARTS}} parts, logs {{ARRAY_LOGS}}) and merge job $merge" \
     "(starts when every part has succeeded; log {{MERGE_LOG}})"
