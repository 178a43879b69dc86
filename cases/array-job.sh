#!/usr/bin/env bash
# Example array job: one candidate gap of cases/demo.prm per task.
#
# Submit it as an array of 6 tasks with indices 0..5 (one per entry of
# GAPS below), or run a single task by hand:  bash cases/array-job.sh 3
#
# The task index comes from the first variable that is set of
# SLURM_ARRAY_TASK_ID and PBS_ARRAYID, or from the first argument. The
# directives below are examples; adapt queue, time and memory to your
# cluster (one task needs one core and well under 2 GB).
#
#SBATCH --job-name=backcomb-gaps
#SBATCH --array=0-5
#SBATCH --ntasks=1
#SBATCH --cpus-per-task=1
#SBATCH --time=02:00:00
#SBATCH --output=backcomb-gap-%a.log
#
#PBS -N backcomb-gaps
#PBS -t 0-5
#PBS -l nodes=1:ppn=1,walltime=02:00:00
set -euo pipefail

# The gaps in um, as in the "Candidate gaps" line of cases/demo.prm.
GAPS=(5 10 20 50 100 200)

# Work in the repository root: the submission folder when the scheduler
# names it (the script itself may run from a spool copy), else the current
# folder. BACKCOMB_ROOT overrides both.
root=${BACKCOMB_ROOT:-${SLURM_SUBMIT_DIR:-${PBS_O_WORKDIR:-$PWD}}}
cd "$root"
backcomb=${BACKCOMB:-build/app/backcomb}

index=${SLURM_ARRAY_TASK_ID:-${PBS_ARRAYID:-${1:-}}}
if [[ ! "$index" =~ ^[0-9]+$ ]] || ((index >= ${#GAPS[@]})); then
  echo "array-job: task index '$index' is not in 0..$((${#GAPS[@]} - 1))" >&2
  exit 1
fi
gap=${GAPS[$index]}

# deal.II initialises MPI; Open MPI refuses to run as root unless allowed
# (harmless for ordinary users).
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
# One task, one core: keep threaded libraries from oversubscribing the node.
export OMP_NUM_THREADS=1

mkdir -p results
echo "array-job: task $index, gap $gap um, on $(hostname)"
status=0
"$backcomb" solve cases/demo.prm --set "Geometry/Gap=$gap" --out "results/gap-$gap" --quiet \
  || status=$?
# Exit codes: 0 ok, 2 invalid input, 3 no convergence, 4 output error,
# 5 internal error (see README.md). The scheduler records the status.
echo "array-job: gap $gap um finished with exit code $status"
exit "$status"
