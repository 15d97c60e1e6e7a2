#!/bin/bash
# Merge job for scripts/cluster/sweep_array.sh: joins every shard file into one
# sweep file, identical in content to an unsharded run. `yawdyn merge` refuses
# shards of different sweeps and reports missing or duplicated cases.
#SBATCH --job-name=yawdyn-merge
#SBATCH --cpus-per-task=1
#SBATCH --mem=1G
#SBATCH --time=00:10:00
#SBATCH --output=results/slurm/merge_%j.log

set -euo pipefail
OUTDIR=${OUTDIR:-results/sweep_shards}
OUT=${OUT:-results/power_on_exit_sweep.h5}
SHARDS=${SHARDS:?set SHARDS to the number of shards (submit_sweep.sh does)}
mkdir -p "$(dirname "$OUT")"
"${YAWDYN:-yawdyn}" merge "$OUT" "$OUTDIR"/shard_*_of_"$SHARDS".h5
