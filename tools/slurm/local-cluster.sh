#!/usr/bin/env bash
# A real single-node Slurm cluster on this machine, for testing the job-array
# path of `turbid sweep slurm` against a stock Slurm (Debian's packages).
#
#   tools/slurm/local-cluster.sh install   # apt-get the packages (root; idempotent)
#   tools/slurm/local-cluster.sh start     # install if needed, configure, start munged, slurmctld, slurmd
#   tools/slurm/local-cluster.sh status    # exit 0 when the node is ready (idle, mixed or allocated)
#   tools/slurm/local-cluster.sh stop      # cancel jobs, stop the daemons by their PID files
#
# Loopback only: the daemons listen on 127.0.0.1 (ports 6817/6818), no
# accounting database, no cgroups, no systemd. State, logs and PID files live
# in $TURBID_SLURM_DIR (default /tmp/turbid-slurm); `start` wipes the state so
# job ids restart at 1, and writes /etc/slurm/slurm.conf. `stop` also stops
# munged if `start` started it. Needs root (apt-get; the daemons run as root,
# munged as user munge).
set -euo pipefail

DIR="${TURBID_SLURM_DIR:-/tmp/turbid-slurm}"
CONF_DIR=/etc/slurm
CONF="$CONF_DIR/slurm.conf"

log() { echo "local-cluster: $*" >&2; }
die() { log "$*"; exit 1; }

need_root() {
    [ "$(id -u)" = 0 ] || die "must run as root (apt-get, munged and the Slurm daemons)"
}

installed() {
    command -v slurmctld >/dev/null && command -v slurmd >/dev/null &&
        command -v sbatch >/dev/null && command -v munged >/dev/null
}

install() {
    need_root
    if installed; then
        log "Slurm and munge are installed"
        return 0
    fi
    command -v apt-get >/dev/null || die "no apt-get: cannot install Slurm on this machine"
    # No init system here: keep the packages from starting services during install.
    local policy=/usr/sbin/policy-rc.d made_policy=0
    if [ ! -e "$policy" ]; then
        printf '#!/bin/sh\nexit 101\n' >"$policy"
        chmod 755 "$policy"
        made_policy=1
    fi
    local rc=0
    {
        DEBIAN_FRONTEND=noninteractive apt-get update -qq &&
            DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends \
                slurmctld slurmd slurm-client munge
    } >&2 || rc=$?
    [ "$made_policy" = 1 ] && rm -f "$policy"
    [ "$rc" = 0 ] || die "apt-get failed (exit $rc): cannot install Slurm on this machine"
    installed || die "packages installed but the Slurm or munge commands are missing"
    log "installed $(slurmctld -V 2>/dev/null || echo slurm)"
}

# PID from a pid file, only if that process is alive and is the expected program.
pid_of() {
    local file="$1" comm="$2" pid
    [ -s "$file" ] || return 1
    pid="$(cat "$file")"
    [ -r "/proc/$pid/comm" ] || return 1
    [ "$(cat "/proc/$pid/comm")" = "$comm" ] || return 1
    echo "$pid"
}

wait_for() { # seconds, command...
    local t="$1"
    shift
    local i
    for ((i = 0; i < t * 10; i++)); do
        if "$@"; then return 0; fi
        sleep 0.1
    done
    return 1
}

start_munge() {
    if [ ! -s /etc/munge/munge.key ]; then
        if command -v mungekey >/dev/null; then
            mungekey --create >&2
        else
            dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 status=none
        fi
    fi
    chown munge:munge /etc/munge/munge.key
    chmod 0400 /etc/munge/munge.key
    mkdir -p /run/munge /var/log/munge /var/lib/munge
    chown munge:munge /run/munge /var/log/munge /var/lib/munge
    if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then
        return 0
    fi
    setpriv --reuid=munge --regid=munge --init-groups /usr/sbin/munged
    touch "$DIR/run/munged.ours" # so that `stop` stops only a munged it started
    wait_for 10 sh -c 'munge -n 2>/dev/null | unmunge >/dev/null 2>&1' ||
        die "munged did not come up (see /var/log/munge/munged.log)"
}

configure() {
    local host cpu_line mem real
    host="$(hostname -s)"
    if ! getent hosts "$host" | grep -q '^127\.'; then
        # The controller and the node are found by this name: point it at loopback.
        echo "127.0.0.1 $host" >>/etc/hosts
    fi
    # `slurmd -C` prints the node's real layout, e.g.
    # NodeName=h CPUs=2 Boards=1 SocketsPerBoard=1 CoresPerSocket=1 ThreadsPerCore=2 RealMemory=24105
    cpu_line="$(slurmd -C | head -n 1)"
    mem="$(sed -n 's/.*RealMemory=\([0-9]*\).*/\1/p' <<<"$cpu_line")"
    [ -n "$mem" ] || die "cannot read the node's memory from 'slurmd -C': $cpu_line"
    real=$((mem * 9 / 10))
    cpu_line="$(sed -e 's/^NodeName=[^ ]* //' -e 's/ *RealMemory=[0-9]*//' -e 's/ *UpTime=.*//' <<<"$cpu_line")"
    rm -rf "$DIR"
    mkdir -p "$DIR/state" "$DIR/spool/slurmd" "$DIR/run" "$DIR/log" "$CONF_DIR"
    cat >"$CONF" <<CONF
# Written by turbid's tools/slurm/local-cluster.sh: one node, loopback only.
ClusterName=localcluster
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
CommunicationParameters=NoInAddrAny,NoCtldInAddrAny
StateSaveLocation=$DIR/state
SlurmdSpoolDir=$DIR/spool/slurmd
SlurmctldPidFile=$DIR/run/slurmctld.pid
SlurmdPidFile=$DIR/run/slurmd.pid
SlurmctldLogFile=$DIR/log/slurmctld.log
SlurmdLogFile=$DIR/log/slurmd.log
MailProg=/bin/true
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MpiDefault=none
SwitchType=switch/none
SchedulerType=sched/backfill
SchedulerParameters=batch_sched_delay=0
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
ReturnToService=2
MinJobAge=300
NodeName=$host NodeAddr=127.0.0.1 NodeHostname=$host $cpu_line RealMemory=$real
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
}

ready() {
    local state
    state="$(sinfo -h -o %T 2>/dev/null | head -n 1)"
    case "$state" in
        idle* | mixed* | allocated* | completing*) return 0 ;;
        *) return 1 ;;
    esac
}

start() {
    need_root
    install
    if pid_of "$DIR/run/slurmctld.pid" slurmctld >/dev/null ||
        pid_of "$DIR/run/slurmd.pid" slurmd >/dev/null; then
        if ready; then
            log "already running and ready"
            return 0
        fi
        die "daemons are running but the node is not ready (sinfo: $(sinfo -h 2>&1 | head -n 1))"
    fi
    configure
    start_munge
    slurmctld
    wait_for 20 pid_of "$DIR/run/slurmctld.pid" slurmctld >/dev/null ||
        die "slurmctld did not start (see $DIR/log/slurmctld.log)"
    slurmd
    wait_for 20 pid_of "$DIR/run/slurmd.pid" slurmd >/dev/null ||
        die "slurmd did not start (see $DIR/log/slurmd.log)"
    wait_for 60 ready || die "the node did not become ready: $(sinfo -h 2>&1 | head -n 3)"
    log "ready: $(sinfo -h -o '%P %D %T %C' | head -n 1) (partition nodes state cpus A/I/O/T)"
}

stop() {
    local name pid i
    if command -v scancel >/dev/null && pid_of "$DIR/run/slurmctld.pid" slurmctld >/dev/null; then
        scancel -u root 2>/dev/null || true
    fi
    for name in slurmd slurmctld; do
        if pid="$(pid_of "$DIR/run/$name.pid" "$name")"; then
            kill -TERM "$pid"
            for ((i = 0; i < 100; i++)); do
                [ -d "/proc/$pid" ] || break
                sleep 0.1
            done
            [ -d "/proc/$pid" ] && log "$name ($pid) still running after 10 s"
        fi
    done
    if [ -e "$DIR/run/munged.ours" ] && pid="$(pid_of /run/munge/munged.pid munged)"; then
        kill -TERM "$pid"
        rm -f "$DIR/run/munged.ours"
    fi
    log "stopped"
}

case "${1:-}" in
    install) install ;;
    start) start ;;
    stop) stop ;;
    status) ready ;;
    *)
        echo "usage: $0 install|start|status|stop" >&2
        exit 2
        ;;
esac
