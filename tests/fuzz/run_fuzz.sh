#!/bin/sh
# Runs every libFuzzer target of a COVEY_FUZZ build for a bounded time each:
#   tests/fuzz/run_fuzz.sh BUILD_DIR SECONDS_PER_TARGET
# Each target starts from its seed corpus (tests/fuzz/corpus/<target>/) and first replays the
# inputs of past bugs (tests/fuzz/regressions/<target>/, if any); new corpus units go to a
# scratch folder, not into the repository. One summary line per target; on a crash, a leak, a
# timeout or a sanitizer report the log tail and the saved input are printed and the exit status
# is non-zero. FUZZ_SEED fixes libFuzzer's seed (the smoke run of `make test` does, so that CI
# explores the same inputs every time; `make fuzz` leaves it random).
set -u
build=${1:?usage: run_fuzz.sh BUILD_DIR SECONDS}
seconds=${2:?usage: run_fuzz.sh BUILD_DIR SECONDS}
here=$(cd "$(dirname "$0")" && pwd)
scratch=$(mktemp -d "${TMPDIR:-/tmp}/covey-fuzz.XXXXXX")
trap 'rm -rf "$scratch"' EXIT
status=0
for target in csv scores_tsv draws_csv scores_h5 chain_h5 draws_h5 sampler_h5; do
  exe="$build/tests/fuzz/fuzz_$target"
  if [ ! -x "$exe" ]; then
    echo "fuzz_$target: not built (configure with clang and -DCOVEY_FUZZ=ON)" >&2
    status=1
    continue
  fi
  work="$scratch/$target"
  mkdir -p "$work/corpus" "$work/artifacts"
  log="$work/log"
  if [ -d "$here/regressions/$target" ] && [ -n "$(ls -A "$here/regressions/$target")" ]; then
    if ! COVEY_MEMORY_LIMIT=1G ASAN_OPTIONS=detect_leaks=1 "$exe" -runs=1 "$here/regressions/$target"/* >"$log" 2>&1; then
      echo "fuzz_$target: a regression input fails again:" >&2
      tail -n 40 "$log" >&2
      status=1
      continue
    fi
  fi
  # covey's memory checks (COVEY_MEMORY_LIMIT) stop below libFuzzer's RSS limit, so a file that
  # declares a huge dataset is a clear ResourceError, not an out-of-memory report.
  COVEY_MEMORY_LIMIT=1G ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=print_stacktrace=1 TMPDIR="$work" \
    "$exe" -max_total_time="$seconds" ${FUZZ_SEED:+-seed="$FUZZ_SEED"} -timeout=20 -rss_limit_mb=2560 -max_len=131072 \
    -print_final_stats=1 -close_fd_mask=1 -artifact_prefix="$work/artifacts/" \
    "$work/corpus" "$here/corpus/$target" >"$log" 2>&1
  rc=$?
  execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -n 1)
  cov=$(grep -o 'cov: [0-9]*' "$log" | tail -n 1)
  if [ "$rc" -eq 0 ]; then
    echo "fuzz_$target: ok, ${execs:-?} runs in ${seconds}s, $cov"
  else
    echo "fuzz_$target: FAILED (exit $rc) after ${execs:-?} runs; log tail:" >&2
    tail -n 60 "$log" >&2
    for a in "$work"/artifacts/*; do
      [ -e "$a" ] || continue
      keep="${TMPDIR:-/tmp}/covey-fuzz-$target-$(basename "$a")"
      cp "$a" "$keep"
      echo "fuzz_$target: input saved as $keep" >&2
    done
    status=1
  fi
done
exit $status
