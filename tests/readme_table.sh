#!/usr/bin/env bash
# The README's dataset table is exactly what `chaosweep schema` prints (so it cannot drift).
# Usage: readme_table.sh CHAOSWEEP README
set -euo pipefail
"$1" schema | /usr/bin/python3 -c '
import sys
table = sys.stdin.read().strip()
readme = open(sys.argv[1]).read()
if len(table.splitlines()) < 10 or table not in readme:
    print("FAIL: README dataset table differs from `chaosweep schema`; paste its output")
    sys.exit(1)
print("README dataset table matches the schema")
' "$2"
