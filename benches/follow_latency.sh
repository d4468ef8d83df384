#!/bin/sh
# Follower measurements for BENCHMARKS.md: append-to-data latency (file events, polling),
# idle CPU of one follower, CPU with 100 files each appended once a second.
# Usage: benches/follow_latency.sh [MODE...]   (modes: latency-events latency-poll idle many many-poll neighbour)
# Environment: PLATEAU_SECS (default 20), PLATEAU_POLL_MS (default 1000).
set -eu
cd "$(dirname "$0")/.."
exec cargo bench --bench follow -- "$@"
