#!/bin/bash
# test_sweep_slurm.sh - the Slurm scripts of `twingyre sweep --slurm-script`
# run for real: the test starts its own single-node Slurm on localhost
# (munged, slurmctld and slurmd from Debian's munge and slurm-wlm, all
# configured here, with every file - key, socket, slurm.conf, state and
# spool folders, logs - in the scratch folder), submits the job array and
# its collect job with the generated submit script, waits for both, and
# compares sweep.csv with the local pool's byte for byte. The daemons are
# stopped at exit.
#
# The daemons run as root with proctrack/linuxproc, task/none and no
# cgroups (a container without systemd). SKIP (exit 77) when not root or
# when slurmctld, slurmd, sbatch, munged or munge is missing, unless
# TG_REQUIRE_SLURM=1 (scripts/test sets it): then FAIL.
#
# Environment: see sweep_common.sh.
#
# Part of twingyre. GPL-3.0-or-later.

set -u
. "$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)/sweep_common.sh"

missing=()
for p in slurmctld slurmd sbatch squeue sinfo scontrol munged munge unmunge; do
    command -v "$p" >/dev/null 2>&1 || missing+=("$p")
done
why=
if [ ${#missing[@]} -gt 0 ]; then
    why="missing: ${missing[*]} (Debian packages slurm-wlm, slurm-client, munge)"
elif [ "$(id -u)" -ne 0 ]; then
    why="the test's Slurm daemons must run as root"
fi
if [ -n "$why" ]; then
    if [ "${TG_REQUIRE_SLURM:-0}" = 1 ]; then
        notok "a single-node Slurm can be started here (TG_REQUIRE_SLURM=1)" "$why"
        finish
    fi
    skip "$why"
fi

S=$T/slurm
mkdir -p "$S/state" "$S/spool" "$S/munge"
chmod 700 "$S/munge"
pids=()
stop_daemons() {
    local p
    for p in "${pids[@]}"; do
        kill "$p" 2>/dev/null
    done
    for p in "${pids[@]}"; do
        wait "$p" 2>/dev/null
    done
    pids=()
}
tg_cleanup_hooks+=(stop_daemons)

# ---------------------------------------------------------------- munge
dd if=/dev/urandom of="$S/munge/munge.key" bs=1024 count=1 2>/dev/null
chmod 600 "$S/munge/munge.key"
# A Unix socket path holds at most 107 bytes: keep it short.
sock=$T/m.sock
if [ ${#sock} -gt 100 ]; then
    notok "the munge socket path fits a Unix socket (at most 100 characters here)" \
        "$sock is ${#sock} characters; use a shorter TG_TEST_TMPDIR"
    finish
fi
munged --foreground --force --socket="$sock" --key-file="$S/munge/munge.key" \
    --pid-file="$S/munge/munged.pid" --log-file="$S/munge/munged.log" \
    --seed-file="$S/munge/munged.seed" >"$S/munged.out" 2>&1 &
pids+=($!)
for _ in $(seq 1 50); do
    [ -S "$sock" ] && break
    sleep 0.1
done
if munge -S "$sock" -n 2>/dev/null | unmunge -S "$sock" >/dev/null 2>&1; then
    ok "munged runs with its key and socket in the scratch folder"
else
    notok "munged runs with its key and socket in the scratch folder" "$(tail -n 5 "$S/munged.out")"
    finish
fi

# ---------------------------------------------------------------- Slurm
read -r port1 port2 < <("$PYTHON" -c '
import socket
s = [socket.socket() for _ in range(2)]
for x in s: x.bind(("127.0.0.1", 0))
print(*[x.getsockname()[1] for x in s])
for x in s: x.close()')
host=$(hostname -s)
cat >"$S/slurm.conf" <<EOF
# single-node Slurm of test_sweep_slurm.sh
ClusterName=tgsweeptest
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$port1
SlurmdPort=$port2
AuthType=auth/munge
AuthInfo=socket=$sock
CredType=cred/munge
SlurmUser=root
SlurmdUser=root
StateSaveLocation=$S/state
SlurmdSpoolDir=$S/spool
SlurmctldPidFile=$S/slurmctld.pid
SlurmdPidFile=$S/slurmd.pid
SlurmctldLogFile=$S/slurmctld.log
SlurmdLogFile=$S/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
ReturnToService=2
MpiDefault=none
SwitchType=switch/none
NodeName=$host NodeAddr=127.0.0.1 CPUs=2 State=UNKNOWN
PartitionName=tgsweep Nodes=$host Default=YES MaxTime=INFINITE State=UP
EOF
export SLURM_CONF=$S/slurm.conf
slurmctld -D -i -f "$SLURM_CONF" >"$S/slurmctld.out" 2>&1 &
pids+=($!)
slurmd -D -f "$SLURM_CONF" -N "$host" >"$S/slurmd.out" 2>&1 &
pids+=($!)
state=
for _ in $(seq 1 300); do
    state=$(sinfo -h -o %t 2>/dev/null | head -n 1)
    [ "$state" = idle ] && break
    sleep 0.1
done
if [ "$state" = idle ]; then
    ok "slurmctld and slurmd run on localhost; the node is idle"
else
    notok "slurmctld and slurmd run on localhost; the node is idle" "sinfo state '$state'" \
        "$(tail -n 5 "$S/slurmctld.log" "$S/slurmd.log" 2>&1)"
    finish
fi

# ---------------------------------------------------------------- the sweep
sweep_local
tg sweep grid.ini --out "$T/cluster" --slurm-script "$T/job.sh"
if [ "$rc" -eq 0 ]; then
    ok "--slurm-script writes the scripts"
else
    notok "--slurm-script writes the scripts" "$(err_tail)"
    finish
fi
ids=$(bash "$T/job.sh.submit" 2>"$T/err")
rc=$?
array=$(printf '%s\n' "$ids" | sed -n 's/^array job \([0-9]*\), collect job \([0-9]*\)$/\1/p')
collect=$(printf '%s\n' "$ids" | sed -n 's/^array job \([0-9]*\), collect job \([0-9]*\)$/\2/p')
if [ "$rc" -eq 0 ] && [ -n "$array" ] && [ -n "$collect" ]; then
    ok "the submit script submits the array ($array) and the collect job ($collect)"
else
    notok "the submit script submits the array and the collect job" "$ids" "$(cat "$T/err")"
    finish
fi
dependency=$(squeue -h -j "$collect" -o %E 2>/dev/null)
left=
for _ in $(seq 1 1200); do
    left=$(squeue -h -j "$array,$collect" -o %i 2>/dev/null | wc -l)
    [ "$left" -eq 0 ] && break
    sleep 0.25
done
if [ "$left" -eq 0 ] && [ -f "$T/cluster/sweep.csv" ]; then
    ok "the array and the collect job ran (collect dependency: ${dependency:-already met})"
else
    notok "the array and the collect job ran within 5 minutes" "$(squeue 2>&1)" \
        "$(tail -n 5 "$T"/cluster/slurm-logs/* 2>&1)"
    finish
fi
ntask=$(ls "$T"/cluster/slurm-logs/member-*.out 2>/dev/null | wc -l)
nsetup=$(grep -l 'setup line of the sweep test ran' "$T"/cluster/slurm-logs/member-*.out 2>/dev/null | wc -l)
if [ "$ntask" -eq 4 ] && [ "$nsetup" -eq 4 ]; then
    ok "one array task per member (4 task logs), each ran the [cluster] setup line"
else
    notok "one array task per member (4 task logs), each ran the [cluster] setup line" \
        "$(ls "$T/cluster/slurm-logs" 2>&1)" "setup line in $nsetup logs"
fi
if scontrol show job "$collect" 2>/dev/null | grep -q 'Partition=tgsweep'; then
    ok "the jobs ran in the [cluster] partition"
else
    notok "the jobs ran in the [cluster] partition" "$(scontrol show job "$collect" 2>&1 | head -n 5)"
fi
if cmp -s "$T/local/sweep.csv" "$T/cluster/sweep.csv"; then
    ok "sweep.csv from Slurm equals the local pool's byte for byte"
else
    notok "sweep.csv from Slurm equals the local pool's byte for byte" \
        "$(diff "$T/local/sweep.csv" "$T/cluster/sweep.csv" 2>&1 | head -n 10)"
fi

finish
