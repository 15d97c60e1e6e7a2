#!/bin/bash
# A single-node SLURM on this machine, to try the job-array example (and to
# test it): munge for authentication, slurmctld and slurmd on localhost,
# no cgroup plugins (process tracking by /proc, no task confinement, no
# accounting), one partition with every CPU of this machine.
#
#   scripts/cluster/single_node_slurm.sh start   write the configuration, start
#                                                munged, slurmctld and slurmd,
#                                                wait for the node to be idle
#   scripts/cluster/single_node_slurm.sh stop    stop what start started
#
# Needs root and the packages slurm-wlm and munge (Debian/Ubuntu:
# apt-get install slurm-wlm munge). Everything lives in $SLURM_LOCAL_DIR
# (default ~/.local/state/yawdyn-slurm); the system's /etc/slurm is not
# touched. Point
# the SLURM commands at it with
#
#   export SLURM_CONF=$SLURM_LOCAL_DIR/slurm.conf
#
# start is idempotent: with a controller already answering on that
# configuration it only waits for the node. Exit status 0 ready, 1 not.
set -euo pipefail

DIR=${SLURM_LOCAL_DIR:-${XDG_STATE_HOME:-~/.local/state}/yawdyn-slurm}
CONF=$DIR/slurm.conf
export SLURM_CONF=$CONF

die() {
    echo "single-node SLURM: $*" >&2
    for log in "$DIR/slurmctld.log" "$DIR/slurmd.log"; do
        if [ -f "$log" ]; then
            echo "--- last lines of $log" >&2
            tail -n 15 "$log" >&2
        fi
    done
    exit 1
}

write_config() {
    mkdir -p "$DIR/state" "$DIR/spool"
    local host node
    host=$(hostname -s)
    # This machine's CPUs, sockets and memory as slurmd sees them.
    node=$(slurmd -C | head -n 1)
    [[ $node == NodeName=* ]] || die "slurmd -C did not describe this node: $node"
    cat >"$CONF" <<EOF
# Single-node SLURM for trying and testing yawdyn's job-array example.
ClusterName=yawdyn-local
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CryptoType=crypto/munge
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
StateSaveLocation=$DIR/state
SlurmdSpoolDir=$DIR/spool
SlurmctldPidFile=$DIR/slurmctld.pid
SlurmdPidFile=$DIR/slurmd.pid
SlurmctldLogFile=$DIR/slurmctld.log
SlurmdLogFile=$DIR/slurmd.log
SlurmctldPort=${SLURMCTLD_PORT:-6817}
SlurmdPort=${SLURMD_PORT:-6818}
MinJobAge=600
$node NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=local Nodes=$host Default=YES MaxTime=INFINITE State=UP
EOF
}

start_munge() {
    if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then
        return
    fi
    mkdir -p /run/munge
    chown munge:munge /run/munge
    chmod 0755 /run/munge
    [ -f /etc/munge/munge.key ] || die "no /etc/munge/munge.key (create one with mungekey as root)"
    if command -v runuser >/dev/null 2>&1; then
        runuser -u munge -- munged
    else
        su -s /bin/sh munge -c munged
    fi
    for _ in $(seq 1 20); do
        if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then
            return
        fi
        sleep 0.5
    done
    die "munged did not start (see /var/log/munge/munged.log)"
}

start() {
    [ "$(id -u)" -eq 0 ] || die "start needs root (slurmd runs jobs as their users)"
    for cmd in slurmctld slurmd munged sbatch; do
        command -v "$cmd" >/dev/null 2>&1 ||
            die "$cmd is missing: install the packages (Debian/Ubuntu: apt-get install slurm-wlm munge)"
    done
    start_munge
    if [ -f "$CONF" ] && scontrol ping 2>/dev/null | grep -q "is UP"; then
        echo "single-node SLURM: controller already up ($CONF)"
    else
        write_config
        slurmctld -f "$CONF" || die "slurmctld did not start"
        slurmd -f "$CONF" || die "slurmd did not start"
    fi
    wait_ready
}

# The node is idle (or mixed/allocated: busy with jobs) within 60 s.
wait_ready() {
    local state=""
    for _ in $(seq 1 120); do
        state=$(sinfo -h -N -o %t 2>/dev/null | head -n 1 || true)
        case $state in
            idle* | mix* | alloc*)
                echo "single-node SLURM ready: node $(hostname -s) $state, SLURM_CONF=$CONF"
                return
                ;;
        esac
        sleep 0.5
    done
    die "the node did not become idle within 60 s (state: ${state:-no answer})"
}

stop() {
    for pidfile in "$DIR/slurmd.pid" "$DIR/slurmctld.pid"; do
        if [ -f "$pidfile" ]; then
            kill "$(cat "$pidfile")" 2>/dev/null || true
        fi
    done
    echo "single-node SLURM stopped (munged left running)"
}

case "${1:-}" in
    start) start ;;
    stop) stop ;;
    *)
        echo "usage: $0 start|stop" >&2
        exit 2
        ;;
esac
