#!/usr/bin/env bash
# A single-node Slurm on localhost for the tests: install, start, stop, check.
#
#   scripts/local-slurm.sh install   apt-get install munge and Slurm (Debian's packages)
#   scripts/local-slurm.sh start     install if needed, write the config, start
#                                    munged, slurmctld and slurmd, wait for the node
#   scripts/local-slurm.sh check     submit an 8-task array of `true` and wait for it
#   scripts/local-slurm.sh status    say what is running
#   scripts/local-slurm.sh stop      stop the three daemons this script started
#
# Every subcommand is safe to run twice. Runs as root (CI runs as root on a
# fresh Debian machine). The config goes to /etc/slurm/slurm.conf, the
# default place every Slurm command reads; the script refuses to replace a
# slurm.conf it did not write. Daemons are stopped by the process ids in
# their pid files, never by name. Waits are bounded; on failure the script
# says what it waited for and prints the end of the relevant log.
set -euo pipefail

conf=/etc/slurm/slurm.conf
marker="# written by sliceplan scripts/local-slurm.sh"
state=/var/lib/sliceplan-slurm
logs=/var/log/sliceplan-slurm
run=/run/sliceplan-slurm
munge_run=/run/munge
node=$(hostname -s)
wait_seconds=${LOCAL_SLURM_WAIT:-60}

say() { printf 'local-slurm: %s\n' "$*" >&2; }
die() {
    say "error: $*"
    exit 1
}
need_root() { [[ $(id -u) -eq 0 ]] || die "run as root (it installs packages and starts daemons)"; }

# Shows the last lines of a log, for failure messages.
tail_log() {
    if [[ -f $1 ]]; then
        say "last lines of $1:"
        tail -n 15 "$1" >&2 || true
    fi
}

# Waits up to $1 seconds for the command in the remaining arguments to succeed.
wait_for() {
    local limit=$1
    shift
    local waited=0
    until "$@" >/dev/null 2>&1; do
        ((waited >= limit * 5)) && return 1
        sleep 0.2
        waited=$((waited + 1))
    done
}

# True when the pid file names a live process.
alive() { [[ -f $1 ]] && kill -0 "$(cat "$1")" 2>/dev/null; }

installed() { command -v slurmctld >/dev/null && command -v slurmd >/dev/null && command -v munged >/dev/null && command -v sbatch >/dev/null; }

do_install() {
    need_root
    if installed; then
        say "munge and Slurm $(dpkg-query -W -f '${Version}' slurmctld 2>/dev/null) are installed"
        return
    fi
    local t0=$SECONDS
    say "installing munge and Slurm with apt-get"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq || die "apt-get update failed; is Debian's package registry reachable?"
    apt-get install -y -qq --no-install-recommends munge slurmctld slurmd slurm-client >/dev/null ||
        die "apt-get install munge slurmctld slurmd slurm-client failed"
    installed || die "the packages installed but slurmctld, slurmd, munged or sbatch is still missing"
    say "installed munge and Slurm $(dpkg-query -W -f '${Version}' slurmctld) in $((SECONDS - t0)) s"
}

# The config: one node (this host, reached on 127.0.0.1 so no name lookup is
# needed), one default partition, no cgroups (Slurm 22.05 refuses
# CgroupPlugin=disabled, so there is no cgroup.conf at all), no accounting.
# Memory is scheduled (CR_Core_Memory) as on a real cluster, with 90% of the
# machine's memory declared so slurmd never finds less than it was told.
# batch_sched_delay=0 starts the next array task as soon as one ends (the
# default 3 s delay would triple the test's wait). Sets conf_changed=1 when
# the file was (re)written.
conf_changed=0
write_conf() {
    local cpus mem_mib
    cpus=$(nproc)
    mem_mib=$(awk '/^MemTotal:/ { printf "%d", $2 / 1024 * 0.9 }' /proc/meminfo)
    if [[ -f $conf ]] && ! grep -qF "$marker" "$conf"; then
        die "$conf exists and was not written by this script; move it away to use the local test cluster"
    fi
    mkdir -p /etc/slurm "$state/ctld" "$state/d" "$logs" "$run"
    [[ -e /etc/slurm/cgroup.conf ]] && grep -qF "$marker" /etc/slurm/cgroup.conf && rm -f /etc/slurm/cgroup.conf
    local text
    text="$marker
# Single-node test cluster on $node; rewritten by every 'start'.
ClusterName=sliceplan-local
SlurmctldHost=$node(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CryptoType=crypto/munge
StateSaveLocation=$state/ctld
SlurmdSpoolDir=$state/d
SlurmctldPidFile=$run/slurmctld.pid
SlurmdPidFile=$run/slurmd.pid
SlurmctldLogFile=$logs/slurmctld.log
SlurmdLogFile=$logs/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
DefMemPerCPU=64
SchedulerType=sched/backfill
SchedulerParameters=batch_sched_delay=0
MpiDefault=none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
ReturnToService=2
MaxArraySize=10001
MinJobAge=600
SlurmdTimeout=60
NodeName=$node NodeAddr=127.0.0.1 CPUs=$cpus RealMemory=$mem_mib State=UNKNOWN
PartitionName=local Nodes=$node Default=YES MaxTime=INFINITE State=UP"
    if [[ ! -f $conf ]] || [[ $(cat "$conf") != "$text" ]]; then
        printf '%s\n' "$text" >"$conf.tmp"
        mv "$conf.tmp" "$conf"
        conf_changed=1
        say "wrote $conf (node $node, $cpus CPUs, ${mem_mib} MiB)"
    fi
}

start_munge() {
    if [[ -f $munge_run/munged.pid ]] && alive "$munge_run/munged.pid"; then
        return
    fi
    mkdir -p "$munge_run" /var/log/munge /var/lib/munge
    chown munge:munge "$munge_run" /var/log/munge /var/lib/munge
    chmod 0755 "$munge_run"
    if [[ ! -s /etc/munge/munge.key ]]; then
        mungekey --create --keyfile=/etc/munge/munge.key
        chown munge:munge /etc/munge/munge.key
        chmod 0400 /etc/munge/munge.key
    fi
    runuser -u munge -- /usr/sbin/munged || {
        tail_log /var/log/munge/munged.log
        die "munged did not start"
    }
    wait_for 10 bash -c 'munge -n | unmunge' || {
        tail_log /var/log/munge/munged.log
        die "munged started but a credential round trip failed within 10 s"
    }
}

node_state() { sinfo -h -n "$node" -o %T 2>/dev/null | head -n 1; }
node_idle() { [[ $(node_state) == idle* || $(node_state) == mixed* || $(node_state) == allocated* ]]; }

do_start() {
    need_root
    local t0=$SECONDS
    do_install
    local t1=$SECONDS
    write_conf
    if ((conf_changed)) && { alive "$run/slurmctld.pid" || alive "$run/slurmd.pid"; }; then
        say "the config changed: restarting slurmctld and slurmd"
        stop_daemons slurmd slurmctld
    fi
    start_munge
    if ! alive "$run/slurmctld.pid"; then
        slurmctld || {
            tail_log "$logs/slurmctld.log"
            die "slurmctld did not start"
        }
    fi
    wait_for "$wait_seconds" scontrol ping || {
        tail_log "$logs/slurmctld.log"
        die "slurmctld did not answer 'scontrol ping' within $wait_seconds s"
    }
    if ! alive "$run/slurmd.pid"; then
        slurmd || {
            tail_log "$logs/slurmd.log"
            die "slurmd did not start"
        }
    fi
    if ! wait_for "$wait_seconds" node_idle; then
        # A node left down or drained by an earlier run: resume it once.
        scontrol update NodeName="$node" State=RESUME >/dev/null 2>&1 || true
        wait_for 15 node_idle || {
            tail_log "$logs/slurmd.log"
            tail_log "$logs/slurmctld.log"
            die "node $node is '$(node_state)', not idle, after $wait_seconds s"
        }
    fi
    say "Slurm is up: node $node $(node_state) (start took $((SECONDS - t1)) s after $((t1 - t0)) s of install check)"
}

# Stops the named daemons (slurmd, slurmctld, munged) by their pid files.
stop_daemons() {
    local name pidfile pid
    for name in "$@"; do
        if [[ $name == munged ]]; then pidfile=$munge_run/munged.pid; else pidfile=$run/$name.pid; fi
        if alive "$pidfile"; then
            pid=$(cat "$pidfile")
            kill "$pid"
            local waited=0
            while kill -0 "$pid" 2>/dev/null && ((waited < 100)); do
                sleep 0.1
                waited=$((waited + 1))
            done
            if kill -0 "$pid" 2>/dev/null; then
                say "warning: $name (pid $pid) still running after 10 s"
            else
                say "stopped $name (pid $pid)"
            fi
        fi
    done
}

do_stop() {
    need_root
    stop_daemons slurmd slurmctld munged
}

do_status() {
    local name pidfile rc=0
    for name in munged slurmctld slurmd; do
        if [[ $name == munged ]]; then pidfile=$munge_run/munged.pid; else pidfile=$run/$name.pid; fi
        if alive "$pidfile"; then
            echo "$name: running (pid $(cat "$pidfile"))"
        else
            echo "$name: not running"
            rc=1
        fi
    done
    if ((rc == 0)); then
        echo "node $node: $(node_state)"
        sinfo 2>&1 || rc=1
    fi
    return "$rc"
}

# The stand-in trial: an 8-task array of `true`, waited for with a bound.
do_check() {
    local dir job t0 waited=0
    dir=$(mktemp -d)
    trap 'rm -rf "$dir"' RETURN
    t0=$(date +%s.%N)
    job=$(sbatch --parsable --array=0-7 --output="$dir/%a.out" --chdir="$dir" --wrap 'true') ||
        die "sbatch refused a trivial array; see $logs/slurmctld.log"
    job=${job%%;*}
    while [[ -n $(squeue -h -j "$job" 2>/dev/null) ]]; do
        ((waited >= wait_seconds * 5)) && {
            squeue -j "$job" >&2 || true
            die "the 8-task array $job did not finish within $wait_seconds s"
        }
        sleep 0.2
        waited=$((waited + 1))
    done
    local done_count
    done_count=$(find "$dir" -name '*.out' | wc -l)
    ((done_count == 8)) || die "the array $job ran $done_count of 8 tasks"
    say "8-task array $job of 'true' completed in $(awk -v a="$t0" -v b="$(date +%s.%N)" 'BEGIN { printf "%.1f", b - a }') s"
}

case ${1:-} in
install) do_install ;;
start) do_start ;;
stop) do_stop ;;
status) do_status ;;
check) do_check ;;
*)
    echo "usage: $0 install|start|check|status|stop" >&2
    exit 2
    ;;
esac
