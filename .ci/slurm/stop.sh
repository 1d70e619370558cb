#!/usr/bin/env bash
# Stops the daemons that start.sh started, by PID, and waits for them to exit.
set -u
STATE=${STATE:-/tmp/chord-slurm.pids}
[ -f "$STATE" ] || { echo "slurm: nothing to stop"; exit 0; }
. "$STATE"
kill -TERM "$SLURMD_PID" "$CTLD_PID" 2>/dev/null
for i in $(seq 1 100); do
  kill -0 "$SLURMD_PID" 2>/dev/null || kill -0 "$CTLD_PID" 2>/dev/null || break; sleep 0.2
done
kill -TERM "$MUNGED_PID" 2>/dev/null
for i in $(seq 1 50); do kill -0 "$MUNGED_PID" 2>/dev/null || break; sleep 0.2; done
rm -f "$STATE"
echo "slurm: stopped"
