#!/bin/sh
# Runs one libFuzzer target for a bounded time from its committed seed corpus; used by meson test
# (suite fuzz). Usage: run_fuzz.sh TARGET SEED_DIR WORK_DIR
# MODLENS_FUZZ_SECONDS sets the time (default 60). New inputs go to WORK_DIR, never to the seeds.
# Exits with the fuzzer's status (non-zero on any crash, leak, sanitizer report or timeout) and
# prints its final line: executions ("#N DONE"), coverage ("cov: edges ft: features").
set -u
target=$1 seeds=$2 work=$3
secs=${MODLENS_FUZZ_SECONDS:-60}
mkdir -p "$work" "$work.crashes"
log="$work.log"
"$target" -max_total_time="$secs" -timeout=20 -rss_limit_mb=2048 -max_len=65536 -close_fd_mask=3 \
    -print_final_stats=1 -artifact_prefix="$work.crashes/" "$work" "$seeds" >"$log" 2>&1
rc=$?
grep -E 'DONE|ERROR|SUMMARY|Test unit written' "$log" | tail -n 5
grep -E '^stat::number_of_executed_units|^stat::peak_rss' "$log"
[ "$rc" -eq 0 ] && exit 0
tail -n 40 "$log"
exit 1 # whatever the fuzzer's status (a crash can end with 77, which meson would count as skipped)
