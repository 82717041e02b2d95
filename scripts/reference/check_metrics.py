#!/usr/bin/env python3
"""Reads the service's figures with an outside parser: prometheus_client (pinned in
requirements.txt), its OpenMetrics parser for `redress status --openmetrics` and its Prometheus
text parser for the `--metrics-file` file.

    python check_metrics.py FOLDER      # the samples tests/service_metrics.rs left there
    python check_metrics.py --self-test # shows the checks fail on broken expositions

FOLDER holds `NN-what.om` (OpenMetrics, in the order taken: start, swap, restart, loss,
recovered) and `metrics-file.prom`. Every file must parse; every family must be named
`redress_…`, in snake case, carry HELP and a type; counters, histograms and summaries must keep
their rules (the parser enforces the OpenMetrics ones: `_total` samples, cumulative buckets
ending at +Inf, count equal to the +Inf bucket); and no counter sample may decrease from one
`.om` file to the next (across a reload, a stream restart, a device loss and its recovery).

Source for the rules: the OpenMetrics 1.0 specification and the Prometheus text exposition
format 0.0.4, as prometheus_client 0.26.0 implements them.
"""

import math
import os
import re
import sys

from prometheus_client.openmetrics.parser import (
    text_string_to_metric_families as parse_openmetrics,
)
from prometheus_client.parser import text_string_to_metric_families as parse_prometheus

NAME = re.compile(r"^redress_[a-z0-9]+(_[a-z0-9]+)*$")
# The families the service must always publish, with their type.
REQUIRED = {
    "redress_uptime_seconds": "gauge",
    "redress_config_generation": "gauge",
    "redress_running_generation": "gauge",
    "redress_reloads": "counter",
    "redress_processed_frames": "counter",
    "redress_xrun_samples": "counter",
    "redress_guard_trips": "counter",
    "redress_swaps": "counter",
    "redress_device_losses": "counter",
    "redress_realtime_threads": "gauge",
    "redress_callback_duration_seconds": "histogram",
    "redress_input_peak_ratio": "gauge",
    "redress_output_peak_ratio": "gauge",
}
MONOTONE_TYPES = {"counter", "histogram", "summary"}


def check_families(families, where):
    """The conventions the parser does not enforce itself; returns the monotone samples."""
    problems, monotone, seen = [], {}, {}
    for family in families:
        seen[family.name] = family.type
        if not NAME.match(family.name):
            problems.append(f"{where}: family {family.name!r} is not redress_snake_case")
        if not family.documentation:
            problems.append(f"{where}: family {family.name} has no HELP")
        if family.type == "unknown":
            problems.append(f"{where}: family {family.name} has no TYPE")
        for sample in family.samples:
            if family.type == "counter" and not sample.name.endswith(("_total", "_created")):
                problems.append(f"{where}: counter sample {sample.name} lacks _total")
            if family.type in MONOTONE_TYPES and not sample.name.endswith("_created"):
                if family.type == "summary" and "quantile" in sample.labels:
                    continue
                key = (sample.name, tuple(sorted(sample.labels.items())))
                monotone[key] = sample.value
            if math.isnan(sample.value):
                problems.append(f"{where}: {sample.name} is NaN")
    for name, kind in REQUIRED.items():
        if seen.get(name) != kind:
            problems.append(f"{where}: {name} missing or not a {kind} (found {seen.get(name)})")
    return problems, monotone


def parse(text, openmetrics):
    return list(parse_openmetrics(text) if openmetrics else parse_prometheus(text))


def check_folder(folder):
    problems = []
    names = sorted(os.listdir(folder))
    om_files = [n for n in names if n.endswith(".om")]
    prom_files = [n for n in names if n.endswith(".prom")]
    if not om_files or not prom_files:
        return [f"{folder}: expected NN-what.om and metrics-file.prom samples, found {names}"]
    previous = None
    for name in om_files + prom_files:
        with open(os.path.join(folder, name), encoding="utf-8") as f:
            text = f.read()
        try:
            families = parse(text, openmetrics=name.endswith(".om"))
        except ValueError as e:
            problems.append(f"{name}: does not parse: {e}")
            continue
        found, monotone = check_families(families, name)
        problems += found
        if name.endswith(".om"):
            if previous is not None:
                before_name, before = previous
                for key, old in before.items():
                    new = monotone.get(key)
                    if new is None:
                        problems.append(f"{name}: {key} vanished after {before_name}")
                    elif new < old:
                        problems.append(f"{name}: {key} went down from {old} ({before_name})")
            previous = (name, monotone)
    print(f"{len(om_files)} OpenMetrics and {len(prom_files)} Prometheus text samples read")
    return problems


GOOD = """# TYPE redress_swaps counter
# HELP redress_swaps Swaps.
redress_swaps_total{stage="started"} 2
# EOF
"""


def self_test():
    """Each broken exposition must be caught, or the checks above prove nothing."""
    failures = []
    ok = parse(GOOD, openmetrics=True)
    if check_families(ok, "good")[1] != {("redress_swaps_total", (("stage", "started"),)): 2.0}:
        failures.append("a good exposition was not read as such")
    broken = {
        "no EOF": GOOD.replace("# EOF\n", ""),
        "buckets not cumulative": "# TYPE redress_t_seconds histogram\n# HELP redress_t_seconds t.\n"
        'redress_t_seconds_bucket{le="1.0"} 5\nredress_t_seconds_bucket{le="+Inf"} 3\n'
        "redress_t_seconds_count 3\nredress_t_seconds_sum 1\n# EOF\n",
        "counter without _total": GOOD.replace("redress_swaps_total", "redress_swaps"),
    }
    for what, text in broken.items():
        try:
            parse(text, openmetrics=True)
        except ValueError:
            continue
        failures.append(f"the parser accepted an exposition with {what}")
    no_help = parse(GOOD.replace("# HELP redress_swaps Swaps.\n", ""), openmetrics=True)
    if not any("no HELP" in p for p in check_families(no_help, "x")[0]):
        failures.append("a family without HELP went unnoticed")
    for f in failures:
        print(f"self-test: {f}", file=sys.stderr)
    print("self-test:", "failed" if failures else "broken expositions are refused")
    return not failures


def main():
    if sys.argv[1:] == ["--self-test"]:
        sys.exit(0 if self_test() else 1)
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    problems = check_folder(sys.argv[1])
    for p in problems:
        print(p, file=sys.stderr)
    if problems:
        sys.exit(1)
    print("figures: every sample parses, follows the conventions, and no counter went down")


if __name__ == "__main__":
    main()
