#!/usr/bin/env bash
# Bring up a single-node SLURM (munge + slurmctld + slurmd) on this machine, for the live cluster
# tests (tests/test_cluster_slurm.py). Run as root; needs no systemd. Safe to run twice: if the
# daemons already answer and run a job, it does nothing.
#
#   bash .ci/slurm-up.sh        # install (first time), configure, start, check with srun
#   bash .ci/slurm-down.sh      # cancel jobs, stop the daemons
#
# Everything it starts leaves a pid file under /run, which slurm-down.sh uses to stop exactly those
# processes. Daemon logs go to /var/log/slurm and /var/log/munge.
set -euo pipefail
export PATH="$PATH:/usr/sbin:/sbin"  # the daemons live in sbin, not always on a CI job's PATH

PARTITION="${KDVSWEEP_SLURM_PARTITION:-kdvq}"
CONF_DIR=/etc/slurm
LOG_DIR=/var/log/slurm
MUNGE_PID=/run/munge/munged.pid
CTLD_PID=/run/slurmctld.pid
SLURMD_PID=/run/slurmd.pid
# The reason of the last failed start, read by the test fixture to explain a skip or failure.
ERROR_NOTE=/run/kdvsweep-slurm-up.error
T0=$(date +%s)

say() { printf 'slurm-up: %s\n' "$*"; }
die() {
    say "ERROR: $*" >&2
    printf '%s: %s\n' "$(date -u +%FT%TZ)" "$*" >"$ERROR_NOTE" 2>/dev/null || true
    for f in "$LOG_DIR/slurmctld.log" "$LOG_DIR/slurmd.log" /var/log/munge/munged.log; do
        [[ -f $f ]] && { echo "--- tail of $f" >&2; tail -n 20 "$f" >&2; }
    done
    exit 1
}
# A pid file is ours only if its process still runs the daemon it names: after a reboot or a
# killed session the number may belong to something else, which must not be signalled.
alive() { # pidfile daemon
    local pid
    [[ -f $1 ]] && pid=$(cat "$1" 2>/dev/null) && [[ $pid =~ ^[0-9]+$ ]] \
        && [[ $(cat "/proc/$pid/comm" 2>/dev/null) == "$2" ]]
}

# A healthy cluster from an earlier call is left alone (a second call is cheap).
healthy() {
    command -v sinfo >/dev/null 2>&1 || return 1
    alive "$MUNGE_PID" munged && alive "$CTLD_PID" slurmctld && alive "$SLURMD_PID" slurmd \
        || return 1
    [[ $(sinfo -h -p "$PARTITION" -o %t 2>/dev/null) =~ ^(idle|mix|alloc)$ ]] || return 1
}
if healthy; then
    rm -f "$ERROR_NOTE"
    say "already running (partition $PARTITION); nothing to do"
    exit 0
fi

[[ $(id -u) -eq 0 ]] || die "must run as root (it installs packages and starts daemons)"

# --- 1. packages -------------------------------------------------------------------------------
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null \
    || ! command -v munged >/dev/null || ! command -v sbatch >/dev/null; then
    say "installing slurmctld slurmd slurm-client munge"
    # No init system here: keep the packages' maintainer scripts from starting services; we start
    # the daemons ourselves below with known options. Only a policy file we created is removed.
    if [[ ! -e /usr/sbin/policy-rc.d ]]; then
        printf '#!/bin/sh\nexit 101\n' >/usr/sbin/policy-rc.d
        chmod 755 /usr/sbin/policy-rc.d
        trap 'rm -f /usr/sbin/policy-rc.d' EXIT
    fi
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq || die "apt-get update failed"
    apt-get install -y -qq --no-install-recommends \
        -o Dpkg::Options::=--force-confdef -o Dpkg::Options::=--force-confold \
        slurmctld slurmd slurm-client munge >/dev/null \
        || die "apt-get install of slurmctld slurmd slurm-client munge failed"
    say "packages installed after $(($(date +%s) - T0)) s"
fi

# Leftovers of an earlier, broken start would hold ports or pid files: stop only what we started.
for daemon in slurmd slurmctld munged; do
    case $daemon in
        slurmd) pidfile=$SLURMD_PID ;;
        slurmctld) pidfile=$CTLD_PID ;;
        munged) pidfile=$MUNGE_PID ;;
    esac
    if alive "$pidfile" "$daemon"; then
        say "stopping a $daemon left from an earlier start"
        kill "$(cat "$pidfile")" 2>/dev/null || true
        for _ in $(seq 100); do alive "$pidfile" "$daemon" || break; sleep 0.1; done
    fi
    rm -f "$pidfile"
done

# --- 2. munge ----------------------------------------------------------------------------------
install -d -o munge -g munge -m 0700 /etc/munge /var/lib/munge /var/log/munge
install -d -o munge -g munge -m 0755 /run/munge
if [[ ! -s /etc/munge/munge.key ]]; then
    say "creating munge key"
    if command -v mungekey >/dev/null; then
        mungekey --create --keyfile=/etc/munge/munge.key --force
    else
        dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 status=none
    fi
fi
chown munge:munge /etc/munge/munge.key
chmod 0400 /etc/munge/munge.key
runuser -u munge -- /usr/sbin/munged --pid-file="$MUNGE_PID" || die "munged did not start"
for _ in $(seq 50); do alive "$MUNGE_PID" munged && break; sleep 0.1; done
munge -n | unmunge >/dev/null || die "munge does not round-trip a credential"

# --- 3. slurm.conf for this one machine --------------------------------------------------------
HOST=$(hostname -s)
# slurmd -C reports what it sees (CPUs, sockets, cores, threads, RealMemory); keep a margin of
# memory for the OS so that a job asking for "all" memory is still schedulable.
NODE_LINE=$(slurmd -C 2>/dev/null | head -n 1 || true)
if [[ $NODE_LINE != NodeName=* ]]; then
    NODE_LINE="NodeName=$HOST CPUs=$(nproc) RealMemory=$(free -m | awk '/^Mem:/{print $2}')"
fi
MEM=$(sed -n 's/.*RealMemory=\([0-9]*\).*/\1/p' <<<"$NODE_LINE")
MEM=$((MEM > 2048 ? MEM - 512 : MEM))
NODE_LINE=$(sed "s/RealMemory=[0-9]*/RealMemory=$MEM/; s/^NodeName=[^ ]*/NodeName=$HOST/" \
    <<<"$NODE_LINE")

install -d -m 0755 "$CONF_DIR" "$LOG_DIR" /var/spool/slurmctld /var/spool/slurmd
cat >"$CONF_DIR/slurm.conf" <<EOF
# Written by kdvsweep .ci/slurm-up.sh: a single-node cluster for tests. Root runs every daemon.
ClusterName=kdvsweep
SlurmctldHost=$HOST(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
MpiDefault=none
# No systemd or cgroup delegation here: track job processes by parent pid, bind nothing.
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
AccountingStorageType=accounting_storage/none
JobAcctGatherType=jobacct_gather/none
JobCompType=jobcomp/none
StateSaveLocation=/var/spool/slurmctld
SlurmdSpoolDir=/var/spool/slurmd
SlurmctldPidFile=$CTLD_PID
SlurmdPidFile=$SLURMD_PID
SlurmctldLogFile=$LOG_DIR/slurmctld.log
SlurmdLogFile=$LOG_DIR/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
ReturnToService=2
# Short grace between SIGTERM and SIGKILL on scancel, and quick node checks: tests cancel jobs.
KillWait=5
SlurmdTimeout=30
InactiveLimit=0
MinJobAge=60
# No mail on this machine.
MailProg=/bin/true
$NODE_LINE NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=$PARTITION Nodes=$HOST Default=YES MaxTime=INFINITE State=UP
EOF
say "node: $NODE_LINE"

# --- 4. daemons --------------------------------------------------------------------------------
# -c: forget jobs saved by an earlier run; the tests want an empty queue.
slurmctld -c || die "slurmctld did not start"
for _ in $(seq 100); do scontrol ping 2>/dev/null | grep -q UP && break; sleep 0.2; done
scontrol ping | grep -q UP || die "slurmctld does not answer scontrol ping"
slurmd || die "slurmd did not start"

for _ in $(seq 150); do
    state=$(sinfo -h -p "$PARTITION" -o %t 2>/dev/null || true)
    [[ $state == idle ]] && break
    sleep 0.2
done
[[ ${state:-} == idle ]] || die "node is '${state:-unknown}', expected idle"

# --- 5. a real job -----------------------------------------------------------------------------
out=$(timeout 60 srun -p "$PARTITION" -N 1 -n 1 -t 1 hostname -s) || die "srun failed"
[[ $out == "$HOST" ]] || die "srun printed '$out', expected '$HOST'"
rm -f "$ERROR_NOTE"
say "up after $(($(date +%s) - T0)) s: partition $PARTITION on $HOST, srun works"
sinfo
