#!/usr/bin/env bash
# Starts a single-node Slurm cluster on this machine, for rhomark's
# integration tests of sharded runs (and for trying the job-array script by
# hand), and stops it again. Run as root on a Debian machine with slurm-wlm
# and munge installed:
#
#   apt-get install -y slurm-wlm munge
#   deploy/slurm/start-local-cluster.sh          # start (the default)
#   deploy/slurm/start-local-cluster.sh status
#   deploy/slurm/start-local-cluster.sh stop
#
# It is meant for a throwaway machine (CI, a laptop), and it takes care not
# to disturb a real cluster:
#
# - It never overwrites a Slurm configuration it did not write. If
#   /etc/slurm/slurm.conf exists without this script's mark, or SLURM_CONF
#   names another file, or a slurmctld or slurmd runs that it did not start,
#   it changes nothing and exits 3, saying what it found.
# - It starts only what is not running: a munged that already runs (with
#   its key) is used as it is; a missing munge key is created, an existing
#   one never replaced.
# - It records each daemon it starts (PID and start time) in a state file,
#   and `stop` stops only those, after checking that each PID is still the
#   process it started; it never kills by name. `stop` also removes the
#   files it created (the configuration, a munge key it generated).
#
# The node is named after this machine, with its CPUs and memory; the
# daemons' state, spool and logs live in rhomark-local-slurm directories of
# their own. `start` waits until the node accepts jobs. Exit status: 0 the
# cluster is up (or stopped, for stop; for status, the daemons this script
# started run), 1 it failed (for status, they do not run), 2 bad usage,
# 3 refused to touch something it does not own.
set -euo pipefail

mark="# written by rhomark deploy/slurm/start-local-cluster.sh; stop removes it"
conf=/etc/slurm/slurm.conf
key=/etc/munge/munge.key
statedir=${RHOMARK_SLURM_STATE:-/run/rhomark-local-slurm}
state=$statedir/state
libdir=/var/lib/rhomark-local-slurm
logdir=/var/log/rhomark-local-slurm

say() { echo "slurm: $*"; }
fail() { echo "slurm: $*" >&2; exit 1; }
refuse() { echo "slurm: refusing: $*" >&2; exit 3; }

# starttime prints a process's start time (field 22 of /proc/PID/stat), which
# with the PID identifies it: a PID alone may be reused.
starttime() {
  local stat
  stat=$(cat "/proc/$1/stat" 2>/dev/null) || return 1
  # The command name (field 2) may hold spaces; count fields after its ')'.
  stat=${stat##*) }
  set -- $stat
  echo "${20}"
}

# alive PID: the process runs (exists and is not a zombie awaiting its
# parent).
alive() {
  local stat
  stat=$(cat "/proc/$1/stat" 2>/dev/null) || return 1
  stat=${stat##*) }
  [ "${stat%% *}" != Z ]
}

# ours NAME PID START: the process PID is still the NAME this script started.
ours() {
  local comm
  comm=$(cat "/proc/$2/comm" 2>/dev/null) || return 1
  [ "$comm" = "$1" ] && [ "$(starttime "$2")" = "$3" ] && alive "$2"
}

# recorded NAME prints "PID START" of the NAME daemon in the state file.
recorded() {
  [ -f "$state" ] || return 1
  awk -v n="$1" '$1 == "proc" && $2 == n {print $3, $4; found=1} END {exit !found}' "$state"
}

# running_ours NAME: the state file records NAME and that process lives.
running_ours() {
  local rec pid start
  rec=$(recorded "$1") || return 1
  read -r pid start <<<"$rec"
  ours "$1" "$pid" "$start"
}

# foreign NAME prints the PIDs of NAME processes this script did not start.
foreign() {
  local pid rpid="" rstart="" rec
  if rec=$(recorded "$1"); then read -r rpid rstart <<<"$rec"; fi
  for pid in $(pgrep -x "$1" || true); do
    alive "$pid" || continue
    if [ "$pid" = "$rpid" ] && ours "$1" "$rpid" "$rstart"; then continue; fi
    echo "$pid"
  done
}

# launch NAME LOG CMD...: starts CMD (which must exec NAME and stay in the
# foreground) detached, and records its PID and start time.
launch() {
  local name=$1 log=$2 pid start
  shift 2
  setsid "$@" >>"$log" 2>&1 </dev/null &
  pid=$!
  # setsid execs CMD in the same process (the shell's background child is
  # not a group leader); wait until it has become NAME.
  for _ in $(seq 1 100); do
    [ "$(cat "/proc/$pid/comm" 2>/dev/null)" = "$name" ] && break
    kill -0 "$pid" 2>/dev/null || fail "$name exited at once; see $log"
    sleep 0.05
  done
  start=$(starttime "$pid") || fail "$name exited at once; see $log"
  sed -i "/^proc $name /d" "$state"
  echo "proc $name $pid $start" >>"$state"
  say "started $name (pid $pid, log $log)"
}

# stop_proc NAME: stops the NAME process recorded in the state file, if it
# is still that process.
stop_proc() {
  local rec pid start
  rec=$(recorded "$1") || return 0
  read -r pid start <<<"$rec"
  if ! ours "$1" "$pid" "$start"; then
    say "$1 (pid $pid) is no longer running; nothing to stop"
    return 0
  fi
  kill -TERM "$pid"
  for _ in $(seq 1 200); do
    ours "$1" "$pid" "$start" || { say "stopped $1 (pid $pid)"; return 0; }
    sleep 0.05
  done
  kill -KILL "$pid" 2>/dev/null || true
  say "killed $1 (pid $pid): it did not stop within 10 s of SIGTERM"
}

cluster_answers() {
  timeout 10 sinfo -h -o '%T' >/dev/null 2>&1
}

node_up() {
  timeout 10 sinfo -h -o '%T' 2>/dev/null | grep -qE '^(idle|mixed|allocated|completing)'
}

munge_works() {
  munge -n 2>/dev/null | unmunge >/dev/null 2>&1
}

status() {
  if [ ! -f "$state" ]; then
    say "this script has started nothing here (no $state)"
  else
    local name rec pid start
    for name in munged slurmctld slurmd; do
      if rec=$(recorded "$name"); then
        read -r pid start <<<"$rec"
        if running_ours "$name"; then say "$name: running (pid $pid, started by this script)"; else say "$name: recorded as pid $pid, no longer running"; fi
      fi
    done
  fi
  if cluster_answers; then
    say "a cluster answers: $(sinfo -h -o '%P %D %T' 2>/dev/null | tr '\n' ' ')"
  else
    say "no Slurm cluster answers"
  fi
  running_ours slurmctld && running_ours slurmd
}

stop() {
  [ -f "$state" ] || { say "nothing to stop: this script has started nothing here (no $state)"; return 0; }
  stop_proc slurmd
  stop_proc slurmctld
  stop_proc munged
  local path sum
  while read -r kind path sum; do
    [ "$kind" = file ] || continue
    if [ -f "$path" ] && [ "$(sha256sum "$path" | cut -d' ' -f1)" = "$sum" ]; then
      rm -f "$path"
      say "removed $path"
    elif [ -e "$path" ]; then
      say "left $path: it changed since this script wrote it"
    fi
  done <"$state"
  rm -rf "$statedir"
}

start() {
  if [ -n "${SLURM_CONF:-}" ] && [ "$SLURM_CONF" != "$conf" ]; then
    refuse "SLURM_CONF=$SLURM_CONF names a Slurm configuration of another cluster; this script only runs its own, in $conf"
  fi
  if [ -f "$conf" ] && ! grep -qxF "$mark" "$conf"; then
    if cluster_answers; then
      refuse "a Slurm cluster configured in $conf already answers ($(sinfo -h -o '%P %D %T' 2>/dev/null | head -1)); this script leaves it alone. To run rhomark's Slurm tests on it instead, set RHOMARK_REQUIRE_SLURM=1 yourself"
    fi
    refuse "$conf exists and was not written by this script; it will not overwrite it. Move it away to use a local test cluster"
  fi
  local name pids
  for name in slurmctld slurmd; do
    pids=$(foreign "$name" | tr '\n' ' ')
    if [ -n "$pids" ]; then
      refuse "$name runs (pid ${pids% }) but was not started by this script; it will not touch it"
    fi
  done
  for cmd in slurmctld slurmd munged munge unmunge sinfo scontrol setpriv; do
    command -v "$cmd" >/dev/null || fail "$cmd not found: apt-get install -y slurm-wlm munge"
  done
  [ "$(id -u)" -eq 0 ] || fail "run this as root: it starts system daemons"

  mkdir -p "$statedir" "$libdir/ctld" "$libdir/d" "$logdir"
  touch "$state"

  # munge: use a running munged as it is; otherwise start one, creating a
  # key only if there is none.
  if running_ours munged; then
    :
  elif [ -n "$(foreign munged)" ]; then
    munge_works || refuse "a munged runs (pid $(foreign munged | tr '\n' ' ')) that this script did not start, and it does not answer (munge -n | unmunge); it will not touch it"
    say "using the munged already running"
  else
    mkdir -p /etc/munge /var/lib/munge /var/log/munge /run/munge
    if [ ! -f "$key" ]; then
      (umask 0277 && dd if=/dev/urandom bs=1 count=1024 of="$key" status=none)
      chown munge:munge /etc/munge "$key" /var/lib/munge /var/log/munge
      chmod 0700 /etc/munge
      echo "file $key $(sha256sum "$key" | cut -d' ' -f1)" >>"$state"
      say "created the munge key $key"
    fi
    chown munge:munge /run/munge
    launch munged "$logdir/munged.out" setpriv --reuid=munge --regid=munge --init-groups munged --foreground
  fi
  for _ in $(seq 1 200); do munge_works && break; sleep 0.05; done
  munge_works || fail "munged does not answer (munge -n | unmunge); see $logdir/munged.out and /var/log/munge"

  # The node: this machine, with its CPUs and memory.
  local host cpus mem
  host=$(hostname -s)
  cpus=$(nproc)
  mem=$(awk '/MemTotal/ {print int($2/1024) - 512}' /proc/meminfo)
  if running_ours slurmctld && running_ours slurmd && node_up; then
    say "node ${host} is already up, started by this script earlier; stop it with: $0 stop"
    return 0
  fi
  # Written afresh unless the daemons it started run with it (the host
  # name or size may have changed since).
  if ! running_ours slurmctld && ! running_ours slurmd; then
    mkdir -p "$(dirname "$conf")"
    cat >"$conf" <<CONF
$mark
ClusterName=rhomark-local
SlurmctldHost=${host}
AuthType=auth/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
# Start jobs at once (no batch delay, backfill every second): tests wait on them.
SchedulerParameters=batch_sched_delay=0,bf_interval=1
ReturnToService=2
SlurmUser=root
SlurmctldPidFile=${statedir}/slurmctld.pid
SlurmdPidFile=${statedir}/slurmd.pid
StateSaveLocation=${libdir}/ctld
SlurmdSpoolDir=${libdir}/d
SlurmctldLogFile=${logdir}/slurmctld.log
SlurmdLogFile=${logdir}/slurmd.log
MpiDefault=none
NodeName=${host} CPUs=${cpus} RealMemory=${mem} State=UNKNOWN
PartitionName=main Nodes=${host} Default=YES MaxTime=INFINITE State=UP
CONF
    sed -i "\\|^file $conf |d" "$state"
    echo "file $conf $(sha256sum "$conf" | cut -d' ' -f1)" >>"$state"
    say "wrote $conf"
  fi

  running_ours slurmctld || launch slurmctld "$logdir/slurmctld.out" slurmctld -D -c
  running_ours slurmd || launch slurmd "$logdir/slurmd.out" slurmd -D

  for _ in $(seq 1 600); do
    if node_up; then
      say "node ${host} is up (${cpus} CPUs, ${mem} MB); stop it with: $0 stop"
      return 0
    fi
    running_ours slurmctld || fail "slurmctld exited; see $logdir"
    running_ours slurmd || fail "slurmd exited; see $logdir"
    scontrol update nodename="${host}" state=resume >/dev/null 2>&1 || true
    sleep 0.1
  done
  fail "the node did not come up within 60 s; see $logdir (stop what was started with: $0 stop)"
}

case "${1:-start}" in
start) start ;;
stop) stop ;;
status) status ;;
*)
  echo "usage: $0 [start|stop|status]" >&2
  exit 2
  ;;
esac
