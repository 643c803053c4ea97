#!/usr/bin/env bash
# drift-report.sh: detection delay and false alerts of sestond's drift detectors on each
# seston-sim scenario. Builds nothing: give it a build directory holding seston-sim and
# sestond.
#
#   tools/drift-report.sh BUILD_DIR > tools/reports/drift.md
#
# For each scenario, seston-sim writes the simulated station's samples (concentration
# scale 0.1: about 86 particles per 5 mL sample, one sample every 300 s; the change
# begins 6 h after the start) into a scratch directory, `sestond replay` runs the
# pipeline over them with the configuration printed below, and the alert files it wrote
# are read back. Delay = event hours from the change to the first alert of the expected
# kind; false alerts = alerts raised before the change, or of a kind the scenario does
# not explain (for steady: every alert). Everything is deterministic: the same build
# prints the same table.
set -euo pipefail

if [[ $# -ne 1 || ! -x "$1/tools/seston-sim/seston-sim" || ! -x "$1/daemon/sestond" ]]; then
  echo "usage: $0 BUILD_DIR   (BUILD_DIR/tools/seston-sim/seston-sim and BUILD_DIR/daemon/sestond must exist)" >&2
  exit 2
fi
build=$(cd "$1" && pwd)
sim="$build/tools/seston-sim/seston-sim"
sestond="$build/daemon/sestond"
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT

scale=0.1
change_at=6
start=2026-06-01T00:00:00Z

config_text() {  # $1 = run directory
  cat <<YAML
station: "Skerry Sound mooring B (simulated)"
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: log10 }
  - { column: grey_level }
standardize: true
model:
  k: auto
  k_range: [3, 9]
  k_rule: elbow
  warmup_particles: 3000
  half_life_particles: 0
  half_life_seconds: 18000
counts:
  output_dir: $1/counts
alerts:
  dir: $1/alerts
state:
  dir: $1/state
logging:
  level: warn
YAML
}

# scenario, hours simulated, alert kinds that answer the change
scenarios=(
  "bloom 36 composition"
  "new-group 36 new_cluster,novelty"
  "focus-drift 48 instrument_drift"
  "flow-drop 24 flow"
  "steady 720 -"
)

echo "# Drift detection on simulated scenarios"
echo
echo "Produced by \`tools/drift-report.sh BUILD_DIR > tools/reports/drift.md\` (seston-sim +"
echo "\`sestond replay\`; BUILD_DIR holds both binaries). The same runs are asserted in"
echo "tests/pipeline/scenario_test.cc."
echo "Simulated station: seston-sim defaults (start $start, one 5 mL sample every 300 s,"
echo "seed 1) with \`--concentration-scale $scale\` (about 86 particles per sample) and"
echo "\`--change-at $change_at\` (hours). Configuration (drift and alert options at their defaults;"
echo "RUN_DIR is a scratch directory per scenario):"
echo
echo '```yaml'
config_text "RUN_DIR"
echo '```'
echo
echo "| scenario | hours simulated | particles | alert kinds raised | expected kind | detection delay (h) | false alerts |"
echo "|---|---|---|---|---|---|---|"
for entry in "${scenarios[@]}"; do
  read -r scenario hours expected <<<"$entry"
  run="$scratch/$scenario"
  mkdir -p "$run"
  config_text "$run" >"$run/config.yaml"
  samples=$((hours * 3600 / 300))
  "$sim" --out "$run/drop" --samples "$samples" --scenario "$scenario" --change-at "$change_at" \
    --concentration-scale "$scale" >"$run/sim.log" 2>&1
  "$sestond" replay --config "$run/config.yaml" --quiet --summary "$run/summary.json" \
    "$run/drop" >"$run/replay.log" 2>&1
  python3 - "$run" "$scenario" "$hours" "$expected" "$start" "$change_at" <<'PY'
import glob, json, sys, datetime
run, scenario, hours, expected, start, change_at = sys.argv[1:]
start_s = datetime.datetime.strptime(start, "%Y-%m-%dT%H:%M:%SZ").replace(
    tzinfo=datetime.timezone.utc).timestamp()
change = start_s + float(change_at) * 3600
expected_kinds = set() if expected == "-" else set(expected.split(","))
raised = []
for path in sorted(glob.glob(run + "/alerts/*.json")):
    with open(path) as f:
        event = json.load(f)
    if event["event"] == "raised":
        raised.append(event)
with open(run + "/summary.json") as f:
    particles = json.load(f)["particles"]["accepted"]
kinds = sorted({e["kind"] for e in raised})
delay = "not detected"
for e in raised:
    if e["kind"] in expected_kinds and e["time_seconds"] >= change:
        delay = "%.2f" % ((e["time_seconds"] - change) / 3600)
        break
explained = expected_kinds | {"composition", "novelty", "new_cluster", "fit", "centre_drift",
                              "instrument_drift", "cluster_retired"}
if scenario == "flow-drop":
    explained = {"flow"}
false = sum(1 for e in raised
            if not expected_kinds or e["time_seconds"] < change or e["kind"] not in explained)
print("| %s | %s | %d | %s | %s | %s | %d |" % (
    scenario, hours, particles, ", ".join(kinds) or "none", expected if expected != "-" else "none",
    delay if expected_kinds else "-", false))
PY
done
echo
echo "For bloom, new-group and focus-drift the change also moves the mix, the fit and the"
echo "novelty rate, so alerts of those kinds after the change are counted as explained, not false."
echo "For flow-drop only \`flow\` is explained: concentrations, and so the mix, do not change."
