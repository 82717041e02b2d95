#!/usr/bin/env bash
# Coverage-guided fuzzing of the config parser and of the whole pipeline (libFuzzer through
# cargo-fuzz; see fuzz/README.md).
#
#   bash scripts/fuzz.sh [SECONDS] [TIMEOUT]
#
# Builds both targets and runs each for SECONDS (default 60), starting from the committed corpus
# in fuzz/corpus/TARGET; new inputs go to fuzz/corpus-raw/TARGET (not committed), and any input
# that panics or runs longer than TIMEOUT seconds (default 1) is written to fuzz/artifacts/TARGET
# and fails the run. With SECONDS = 0 each target only runs the committed corpus once.
#
# The toolchain is the stable one: cargo-fuzz passes nightly-only flags to rustc (sanitizer
# coverage instrumentation), which stable rustc accepts when RUSTC_BOOTSTRAP=1 is set. No
# sanitizer is used (-s none): the code is safe Rust, and libFuzzer's coverage and panic
# detection are what the campaign needs.
set -euo pipefail
cd "$(dirname "$0")/.."
seconds=${1:-60}
timeout=${2:-1}
# shellcheck source=lib/ensure_tools.sh
source scripts/lib/ensure_tools.sh
ensure_packages build-essential
ensure_cargo
command -v cargo-fuzz >/dev/null 2>&1 || cargo install cargo-fuzz --locked
export RUSTC_BOOTSTRAP=1
cd fuzz
cargo fuzz build -O -a -s none
bin=target/x86_64-unknown-linux-gnu/release
for target in config_parse config_pipeline; do
    mkdir -p "corpus-raw/$target" "artifacts/$target"
    if [ "$seconds" = 0 ]; then
        "$bin/$target" -runs=0 -timeout="$timeout" -artifact_prefix="artifacts/$target/" \
            "corpus/$target"
    else
        "$bin/$target" -dict=config.dict -timeout="$timeout" -max_total_time="$seconds" \
            -artifact_prefix="artifacts/$target/" -print_final_stats=1 \
            "corpus-raw/$target" "corpus/$target"
    fi
    echo "== $target: done, no panic and no input over ${timeout} s ==" >&2
done
