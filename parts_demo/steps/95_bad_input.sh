#!/usr/bin/env bash
# Bad input never costs a file: a mistake is one line naming the file, the item and the field (exit 2), and an
# output that names an input is refused before anything is read or written. Exit codes: 0 ok, 1 a check failed,
# 2 bad input, 3 internal error (a bug: its traceback goes to a file in the temp folder).
set -euo pipefail
expect() {  # run a command that must fail with the given exit code, showing its one line
  local want=$1; shift
  set +e; "$@"; local got=$?; set -e
  if [ "$got" -ne "$want" ]; then echo "expected exit $want, got $got: $*" >&2; exit 1; fi
  echo "  (exit $got, as expected)"
}
sed '0,/^size = \[[0-9.]*/s//size = [1e-9/' "$CAR" > "$OUT/bl3_with_a_slip.toml"   # 1e-9 mm: a typing slip
expect 2 $MM report "$OUT/bl3_with_a_slip.toml"
cp "$CAR" "$OUT/bl3_copy.toml"
expect 2 $MM report "$OUT/bl3_copy.toml" --json "$OUT/bl3_copy.toml"
cmp -s "$CAR" "$OUT/bl3_copy.toml" && echo "  the input is unchanged"
expect 2 $MM report "$CAR" --set "fuel_mass=3 m"
