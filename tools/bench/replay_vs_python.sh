#!/usr/bin/env bash
# Whole-run benchmark: sestond replay against the Python pipeline a practitioner would
# write (pandas read_csv + scikit-learn MiniBatchKMeans.partial_fit, python_pipeline.py)
# and against the read-and-split ceiling (seston-read-lines: read each file whole and
# find its lines, nothing else; `wc -l` is printed beside it), on the same files, in one
# run. Prints figures, never fails on them. Not run in CI.
#
# Data: seston-sim samples at --concentration-scale 10 (about 8600 particles each), made
# d = 8 by derive_columns.py (three columns derived from each particle's own values);
# k = 16, mini-batches of 1024, warm-up 20000 particles in both pipelines.
# Peak resident memory of replay is measured at two sizes: all files and a quarter.
#
# Usage: tools/bench/replay_vs_python.sh BUILD_DIR WORK_DIR [FILES]   (FILES default 280)
# ROUNDS=N in the environment repeats every run N times (default 3); see below.
# BUILD_DIR must be configured with -DSESTON_BUILD_BENCHMARKS=ON and have sestond,
# seston-sim and seston-read-lines built.
set -euo pipefail

build=${1:?usage: replay_vs_python.sh BUILD_DIR WORK_DIR [FILES]}
work=${2:?usage: replay_vs_python.sh BUILD_DIR WORK_DIR [FILES]}
files=${3:-280}
here=$(cd "$(dirname "$0")" && pwd)
python=/usr/bin/python3  # Debian's, which has python3-pandas and python3-sklearn
sestond=$build/daemon/sestond
sim=$build/tools/seston-sim/seston-sim
read_lines=$build/tools/bench/seston-read-lines

mkdir -p "$work"
if [[ ! -f $work/d8/.complete-$files ]]; then
  rm -rf "$work/raw" "$work/d8" "$work/d8-quarter"
  "$sim" --out "$work/raw" --samples "$files" --concentration-scale 10 --seed 1 >/dev/null
  "$python" "$here/derive_columns.py" "$work/raw" "$work/d8"
  mkdir -p "$work/d8-quarter"
  ls "$work/d8" | grep '\.csv$' | head -n $((files / 4)) |
    while read -r name; do ln "$work/d8/$name" "$work/d8-quarter/$name"; done
  rm -rf "$work/raw"
  touch "$work/d8/.complete-$files"
fi

cat >"$work/replay.yaml" <<YAML
station: "Skerry Sound mooring B (simulated)"
input:
  drop_dir: $work/drop
features:
  - { column: area_um2, transform: log10 }
  - { column: esd_um, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: log10 }
  - { column: grey_level }
  - { column: circularity }
  - { column: biovolume_um3, transform: log10 }
  - { column: grey_area_um2, transform: log10 }
standardize: true
model:
  k: 16
  warmup_particles: 20000
  batch_size: 1024
  half_life_particles: 200000
counts:
  bin_seconds: 300
  output_dir: $work/out/counts
alerts:
  dir: $work/out/alerts
state:
  dir: $work/out/state
YAML

# The same run with the drift detectors off: shows what the detectors cost.
sed 's/^alerts:/drift:\n  enabled: false\nalerts:/' "$work/replay.yaml" >"$work/replay-no-drift.yaml"

csv_files=("$work"/d8/*.csv)
cat "${csv_files[@]}" >/dev/null  # every run below reads from the page cache
bytes=$(cat "${csv_files[@]}" | wc -c)

# Runs "$@" under /usr/bin/time; sets elapsed (s), cpu (user+sys, s), rss (peak, KiB).
measure() {
  /usr/bin/time -f '%e %U %S %M' -o "$work/time.txt" "$@" >"$work/stdout.txt"
  read -r elapsed user sys rss <"$work/time.txt"
  cpu=$(awk -v u="$user" -v s="$sys" 'BEGIN { printf "%.2f", u + s }')
}

replay() {  # replay DIR [CONFIG]: a fresh output directory each time
  rm -rf "$work/out"
  measure "$sestond" replay --config "${2:-$work/replay.yaml}" --quiet --summary "$work/summary.json" "$1"
}

# Each run is repeated ROUNDS times (default 3), the runs taken in turn so that a slow
# spell on a shared machine falls on all of them alike; the table gives the median
# (the lower middle for an even count) and, for the two pipelines, the fastest and
# slowest run. Peak resident memory is the largest over the rounds.
rounds=${ROUNDS:-3}
declare -a ceil_s repl_s repl_cpu bare_s bare_cpu py_s py_total py_cpu quarter_s
ceiling_rss=0 replay_rss=0 bare_rss=0 python_rss=0 quarter_rss=0
max() { if (($1 > $2)); then echo "$1"; else echo "$2"; fi; }
for ((round = 0; round < rounds; round++)); do
  echo "round $((round + 1)) of $rounds ..." >&2
  measure "$read_lines" "${csv_files[@]}"
  read -r _ _ _ lines _ _ _ _ _ "ceil_s[round]" <"$work/stdout.txt"
  ceiling_rss=$(max "$ceiling_rss" "$rss")

  replay "$work/d8"
  rows=$("$python" -c "import json,sys; print(json.load(open(sys.argv[1]))['particles']['read'])" "$work/summary.json")
  repl_s[round]=$elapsed repl_cpu[round]=$cpu replay_rss=$(max "$replay_rss" "$rss")
  replay "$work/d8" "$work/replay-no-drift.yaml"
  bare_s[round]=$elapsed bare_cpu[round]=$cpu bare_rss=$(max "$bare_rss" "$rss")

  measure "$python" "$here/python_pipeline.py" "$work/d8" 16 1024 20000
  read -r _ python_rows _ "py_s[round]" _ <"$work/stdout.txt"
  py_total[round]=$elapsed py_cpu[round]=$cpu python_rss=$(max "$python_rss" "$rss")

  replay "$work/d8-quarter"
  quarter_rows=$("$python" -c "import json,sys; print(json.load(open(sys.argv[1]))['particles']['read'])" "$work/summary.json")
  quarter_s[round]=$elapsed quarter_rss=$(max "$quarter_rss" "$rss")
done
wc_start=$(date +%s.%N)
cat "${csv_files[@]}" | wc -l >/dev/null
wc_seconds=$(awk -v s="$wc_start" -v e="$(date +%s.%N)" 'BEGIN { printf "%.3f", e - s }')

median() { printf '%s\n' "$@" | sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }
spread() { printf '%s\n' "$@" | sort -g | awk '{ v[NR] = $1 } END { print v[1] "-" v[NR] }'; }
ceiling_seconds=$(median "${ceil_s[@]}")
replay_seconds=$(median "${repl_s[@]}") replay_cpu=$(median "${repl_cpu[@]}")
bare_seconds=$(median "${bare_s[@]}") bare_cpu=$(median "${bare_cpu[@]}")
python_seconds=$(median "${py_s[@]}") python_total=$(median "${py_total[@]}")
python_cpu=$(median "${py_cpu[@]}") quarter_seconds=$(median "${quarter_s[@]}")

rate() { awk -v n="$1" -v s="$2" 'BEGIN { printf "%.0f", n / s }'; }
ratio() { awk -v a="$1" -v b="$2" 'BEGIN { printf "%.1f", a / b }'; }

echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ *//'),"\
     "$(awk '/MemTotal/ { printf "%.1f GiB", $2 / 1048576 }' /proc/meminfo), load $(cut -d' ' -f1-3 /proc/loadavg)"
echo "rounds: $rounds; figures are medians"
echo "data: ${#csv_files[@]} files, $rows particles ($python_rows in Python), $bytes bytes, $lines lines, d = 8, k = 16"
printf '%-34s %10s %10s %14s %12s\n' "run" "wall s" "cpu s" "rows/s (wall)" "peak RSS MiB"
printf '%-34s %10s %10s %14s %12s\n' "read and split (seston-read-lines)" "$ceiling_seconds" "-" \
  "$(rate "$lines" "$ceiling_seconds")" "$((ceiling_rss / 1024))"
printf '%-34s %10s %10s %14s %12s\n' "cat | wc -l" "$wc_seconds" "-" "$(rate "$lines" "$wc_seconds")" "-"
printf '%-34s %10s %10s %14s %12s\n' "sestond replay" "$replay_seconds" "$replay_cpu" \
  "$(rate "$rows" "$replay_seconds")" "$((replay_rss / 1024))"
printf '%-34s %10s %10s %14s %12s\n' "sestond replay, drift off" "$bare_seconds" "$bare_cpu" \
  "$(rate "$rows" "$bare_seconds")" "$((bare_rss / 1024))"
printf '%-34s %10s %10s %14s %12s\n' "pandas + sklearn (in-script time)" "$python_seconds" "$python_cpu" \
  "$(rate "$python_rows" "$python_seconds")" "$((python_rss / 1024))"
printf '%-34s %10s %10s %14s %12s\n' "sestond replay, quarter of files" "$quarter_seconds" "-" \
  "$(rate "$quarter_rows" "$quarter_seconds")" "$((quarter_rss / 1024))"
echo "python process wall incl. imports: $python_total s"
echo "wall s over the rounds: replay $(spread "${repl_s[@]}"), drift off $(spread "${bare_s[@]}")," \
     "pandas + sklearn $(spread "${py_s[@]}")"
echo "replay / python rows/s: $(ratio "$(rate "$rows" "$replay_seconds")" "$(rate "$python_rows" "$python_seconds")")x" \
     "(drift off: $(ratio "$(rate "$rows" "$bare_seconds")" "$(rate "$python_rows" "$python_seconds")")x)"
echo "replay time / read-and-split time: $(ratio "$replay_seconds" "$ceiling_seconds")x" \
     "(drift off: $(ratio "$bare_seconds" "$ceiling_seconds")x)"
echo "replay peak RSS, all files / quarter: $((replay_rss / 1024)) / $((quarter_rss / 1024)) MiB"
