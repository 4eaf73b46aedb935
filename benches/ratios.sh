#!/usr/bin/env bash
# How much faster `lingrav check` is than the same checks done in SymPy, per worked example:
# builds the release binary, times `lingrav check worked/<file>` (best of 5 runs, wall clock,
# process start included), runs benches/check_sympy.py on the same files (which also compares
# every component's verdict with lingrav's) and prints a table: case, lingrav ms, SymPy s,
# ratio. SymPy runs twice per case: "plain" simplifies every component, as the checks are
# usually written; "tuned" first evaluates each component numerically and proves the rest by
# polynomial reduction (see check_sympy.py), the fastest SymPy route we know for these files.
#
# Usage: benches/ratios.sh [--quick | --timeout S] [FILE...]   (files default to the three below)
#   --quick       stop a SymPy case after 60 s and report it as '>60 s'
# Needs cargo, python3 (3.11 or later, for tomllib) and SymPy; this script installs nothing:
#   python3 -m pip install sympy
set -euo pipefail

cd "$(dirname "$0")/.."

sympy_opts=()
files=()
while (($#)); do
    case "$1" in
        --quick) sympy_opts+=(--quick); shift ;;
        --timeout) sympy_opts+=(--timeout "$2"); shift 2 ;;
        -h | --help) sed -n '2,14p' "$0"; exit 0 ;;
        *) files+=("$1"); shift ;;
    esac
done
if ((${#files[@]} == 0)); then
    files=(worked/oblique_wave.toml worked/static_mass.toml worked/vibrating_rod.toml)
fi

python3 -c 'import sympy, tomllib' 2>/dev/null || {
    echo "ratios.sh: needs Python 3.11+ with SymPy (python3 -m pip install sympy)" >&2
    exit 2
}

cargo build --release --quiet
bin=./target/release/lingrav

now_ns() { date +%s%N; }

declare -A lingrav_ms
for f in "${files[@]}"; do
    best=
    for _ in 1 2 3 4 5; do
        start=$(now_ns)
        rc=0
        "$bin" check "$f" >/dev/null || rc=$?
        end=$(now_ns)
        if ((rc == 2)); then
            echo "ratios.sh: lingrav could not read $f" >&2
            exit 2
        fi
        ns=$((end - start))
        if [[ -z $best ]] || ((ns < best)); then best=$ns; fi
    done
    lingrav_ms[$f]=$(awk -v ns="$best" 'BEGIN { printf "%.1f", ns / 1e6 }')
    echo "lingrav check $f: best of 5 ${lingrav_ms[$f]} ms (exit $rc)"
done

summary=$(mktemp)
trap 'rm -f "$summary"' EXIT
echo
sympy_rc=0
python3 benches/check_sympy.py --mode both "${sympy_opts[@]}" --lingrav "$bin" \
    --summary "$summary" "${files[@]}" || sympy_rc=$?

echo
printf '%-22s %11s %13s %8s %13s %8s  %s\n' case "lingrav ms" "sympy plain s" ratio \
    "sympy tuned s" ratio "agree (plain/tuned)"
ratio() {
    awk -v s="$1" -v ms="$2" 'BEGIN {
        if (s == "") printf "-"
        else if (substr(s, 1, 1) == ">") printf ">%.0f", substr(s, 2) * 1000 / ms
        else printf "%.0f", s * 1000 / ms }'
}
for f in "${files[@]}"; do
    name=$(basename "$f")
    ms=${lingrav_ms[$f]}
    plain=$(awk -F'\t' -v n="$name" '$1 == n && $2 == "plain" { print $3 }' "$summary")
    tuned=$(awk -F'\t' -v n="$name" '$1 == n && $2 == "tuned" { print $3 }' "$summary")
    agree=$(awk -F'\t' -v n="$name" '$1 == n { printf "%s%s", sep, $5; sep = "/" }' "$summary")
    printf '%-22s %11s %13s %8s %13s %8s  %s\n' "$name" "$ms" "${plain:--}" \
        "$(ratio "$plain" "$ms")" "${tuned:--}" "$(ratio "$tuned" "$ms")" "$agree"
done
exit "$sympy_rc"
