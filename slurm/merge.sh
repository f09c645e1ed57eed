#!/bin/bash
# Merge job of the chaosweep campaign "{{CAMPAIGN}}" run as a job array of {{PARTS}} parts,
# written by
#   {{COMMAND_LINE}}
#
# Submitted with --dependency=afterok on the array (see {{SUBMIT_NAME}}), it starts when every
# task of the array has succeeded, and writes the campaign's archive from their part archives
# with `chaosweep merge`: bitwise the archive one job would have written. The part archives
# are kept; remove them once the archive is checked.
#
# Exit status: 0 archive written; 1 some case kept no valid member (the archive is written);
# 2 a part archive is missing, damaged or of another campaign (nothing written).
#
# This text comes from slurm/merge.sh; `chaosweep slurm --parts` fills in its fields.
#SBATCH --job-name={{JOB_NAME}}-merge
#SBATCH --nodes=1
#SBATCH --ntasks=1
#SBATCH --time={{TIME}}
{{SBATCH_PLACEMENT}}
#SBATCH --chdir={{WORKDIR}}
#SBATCH --output={{LOG}}
#SBATCH --open-mode=append

{{SITE_SOURCE}}

chaosweep={{CHAOSWEEP}}
workdir={{WORKDIR_QUOTED}}
archive={{ARCHIVE_QUOTED}}
parts=()
for ((i = 1; i <= {{PARTS}}; i++)); do
  parts+=({{PART_ARCHIVE}})
done

log() { echo "$(date -u +%Y-%m-%dT%H:%M:%SZ) job ${SLURM_JOB_ID:-none}: $*"; }
cd "$workdir" || { log "cannot enter $workdir"; exit 1; }
log "merging {{PARTS}} part archives into $archive"
{{LAUNCH}} "$chaosweep" merge "$archive" "${parts[@]}"
status=$?
if [ "$status" = 0 ]; then
  log "campaign complete: $archive"
else
  log "merge ended with status $status"
fi
exit "$status"
