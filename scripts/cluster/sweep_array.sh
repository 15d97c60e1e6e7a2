#!/bin/bash
# Example SLURM job array: one yawdyn sweep split into N shards, one array task
# per shard, then a merge job that starts when every shard has succeeded.
#
# Submit with:   scripts/cluster/submit_sweep.sh
# (or by hand:   sbatch --array=1-8 scripts/cluster/sweep_array.sh)
#
# Every task runs exactly the same command with a different --shard K/N, so
# all shard files describe the same sweep and `yawdyn merge` accepts them.
#SBATCH --job-name=yawdyn-sweep
#SBATCH --array=1-8
#SBATCH --cpus-per-task=4
#SBATCH --mem=1G
#SBATCH --time=00:30:00
#SBATCH --output=results/slurm/sweep_%A_%a.log

set -euo pipefail

# --- what to sweep (edit here, or set these variables when submitting) ------
# Words separated by spaces; each VARY word becomes one --vary, each SET word
# one --set. Every task of the array must see the same values.
SCRIPT=${SCRIPT:-scripts/power_on_exit.rhai}
VARY=${VARY:-"drive.front_share=0:1:40 road.friction=0.5:1.0:25"}
SETS=${SETS:-}                            # e.g. "chassis.mass=1900 drive.front_share=0.3"
CHANNELS=${CHANNELS:-yaw_rate,sideslip,ay,speed}
OUTDIR=${OUTDIR:-results/sweep_shards}
# ------------------------------------------------------------------------------

K=${SLURM_ARRAY_TASK_ID:?run as a job array (sbatch --array=1-N)}
N=${SLURM_ARRAY_TASK_COUNT:?run as a job array (sbatch --array=1-N)}
if [ "$K" -lt 1 ] || [ "$K" -gt "$N" ]; then
    echo "array indices must run 1..N (sbatch --array=1-N), got task $K of $N" >&2
    exit 2
fi
mkdir -p "$OUTDIR"

# The command as one array, never empty (an empty "${a[@]}" under set -u is an
# error in bash before 4.4).
args=(sweep "$SCRIPT")
for v in $VARY; do args+=(--vary "$v"); done
for s in $SETS; do args+=(--set "$s"); done
args+=(--channels "$CHANNELS" --jobs "${SLURM_CPUS_PER_TASK:-1}" --shard "$K/$N" --quiet
    --out "$OUTDIR/shard_${K}_of_${N}.h5")

# Exit code 1 means some cases failed or missed a criterion: the shard file is
# still complete and must be merged, so only exit code 2 (bad input) and
# crashes fail the task.
status=0
"${YAWDYN:-yawdyn}" "${args[@]}" || status=$?
if [ "$status" -ge 2 ]; then
    exit "$status"
fi
