#!/usr/bin/env bash
# The demo command of the README: installs what squall needs, builds it,
# generates the invented demo world and runs the whole campaign on it.
set -euo pipefail
cd "$(dirname "$0")/.."
export PATH="/usr/local/go/bin:$PATH"
scripts/setup-debian.sh
mkdir -p bin
go build -o bin/squall ./cmd/squall
bin/squall demo "${1:-squall-demo}"
