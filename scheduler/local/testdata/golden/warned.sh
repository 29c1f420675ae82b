#!/bin/bash
# squall local job warned: 1 node(s) x 1 rank(s), 1 core(s) per rank, walltime 00:20:00
# Job script written by squall for engine local; submit it again to resume:
# it only ever writes below its own job directory.
# shellcheck disable=SC1090,SC1091 # site set-up may source files we cannot follow
set -eo pipefail

# Site set-up (from the site profile, verbatim).
module load cuda/12.2
. /opt/venvs/squall/bin/activate
set -u

SQUALL_JOB_ID="${SQUALL_LOCAL_JOB_ID:-local}"
SQUALL_SUBMIT_DIR="${SQUALL_LOCAL_SUBMIT_DIR:-$PWD}"
SQUALL_JOB_DIR=$SQUALL_SUBMIT_DIR
export SQUALL_JOB_ID SQUALL_SUBMIT_DIR SQUALL_JOB_DIR
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

# The engine (or our timer) sends USR1 10m0s before the walltime: pass
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
(sleep 600 && kill -s USR1 "$$") </dev/null >/dev/null 2>&1 &
squall_timer=$!
trap 'kill "$squall_timer" 2>/dev/null || true' EXIT

squall_run sleep 1
if ((SQUALL_WARNED)); then echo "squall: the command stopped after the warning signal" >&2; fi
