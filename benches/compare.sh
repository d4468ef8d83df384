#!/usr/bin/env bash
# Compares plateau's whole-file report with the tools a user already has: cat, wc -l, awk
# and (when installed) pandas. Prints one table: median wall time of several runs, MB/s,
# rows/s, peak memory (max RSS) and the ratio to plateau.
#
#   bash benches/compare.sh [ROWS] [RUNS]      (default 8000000 rows = about 1 GB, 3 runs)
#
# The log is made by plateau's own generator (an invented NPT equilibration, whitespace
# layout, 10 columns) under ${BENCH_DIR:-target/bench-data}, once.
set -euo pipefail
cd "$(dirname "$0")/.."
rows=${1:-8000000}
runs=${2:-3}
dir=${BENCH_DIR:-target/bench-data}
mkdir -p "$dir"
log="$dir/equilibration-${rows}.log"

cargo build --release --quiet
bin=target/release/plateau
if [ ! -s "$log" ]; then
  echo "generating $log ($rows rows)..." >&2
  "$bin" generate equilibration --rows "$rows" --output "$log"
fi
bytes=$(stat -c %s "$log")
nrows=$(grep -vc '^#' "$log" || true)

have_pandas=0
if python3 -c 'import pandas' 2>/dev/null; then have_pandas=1; fi

# time_one CMD...: prints "seconds max_rss_kib" for one run (GNU time when present).
time_one() {
  local out
  if [ -x /usr/bin/time ]; then
    out=$( { /usr/bin/time -f '%e %M' "$@" >/dev/null 2>/dev/null; } 2>&1 | tail -n 1)
  else
    local start end
    start=$(date +%s.%N)
    "$@" >/dev/null 2>&1
    end=$(date +%s.%N)
    out="$(echo "$end - $start" | bc) 0"
  fi
  echo "$out"
}

median() { sort -g | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }

declare -A wall rss
measure() {
  local name=$1; shift
  local times=() mems=()
  # one warm-up run so that every tool reads from the page cache
  "$@" >/dev/null 2>&1 || true
  for _ in $(seq "$runs"); do
    read -r t m < <(time_one "$@")
    times+=("$t"); mems+=("$m")
  done
  wall[$name]=$(printf '%s\n' "${times[@]}" | median)
  rss[$name]=$(printf '%s\n' "${mems[@]}" | median)
}

pandas_script='import sys, pandas as pd
df = pd.read_csv(sys.argv[1], sep=r"\s+", comment="#", header=None)
print(df.describe())'

measure "plateau report" "$bin" report "$log"
measure "cat" cat "$log"
measure "wc -l" wc -l "$log"
measure "awk sum one column" awk '!/^#/ {s += $3} END {print s}' "$log"
if [ "$have_pandas" = 1 ]; then
  measure "pandas read_csv" python3 -c "$pandas_script" "$log"
fi

echo
echo "log: $log, $((bytes / 1000000)) MB, $nrows rows x 10 columns; median of $runs runs"
echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //')"
printf '%-22s %10s %10s %14s %12s %12s\n' tool "wall s" "MB/s" "rows/s" "peak MiB" "vs plateau"
base=${wall["plateau report"]}
for name in "plateau report" "cat" "wc -l" "awk sum one column" "pandas read_csv"; do
  [ -n "${wall[$name]:-}" ] || continue
  t=${wall[$name]}
  awk -v n="$name" -v t="$t" -v b="$bytes" -v r="$nrows" -v m="${rss[$name]}" -v base="$base" 'BEGIN {
    if (t <= 0) t = 0.001;
    printf "%-22s %10.2f %10.0f %14.0f %12.0f %11.2fx\n", n, t, b / 1e6 / t, r / t, m / 1024, t / base
  }'
done
