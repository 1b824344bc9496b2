#!/usr/bin/env bash
# A large model file: 20,000 components of the benchmark's invented assembly (benchmarks/bench_load.py: groups,
# mirrors, patterns, cut-outs, all four mass sources). The loader parses its [[part]] tables a batch at a time and the
# report streams the components to the terminal and the JSON file, so memory stays near the model's own size
# (docs/engine.md: 10^5 parts within 250 MiB; `make bench` measures it).
set -euo pipefail
$PY -c "import sys; sys.path.insert(0, 'benchmarks'); from bench_load import generate; \
open('$OUT/large_model.toml', 'w', encoding='utf-8').write(generate(20000))"
$MM report "$OUT/large_model.toml" --json "$OUT/large_model_report.json" | sed -n '1,8p'
echo "..."
$PY -c "import json; r = json.load(open('$OUT/large_model_report.json', encoding='utf-8')); \
print(f\"{len(r['components'])} components in $OUT/large_model_report.json, {r['mass_kg']:.1f} kg in all\")"
