#!/usr/bin/env bash
# Start a one-node Slurm cluster from Debian's packages, for the scheduler test of .ci/run.
# Run as root on a Debian machine; works without systemd (daemons are started by hand, each as
# a plain background command so that $! is the daemon's own PID, recorded in $SLURM_CI_PIDS).
# Exit 0: an idle node is up. Exit 10: Slurm cannot be installed or started here (the caller
# skips the test and says so). Other exits: a real failure.
set -uo pipefail
PIDS=${SLURM_CI_PIDS:-/tmp/dwarfbound-slurm/pids}
mkdir -p "$PIDS"
say() { printf '[slurm] %s\n' "$*"; }
cannot() { say "cannot run Slurm here: $*"; exit 10; }

[ "$(id -u)" -eq 0 ] || cannot "not root (the daemons and apt-get need root)"
command -v apt-get >/dev/null 2>&1 || cannot "no apt-get (not a Debian machine)"
if ! command -v slurmctld >/dev/null 2>&1 || ! command -v munged >/dev/null 2>&1; then
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq >/dev/null 2>&1 || cannot "apt-get update failed"
  apt-get install -y -qq --no-install-recommends slurmctld slurmd slurm-client munge >/dev/null 2>&1 \
    || cannot "apt-get install slurmctld slurmd slurm-client munge failed"
fi
say "$(dpkg-query -W -f='${Package} ${Version}; ' slurmctld slurmd slurm-client munge 2>/dev/null)"

# munge: the package wrote the key; systemd would create /run/munge, so do it here.
[ -s /etc/munge/munge.key ] || mungekey --create >/dev/null 2>&1 || cannot "no munge key"
mkdir -p /run/munge /var/log/munge && chown munge:munge /run/munge /var/log/munge && chmod 0755 /run/munge
setsid setpriv --reuid=munge --regid=munge --init-groups /usr/sbin/munged --foreground \
  >/var/log/munge/munged.stdout 2>&1 </dev/null &
echo $! >"$PIDS/munged"
for _ in $(seq 100); do [ -S /run/munge/munge.socket.2 ] && break; sleep 0.1; done
munge -n | unmunge >/dev/null 2>&1 || { say "munge does not work"; exit 1; }

# slurm.conf for this host (the node line as slurmd itself sees the machine).
node_line=$(slurmd -C | head -n1)
host=${node_line#NodeName=}; host=${host%% *}
getent hosts "$host" >/dev/null || cannot "hostname $host does not resolve (add it to /etc/hosts)"
mkdir -p /var/log/slurm /run/slurm && chown slurm:slurm /var/log/slurm /run/slurm
cat >/etc/slurm/slurm.conf <<EOF
# Written by dwarfbound's .ci/slurm/up.sh: one node, no accounting, no cgroups.
ClusterName=dwarfbound-ci
SlurmctldHost=$host
SlurmUser=slurm
AuthType=auth/munge
CredType=cred/munge
StateSaveLocation=/var/lib/slurm/slurmctld
SlurmdSpoolDir=/var/lib/slurm/slurmd
SlurmctldPidFile=/run/slurm/slurmctld.pid
SlurmdPidFile=/run/slurm/slurmd.pid
SlurmctldLogFile=/var/log/slurm/slurmctld.log
SlurmdLogFile=/var/log/slurm/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/filetxt
JobCompLoc=/var/log/slurm/jobcomp.log
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
# Without this a job depending on a failed one stays PENDING forever.
DependencyParameters=kill_invalid_depend
MailProg=/bin/true
MpiDefault=none
ReturnToService=2
$node_line State=UNKNOWN
PartitionName=ci Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF

setsid /usr/sbin/slurmctld -D >/var/log/slurm/slurmctld.stdout 2>&1 </dev/null &
echo $! >"$PIDS/slurmctld"
for _ in $(seq 300); do scontrol ping 2>/dev/null | grep -q 'is UP' && break; sleep 0.1; done
setsid /usr/sbin/slurmd -D >/var/log/slurm/slurmd.stdout 2>&1 </dev/null &
echo $! >"$PIDS/slurmd"
for _ in $(seq 300); do [ "$(sinfo -h -n "$host" -o %T 2>/dev/null)" = idle ] && break; sleep 0.1; done
if [ "$(sinfo -h -n "$host" -o %T 2>/dev/null)" != idle ]; then
  sinfo; tail -n 20 /var/log/slurm/*.log
  say "the node did not become idle"
  exit 1
fi
say "one-node cluster up on $host ($(sed -n 's/.*CPUs=\([0-9]*\).*/\1/p' <<<"$node_line") CPUs)"
