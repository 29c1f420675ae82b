#!/bin/bash
# squall local job squall-train: 1 node(s) x 1 rank(s), 2 core(s) per rank, walltime 01:00:00
# Job script written by squall for engine local; submit it again to resume:
# it only ever writes below its own job directory.
# shellcheck disable=SC1090,SC1091 # site set-up may source files we cannot follow
set -eo pipefail
set -u

SQUALL_JOB_ID="${SQUALL_LOCAL_JOB_ID:-local}"
SQUALL_SUBMIT_DIR="${SQUALL_LOCAL_SUBMIT_DIR:-$PWD}"
SQUALL_JOB_DIR=/CAMPAIGN/runs/train
export SQUALL_JOB_ID SQUALL_SUBMIT_DIR SQUALL_JOB_DIR
export SQUALL_MANIFEST=/CAMPAIGN/cache/shard/manifest.json
export SQUALL_STATS=/CAMPAIGN/cache/normalize/stats.json
export SQUALL_CLASS_WEIGHTS=/CAMPAIGN/cache/shard/weights.json
export SQUALL_SHARD_SOURCE=/CAMPAIGN/cache/shard
export SQUALL_CHECKPOINTS=/CAMPAIGN/runs/train/checkpoints
export SQUALL_RANK_ENV=SQUALL_RANK
export SQUALL_STAGE_PARALLEL=8
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

# The engine (or our timer) sends USR1 5m0s before the walltime: pass
# it on so the command can write a checkpoint and stop cleanly.
export SQUALL_WARNED=0
squall_warn() {
	SQUALL_WARNED=1
	echo "squall: warning signal USR1 received; asking the command to checkpoint" >&2
	if [[ -n $squall_child ]]; then kill -s USR1 "$squall_child" 2>/dev/null || true; fi
}
trap squall_warn USR1
# This engine has no warning directive: arm a timer instead.
# Its output goes nowhere so that it never holds the job's log open.
(sleep 3300 && kill -s USR1 "$$") </dev/null >/dev/null 2>&1 &
squall_timer=$!
trap 'kill "$squall_timer" 2>/dev/null || true' EXIT

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

# One segment of the training chain: stage this job's shards to node-local
# storage (verified), then train, resuming from the newest checkpoint.
mkdir -p -- "$SQUALL_CHECKPOINTS" logs
if [[ -e "$SQUALL_CHECKPOINTS/TRAINING_DONE" ]]; then
	echo "squall: training finished in an earlier segment; nothing to do"
	exit 0
fi
SQUALL_SHARDS=/tmp/squall-scratch/squall-shards-"$SQUALL_JOB_ID"
export SQUALL_SHARDS
echo "squall: staging shards to $SQUALL_SHARDS on 1 node(s)"
squall_run squall_launch_local 1 bash "$SQUALL_SUBMIT_DIR/stage-node.sh"
echo "squall: training on 1 node(s) x 1 rank(s)"
squall_run squall_launch_local 1 python train.py --data="${SQUALL_SHARDS}" --ckpt "${SQUALL_CHECKPOINTS}"
if ((SQUALL_WARNED)); then
	echo "squall: stopped at the warning signal after a checkpoint; the next segment continues"
	exit 0
fi
touch -- "$SQUALL_CHECKPOINTS/TRAINING_DONE"
