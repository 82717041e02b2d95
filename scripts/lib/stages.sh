# Shared by scripts/test.sh (sourced, not run).
#
# stage NAME CMD...   runs CMD under a heading, times it, and records the time; when the script
#                     exits (pass or fail) the times of every stage run so far are printed, so
#                     the slow stage of a long run is plain.
STAGE_TIMES=()
STAGE_STARTED=$(date +%s)

stage() {
    local name=$1 start status
    shift
    echo "== $name ==" >&2
    start=$(date +%s)
    status=0
    "$@" || status=$?
    STAGE_TIMES+=("$(printf '%6d s  %s%s' "$(($(date +%s) - start))" "$name" \
        "$([ "$status" -eq 0 ] || echo "  (FAILED, exit $status)")")")
    return "$status"
}

print_stage_times() {
    local line
    [ "${#STAGE_TIMES[@]}" -gt 0 ] || return 0
    echo "== time per stage ==" >&2
    for line in "${STAGE_TIMES[@]}"; do
        echo "$line" >&2
    done
    printf '%6d s  all\n' "$(($(date +%s) - STAGE_STARTED))" >&2
    # Which processor the times (and the fixtures' last bits) come from.
    echo "   on: $(grep -m1 'model name' /proc/cpuinfo 2>/dev/null | cut -d: -f2- | sed 's/^ *//')," \
        "$(nproc 2>/dev/null) cores, OpenBLAS core type ${OPENBLAS_CORETYPE:-chosen by itself}" >&2
}

trap print_stage_times EXIT
