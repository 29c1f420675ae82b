#!/bin/bash
# Submit 1 training segment(s) as a chain (each starts after the one before
# succeeded and resumes from the newest checkpoint), then the inference array.
# Engine: pbs. Safe to run again: finished work is skipped by the jobs.
set -euo pipefail
cd -- "$(dirname -- "${BASH_SOURCE[0]}")"
mkdir -p -- /CAMPAIGN/runs/train/logs
after=
script=train.pbs
for ((segment = 1; segment <= 1; segment++)); do
	squall_dep=()
	if [[ -n ${after} ]]; then squall_dep=(-W "depend=afterok:${after// /:}"); fi
	id=$(qsub "${squall_dep[@]}" "$script")
	echo "training segment $segment: job $id"
	after=$id
done
script=infer.pbs
squall_dep=()
if [[ -n ${after} ]]; then squall_dep=(-W "depend=afterok:${after// /:}"); fi
id=$(qsub "${squall_dep[@]}" "$script")
echo "inference array: job $id"
