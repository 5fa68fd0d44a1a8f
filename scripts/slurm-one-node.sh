#!/usr/bin/env bash
# A one-node Slurm cluster on localhost, for testing sweeps submitted as job arrays.
#
#   scripts/slurm-one-node.sh start DIR   # install if missing, start munged, slurmctld, slurmd
#   source DIR/env                        # SLURM_CONF for sbatch, squeue, scancel, scontrol
#   scripts/slurm-one-node.sh stop DIR    # cancel leftover jobs, stop the daemons by PID
#
# Everything the cluster needs lives in DIR (created if missing; best a fresh `mktemp -d`):
# munge key and socket, slurm.conf, controller state, spool, logs and the daemons' PIDs. Nothing
# is written to /etc, and no service manager is involved, so the cluster disappears with DIR.
#
# Installing needs root: Debian's slurmctld, slurmd, slurm-client and munge, without
# recommended packages, with a temporary policy-rc.d so that the packages' init scripts start
# nothing. The node is `localhost` (127.0.0.1) with 2 CPUs; processes are tracked by
# proctrack/linuxproc (no cgroups), tasks get no affinity (task/none), resources are allocated
# by select/cons_tres per CPU, and there is no accounting store (use squeue/scontrol, not sacct).
# Every failure exits non-zero with a message starting "slurm-one-node: FAILED".
set -euo pipefail

fail() {
  echo "slurm-one-node: FAILED: $*" >&2
  exit 1
}

usage() {
  echo "usage: $0 start|stop DIR" >&2
  exit 2
}

cmd="${1:-}"
dir="${2:-}"
[ -n "$cmd" ] && [ -n "$dir" ] || usage

install_if_missing() {
  local missing=() p
  for p in slurmctld slurmd slurm-client munge; do
    if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
      missing+=("$p")
    fi
  done
  [ "${#missing[@]}" -eq 0 ] && return 0
  [ "$(id -u)" -eq 0 ] || fail "must run as root to install ${missing[*]}"
  command -v apt-get >/dev/null || fail "apt-get not found; cannot install ${missing[*]}"
  echo "slurm-one-node: installing ${missing[*]} (apt-get, no recommends)" >&2
  local policy=/usr/sbin/policy-rc.d made_policy=0
  if [ ! -e "$policy" ]; then
    # Exit status 101 tells invoke-rc.d not to start services while packages install.
    printf '#!/bin/sh\nexit 101\n' >"$policy"
    chmod 755 "$policy"
    made_policy=1
  fi
  local ok=1
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq >&2 || ok=0
  if [ "$ok" -eq 1 ]; then
    apt-get install -y -qq --no-install-recommends "${missing[@]}" >&2 || ok=0
  fi
  [ "$made_policy" -eq 1 ] && rm -f "$policy"
  [ "$ok" -eq 1 ] || fail "apt-get could not install ${missing[*]}"
}

# Two free TCP ports on 127.0.0.1 (the controller's and the node daemon's).
free_ports() {
  python3 - <<'EOF'
import socket
socks = []
for _ in range(2):
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    socks.append(s)
print(" ".join(str(s.getsockname()[1]) for s in socks))
EOF
}

wait_for() { # seconds, description, command...
  local limit="$1" what="$2" i
  shift 2
  for ((i = 0; i < limit * 10; i++)); do
    if "$@" >/dev/null 2>&1; then return 0; fi
    sleep 0.1
  done
  return 1
}

alive() { [ -n "$1" ] && kill -0 "$1" 2>/dev/null; }

# The PID recorded for daemon $1, if that process still runs that program.
recorded_pid() {
  local name="$1" pid
  pid="$(awk -v n="$name" '$1 == n { print $2 }' "$dir/pids" 2>/dev/null | tail -n 1)"
  [ -n "$pid" ] || return 0
  if [ -r "/proc/$pid/comm" ] && [ "$(cat "/proc/$pid/comm")" = "$name" ]; then
    echo "$pid"
  fi
}

show_logs() {
  local f
  for f in "$dir"/log/*.log "$dir"/munge/munged.log; do
    [ -f "$f" ] || continue
    echo "---- $f (last lines)" >&2
    tail -n 20 "$f" >&2
  done
}

start() {
  install_if_missing
  for p in munged slurmctld slurmd sinfo scontrol; do
    command -v "$p" >/dev/null || [ -x "/usr/sbin/$p" ] || fail "$p not found after installation"
  done
  id munge >/dev/null 2>&1 || fail "the munge user does not exist (the munge package creates it)"
  mkdir -p "$dir"
  dir="$(cd "$dir" && pwd)"
  [ ! -e "$dir/pids" ] || fail "$dir/pids exists: a cluster may already run from $dir (stop it first)"
  chmod 755 "$dir"
  mkdir -p "$dir/munge" "$dir/state" "$dir/spool" "$dir/log"
  chown munge:munge "$dir/munge"
  # munged wants the socket's folder searchable by everyone (clients connect there).
  chmod 755 "$dir/munge"
  : >"$dir/pids"

  # munge: a fresh 1024-byte key readable only by the munge user; munged runs as that user.
  dd if=/dev/urandom of="$dir/munge/munge.key" bs=1024 count=1 status=none
  chown munge:munge "$dir/munge/munge.key"
  chmod 400 "$dir/munge/munge.key"
  setpriv --reuid=munge --regid=munge --init-groups test -r "$dir/munge/munge.key" \
    || fail "the munge user cannot reach $dir/munge: every parent folder of $dir must be searchable by others (chmod o+x)"
  local socket="$dir/munge/munge.socket"
  setpriv --reuid=munge --regid=munge --init-groups /usr/sbin/munged --foreground \
    --key-file="$dir/munge/munge.key" --socket="$socket" \
    --pid-file="$dir/munge/munged.pid" --log-file="$dir/munge/munged.log" \
    --seed-file="$dir/munge/munged.seed" </dev/null >"$dir/log/munged.out" 2>&1 &
  echo "munged $!" >>"$dir/pids"
  if ! wait_for 10 "munge socket" test -S "$socket"; then
    cat "$dir/log/munged.out" >&2 || true
    show_logs
    fail "munged did not create its socket within 10 s"
  fi

  local ports
  read -r -a ports <<<"$(free_ports)"
  local conf="$dir/slurm.conf"
  cat >"$conf" <<EOF
# One-node test cluster written by scripts/slurm-one-node.sh.
ClusterName=beamfloor-test
SlurmctldHost=localhost(127.0.0.1)
SlurmctldPort=${ports[0]}
SlurmdPort=${ports[1]}
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$socket
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/log/slurmctld.log
SlurmdLogFile=$dir/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SchedulerType=sched/backfill
AccountingStorageType=accounting_storage/none
JobAcctGatherType=jobacct_gather/none
JobCompType=jobcomp/none
MpiDefault=none
ReturnToService=2
MailProg=/bin/true
NodeName=localhost NodeAddr=127.0.0.1 CPUs=2 State=UNKNOWN
PartitionName=local Nodes=localhost Default=YES MaxTime=INFINITE State=UP
EOF
  printf 'export SLURM_CONF=%q\n' "$conf" >"$dir/env"
  export SLURM_CONF="$conf"

  slurmctld -D -i -f "$conf" </dev/null >"$dir/log/slurmctld.out" 2>&1 &
  echo "slurmctld $!" >>"$dir/pids"
  if ! wait_for 20 "controller" scontrol ping; then
    show_logs
    fail "slurmctld did not answer within 20 s"
  fi
  slurmd -D -N localhost -f "$conf" </dev/null >"$dir/log/slurmd.out" 2>&1 &
  echo "slurmd $!" >>"$dir/pids"
  node_idle() { [ "$(sinfo -h -n localhost -o %T 2>/dev/null)" = "idle" ]; }
  if ! wait_for 30 "node" node_idle; then
    scontrol update nodename=localhost state=resume >/dev/null 2>&1 || true
    if ! wait_for 10 "node" node_idle; then
      sinfo >&2 || true
      show_logs
      fail "node localhost did not become idle within 40 s"
    fi
  fi
  echo "slurm-one-node: up in $dir (source $dir/env)" >&2
}

stop() {
  [ -d "$dir" ] || fail "$dir does not exist"
  dir="$(cd "$dir" && pwd)"
  [ -f "$dir/pids" ] || { echo "slurm-one-node: nothing recorded in $dir" >&2; return 0; }
  local ctl
  ctl="$(recorded_pid slurmctld)"
  if [ -n "$ctl" ] && [ -f "$dir/slurm.conf" ]; then
    # Jobs of this private cluster only: its controller knows no others.
    local jobs
    jobs="$(SLURM_CONF="$dir/slurm.conf" squeue -h -o %A 2>/dev/null | sort -u | tr '\n' ' ')"
    if [ -n "${jobs// /}" ]; then
      # shellcheck disable=SC2086
      SLURM_CONF="$dir/slurm.conf" scancel $jobs 2>/dev/null || true
      wait_for 15 "jobs to end" test -z "$(SLURM_CONF="$dir/slurm.conf" squeue -h 2>/dev/null)" || true
    fi
  fi
  local name pid i
  for name in slurmd slurmctld munged; do
    pid="$(recorded_pid "$name")"
    [ -n "$pid" ] || continue
    kill -TERM "$pid" 2>/dev/null || true
    for ((i = 0; i < 100; i++)); do
      alive "$pid" || break
      sleep 0.1
    done
    if alive "$pid"; then
      echo "slurm-one-node: $name ($pid) ignored SIGTERM; sending SIGKILL" >&2
      kill -KILL "$pid" 2>/dev/null || true
    fi
  done
  mv "$dir/pids" "$dir/pids.stopped"
  echo "slurm-one-node: stopped (logs in $dir/log)" >&2
}

case "$cmd" in
  start) start ;;
  stop) stop ;;
  *) usage ;;
esac
