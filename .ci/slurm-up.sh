#!/usr/bin/env bash
# slurm-up.sh: install, configure and start a single-node Slurm cluster on
# this machine, for the scheduler integration tests.
#
# Runs as root, without systemd: munged (as user munge), slurmctld and
# slurmd are started in the foreground under setsid, in the background, and
# their PIDs are written to "$SQUALL_SLURM_DIR/pids" so that slurm-down.sh
# stops exactly these processes and nothing else.
#
# Environment:
#   SQUALL_SLURM_DIR    state, spool, logs and PIDs (default /tmp/squall-slurm)
#   SQUALL_SLURM_FORCE  set to 1 to overwrite an /etc/slurm/slurm.conf that
#                       this script did not write
#
# Choices, and why:
#   - node and controller at 127.0.0.1: the host name resolves there and no
#     network set-up is needed;
#   - proctrack/linuxproc, task/none, jobacct_gather/none: no cgroups needed;
#   - SchedulerParameters=batch_sched_delay=0: otherwise every job waits
#     about 3 s before it starts;
#   - DependencyParameters=kill_invalid_depend: a job whose afterok
#     dependency failed is cancelled (reason DependencyNeverSatisfied)
#     instead of pending forever (Slurm 22.05 ignores the option when it is
#     given under SchedulerParameters);
#   - no accounting database: `scontrol show job` reports JobState and
#     ExitCode for MinJobAge seconds, and JobCompType=jobcomp/filetxt makes
#     `sacct --completion` a permanent record.
set -euo pipefail

dir=${SQUALL_SLURM_DIR:-/tmp/squall-slurm}
conf=/etc/slurm/slurm.conf
marker="# written by squall .ci/slurm-up.sh"

if [[ $(id -u) -ne 0 ]]; then
	echo "slurm-up: must run as root (it starts munged and the Slurm daemons)" >&2
	exit 1
fi

if [[ -s "$dir/pids" ]]; then
	alive=0
	while read -r _ pid; do
		if kill -0 "$pid" 2>/dev/null; then alive=1; fi
	done <"$dir/pids"
	if [[ $alive -eq 1 ]] && sinfo -h >/dev/null 2>&1; then
		echo "slurm-up: already running (PIDs in $dir/pids)"
		exit 0
	fi
fi

# Install when missing: a fresh CI machine has neither package.
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null ||
	! command -v sbatch >/dev/null || ! command -v munged >/dev/null; then
	export DEBIAN_FRONTEND=noninteractive
	apt-get update -qq
	apt-get install -y -qq slurm-wlm munge >/dev/null
fi

mkdir -p "$dir/state" "$dir/spool" "$dir/log"
: >"$dir/pids"

# --- munge ---------------------------------------------------------------
install -d -o munge -g munge -m 0755 /run/munge
install -d -o munge -g munge -m 0700 /var/lib/munge /var/log/munge
if [[ ! -s /etc/munge/munge.key ]]; then
	install -d -o munge -g munge -m 0700 /etc/munge
	setpriv --reuid=munge --regid=munge --init-groups mungekey --create --keyfile=/etc/munge/munge.key
fi
if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then
	echo "slurm-up: using the munged already running"
else
	setsid setpriv --reuid=munge --regid=munge --init-groups \
		/usr/sbin/munged --foreground >"$dir/log/munged.out" 2>&1 </dev/null &
	echo "munged $!" >>"$dir/pids"
	for _ in $(seq 100); do
		if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then break; fi
		sleep 0.05
	done
	munge -n | unmunge >/dev/null
fi

# --- configuration -------------------------------------------------------
if [[ -e $conf ]] && ! grep -qF "$marker" "$conf" && [[ ${SQUALL_SLURM_FORCE:-} != 1 ]]; then
	echo "slurm-up: $conf exists and was not written by this script; set SQUALL_SLURM_FORCE=1 to overwrite it" >&2
	exit 1
fi
host=$(hostname -s)
# slurmd -C prints this node's shape in slurm.conf syntax; drop its UpTime line.
node=$(slurmd -C | grep '^NodeName=')
mkdir -p /etc/slurm
cat >"$conf" <<CONF
$marker
ClusterName=squall
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/log/slurmctld.log
SlurmdLogFile=$dir/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/filetxt
JobCompLoc=$dir/jobcomp.txt
SchedulerType=sched/backfill
SchedulerParameters=batch_sched_delay=0
DependencyParameters=kill_invalid_depend
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
MpiDefault=none
ReturnToService=2
MinJobAge=300
$node NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=debug Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF

# slurmctld leaves its pid file behind when stopped; a stale one is harmless
# to slurmctld -D but misleading to people, so clear it.
rm -f "$dir/slurmctld.pid" "$dir/slurmd.pid"

# --- daemons -------------------------------------------------------------
setsid /usr/sbin/slurmctld -D -i >"$dir/log/slurmctld.out" 2>&1 </dev/null &
echo "slurmctld $!" >>"$dir/pids"
setsid /usr/sbin/slurmd -D >"$dir/log/slurmd.out" 2>&1 </dev/null &
echo "slurmd $!" >>"$dir/pids"

# Wait for the node to be idle (measured here: about 1.3 s).
for _ in $(seq 300); do
	state=$(sinfo -h -n "$host" -o %T 2>/dev/null || true)
	if [[ $state == idle ]]; then
		echo "slurm-up: node $host idle; PIDs in $dir/pids"
		exit 0
	fi
	sleep 0.1
done
echo "slurm-up: node $host not idle after 30 s (state: ${state:-unknown}); logs in $dir/log" >&2
exit 1
