#!/usr/bin/env bash
# slurm-local.sh: a throwaway single-node SLURM cluster on this machine, to
# try skein's batch path (skein plan, sbatch, skein merge) without a real
# cluster. Needs root and Debian's packages: apt-get install -y slurm-wlm munge
#
#   scripts/slurm-local.sh start STATE_DIR   start munged, slurmctld, slurmd
#   scripts/slurm-local.sh stop STATE_DIR    stop them (by their recorded pids)
#   scripts/slurm-local.sh status STATE_DIR
#
# Everything the cluster needs lives in STATE_DIR (an empty or new folder):
# its slurm.conf, a private munge key and socket, the daemons' logs, spool
# and pid files. Nothing under /etc is changed and no system service is
# touched, so several such clusters can run side by side. After start, point
# the SLURM commands at the cluster with
#
#   export SLURM_CONF=STATE_DIR/slurm.conf
#
# The ports default to 6817 (slurmctld) and 6818 (slurmd); set
# SLURMCTLD_PORT and SLURMD_PORT to choose others. The daemons run in the
# foreground of background shells (slurmctld -D, slurmd -D) without
# systemd; munged runs as the munge user. The node is described by
# "slurmd -C"; processes are tracked by /proc (proctrack/linuxproc), with no
# cgroups, no accounting and no mail.
set -euo pipefail

usage() { echo "usage: $0 start|stop|status STATE_DIR" >&2; exit 2; }
[ $# -eq 2 ] || usage
action=$1
state=$2

pid_alive() { [ -s "$1" ] && kill -0 "$(cat "$1")" 2>/dev/null; }

stop() {
	local name pidfile pid
	for name in slurmd slurmctld munged; do
		pidfile=$state/$name.pid
		[ "$name" = munged ] && pidfile=$state/munge/munged.pid
		if pid_alive "$pidfile"; then
			pid=$(cat "$pidfile")
			kill "$pid"
			for _ in $(seq 50); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
			if kill -0 "$pid" 2>/dev/null; then kill -9 "$pid"; fi
			echo "stopped $name (pid $pid)"
		fi
		rm -f "$pidfile"
	done
}

case $action in
stop) stop; exit 0 ;;
status)
	for name in munge/munged slurmctld slurmd; do
		if pid_alive "$state/$name.pid"; then echo "${name#munge/} running, pid $(cat "$state/$name.pid")"; else echo "${name#munge/} not running"; fi
	done
	if [ -f "$state/slurm.conf" ]; then SLURM_CONF=$state/slurm.conf sinfo || true; fi
	exit 0 ;;
start) ;;
*) usage ;;
esac

[ "$(id -u)" -eq 0 ] || { echo "$0: start needs root (the daemons and the munge user)" >&2; exit 1; }
for cmd in munged mungekey slurmctld slurmd sinfo; do
	command -v "$cmd" >/dev/null || { echo "$0: $cmd not found: apt-get install -y slurm-wlm munge" >&2; exit 1; }
done
id munge >/dev/null 2>&1 || { echo "$0: no munge user: apt-get install -y munge" >&2; exit 1; }

mkdir -p "$state"
state=$(cd "$state" && pwd)
if pid_alive "$state/slurmctld.pid" || pid_alive "$state/slurmd.pid"; then
	echo "$0: a cluster is already running in $state; stop it first" >&2
	exit 1
fi
# The munge and slurm users must reach the folder; munged wants its own
# folder owned by it and closed to others.
chmod 755 "$state"
mkdir -p "$state/munge" "$state/ctld" "$state/spool"
chown munge:munge "$state/munge"
chmod 711 "$state/munge"
trap 'echo "$0: start failed; logs in $state" >&2; stop' ERR

# munged, with a private key and socket.
if [ ! -s "$state/munge/munge.key" ]; then
	runuser -u munge -- mungekey --create --keyfile="$state/munge/munge.key"
fi
runuser -u munge -- munged \
	--key-file="$state/munge/munge.key" --socket="$state/munge/munge.socket" \
	--pid-file="$state/munge/munged.pid" --log-file="$state/munge/munged.log" \
	--seed-file="$state/munge/munged.seed"
for _ in $(seq 50); do [ -S "$state/munge/munge.socket" ] && break; sleep 0.1; done

host=$(hostname -s)
node=$(slurmd -C | head -n 1)
node=${node/NodeName=* CPUs/NodeName=$host CPUs}
cat > "$state/slurm.conf" <<EOF
# Written by scripts/slurm-local.sh for a single-node test cluster.
ClusterName=skeinlocal
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=${SLURMCTLD_PORT:-6817}
SlurmdPort=${SLURMD_PORT:-6818}
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$state/munge/munge.socket
StateSaveLocation=$state/ctld
SlurmdSpoolDir=$state/spool/%n
SlurmctldPidFile=$state/slurmctld.pid
SlurmdPidFile=$state/slurmd.pid
SlurmctldLogFile=$state/slurmctld.log
SlurmdLogFile=$state/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
SchedulerType=sched/builtin
SchedulerParameters=batch_sched_delay=0,sched_min_interval=0
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MpiDefault=none
MailProg=/bin/true
ReturnToService=2
SlurmdTimeout=30
InactiveLimit=0
KillWait=5
MaxArraySize=10001
$node NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=local Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
export SLURM_CONF=$state/slurm.conf

# The daemons in the foreground (-D), in the background of this shell, with
# their pids recorded; their output goes to their logs.
nohup slurmctld -D -i -f "$SLURM_CONF" >>"$state/slurmctld.out" 2>&1 &
echo $! > "$state/slurmctld.pid"
nohup slurmd -D -f "$SLURM_CONF" >>"$state/slurmd.out" 2>&1 &
echo $! > "$state/slurmd.pid"

for _ in $(seq 900); do
	if [ "$(sinfo -h -o %t 2>/dev/null)" = idle ]; then
		trap - ERR
		echo "SLURM cluster up in $state: node $host idle"
		echo "export SLURM_CONF=$SLURM_CONF"
		exit 0
	fi
	pid_alive "$state/slurmctld.pid" || { echo "$0: slurmctld stopped; see $state/slurmctld.log and slurmctld.out" >&2; tail -n 20 "$state/slurmctld.log" "$state/slurmctld.out" >&2 || true; stop; exit 1; }
	pid_alive "$state/slurmd.pid" || { echo "$0: slurmd stopped; see $state/slurmd.log and slurmd.out" >&2; tail -n 20 "$state/slurmd.log" "$state/slurmd.out" >&2 || true; stop; exit 1; }
	sleep 0.1
done
echo "$0: the node did not become idle in 90 s; see the logs in $state" >&2
sinfo >&2 || true
tail -n 20 "$state/slurmctld.log" "$state/slurmd.log" >&2 || true
stop
exit 1
