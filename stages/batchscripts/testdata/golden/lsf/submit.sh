#!/bin/bash
# Submit 1 training segment(s) as a chain (each starts after the one before
# succeeded and resumes from the newest checkpoint), then the inference array.
# Engine: lsf. Safe to run again: finished work is skipped by the jobs.
set -euo pipefail
cd -- "$(dirname -- "${BASH_SOURCE[0]}")"
mkdir -p -- /CAMPAIGN/runs/train/logs
after=
script=train.lsf
for ((segment = 1; segment <= 1; segment++)); do
	squall_dep=()
	if [[ -n ${after} ]]; then
		read -ra squall_ids <<<"${after}"
		squall_cond=
		for squall_i in "${squall_ids[@]}"; do squall_cond+="${squall_cond:+ && }done($squall_i)"; done
		squall_dep=(-w "$squall_cond" -ti)
	fi
	squall_out=$(bsub "${squall_dep[@]}" <"$script")
	id=$(sed -n 's/^Job <\([0-9]*\)> is submitted.*/\1/p' <<<"$squall_out")
	echo "training segment $segment: job $id"
	after=$id
done
script=infer.lsf
squall_dep=()
if [[ -n ${after} ]]; then
	read -ra squall_ids <<<"${after}"
	squall_cond=
	for squall_i in "${squall_ids[@]}"; do squall_cond+="${squall_cond:+ && }done($squall_i)"; done
	squall_dep=(-w "$squall_cond" -ti)
fi
squall_out=$(bsub "${squall_dep[@]}" <"$script")
id=$(sed -n 's/^Job <\([0-9]*\)> is submitted.*/\1/p' <<<"$squall_out")
echo "inference array: job $id"
