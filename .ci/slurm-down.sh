#!/usr/bin/env bash
# Stop the single-node SLURM that .ci/slurm-up.sh started: cancel every job still in the queue,
# wait for the jobs to end, then stop slurmd, slurmctld and munged through their pid files (only
# those processes, nothing found by name). Safe to run when nothing is up; always exits 0 unless a
# daemon refuses to die.
set -uo pipefail

MUNGE_PID=/run/munge/munged.pid
CTLD_PID=/run/slurmctld.pid
SLURMD_PID=/run/slurmd.pid

say() { printf 'slurm-down: %s\n' "$*"; }
# A pid file is ours only if its process still runs the daemon it names: after a reboot or a
# killed session the number may belong to something else, which must not be signalled.
alive() { # pidfile daemon
    local pid
    [[ -f $1 ]] && pid=$(cat "$1" 2>/dev/null) && [[ $pid =~ ^[0-9]+$ ]] \
        && [[ $(cat "/proc/$pid/comm" 2>/dev/null) == "$2" ]]
}

# Jobs first, while slurmctld and slurmd can still deliver the signals.
if alive "$CTLD_PID" slurmctld && command -v squeue >/dev/null; then
    jobs=$(squeue -h -o %i 2>/dev/null | tr '\n' ' ')
    if [[ -n ${jobs// /} ]]; then
        say "cancelling jobs: $jobs"
        # shellcheck disable=SC2086
        scancel $jobs 2>/dev/null || true
        for _ in $(seq 60); do
            [[ -z $(squeue -h -o %i 2>/dev/null) ]] && break
            sleep 0.5
        done
        left=$(squeue -h -o '%i %T' 2>/dev/null)
        [[ -n $left ]] && say "jobs still listed after 30 s: $left"
    fi
fi

status=0
stop() { # pidfile daemon
    local pidfile=$1 name=$2 pid
    if ! alive "$pidfile" "$name"; then
        rm -f "$pidfile"
        return
    fi
    pid=$(cat "$pidfile")
    kill -TERM "$pid" 2>/dev/null
    for _ in $(seq 100); do
        alive "$pidfile" "$name" || break
        sleep 0.1
    done
    if alive "$pidfile" "$name"; then
        say "$name (pid $pid) ignored SIGTERM for 10 s; sending SIGKILL"
        kill -KILL "$pid" 2>/dev/null
        sleep 0.5
        alive "$pidfile" "$name" && { say "$name (pid $pid) is still alive"; status=1; }
    fi
    rm -f "$pidfile"
    say "stopped $name (pid $pid)"
}
stop "$SLURMD_PID" slurmd
stop "$CTLD_PID" slurmctld
stop "$MUNGE_PID" munged
exit $status
