#!/usr/bin/env bash
# The test command of the README and of CI: installs what the tests need on
# a fresh Debian machine, starts a single-node Slurm cluster for the
# scheduler's integration tests, runs every Go test, and stops exactly the
# daemons it started.
set -euo pipefail
cd "$(dirname "$0")/.."
export PATH="/usr/local/go/bin:$PATH"
scripts/setup-debian.sh
started_slurm=0
if bash .ci/slurm-up.sh; then
  started_slurm=1
else
  echo "test: the Slurm cluster did not start; its integration tests will say they are skipped" >&2
fi
stop() { [ "$started_slurm" = 1 ] && bash .ci/slurm-down.sh || true; }
trap stop EXIT
go vet ./...
go test -count=1 -timeout 40m "$@" ./...
