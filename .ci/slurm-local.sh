#!/usr/bin/env bash
# A private single-node Slurm cluster (with its own munge daemon) for the
# cluster tests: everything it needs lives under one directory, on ports
# of its own, so it touches no system-wide Slurm or munge set-up.
#
#   .ci/slurm-local.sh start DIR   start munged, slurmctld and slurmd; print
#                                  the SLURM_CONF line to export
#   .ci/slurm-local.sh stop DIR    cancel remaining jobs and stop exactly the
#                                  daemons that "start DIR" started (by the
#                                  process ids it recorded)
#
# Needs root and the slurm-wlm and munge packages (Debian names).
set -euo pipefail

cmd=${1:-}
dir=${2:-}
if [ -z "$cmd" ] || [ -z "$dir" ]; then
  echo "usage: $0 start|stop DIR" >&2
  exit 2
fi

stop() {
  local d=$1
  if [ -f "$d/slurm.conf" ] && command -v scancel >/dev/null 2>&1; then
    SLURM_CONF="$d/slurm.conf" timeout 10 scancel --full --quiet --user=root >/dev/null 2>&1 || true
  fi
  # Stop in reverse order of starting; only the ids this script recorded.
  for name in slurmd slurmctld munged; do
    local f="$d/pids/$name"
    [ -f "$f" ] || continue
    local pid
    pid=$(cat "$f")
    if [ -n "$pid" ] && kill -0 "$pid" 2>/dev/null; then
      kill -TERM "$pid" 2>/dev/null || true
      for _ in $(seq 1 50); do
        kill -0 "$pid" 2>/dev/null || break
        sleep 0.1
      done
      kill -0 "$pid" 2>/dev/null && kill -KILL "$pid" 2>/dev/null || true
    fi
    rm -f "$f"
  done
}

# pidof_file waits for a daemon's pid file and records its pid.
record_pid() {
  local name=$1 pidfile=$2
  for _ in $(seq 1 100); do
    if [ -s "$pidfile" ]; then
      cp "$pidfile" "$dir/pids/$name"
      return 0
    fi
    sleep 0.1
  done
  echo "slurm-local: $name did not write its pid file $pidfile" >&2
  return 1
}

free_port() {
  local p
  for _ in $(seq 1 50); do
    p=$(( 20000 + RANDOM % 20000 ))
    if ! (ss -Htln 2>/dev/null | awk '{print $4}' | grep -Eq "[:.]($p|$((p + 1)))\$"); then
      echo "$p"
      return 0
    fi
  done
  echo "slurm-local: no free port pair found" >&2
  return 1
}

start() {
  mkdir -p "$dir"
  dir=$(cd "$dir" && pwd)
  mkdir -p "$dir/pids" "$dir/state" "$dir/spool" "$dir/log" "$dir/munge"
  trap 'stop "$dir"' ERR

  # munge: a fresh key, owned (like the socket directory) by the munge user.
  local mu=root
  id munge >/dev/null 2>&1 && mu=munge
  dd if=/dev/urandom of="$dir/munge/munge.key" bs=1024 count=1 status=none
  chmod 700 "$dir/munge"
  chmod 400 "$dir/munge/munge.key"
  chown -R "$mu" "$dir/munge"
  chmod 755 "$dir"
  local sock="$dir/munge/munge.socket"
  local mcmd=(munged --force --socket="$sock" --key-file="$dir/munge/munge.key" --pid-file="$dir/munge/munged.pid"
    --log-file="$dir/munge/munged.log" --seed-file="$dir/munge/munged.seed")
  if [ "$mu" = root ]; then
    "${mcmd[@]}"
  else
    runuser -u "$mu" -- "${mcmd[@]}"
  fi
  record_pid munged "$dir/munge/munged.pid"
  # Clients (slurmctld, slurmd, the commands) must reach the socket.
  chmod 711 "$dir/munge"

  local host cpus mem port
  host=$(hostname -s)
  cpus=$(nproc --all)
  mem=$(awk '/MemTotal/ {printf "%d", $2 / 1024 / 2}' /proc/meminfo)
  port=$(free_port)
  cat > "$dir/slurm.conf" <<CONF
# written by .ci/slurm-local.sh for the moltrail cluster tests
ClusterName=moltrailtest
SlurmctldHost=$host
SlurmctldPort=$port
SlurmdPort=$((port + 1))
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$sock
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/state/slurmctld.pid
SlurmdPidFile=$dir/spool/slurmd.pid
SlurmctldLogFile=$dir/log/slurmctld.log
SlurmdLogFile=$dir/log/slurmd.log
JobCompType=jobcomp/filetxt
JobCompLoc=$dir/log/jobcomp.txt
SchedulerType=sched/backfill
MinJobAge=600
NodeName=$host CPUs=$cpus RealMemory=$mem State=UNKNOWN
PartitionName=main Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
  export SLURM_CONF="$dir/slurm.conf"
  slurmctld -f "$SLURM_CONF"
  record_pid slurmctld "$dir/state/slurmctld.pid"
  slurmd -f "$SLURM_CONF"
  record_pid slurmd "$dir/spool/slurmd.pid"
  for _ in $(seq 1 100); do
    if sinfo --noheader --format=%t 2>/dev/null | grep -Eq '^(idle|mix|alloc)'; then
      trap - ERR
      echo "SLURM_CONF=$SLURM_CONF"
      return 0
    fi
    sleep 0.2
  done
  echo "slurm-local: the node did not become idle; slurmctld log:" >&2
  tail -n 20 "$dir/log/slurmctld.log" >&2 || true
  tail -n 20 "$dir/log/slurmd.log" >&2 || true
  stop "$dir"
  return 1
}

case "$cmd" in
  start) start ;;
  stop) stop "$dir" ;;
  *) echo "usage: $0 start|stop DIR" >&2; exit 2 ;;
esac
