#!/usr/bin/env bash
# Example array job: the candidate gaps of cases/demo.prm as one sweep,
# split into shares, one share per array task, then one merge.
#
#   sbatch cases/array-job.sh                      # tasks 1..3 (SLURM)
#   qsub cases/array-job.sh                        # tasks 1..3 (PBS/Torque)
#   bash cases/array-job.sh 2                      # one task by hand
#   bash cases/array-job.sh merge                  # table, plot, recommendation
#
# Run the merge when every task has finished, for example as a dependent
# job: sbatch --dependency=afterany:<array job id> cases/array-job.sh merge
# A task that was killed (time limit) is simply submitted again: finished
# cases are kept and only the missing ones are computed. The merge reports
# cases that are still missing and leaves their rows empty.
#
# The task index (1-based) comes from the first variable that is set of
# SLURM_ARRAY_TASK_ID and PBS_ARRAYID, or from the first argument; the
# number of tasks from SLURM_ARRAY_TASK_COUNT or TASKS below. The directives
# are examples; adapt queue, time and memory to your cluster (one case
# needs one core and well under 2 GB).
#
#SBATCH --job-name=backcomb-gaps
#SBATCH --array=1-3
#SBATCH --ntasks=1
#SBATCH --cpus-per-task=1
#SBATCH --time=02:00:00
#SBATCH --output=backcomb-gaps-%a.log
#
#PBS -N backcomb-gaps
#PBS -t 1-3
#PBS -l nodes=1:ppn=1,walltime=02:00:00
set -euo pipefail

# The swept gaps in um (as in the "Candidate gaps" line of cases/demo.prm)
# and the number of array tasks they are shared among.
GAPS="8,12,20,30,45,70"
TASKS=3

# Work in the repository root: the submission folder when the scheduler
# names it (the script itself may run from a spool copy), else the current
# folder. BACKCOMB_ROOT overrides both.
root=${BACKCOMB_ROOT:-${SLURM_SUBMIT_DIR:-${PBS_O_WORKDIR:-$PWD}}}
cd "$root"
backcomb=${BACKCOMB:-build/app/backcomb}
out=${BACKCOMB_OUT:-results/gap-sweep}

# deal.II initialises MPI; Open MPI refuses to run as root unless allowed
# (harmless for ordinary users).
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
# One task, one core: keep threaded libraries from oversubscribing the node.
export OMP_NUM_THREADS=1

index=${SLURM_ARRAY_TASK_ID:-${PBS_ARRAYID:-${1:-}}}
tasks=${SLURM_ARRAY_TASK_COUNT:-$TASKS}

if [[ "$index" == merge ]]; then
  exec "$backcomb" merge "$out"
fi
if [[ ! "$index" =~ ^[0-9]+$ ]] || ((index < 1 || index > tasks)); then
  echo "array-job: task index '$index' is not in 1..$tasks (or 'merge')" >&2
  exit 1
fi

echo "array-job: task $index of $tasks on $(hostname)"
status=0
"$backcomb" sweep cases/demo.prm --vary "Geometry/Gap=$GAPS" --out "$out" \
  --task "$index" --of "$tasks" || status=$?
# Exit codes: 0 every case of the share converged, 2 invalid input,
# 3 a case failed (recorded in its folder; the others ran), 4 output error,
# 5 internal error (see README.md). The scheduler records the status.
echo "array-job: task $index finished with exit code $status"
exit "$status"
