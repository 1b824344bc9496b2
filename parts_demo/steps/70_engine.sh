#!/usr/bin/env bash
# The mass-properties engine: 10,000 random primitives aggregated by the compiled and the numpy kernels (they must
# agree to 1e-12), rows `measure value target ok/MISSED` against a numpy floor measured in the same run
# (exports/demo/engine.txt). The full benchmarks (10^6 primitives, a 100,000-part file) run with `make bench`.
set -euo pipefail
$PY benchmarks/bench_aggregate.py --quick | tee "$OUT/engine.txt"
