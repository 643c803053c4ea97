#!/usr/bin/env bash
# The seston demo: a simulated instrument at the fictional station "Skerry Sound mooring B"
# feeds a live sestond for about a minute, while a diatom bloom builds up in the water;
# then the daemon is asked what it saw.
#
#   tools/demo.sh            (as root on Debian 12, from anywhere in a clone)
#
# Steps: install missing Debian packages (tools/install-deps.sh), build into build/demo
# ($SESTON_BUILD_DIR when set, with $SESTON_JOBS parallel jobs),
# make the scratch directory demo-run/ in the repository (removed and made again on
# each run; an older demo daemon is stopped first), start `sestond run` in the
# background with config/demo.yaml copied there, run seston-sim in live mode writing
# sample files into the drop directory (event time runs 240 times faster than the wall
# clock, the bloom starts 2 event hours in), then print sestonctl status, counts,
# clusters and alerts and the newest alert file.
#
# The daemon is left running so that you can keep asking it (sestonctl ...); the script
# prints its pid and the command that stops it. Exit status: non-zero when any step fails.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${SESTON_BUILD_DIR:-$root/build/demo}"
run="$root/demo-run"
jobs="${SESTON_JOBS:-$(nproc)}"
speed=240      # event seconds per wall second: a 300 s sample every 1.25 s
samples=48     # 4 event hours: the bloom (from hour 2, over 1 hour) is well under way
api="127.0.0.1:7460"

step() { printf '\n== %s\n' "$*"; }
fail() { printf 'demo: %s\n' "$*" >&2; exit 1; }

step "installing missing Debian packages"
"$root/tools/install-deps.sh"

step "building into $build"
cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build "$build" -j "$jobs" --target sestond seston-sim sestonctl
sestond="$build/daemon/sestond"
sim="$build/tools/seston-sim/seston-sim"
ctl="$build/tools/sestonctl/sestonctl"

step "scratch directory $run"
if [[ -f "$run/sestond.pid" ]]; then
  old="$(cat "$run/sestond.pid")"
  if kill -0 "$old" 2>/dev/null && grep -q sestond "/proc/$old/cmdline" 2>/dev/null; then
    echo "stopping the previous demo daemon (pid $old)"
    kill -TERM "$old"
    for _ in $(seq 100); do kill -0 "$old" 2>/dev/null || break; sleep 0.1; done
    kill -0 "$old" 2>/dev/null && fail "the previous demo daemon (pid $old) did not stop"
  fi
fi
rm -rf "$run"
mkdir -p "$run"
cp "$root/config/demo.yaml" "$run/demo.yaml"
config="$run/demo.yaml"   # its relative paths are taken from its own directory
data="$run/var/demo"

step "starting sestond run (log: $run/sestond.log)"
"$sestond" run --config "$config" >"$run/sestond.log" 2>&1 &
pid=$!
echo "$pid" >"$run/sestond.pid"
for _ in $(seq 100); do
  kill -0 "$pid" 2>/dev/null || { cat "$run/sestond.log" >&2; fail "sestond exited at start"; }
  "$ctl" --api "$api" --timeout 1 status >/dev/null 2>&1 && break
  sleep 0.1
done
"$ctl" --api "$api" --timeout 2 status >/dev/null || fail "sestond does not answer on $api"

step "seston-sim: $samples live samples, bloom scenario, ${speed}x event time (about a minute)"
"$sim" --live --out "$data/drop" --scenario bloom --change-at 2 --ramp 1 \
  --samples "$samples" --speed "$speed" --seed 1 2>&1 | tail -n 3

# The last file may still be settling or being read.
for _ in $(seq 100); do
  left="$(find "$data/drop" -maxdepth 1 -name '*.csv' | wc -l)"
  [[ "$left" -eq 0 ]] && break
  sleep 0.1
done
kill -0 "$pid" 2>/dev/null || { tail -n 20 "$run/sestond.log" >&2; fail "sestond stopped"; }

step "sestonctl status"
"$ctl" --api "$api" status
step "sestonctl counts --window 1h"
"$ctl" --api "$api" counts --window 1h
step "sestonctl clusters"
"$ctl" --api "$api" clusters
step "sestonctl alerts"
"$ctl" --api "$api" alerts

newest="$(ls -1t "$data/alerts"/*.json 2>/dev/null | head -n 1 || true)"
[[ -n "$newest" ]] || fail "no alert file was written in $data/alerts (see $run/sestond.log)"
step "newest alert file: $newest"
cat "$newest"
echo

step "where things are"
cat <<EOF
  drop directory   $data/drop   (read files under done/<day>/, unusable ones in quarantine/)
  count files      $data/counts   (bins_<day>.csv, samples_<day>.csv)
  alert files      $data/alerts
  checkpoints      $data/state
  daemon log       $run/sestond.log
  config           $config

The daemon is still running (pid $pid) on http://$api; ask it more with
  $ctl status        (or counts --window 6h, clusters, alerts, --json ...)
Stop it with
  kill $pid
Running tools/demo.sh again stops it first and starts afresh.
EOF
