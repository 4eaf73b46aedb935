#!/usr/bin/env bash
# How lingrav's grid evaluation compares, printed as ratios:
#  (1) the instruction tape against a hand-written Rust closure for the same formula (aim:
#      within 2x), from benches/grid_residual.rs;
#  (2) the full residual computation (sampling, fourth-order second differences, box hbar,
#      max norm on 64^3 interior points, 5 slabs in t) against benches/grid_numpy.py, the same
#      computation in NumPy on the same grid, one core each (lingrav with RAYON_NUM_THREADS=1;
#      aim: 10x), for an oblique wave with no separable coordinate and for one whose phase
#      does not depend on y; plus lingrav on every core. lingrav's time is with sample
#      buffers kept between repetitions (the steady state; NumPy's allocator, too, keeps much
#      of its memory between its repetitions); the time with fresh buffers (allocation and
#      first touch of every page included) is printed beside it. lingrav samples the two
#      terms every component is a combination of (cos and sin of the phase) rather than the
#      six components; NumPy doing the same is printed too.
# The residuals of both sides are printed so that they can be seen to agree.
#
# Usage: benches/grid_ratio.sh      Needs cargo, python3 and NumPy (python3 -m pip install numpy).
set -euo pipefail
cd "$(dirname "$0")/.."

cargo bench --bench grid_residual --no-run >/dev/null 2>&1 || cargo bench --bench grid_residual --no-run
one=$(RAYON_NUM_THREADS=1 cargo bench --bench grid_residual 2>/dev/null)
all=$(cargo bench --bench grid_residual 2>/dev/null)
py=$(python3 benches/grid_numpy.py)

get() { awk -v k="$2" '$1 == k { print $2 }' <<<"$1"; }

echo "(1) tape against a hand-written closure ($(get "$one" tape_instructions) instructions)"
printf '    tape %s ns/point, closure %s ns/point: tape/closure = %s (aim <= 2)\n' \
    "$(get "$one" tape_ns_per_point)" "$(get "$one" closure_ns_per_point)" "$(get "$one" tape_over_closure)"
echo "(2) box hbar residual, 64^3 interior points, order 4 ($(get "$py" numpy))"
for case in oblique xz; do
    l1=$(get "$one" "${case}_residual_seconds")
    la=$(get "$all" "${case}_residual_seconds")
    np=$(get "$py" "${case}_numpy_seconds")
    printf '    %-8s NumPy %7.4f s, lingrav 1 core %7.4f s (%s cores %7.4f s): NumPy/lingrav per core = %s (aim >= 10)\n' \
        "$case" "$np" "$l1" "$(get "$all" threads)" "$la" "$(python3 -c "print(f'{$np/$l1:.1f}')")"
    npp=$(get "$py" "${case}_numpy_parts_seconds")
    printf '             NumPy on the two terms of the components (as lingrav samples them) %7.4f s: NumPy/lingrav = %s\n' \
        "$npp" "$(python3 -c "print(f'{$npp/$l1:.1f}')")"
    lf=$(get "$one" "${case}_residual_fresh_seconds")
    printf '             fresh buffers: lingrav 1 core %7.4f s, NumPy/lingrav = %s\n' \
        "$lf" "$(python3 -c "print(f'{$np/$lf:.1f}')")"
    printf '             residuals: NumPy %s (on the two terms %s), lingrav %s\n' \
        "$(get "$py" "${case}_residual_max")" "$(get "$py" "${case}_residual_parts_max")" \
        "$(get "$one" "${case}_residual_max")"
done
