#!/usr/bin/env bash
# A single-node SLURM cluster on this machine, for the workflow's cluster test.
#
#   tests/slurm_cluster.sh start DIR   install (apt, root only) if needed, write DIR/slurm.conf,
#                                      start munged, slurmctld and slurmd; idempotent
#   tests/slurm_cluster.sh stop DIR    stop what start started (by the pids it recorded)
#
# Everything it writes (config, state, spool, logs, pids) stays under DIR. Commands that talk
# to the cluster need SLURM_CONF=DIR/slurm.conf. No accounting database: jobs stay visible to
# squeue for MinJobAge seconds after they end, which is how the executor reads their states.
set -euo pipefail

action=${1:?usage: slurm_cluster.sh start|stop DIR}
dir=$(mkdir -p "${2:?usage: slurm_cluster.sh start|stop DIR}" && cd "$2" && pwd)
export SLURM_CONF=$dir/slurm.conf
# the step launcher inside a batch job drops SLURM_CONF, so srun there reads the default file:
# ours is copied there (never over a file this script did not write)
default_conf=/etc/slurm/slurm.conf
marker="# single-node test cluster of spikevar's tests/slurm_cluster.sh"

stop() {
    for name in slurmd slurmctld munged; do
        if [[ -s $dir/$name.pid ]]; then
            pid=$(cat "$dir/$name.pid")
            kill "$pid" 2>/dev/null || true
            for _ in $(seq 50); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
            rm -f "$dir/$name.pid"
        fi
    done
    if [[ -f $default_conf ]] && grep -qF "$marker" "$default_conf" && \
        grep -qF "StateSaveLocation=$dir/state" "$default_conf"; then
        rm -f "$default_conf"
    fi
}

running() { [[ -s $dir/$1.pid ]] && kill -0 "$(cat "$dir/$1.pid")" 2>/dev/null; }

install() {
    if command -v slurmctld >/dev/null && command -v munged >/dev/null; then return; fi
    if [[ $(id -u) -ne 0 ]] || ! command -v apt-get >/dev/null; then
        echo "slurm_cluster: slurm-wlm and munge are not installed and this user cannot apt-get" \
             "install them" >&2
        exit 3
    fi
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq slurm-wlm munge >/dev/null
}

start() {
    install
    if running slurmctld && running slurmd && running munged; then
        echo "slurm_cluster: already running (SLURM_CONF=$SLURM_CONF)"
        return
    fi
    stop
    mkdir -p "$dir/state" "$dir/spool" "$dir/munge"
    local node cpus memory
    node=$(hostname -s)
    cpus=$(nproc)
    memory=$(awk '/MemTotal/ {print int($2 / 1024) - 1024}' /proc/meminfo)
    if [[ -f $default_conf ]] && ! grep -qF "$marker" "$default_conf"; then
        echo "slurm_cluster: $default_conf exists and is not ours; this machine has its own" \
             "SLURM configuration, so the test cluster is not started" >&2
        exit 5
    fi
    cat >"$SLURM_CONF" <<EOF
$marker
ClusterName=spikevartest
SlurmctldHost=$node(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$dir/munge/munge.socket
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/slurmctld.log
SlurmdLogFile=$dir/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
SchedulerType=sched/backfill
MpiDefault=none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
ReturnToService=2
MinJobAge=3600
NodeName=$node NodeAddr=127.0.0.1 CPUs=$cpus RealMemory=$memory State=UNKNOWN
PartitionName=normal Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
    mkdir -p "$(dirname "$default_conf")"
    cp "$SLURM_CONF" "$default_conf"
    # munged refuses to run as root without --force; its key comes from the package
    munged --force --socket="$dir/munge/munge.socket" --pid-file="$dir/munged.pid" \
        --log-file="$dir/munged.log" --seed-file="$dir/munge/seed"
    slurmctld -f "$SLURM_CONF"
    slurmd -f "$SLURM_CONF"
    for _ in $(seq 100); do
        if sinfo -h -o %T 2>/dev/null | grep -qE '^(idle|mixed|allocated)'; then
            echo "slurm_cluster: up (SLURM_CONF=$SLURM_CONF)"
            return
        fi
        sleep 0.3
    done
    echo "slurm_cluster: the node did not come up; see $dir/slurmctld.log and slurmd.log" >&2
    exit 4
}

case $action in
    start) start ;;
    stop) stop ;;
    *) echo "usage: slurm_cluster.sh start|stop DIR" >&2; exit 2 ;;
esac
