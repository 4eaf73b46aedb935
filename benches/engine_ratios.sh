#!/usr/bin/env bash
# How `lingrav check` compares with the same checks done in SymEngine (a compiled
# general-purpose CAS, benches/peers/symengine_check.py), on every worked file and on the
# scaling series of benches/peers/scaling.py (N oblique plane waves, exact l-pole fields,
# pure gauge from polynomial gauge vectors of growing degree, pure gauge about Schwarzschild
# from gauge vectors of growing length). Issue 10, item 5.
#
# lingrav: one run of the whole process under /usr/bin/time -v gives the peak RSS, the status
# and the JSON verdicts; then the median of 3 more whole-process runs, timed by the shell
# (EPOCHREALTIME, no wrapper process), and the in-process time of the same check
# (benches/check_files.rs, process start excluded, as for the peer). The ratio compares
# in-process times, both sides timed alike: one untimed warm-up check, then the median of
# repeated checks in the same process, at least 3 for lingrav and at least one in each of 3
# processes for SymEngine (the median of the 3 medians), repeated until they add up to
# MIN_SECONDS (0.2 s; at most 1000 repeats), so that a check of a tenth of a millisecond is
# not timed by three samples. A run that reaches a limit is not repeated. SymEngine: time
# in-process from reading the file to the last verdict (interpreter start and `import
# symengine` excluded), and the process's peak RSS (getrusage maxrss, interpreter and
# library included). The script compares every
# component's verdict with lingrav's and says MISMATCH loudly (exit 1) when two decided
# verdicts differ.
#
# Limits, so that nothing hangs: lingrav gets --time-limit and --max-memory (its own
# "undecided: too slow/too large", shown as "timeout"/"out of memory") and a kill -9
# watchdog 30 s later; SymEngine a wall-clock timeout and an address-space limit (RLIMIT_AS).
#
# Usage: benches/engine_ratios.sh [--timeout S] [--max-memory MB] [--only worked|scaling]
#                                 [--keep DIR]
#   --timeout S       per run, both tools (default 120)
#   --max-memory MB   per run, both tools (default 4096)
#   --only worked     only the worked files; --only scaling: only the scaling series
#   --keep DIR        write the scaling files and lingrav's JSON into DIR and keep them
# Needs cargo, python3 (3.11+) and SymEngine; this script installs nothing:
#   python3 -m pip install symengine
set -euo pipefail
cd "$(dirname "$0")/.."

timeout_s=120
max_memory=4096
min_seconds=0.2
only=
keep=
while (($#)); do
    case "$1" in
        --timeout) timeout_s=$2; shift 2 ;;
        --max-memory) max_memory=$2; shift 2 ;;
        --only) only=$2; shift 2 ;;
        --keep) keep=$2; shift 2 ;;
        -h | --help) sed -n '2,34p' "$0" | sed 's/^# \{0,1\}//'; exit 0 ;;
        *) echo "engine_ratios.sh: unknown argument $1" >&2; exit 2 ;;
    esac
done

python3 -c 'import symengine, tomllib' 2>/dev/null || {
    echo "engine_ratios.sh: needs Python 3.11+ with SymEngine (python3 -m pip install symengine)" >&2
    exit 2
}

cargo build --release --quiet
bin=${CARGO_TARGET_DIR:-target}/release/lingrav
timer=$(cargo bench --bench check_files --no-run --message-format=json 2>/dev/null | python3 -c '
import json, sys
for line in sys.stdin:
    m = json.loads(line)
    if m.get("reason") == "compiler-artifact" and m["target"]["name"] == "check_files" and m.get("executable"):
        print(m["executable"])')

if [[ -n $keep ]]; then
    work=$keep
    mkdir -p "$work"
else
    work=$(mktemp -d)
    trap 'rm -rf "$work"' EXIT
fi
mkdir -p "$work/json"

files=()
if [[ $only != scaling ]]; then files+=(worked/*.toml); fi
if [[ $only != worked ]]; then
    mapfile -t scaling < <(python3 benches/peers/scaling.py "$work/scaling")
    files+=("${scaling[@]}")
fi

guard=$((timeout_s + 30))
limits=(--time-limit "$((timeout_s * 1000))" --max-memory "$max_memory")

# Runs "$@" with stdout to $out; a watchdog kills it (by its pid) after $guard seconds, so a
# timed run needs no wrapper process. Sets rc and secs (wall clock of the command).
guarded() {
    local out=$1
    shift
    local start=$EPOCHREALTIME
    "$@" >"$out" 2>"$work/stderr" &
    local pid=$!
    (
        trap 'kill "$sleeper" 2>/dev/null; exit 0' TERM
        sleep "$guard" &
        sleeper=$!
        wait "$sleeper"
        kill -9 "$pid" 2>/dev/null
    ) &
    local watchdog=$!
    rc=0
    wait "$pid" || rc=$?
    secs=$(awk -v a="$start" -v b="$EPOCHREALTIME" 'BEGIN { printf "%.4f", b - a }')
    kill "$watchdog" 2>/dev/null || true
    wait "$watchdog" 2>/dev/null || true
}

declare -A lg_time lg_proc lg_peak lg_status
for f in "${files[@]}"; do
    stem=$(basename "$f" .toml)
    json="$work/json/$stem.json"
    guarded "$json" /usr/bin/time -v -o "$work/time.txt" \
        timeout -s KILL "$guard" "$bin" check --format json "${limits[@]}" "$f"
    peak_kb=$(awk -F': ' '/Maximum resident set size/ { print $2 }' "$work/time.txt" 2>/dev/null || true)
    lg_peak[$f]=$(awk -v k="${peak_kb:-0}" 'BEGIN { printf "%.0f", k / 1024 }')
    status=ok
    if ((rc == 137)) || grep -q 'Command terminated by signal 9' "$work/time.txt"; then
        status=timeout
    elif grep -q 'undecided: too slow' "$json"; then
        status=timeout
    elif grep -q 'memory use passed the cap' "$json"; then
        status="out of memory"
    elif grep -q 'undecided: too large' "$json"; then
        status="too large"
    elif ((rc == 2)) || ((rc > 3)); then
        status="error (exit $rc)"
    fi
    lg_status[$f]=$status
    if [[ $status != ok ]]; then
        lg_time[$f]=$secs
    else
        times=()
        for _ in 1 2 3; do
            guarded /dev/null "$bin" check "${limits[@]}" "$f"
            times+=("$secs")
        done
        lg_proc[$f]=$(printf '%s\n' "${times[@]}" | sort -g | sed -n 2p)
        lg_time[$f]=$(REPEAT=3 MIN_SECONDS=$min_seconds timeout -s KILL "$guard" "$timer" "$f" | awk '{ print $2 }')
    fi
    printf 'lingrav check %s: %s s in-process, %s s whole process, peak %s MB, %s\n' "$f" \
        "${lg_time[$f]}" "${lg_proc[$f]:--}" "${lg_peak[$f]}" "$status"
done

echo
summary="$work/symengine_summary.tsv"
peer_rc=0
python3 benches/peers/symengine_check.py --repeat 3 --min-seconds "$min_seconds" \
    --timeout "$timeout_s" \
    --max-memory "$max_memory" --lingrav-json "$work/json" --summary "$summary" \
    "${files[@]}" || peer_rc=$?

echo
echo "$(date +%F), $(nproc) cores, $(python3 -c 'import symengine; print("SymEngine", symengine.__version__)'), limits ${timeout_s} s and ${max_memory} MiB per run"
printf '| %s | %s | %s | %s | %s | %s | %s | %s |\n' case "lingrav s (in-process)" \
    "lingrav s (process)" "lingrav peak MB" "SymEngine s" "SymEngine peak MB" \
    "SymEngine/lingrav" "verdicts agree"
echo '| --- | ---: | ---: | ---: | ---: | ---: | ---: | --- |'
for f in "${files[@]}"; do
    IFS=$'\t' read -r _ se_secs se_peak agrees < <(awk -F'\t' -v f="$f" '$1 == f' "$summary")
    status=${lg_status[$f]}
    if [[ $status == ok ]]; then
        shown=$(awk -v s="${lg_time[$f]}" 'BEGIN { printf "%.4f", s }')
    else
        shown=$(awk -v s="${lg_time[$f]}" -v st="$status" 'BEGIN { printf "%s after %.1f s", st, s }')
    fi
    ratio=$(awk -v a="$se_secs" -v b="${lg_time[$f]}" -v st="$status" 'BEGIN {
        if (st != "ok" || a !~ /^[0-9.]+$/) printf "-"
        else printf "%.2f", a / b }')
    proc=$(awk -v s="${lg_proc[$f]:-}" 'BEGIN { if (s == "") printf "-"; else printf "%.3f", s }')
    printf '| %s | %s | %s | %s | %s | %s | %s | %s |\n' "$(basename "$f" .toml)" "$shown" \
        "$proc" "${lg_peak[$f]}" "${se_secs:--}" "${se_peak:--}" "$ratio" "${agrees:--}"
done
exit "$peer_rc"
