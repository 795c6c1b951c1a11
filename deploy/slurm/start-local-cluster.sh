#!/usr/bin/env bash
# Starts a single-node Slurm cluster on this machine, for rhomark's
# integration test of sharded runs (and for trying the job-array script by
# hand). Run as root on a Debian machine with slurm-wlm and munge installed:
#
#   apt-get install -y slurm-wlm munge
#   deploy/slurm/start-local-cluster.sh
#
# It writes /etc/slurm/slurm.conf for one node named after this machine, with
# its CPUs and memory, generates a munge key on the spot, and starts munged,
# slurmctld and slurmd. It waits until the node accepts jobs.
set -euo pipefail

host=$(hostname -s)
cpus=$(nproc)
mem=$(awk '/MemTotal/ {print int($2/1024) - 512}' /proc/meminfo)

mkdir -p /etc/slurm /var/spool/slurmctld /var/spool/slurmd /var/log/slurm /run/munge /etc/munge /var/lib/munge /var/log/munge
cat > /etc/slurm/slurm.conf <<CONF
ClusterName=rhomark-local
SlurmctldHost=${host}
AuthType=auth/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
ReturnToService=2
SlurmUser=root
SlurmctldPidFile=/run/slurmctld.pid
SlurmdPidFile=/run/slurmd.pid
StateSaveLocation=/var/spool/slurmctld
SlurmdSpoolDir=/var/spool/slurmd
SlurmctldLogFile=/var/log/slurm/slurmctld.log
SlurmdLogFile=/var/log/slurm/slurmd.log
MpiDefault=none
NodeName=${host} CPUs=${cpus} RealMemory=${mem} State=UNKNOWN
PartitionName=main Nodes=${host} Default=YES MaxTime=INFINITE State=UP
CONF

# A fresh munge key.
dd if=/dev/urandom bs=1 count=1024 of=/etc/munge/munge.key status=none
chown -R munge:munge /etc/munge /var/lib/munge /var/log/munge /run/munge 2>/dev/null || true
chmod 0400 /etc/munge/munge.key
chmod 0700 /etc/munge
if ! pgrep -x munged >/dev/null; then
  runuser -u munge -- munged --force 2>/dev/null || munged --force
fi

pkill -x slurmctld 2>/dev/null || true
pkill -x slurmd 2>/dev/null || true
sleep 0.5
slurmctld -c
slurmd

for _ in $(seq 1 60); do
  if sinfo -h -o '%T' 2>/dev/null | grep -qE '^(idle|mixed|allocated)'; then
    echo "slurm: node ${host} is up (${cpus} CPUs, ${mem} MB)"
    exit 0
  fi
  scontrol update nodename="${host}" state=resume >/dev/null 2>&1 || true
  sleep 1
done
echo "slurm: the node did not come up; see /var/log/slurm" >&2
exit 1
