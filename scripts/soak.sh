#!/usr/bin/env bash
# Soak test (not in CI): a log appended at RATE rows/s for MINUTES minutes, followed at
# once by `plateau check --follow` and by the dashboard (`plateau watch` in a detached tmux
# session). Every 10 s it records each process's resident memory (VmRSS) and CPU time; at
# the end it checks the rows counted against the writer's own count and prints a summary
# (the figures in docs/reliability.md come from here).
#
#   scripts/soak.sh [MINUTES=30] [RATE=1000] [OUT_DIR=a new temporary folder]
#
# Needs tmux and a release build (built here if missing; PLATEAU_BIN=path uses another
# build, e.g. target/debug/plateau, and the summary says which).
set -euo pipefail
cd "$(dirname "$0")/.."
minutes=${1:-30}
rate=${2:-1000}
out=${3:-$(mktemp -d /tmp/plateau-soak.XXXXXX)}
mkdir -p "$out"
bin=${PLATEAU_BIN:-target/release/plateau}
if [ -z "${PLATEAU_BIN:-}" ] && [ ! -x "$bin" ]; then
  cargo build --release --locked --bin plateau
fi
bin=$(realpath "$bin")
command -v tmux >/dev/null || { echo "soak.sh needs tmux" >&2; exit 2; }

rows=$((minutes * 60 * rate))
echo "soak: ${minutes} min at ${rate} rows/s = ${rows} rows; files in ${out}"
# The source: an invented healthy production run (plateau generate), replayed at the rate.
"$bin" generate production --rows "$rows" --output "$out/source.log"
: > "$out/run.log"

"$bin" replay --rows-per-second "$rate" "$out/source.log" "$out/live.log" &
writer=$!
# Follow until the writer exits (--pid), then judge the whole run.
"$bin" check --follow --pid "$writer" --stall-after 1h "$out/live.log" \
  > "$out/check.out" 2> "$out/check.err" &
checker=$!
session="plateau-soak-$$"
tmux new-session -d -s "$session" -x 120 -y 40 "$bin watch '$out/live.log'"
sleep 1
dashboard=$(tmux list-panes -t "$session" -F '#{pane_pid}')
trap 'tmux kill-session -t "$session" 2>/dev/null || true; kill "$writer" "$checker" 2>/dev/null || true' EXIT

ticks=$(getconf CLK_TCK)
sample() { # sample PID -> "rss_kib cpu_seconds"
  local rss cpu
  rss=$(awk '/^VmRSS:/ {print $2}' "/proc/$1/status" 2>/dev/null || echo 0)
  cpu=$(awk -v t="$ticks" '{ split($0, a, ") "); split(a[2], f, " "); printf "%.2f", (f[12] + f[13]) / t }' "/proc/$1/stat" 2>/dev/null || echo 0)
  echo "${rss:-0} ${cpu:-0}"
}
echo "elapsed_s check_rss_kib check_cpu_s watch_rss_kib watch_cpu_s live_rows" > "$out/samples.txt"
start=$(date +%s)
while kill -0 "$writer" 2>/dev/null; do
  now=$(($(date +%s) - start))
  lines=$(wc -l < "$out/live.log")
  echo "$now $(sample "$checker") $(sample "$dashboard") $lines" >> "$out/samples.txt"
  sleep 10
done
wait "$writer" || true
elapsed=$(($(date +%s) - start))
# The dashboard's last screen (rows shown), then quit it.
sleep 3
tmux capture-pane -p -t "$session" > "$out/dashboard.txt" || true
final_watch=$(sample "$dashboard")
tmux send-keys -t "$session" q
code=0
wait "$checker" || code=$?

source_rows=$("$bin" report --format json "$out/source.log" | grep -m1 '"rows"' | tr -dc '0-9')
live_rows=$("$bin" report --format json "$out/live.log" | grep -m1 '"rows"' | tr -dc '0-9')
followed_rows=$(grep -o '([0-9]* rows' "$out/check.err" | tr -dc '0-9')
cmp -s "$out/source.log" "$out/live.log" && same=yes || same=no

awk 'NR > 1 { if ($2 > mc) mc = $2; if ($4 > mw) mw = $4; n++;
              if (n == 1) { c0 = $3; w0 = $5; t0 = $1 } c1 = $3; w1 = $5; t1 = $1 }
     END { dt = t1 - t0; if (dt <= 0) dt = 1;
           printf "peak RSS: check --follow %.1f MiB, watch %.1f MiB\n", mc / 1024, mw / 1024;
           printf "CPU over the run: check --follow %.1f %% of a core, watch %.1f %% of a core\n",
                  100 * (c1 - c0) / dt, 100 * (w1 - w0) / dt }' "$out/samples.txt" \
  | tee "$out/summary.txt"
{
  echo "binary: ${bin}"
  echo "duration: ${elapsed} s (${minutes} min planned) at ${rate} rows/s"
  echo "rows: writer ${source_rows}, file ${live_rows}, check --follow ${followed_rows}"
  echo "live file identical to the source: ${same}"
  echo "check --follow exit code: ${code}; its last words: $(tail -n 1 "$out/check.err")"
  echo "dashboard at the end (RSS KiB, CPU s): ${final_watch}"
  echo "dashboard rows line: $(grep -m1 '│ rows' "$out/dashboard.txt" || grep -m1 'rows' "$out/dashboard.txt" || true)"
} | tee -a "$out/summary.txt"
[ "$source_rows" = "$followed_rows" ] && [ "$same" = yes ]
