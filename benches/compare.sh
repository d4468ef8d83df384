#!/usr/bin/env bash
# Compares plateau's whole-file report with the tools a user already has: cat, wc -l, awk
# and (when installed) pandas. Prints one table: median wall time of several runs, MB/s,
# rows/s, peak memory (max RSS) and the ratio to plateau, then plateau's ingest and
# statistics times apart and the performance targets as ratios measured in this one run.
#
#   bash benches/compare.sh [ROWS] [RUNS]      (default 8000000 rows = about 1 GB, 5 runs)
#
# The log is made by plateau's own generator (an invented NPT equilibration, whitespace
# layout, 10 columns) under ${BENCH_DIR:-target/bench-data}, once; a CSV copy of it is made
# for pandas' CSV reader.
set -euo pipefail
cd "$(dirname "$0")/.."
rows=${1:-8000000}
runs=${2:-5}
dir=${BENCH_DIR:-target/bench-data}
mkdir -p "$dir"
log="$dir/equilibration-${rows}.log"
csv="$dir/equilibration-${rows}.csv"

cargo build --release --quiet
bin=target/release/plateau
if [ ! -s "$log" ]; then
  echo "generating $log ($rows rows)..." >&2
  "$bin" generate equilibration --rows "$rows" --output "$log"
fi
bytes=$(stat -c %s "$log")
nrows=$(grep -vc '^#' "$log" || true)
values=$((nrows * 10))

have_pandas=0
if python3 -c 'import pandas' 2>/dev/null; then have_pandas=1; fi
if [ "$have_pandas" = 1 ] && [ ! -s "$csv" ]; then
  awk '!/^#/ {$1 = $1; print}' OFS=, "$log" >"$csv"
fi

# time_one CMD...: prints "seconds max_rss_kib" for one run (GNU time when present).
time_one() {
  local out
  if [ -x /usr/bin/time ]; then
    local tmp
    tmp=$(mktemp)
    /usr/bin/time -f '%e %M' -o "$tmp" "$@" >/dev/null 2>/dev/null || true
    out=$(tail -n 1 "$tmp")
    rm -f "$tmp"
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

pandas_ws='import sys, pandas as pd
df = pd.read_csv(sys.argv[1], sep=r"\s+", comment="#", header=None)
print(df.describe())'
pandas_csv='import sys, pandas as pd
df = pd.read_csv(sys.argv[1], header=None)
print(df.describe())'

measure "plateau report" "$bin" report "$log"
measure "cat" cat "$log"
measure "wc -l" wc -l "$log"
measure "awk sum one column" awk '!/^#/ {s += $3} END {print s}' "$log"
if [ "$have_pandas" = 1 ]; then
  measure "pandas read_csv ws" python3 -c "$pandas_ws" "$log"
  measure "pandas read_csv csv" python3 -c "$pandas_csv" "$csv"
fi

# plateau's own split of its time: ingest and statistics (medians of RUNS runs).
ingests=() statses=()
for _ in $(seq "$runs"); do
  t=$("$bin" report --timings "$log" 2>&1 >/dev/null)
  ingests+=("$(echo "$t" | awk '/^ingest:/ {print $2}')")
  statses+=("$(echo "$t" | awk '/^statistics:/ {print $2}')")
done
ingest=$(printf '%s\n' "${ingests[@]}" | median)
stats=$(printf '%s\n' "${statses[@]}" | median)

echo
echo "log: $log, $((bytes / 1000000)) MB, $nrows rows x 10 columns; median of $runs runs"
echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //'), load $(cut -d' ' -f1-3 /proc/loadavg)"
printf '%-22s %10s %10s %14s %12s %12s\n' tool "wall s" "MB/s" "rows/s" "peak MiB" "vs plateau"
base=${wall["plateau report"]}
for name in "plateau report" "cat" "wc -l" "awk sum one column" "pandas read_csv ws" "pandas read_csv csv"; do
  [ -n "${wall[$name]:-}" ] || continue
  t=${wall[$name]}
  awk -v n="$name" -v t="$t" -v b="$bytes" -v r="$nrows" -v m="${rss[$name]}" -v base="$base" 'BEGIN {
    if (t <= 0) t = 0.001;
    printf "%-22s %10.2f %10.0f %14.0f %12.0f %11.2fx\n", n, t, b / 1e6 / t, r / t, m / 1024, t / base
  }'
done
echo
echo "plateau report, split: ingest $ingest s, statistics $stats s"
awk -v p="$base" -v a="${wall["awk sum one column"]}" -v pd="${wall["pandas read_csv ws"]:-}" \
    -v m="${rss["plateau report"]}" -v vals="$values" 'BEGIN {
  if (p <= 0) p = 0.001;
  printf "target: report >= 2x faster than awk one-column sum: %.2fx (%s)\n", a / p, (a / p >= 2 ? "met" : "not met")
  if (pd != "") printf "target: report >= 10x faster than pandas: %.2fx (%s)\n", pd / p, (pd / p >= 10 ? "met" : "not met")
  raw = vals * 8 / 1048576
  printf "target: peak memory <= 1.2x raw values (%.0f MiB): %.0f MiB = %.2fx (%s)\n", raw, m / 1024, m / 1024 / raw, (m / 1024 <= 1.2 * raw ? "met" : "not met")
}'
