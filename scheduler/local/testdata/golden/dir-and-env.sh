#!/bin/bash
# squall local job dir-and-env: 1 node(s) x 1 rank(s), 1 core(s) per rank, walltime 12:00:00
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
SQUALL_JOB_DIR=/scratch/campaign/jobs/run-1
export SQUALL_JOB_ID SQUALL_SUBMIT_DIR SQUALL_JOB_DIR
export A_B='x y'
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

squall_run env
