#!/usr/bin/env bash
# A single-node Slurm cluster on this machine, loopback only, for
# tests/cluster/array_job.sh (the README's array job, run for real).
#
#   bash tests/cluster/start.sh
#
# Installs Slurm and munge from the distribution's packages if missing
# (apt-get: slurmctld slurmd slurm-client munge), generates a munge key if
# there is none, writes slurm.conf under $ICEFOLD_SLURM_DIR (default
# /var/tmp/icefold-slurm) with this machine's real CPUs and memory (from
# `slurmd -C`), and starts munged, slurmctld and slurmd. A cluster already
# answering on that slurm.conf is reused. Idempotent; prints what it did.
#
# Never fails: when it cannot start a cluster (not root, no apt-get, apt or a
# daemon failed) it says why, writes the reason to $ICEFOLD_SLURM_DIR/skipped
# and exits 0, and the cluster test skips (or, under CI=true as root, fails:
# see tests/cluster/array_job.sh).
set -uo pipefail
DIR=${ICEFOLD_SLURM_DIR:-/var/tmp/icefold-slurm}
CONF=$DIR/slurm.conf
export SLURM_CONF=$CONF

say() { echo "cluster: $*"; }
skip() {
    say "$* -- no cluster started; the Slurm test (tests/cluster/array_job.sh) will be skipped"
    { mkdir -p "$DIR" && echo "$*" >"$DIR/skipped"; } 2>/dev/null
    exit 0
}
# wait up to $1 seconds for the command after it to succeed
wait_for() {
    local n=$1
    shift
    for _ in $(seq "$((n * 5))"); do
        "$@" >/dev/null 2>&1 && return 0
        sleep 0.2
    done
    return 1
}
node_ready() {
    local s
    s=$(sinfo -h -n localhost -o %T 2>/dev/null) || return 1
    case $s in idle | mixed | allocated | completing) return 0 ;; *) return 1 ;; esac
}

start=$(date +%s)
# reused when the controller answers, the node's slurmd answers (the
# controller notices a dead slurmd only after SlurmdTimeout) and the node is up
if [ -f "$CONF" ] && command -v scontrol >/dev/null && scontrol ping 2>/dev/null | grep -q UP &&
    scontrol show slurmd >/dev/null 2>&1 && node_ready; then
    rm -f "$DIR/skipped"
    say "reusing the running cluster ($CONF: $(sinfo -h -o '%P %D node(s) %c CPUs %T'))"
    exit 0
fi
[ "$(id -u)" = 0 ] || skip "not root (uid $(id -u)): installing Slurm and starting its daemons needs root"

# 1. the packages
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null ||
    ! command -v sbatch >/dev/null || ! command -v munged >/dev/null; then
    command -v apt-get >/dev/null || skip "Slurm is not installed and there is no apt-get to install it"
    say "installing slurmctld slurmd slurm-client munge (apt-get)"
    log=$(mktemp)
    if ! { apt-get update -qq &&
        DEBIAN_FRONTEND=noninteractive apt-get install -y -q --no-install-recommends \
            slurmctld slurmd slurm-client munge; } >"$log" 2>&1; then
        tail -n 5 "$log"
        skip "apt-get could not install Slurm ($(tail -n 1 "$log"))"
    fi
    rm -f "$log"
    say "installed $(slurmctld -V) in $(($(date +%s) - start)) s"
else
    say "Slurm already installed ($(slurmctld -V))"
fi

# 2. munge: a key (generated if missing) and the daemon
if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then
    say "munged already running"
else
    key=/etc/munge/munge.key
    if [ ! -s "$key" ]; then
        mkdir -p /etc/munge
        mungekey --create --keyfile="$key" || skip "mungekey could not create $key"
        say "generated the munge key $key"
    fi
    chown -R munge:munge /etc/munge && chmod 700 /etc/munge && chmod 400 "$key"
    mkdir -p /run/munge /var/lib/munge /var/log/munge
    chown munge:munge /run/munge /var/lib/munge /var/log/munge
    runuser -u munge -- /usr/sbin/munged || skip "munged did not start (see /var/log/munge/munged.log)"
    wait_for 10 sh -c 'munge -n | unmunge' || skip "munged started but does not answer"
    say "started munged"
fi

# 3. slurm.conf: one node, this machine's real CPUs and memory, no cgroups
# (containers usually cannot create cgroups: process tracking by /proc,
# no task binding, no accounting database)
# daemons of an earlier start that no longer answer: stopped by their pid files
stop_pidfile() {
    local pid
    pid=$(cat "$1" 2>/dev/null) || return 0
    if kill "$pid" 2>/dev/null; then
        wait_for 10 sh -c "! kill -0 $pid" && say "stopped $(basename "$1" .pid) (pid $pid)"
    fi
    rm -f "$1"
}
stop_pidfile "$DIR/run/slurmd.pid"
stop_pidfile "$DIR/run/slurmctld.pid"
mkdir -p "$DIR/state" "$DIR/spool" "$DIR/log" "$DIR/run"
hw=$(slurmd -C | head -n 1 | sed 's/^NodeName=[^ ]*//') || skip "slurmd -C could not read this machine's CPUs and memory"
cat >"$CONF" <<EOF
# written by tests/cluster/start.sh: a single-node test cluster, loopback only
ClusterName=icefold-ci
SlurmctldHost=localhost
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
CommunicationParameters=NoCtldInAddrAny,NoInAddrAny
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/filetxt
JobCompLoc=$DIR/log/jobcomp.txt
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
ReturnToService=2
MinJobAge=3600
DependencyParameters=kill_invalid_depend
StateSaveLocation=$DIR/state
SlurmdSpoolDir=$DIR/spool
SlurmctldPidFile=$DIR/run/slurmctld.pid
SlurmdPidFile=$DIR/run/slurmd.pid
SlurmctldLogFile=$DIR/log/slurmctld.log
SlurmdLogFile=$DIR/log/slurmd.log
NodeName=localhost NodeAddr=127.0.0.1$hw State=UNKNOWN
PartitionName=ci Nodes=localhost Default=YES MaxTime=INFINITE State=UP
EOF
say "wrote $CONF (node localhost:$hw)"

# 4. the daemons (slurmctld -c: a fresh controller state, no jobs of an earlier run)
slurmctld -c || skip "slurmctld did not start (see $DIR/log/slurmctld.log)"
wait_for 20 sh -c 'scontrol ping | grep -q UP' || skip "slurmctld started but does not answer (see $DIR/log/slurmctld.log)"
slurmd -N localhost || skip "slurmd did not start (see $DIR/log/slurmd.log)"
if ! wait_for 30 node_ready; then
    scontrol update nodename=localhost state=resume >/dev/null 2>&1
    wait_for 10 node_ready || skip "node localhost is not idle ($(sinfo -h -o %T); see $DIR/log/slurmd.log)"
fi
rm -f "$DIR/skipped"
say "started slurmctld and slurmd in $(($(date +%s) - start)) s: $(sinfo -h -o '%P %D node(s) %c CPUs %T'); SLURM_CONF=$CONF"
