#!/usr/bin/env bash
# Installs (if needed) and starts a single-node Slurm cluster on this machine
# for chord's grid tests: munged, slurmctld and slurmd, started by PID.
# Writes the PIDs to $STATE (default /tmp/chord-slurm.pids) for stop.sh.
# Needs root and Debian's packages (slurmctld slurmd slurm-client munge).
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
STATE=${STATE:-/tmp/chord-slurm.pids}
export DEBIAN_FRONTEND=noninteractive

if [ "$(id -u)" != 0 ]; then echo "start.sh: needs root" >&2; exit 1; fi

if sinfo -h -o %T >/dev/null 2>&1 && [ "$(sinfo -h -o %T 2>/dev/null)" = idle ]; then
  echo "slurm: a cluster is already up and idle"; exit 0
fi

PKGS="slurmctld slurmd slurm-client munge"
if ! command -v slurmctld >/dev/null 2>&1 || [ ! -x /usr/sbin/munged ]; then
  apt-get install -y --no-install-recommends $PKGS >/tmp/chord-slurm-apt.log 2>&1 \
    || { apt-get update >/dev/null 2>&1 && apt-get install -y --no-install-recommends $PKGS >>/tmp/chord-slurm-apt.log 2>&1; }
fi

# munge: the package normally creates the key; create it if not.
[ -s /etc/munge/munge.key ] || /usr/sbin/mungekey --create
chown munge:munge /etc/munge/munge.key && chmod 0400 /etc/munge/munge.key
install -d -o munge -g munge -m 0755 /run/munge
if [ ! -S /run/munge/munge.socket.2 ]; then
  runuser -u munge -- /usr/sbin/munged
  for i in $(seq 1 50); do [ -S /run/munge/munge.socket.2 ] && break; sleep 0.1; done
fi
munge -n | unmunge >/dev/null
MUNGED_PID=$(cat /run/munge/munged.pid)

HOST=$(hostname -s)
getent hosts "$HOST" >/dev/null || echo "127.0.0.1 $HOST" >>/etc/hosts
NODELINE=$(slurmd -C | head -n1)
install -d -o slurm -g slurm /var/spool/slurmctld /var/log/slurm /run/slurm
install -d -o root -g root /var/spool/slurmd
sed -e "s/@HOST@/$HOST/g" -e "s/@NODELINE@/$NODELINE/" "$here/slurm.conf.in" >/etc/slurm/slurm.conf

setsid slurmctld -D >/tmp/chord-slurmctld.out 2>&1 </dev/null & CTLD_PID=$!
setsid slurmd -D >/tmp/chord-slurmd.out 2>&1 </dev/null & SLURMD_PID=$!
printf 'MUNGED_PID=%s\nCTLD_PID=%s\nSLURMD_PID=%s\n' "$MUNGED_PID" "$CTLD_PID" "$SLURMD_PID" >"$STATE"
for i in $(seq 1 150); do [ "$(sinfo -h -o %T 2>/dev/null)" = idle ] && break; sleep 0.2; done
if [ "$(sinfo -h -o %T 2>/dev/null)" != idle ]; then
  echo "slurm: node did not become idle" >&2; sinfo >&2 || true; tail -20 /tmp/chord-slurmctld.out >&2 || true; exit 1
fi
echo "slurm: up ($(sinfo -h -o '%P %a %D %T %N %c'))"
