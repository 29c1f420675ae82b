#!/bin/bash
# Submit 1 training segment(s) as a chain (each starts after the one before
# succeeded and resumes from the newest checkpoint), then the inference array.
# Engine: slurm. Safe to run again: finished work is skipped by the jobs.
set -euo pipefail
cd -- "$(dirname -- "${BASH_SOURCE[0]}")"
mkdir -p -- /CAMPAIGN/runs/train/logs
after=
script=train.sbatch
for ((segment = 1; segment <= 1; segment++)); do
	squall_dep=()
	if [[ -n ${after} ]]; then squall_dep=(--dependency="afterok:${after// /:}" --kill-on-invalid-dep=yes); fi
	id=$(sbatch --parsable "${squall_dep[@]}" "$script")
	id=${id%%;*}
	echo "training segment $segment: job $id"
	after=$id
done
script=infer.sbatch
squall_dep=()
if [[ -n ${after} ]]; then squall_dep=(--dependency="afterok:${after// /:}" --kill-on-invalid-dep=yes); fi
id=$(sbatch --parsable "${squall_dep[@]}" "$script")
id=${id%;*}
echo "inference array: job $id"
