#!/usr/bin/env bash
# Single-node Slurm 22.05 (Debian bookworm packages) without systemd, as root, for the
# integration tests in tests/slurm.rs and for trying `plateau ... --jobs` by hand.
# Usage: slurm-single-node.sh up | down   (in CI: up; trap "... down" EXIT)
# The partition lets up to 8 jobs share a core, so that several small test jobs run at
# once on a 2-core machine.
set -euo pipefail

# True when the pid file names a running process.
alive() { [ -s "$1" ] && kill -0 "$(cat "$1")" 2>/dev/null; }

up() {
  if ! command -v slurmctld >/dev/null; then
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends slurm-wlm munge
  fi
  local h; h=$(hostname -s)
  mkdir -p /etc/slurm /var/spool/slurmctld /var/spool/slurmd /var/log/slurm /run/munge
  chown munge:munge /run/munge
  if [ ! -s /etc/munge/munge.key ]; then   # the munge postinst normally creates one
    mungekey --create --keyfile=/etc/munge/munge.key
    chown munge:munge /etc/munge/munge.key && chmod 0600 /etc/munge/munge.key
  fi
  munge -n >/dev/null 2>&1 || runuser -u munge -- /usr/sbin/munged   # daemonizes
  cat > /etc/slurm/slurm.conf <<EOF
ClusterName=ci
SlurmctldHost=${h}(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
CommunicationParameters=NoInAddrAny,NoCtldInAddrAny
SlurmctldPort=6817
SlurmdPort=6818
StateSaveLocation=/var/spool/slurmctld
SlurmdSpoolDir=/var/spool/slurmd
SlurmctldPidFile=/run/slurmctld.pid
SlurmdPidFile=/run/slurmd.pid
SlurmctldLogFile=/var/log/slurm/slurmctld.log
SlurmdLogFile=/var/log/slurm/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MpiDefault=none
SwitchType=switch/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
MailProg=/bin/true
NodeName=${h} NodeAddr=127.0.0.1 CPUs=$(nproc) State=UNKNOWN
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP OverSubscribe=FORCE:8
EOF
  # Both daemonize and write their pid files; one already running is left as it is.
  alive /run/slurmctld.pid || /usr/sbin/slurmctld
  alive /run/slurmd.pid || /usr/sbin/slurmd
  for _ in $(seq 1 120); do
    case "$(sinfo --noheader -o %t 2>/dev/null)" in idle|mix|alloc) return 0 ;; esac
    sleep 0.5
  done
  echo "slurm node not up after 60 s" >&2
  tail -n 30 /var/log/slurm/slurmctld.log /var/log/slurm/slurmd.log >&2
  return 1
}

down() {
  local f p
  if [ -s /run/slurmctld.pid ] && squeue >/dev/null 2>&1; then   # cancel leftover jobs first,
    squeue --noheader -o %i | xargs -r scancel                   # else slurmstepd outlives slurmd
    for _ in $(seq 1 50); do [ -z "$(squeue --noheader)" ] && break; sleep 0.2; done
  fi
  for f in /run/slurmd.pid /run/slurmctld.pid /run/munge/munged.pid; do
    [ -s "$f" ] || continue
    p=$(cat "$f")
    kill -TERM "$p" 2>/dev/null || continue
    for _ in $(seq 1 50); do kill -0 "$p" 2>/dev/null || break; sleep 0.2; done
  done
}

"${1:?usage: $0 up|down}"
