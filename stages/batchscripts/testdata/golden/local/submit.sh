#!/bin/bash
# Submit 1 training segment(s) as a chain (each starts after the one before
# succeeded and resumes from the newest checkpoint), then the inference array.
# Engine: local. Safe to run again: finished work is skipped by the jobs.
set -euo pipefail
cd -- "$(dirname -- "${BASH_SOURCE[0]}")"
mkdir -p -- /CAMPAIGN/runs/train/logs
after=
script=train.job.sh
for ((segment = 1; segment <= 1; segment++)); do
	: "${after}" # segments run in order; each waits for the one before
	SQUALL_LOCAL_SUBMIT_DIR=$PWD bash "$script"
	id=local
	echo "training segment $segment: job $id"
	after=$id
done
script=infer.job.sh
: "${after}" # segments run in order; each waits for the one before
SQUALL_LOCAL_SUBMIT_DIR=$PWD bash "$script"
id=local
echo "inference array: job $id"
