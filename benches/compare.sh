#!/usr/bin/env bash
# Side-by-side performance comparison, all in one run (absolute times drift on shared
# machines; the ratios are what the targets are stated in).
#
#   benches/compare.sh [PARTS] [BIG_POINTS]      (defaults: 2000 and 60000)
#
# Prints, with the targets of the performance issue:
#   1. full `lcgate check` of PARTS 300-point 2-ports vs scikit-rf doing only
#      read + Y + L/Q/SRF/peak Q on the same files (target ≥ 20×);
#   2. `lcgate inspect` MB/s on one large 4-port (target ≥ 300 MB/s) and the reader
#      alone vs the best bare float parsing of the same file (target ≥ 30 %);
#   3. peak memory of a PARTS run vs a PARTS/10 run (target ≤ 1.5×), and of the large
#      file vs its in-memory matrix size (target < 3×);
#   4. warm cached rerun vs cold run (target ≥ 50×).
# lcgate's times are the median of three runs (five for the warm rerun, which is short
# enough for one scheduling hiccup to count), each started after a `sync`: one run
# right after another is otherwise disturbed by the previous one's write-back, which a
# nightly gate does not see. They are taken with bash's $EPOCHREALTIME around the
# command alone (no `date` process in the interval, which cost about 2 ms: a fifth of
# the warm rerun). scikit-rf's time is the median of three runs of its loop, which on
# this VM varies by ±15 % from one run to the next.
set -euo pipefail
# $EPOCHREALTIME prints the locale's decimal mark; the arithmetic below wants a point
export LC_ALL=C
cd "$(dirname "$0")/.."
parts=${1:-2000}
big=${2:-60000}
small=$((parts / 10))
work=${LCGATE_BENCH_DIR:-target/perf}
py=${LCGATE_PYTHON:-$PWD/.venv/bin/python}
[ -x "$py" ] || { echo "no Python venv with scikit-rf: run scripts/test once (or set LCGATE_PYTHON)"; exit 2; }

cargo build --release --quiet --bin lcgate --example make-perf-data --example float-ceiling
bin=target/release/lcgate
rm -rf "$work" && mkdir -p "$work"
target/release/examples/make-perf-data "$work/full" "$parts" "$big"
target/release/examples/make-perf-data "$work/small" "$small"
# A library is normally written long before the gate runs. Files modified within the
# run memo's margin of its start are not trusted by their times (src/baseline/memo.rs),
# so give the freshly generated ones a moment to age, as any real library has.
sleep 1

now() { echo "$EPOCHREALTIME"; }
peak_kb() { awk '/Maximum resident set size/ {print $6}' "$1"; }
ratio() { python3 -c "print(f'{$1/$2:.1f}')"; }
median() { python3 -c "import statistics, sys; print(statistics.median(map(float, sys.argv[1:])))" "$@"; }
# seconds one run of the command takes
timed() {
    local t0 t1
    # start from written-back disks: the previous run's cache entries and reports
    # would otherwise be flushed while this one runs
    sync
    t0=$EPOCHREALTIME
    "$@" >/dev/null 2>&1 || true
    t1=$EPOCHREALTIME
    python3 -c "print($t1-$t0)"
}

# 1. full check vs scikit-rf (the first run also measures the peak memory)
/usr/bin/time -v "$bin" check "$work/full/lib" --rules "$work/full/rules" --no-cache --quiet \
  --report "$work/out-full" >/dev/null 2>"$work/time-full.txt" || true
runs=()
for _ in 1 2 3; do
    runs+=("$(timed "$bin" check "$work/full/lib" --rules "$work/full/rules" --no-cache --quiet \
        --report "$work/out-full")")
done
lc=$(median "${runs[@]}")
sks=()
for _ in 1 2 3; do
    sks+=("$("$py" benches/skrf_equiv.py "$work/full/lib" | sed 's/.*seconds=//')")
done
sk=$(median "${sks[@]}")
echo "check of $parts parts: lcgate ${lc}s (runs: ${runs[*]}), scikit-rf (read+Y+L/Q/SRF/peak Q only) ${sk}s (runs: ${sks[*]}) → $(ratio "$sk" "$lc")× (target ≥ 20×)"

# 2. large file throughput
size=$(stat -c %s "$work/full/big.s4p")
/usr/bin/time -v "$bin" inspect "$work/full/big.s4p" --json >/dev/null 2>"$work/time-big.txt"
big_runs=()
for _ in 1 2 3; do
    big_runs+=("$(timed "$bin" inspect "$work/full/big.s4p" --json)")
done
tb=$(median "${big_runs[@]}")
mbs=$(python3 -c "print(f'{$size/1e6/$tb:.0f}')")
echo "inspect of a $((size / 1000000)) MB 4-port: ${mbs} MB/s end to end (runs: ${big_runs[*]} s; target ≥ 300 MB/s)"
target/release/examples/float-ceiling "$work/full/big.s4p"

# 3. memory
pf=$(peak_kb "$work/time-full.txt")
/usr/bin/time -v "$bin" check "$work/small/lib" --rules "$work/small/rules" --no-cache --quiet \
  --report "$work/out-small" >/dev/null 2>"$work/time-small.txt" || true
ps=$(peak_kb "$work/time-small.txt")
echo "peak memory: $parts parts ${pf} kB, $small parts ${ps} kB → $(ratio "$pf" "$ps")× (target ≤ 1.5×)"
pb=$(peak_kb "$work/time-big.txt")
matrix_kb=$((big * 16 * 16 / 1024))
echo "peak memory of the large file: ${pb} kB vs S matrix ${matrix_kb} kB → $(ratio "$pb" "$matrix_kb")× (target < 3×)"

# 4. warm cache: the same command twice; the second finds nothing changed (the run memo
# repeats the verdict; with one part changed only that part would be judged again)
cached() { "$bin" check "$work/full/lib" --rules "$work/full/rules" --cache "$work/cache" --quiet; }
colds=()
for _ in 1 2 3; do
    rm -rf "$work/cache"
    colds+=("$(timed cached)")
done
warms=()
for _ in 1 2 3 4 5; do
    warms+=("$(timed cached)")
done
cold=$(median "${colds[@]}")
warm=$(median "${warms[@]}")
echo "cold run ${cold}s (runs: ${colds[*]}), warm cached rerun ${warm}s (runs: ${warms[*]}) → $(ratio "$cold" "$warm")× (target ≥ 50×)"

# not a target, for the record: one part rewritten, so the memo misses and the per-part
# cache serves the other parts
one=$(find "$work/full/lib" -name '*.s2p' -print -quit)
printf '! touched by benches/compare.sh\n' >> "$one"
t0=$(now)
"$bin" check "$work/full/lib" --rules "$work/full/rules" --cache "$work/cache" --quiet >/dev/null || true
t1=$(now)
echo "one part changed: $(python3 -c "print(f'{$t1-$t0:.3f}')")s (per-part cache for the other $((parts - 1)))"
