#!/usr/bin/env bash
# Long soundness-fuzz runs: loops over seeds with many pairs each and stops at the first seed
# that fails, printing it (the test itself prints every failing pair with its index).
#
#   bash benches/fuzz_soundness.sh                 # seeds 1, 2, 3, ... with 50000 pairs each
#   PAIRS=20000 FIRST=100 COUNT=10 bash benches/fuzz_soundness.sh
#
# A release-like build is used (the test profile at opt-level 1 is fine too: set PROFILE=dev).
# A crash (stack overflow) aborts the test binary; target/tmp/soundness_last_pair.txt then
# names the pair that was running.
set -uo pipefail
cd "$(dirname "$0")/.."

PAIRS="${PAIRS:-50000}"
FIRST="${FIRST:-1}"
COUNT="${COUNT:-1000000}"
PROFILE="${PROFILE:-release}"
profile_flag=()
[ "$PROFILE" = "release" ] && profile_flag=(--release)

cargo test "${profile_flag[@]}" --test cli --no-run >/dev/null 2>&1 || {
  echo "the soundness test does not build" >&2
  exit 2
}

for ((seed = FIRST; seed < FIRST + COUNT; seed++)); do
  start=$(date +%s)
  log=$(mktemp)
  LINGRAV_FUZZ_SEED="$seed" LINGRAV_FUZZ_PAIRS="$PAIRS" \
    cargo test "${profile_flag[@]}" --test cli soundness::fuzzed_pairs_are_never_misjudged \
    -- --nocapture >"$log" 2>&1
  status=$?
  took=$(($(date +%s) - start))
  if [ "$status" -ne 0 ]; then
    grep -E '^(FAIL|  rerun|  A =|  B =|  lingrav:|  mpmath:|failures by rule|  +[0-9]+  )' "$log" | head -60
    grep -E 'misjudged|could not confirm|aborts|panicked' "$log" | head -5
    echo "seed $seed FAILED after ${took}s ($PAIRS pairs); full log: $log"
    echo "rerun: LINGRAV_FUZZ_SEED=$seed LINGRAV_FUZZ_PAIRS=$PAIRS cargo test --test cli soundness:: -- --nocapture"
    exit 1
  fi
  summary=$(grep -E '^lingrav decided' "$log")
  echo "seed $seed ok (${took}s): $summary"
  rm -f "$log"
done
echo "all $COUNT seeds passed"
