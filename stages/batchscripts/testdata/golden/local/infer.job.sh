#!/bin/bash
# squall local job squall-infer: 1 node(s) x 1 rank(s), 2 core(s) per rank, walltime 01:00:00
# array of 2 tasks, run one after another
# Job script written by squall for engine local; submit it again to resume:
# it only ever writes below its own job directory.
# shellcheck disable=SC1090,SC1091 # site set-up may source files we cannot follow
set -eo pipefail
set -u

SQUALL_JOB_ID="${SQUALL_LOCAL_JOB_ID:-local}"
SQUALL_SUBMIT_DIR="${SQUALL_LOCAL_SUBMIT_DIR:-$PWD}"
SQUALL_JOB_DIR=/CAMPAIGN/runs/train
export SQUALL_JOB_ID SQUALL_SUBMIT_DIR SQUALL_JOB_DIR
SQUALL_ARRAY_INDEX="${SQUALL_LOCAL_ARRAY_INDEX:?not an array task}"
export SQUALL_ARRAY_INDEX
export SQUALL_STATS=/CAMPAIGN/cache/normalize/stats.json
export SQUALL_CHECKPOINTS=/CAMPAIGN/runs/train/checkpoints
cd -- "$SQUALL_JOB_DIR"

# squall_run runs a command in the background and waits for it, so that
# a trapped signal is handled while it runs; it returns the command's status.
squall_child=
squall_run() {
	"$@" &
	squall_child=$!
	local rc=0
	while kill -0 "$squall_child" 2>/dev/null; do
		wait "$squall_child" || true
	done
	wait "$squall_child" || rc=$?
	squall_child=
	return "$rc"
}

# squall_launch_local N CMD...: start N ranks of CMD here, SQUALL_RANK=0..N-1,
# pass the warning signal on to each, and fail if any rank fails.
squall_launch_local() {
	local n=$1 i rc=0
	shift
	local pids=()
	for ((i = 0; i < n; i++)); do
		SQUALL_RANK=$i "$@" &
		pids+=("$!")
	done
	trap 'kill -s USR1 "${pids[@]}" 2>/dev/null || true' USR1
	for i in "${pids[@]}"; do
		wait "$i" || rc=$?
	done
	return "$rc"
}

# One task of the inference array: line SQUALL_ARRAY_INDEX of inference-tasks.tsv
# (scenario, block, input, output). The mask is written beside its final
# name and renamed when complete; a task whose mask exists does nothing.
mapfile -t squall_tasks <"$SQUALL_SUBMIT_DIR/inference-tasks.tsv"
IFS=$'\t' read -r SQUALL_SCENARIO SQUALL_BLOCK SQUALL_INPUT SQUALL_OUTPUT <<<"${squall_tasks[$SQUALL_ARRAY_INDEX]}"
SQUALL_OUTPUT_PARTIAL="${SQUALL_OUTPUT%.nc}.partial-${SQUALL_JOB_ID}.nc"
export SQUALL_SCENARIO SQUALL_BLOCK SQUALL_INPUT SQUALL_OUTPUT SQUALL_OUTPUT_PARTIAL
if [[ -e $SQUALL_OUTPUT ]]; then
	echo "squall: $SQUALL_OUTPUT exists; nothing to do"
	exit 0
fi
mkdir -p -- "$(dirname -- "$SQUALL_OUTPUT")"
squall_run squall_launch_local 1 python infer.py "${SQUALL_INPUT}" "${SQUALL_OUTPUT_PARTIAL}"
mv -f -- "$SQUALL_OUTPUT_PARTIAL" "$SQUALL_OUTPUT"
