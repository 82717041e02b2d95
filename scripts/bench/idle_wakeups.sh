#!/usr/bin/env bash
# Wake-ups per second of an idle `redress run --simulate`, thread by thread: the voluntary
# context switches each thread made (from /proc/PID/task/*/status) over a window, divided by its
# length. The audio thread (the simulated link's, `redress-paced-l…`) wakes once per block by
# design and is listed apart; the figure that counts is the sum over the others.
#
#   bash scripts/bench/idle_wakeups.sh [BINARY] [SECONDS] [CONFIG]
#
# BINARY defaults to target/debug/redress (built if missing), SECONDS to 30, CONFIG to
# configs/echo_line.toml. A measurement, not a test: it prints figures and asserts nothing.
set -euo pipefail
cd "$(dirname "$0")/../.."
binary=${1:-target/debug/redress}
seconds=${2:-30}
config=${3:-configs/echo_line.toml}
if [ ! -x "$binary" ]; then
    cargo build --bin redress
fi
dir=$(mktemp -d)
"$binary" run "$config" --simulate --socket "$dir/status.sock" -q 2>"$dir/log" &
pid=$!
cleanup() {
    kill -TERM "$pid" 2>/dev/null || true
    wait "$pid" 2>/dev/null || true
    rm -rf "$dir"
}
trap cleanup EXIT
# Let start-up (design, first status) settle before counting.
sleep 3
snapshot() {
    local task
    for task in /proc/"$pid"/task/*; do
        printf '%s\t%s\t%s\n' "$(basename "$task")" "$(cat "$task/comm")" \
            "$(awk '/^voluntary_ctxt_switches/ {print $2}' "$task/status")"
    done
}
before=$(snapshot)
sleep "$seconds"
after=$(snapshot)
echo "idle wake-ups per second over ${seconds} s ($binary, $config):"
join -t $'\t' <(sort <<<"$before") <(sort <<<"$after") |
    awk -F'\t' -v s="$seconds" '
        { rate = ($5 - $3) / s
          audio = ($2 ~ /^redress-paced/)
          printf "  %-18s %8.2f /s%s\n", $2, rate, audio ? "  (audio thread: not counted)" : ""
          if (!audio) total += rate }
        END { printf "  %-18s %8.2f /s\n", "non-audio, in all", total }'
