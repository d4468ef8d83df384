#!/usr/bin/env bash
# Fuzzes plateau's readers with cargo-fuzz (libFuzzer; needs the nightly toolchain and
# `cargo install cargo-fuzz`). Not run in CI: the figures are recorded in
# docs/reliability.md.
#
#   scripts/fuzz.sh [SECONDS_PER_TARGET] [TARGET...]
#
# Seeds: the example logs of demo-logs/ and the test fixtures (log targets), and short
# texts of each grammar (units, schedules, settings). Each target runs for the budget on
# one core (-fork is not used: the machine is shared); crashes land in
# fuzz/artifacts/TARGET/ and must become regression tests with their input in tests/data/.
set -euo pipefail
cd "$(dirname "$0")/.."
budget=${1:-600}
shift || true
targets=("$@")
if [ ${#targets[@]} -eq 0 ]; then
  targets=(block_parser log_parser header_layout units schedule config)
fi

seed() { # seed TARGET NAME TEXT
  mkdir -p "fuzz/corpus/$1"
  printf '%s' "$3" > "fuzz/corpus/$1/seed-$2"
}
seed_logs() { # seed_logs TARGET PREFIX_BYTES (option selector and cut points in front)
  mkdir -p "fuzz/corpus/$1"
  local i=0
  for f in demo-logs/*.log tests/fixtures/alerts/*.log tests/fixtures/logs/*; do
    [ -f "$f" ] || continue
    i=$((i + 1))
    # At most 64 KiB of each: libFuzzer's inputs stay small and fast.
    { printf "$2"; head -c 65536 "$f"; } > "fuzz/corpus/$1/seed-log-$i"
  done
}

for t in "${targets[@]}"; do
  case "$t" in
    block_parser) seed_logs "$t" '\000' ;;
    log_parser) seed_logs "$t" '\000\100\200' ;;
    header_layout)
      seed "$t" 1 'step time(ps) Temperature (K) Pressure [bar] Total Energy (kJ/mol)'
      seed "$t" 2 'Step,Time,Temp/K,Press/atm,Volume (A^3)'
      seed "$t" 3 $'   Step     Time    Kinetic En.   Potential   Total Energy' ;;
    units)
      for u in K degC kJ/mol kcal/mol eV hartree Ry bar atm Pa MPa GPa fs ps ns 'Å^3' nm^3 'g/cm^3' 'kg/m³' 2fs 10ns 500000steps 300K 1atm 500ms 10min 1h; do
        seed "$t" "$(printf '%s' "$u" | od -An -tx1 | tr -d ' \n')" "$u"
      done ;;
    schedule)
      seed "$t" 1 $'\001''0ps=10K,50ps=300K'
      seed "$t" 2 $'\001''300K'
      seed "$t" 3 $'\202''0=1atm,1000steps=1bar,2ns=5bar' ;;
    config)
      for f in tests/fixtures/configs_valid/* tests/fixtures/configs_invalid/*; do
        [ -f "$f" ] && { mkdir -p "fuzz/corpus/$t"; cp "$f" "fuzz/corpus/$t/seed-$(basename "$f")"; } || true
      done
      seed "$t" 1 $'layout = "a"\n[layouts.a]\nmap = ["step=1", "temperature=3:K"]\ndelimiter = "comma"\ntimestep = "2fs"\n[alerts]\n'
      seed "$t" 2 $'keep-rows = 5000\nrow-tag = "DATA"\ncomment = ["#", "@"]\natoms = 1000\nensemble = "nvt"\n' ;;
    *) echo "unknown target $t" >&2; exit 2 ;;
  esac
  echo "== $t: ${budget} s"
  cargo +nightly fuzz run --features libfuzzer "$t" "fuzz/corpus/$t" -- \
    -max_total_time="$budget" -max_len=131072 -rss_limit_mb=2048 -timeout=10 -print_final_stats=1 \
    2>&1 | tee "fuzz/$t.log" | grep -E '^(#[0-9]+ +DONE|stat::|==|SUMMARY|Done)' || true
done
