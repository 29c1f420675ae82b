#!/usr/bin/env bash
# slurm-down.sh: stop exactly the daemons that slurm-up.sh started, by the
# PIDs it recorded in "$SQUALL_SLURM_DIR/pids" (never by process name).
set -euo pipefail

dir=${SQUALL_SLURM_DIR:-/tmp/squall-slurm}
if [[ ! -s "$dir/pids" ]]; then
	echo "slurm-down: nothing recorded in $dir/pids"
	exit 0
fi

# Stop in reverse start order: slurmd, slurmctld, then munged.
mapfile -t lines < <(tac "$dir/pids")
for line in "${lines[@]}"; do
	read -r name pid <<<"$line"
	if kill -0 "$pid" 2>/dev/null; then
		kill -TERM "$pid" 2>/dev/null || true
		for _ in $(seq 100); do
			kill -0 "$pid" 2>/dev/null || break
			sleep 0.05
		done
		if kill -0 "$pid" 2>/dev/null; then
			echo "slurm-down: $name ($pid) ignored TERM; sending KILL" >&2
			kill -KILL "$pid" 2>/dev/null || true
		fi
	fi
done
# slurmctld leaves its pid file behind.
rm -f "$dir/slurmctld.pid" "$dir/slurmd.pid"
: >"$dir/pids"
echo "slurm-down: stopped"
