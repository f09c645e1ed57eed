# Site settings for the single-node Slurm that scripts/slurm-localhost runs on this machine
# (Debian 12, everything as root). Sourced by batch scripts written with
# `chaosweep slurm ... --site slurm/sites/localhost.sh` and by the Slurm tests' launcher.
# A real cluster gets its own file beside this one: module loads and MPI settings go there.

# Where the client commands (sbatch, scontrol, srun) find the cluster: the default directory of
# scripts/slurm-localhost unless the caller chose another.
export SLURM_CONF=${SLURM_CONF:-/tmp/chaosweep-slurm/etc/slurm.conf}

# Open MPI refuses to start as root unless told that this is intended.
export OMPI_ALLOW_RUN_AS_ROOT=1
export OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1

# Tests may place more ranks than the machine has cores (mpirun outside Slurm).
export OMPI_MCA_rmaps_base_oversubscribe=1
