#!/usr/bin/env bash
# docs/archive.md's dataset and dimension tables are exactly what `chaosweep schema` prints (so
# they cannot drift). Usage: archive_tables.sh CHAOSWEEP DOC
set -euo pipefail
"$1" schema | /usr/bin/python3 -c '
import sys
table = sys.stdin.read().strip()
doc = open(sys.argv[1]).read()
if len(table.splitlines()) < 10 or table not in doc:
    print(f"FAIL: the tables in {sys.argv[1]} differ from `chaosweep schema`; paste its output")
    sys.exit(1)
print(f"{sys.argv[1]}: the archive tables match the schema")
' "$2"
