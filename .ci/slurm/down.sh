#!/usr/bin/env bash
# Stop exactly the daemons .ci/slurm/up.sh started, by their recorded PIDs.
PIDS=${SLURM_CI_PIDS:-/tmp/dwarfbound-slurm/pids}
for d in slurmd slurmctld munged; do
  f="$PIDS/$d"
  [ -s "$f" ] || continue
  pid=$(cat "$f")
  if kill "$pid" 2>/dev/null; then
    for _ in $(seq 100); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -0 "$pid" 2>/dev/null && kill -9 "$pid" 2>/dev/null
  fi
  rm -f "$f"
done
