"""The plotting package reads only datasets the table of results declares, with the dimensions
the table gives them.

Usage: check_plot_datasets.py CHAOSWEEP PLOTS_DIR

Every "group/name" string in the package's Python files must be a dataset of the table
(`chaosweep schema --json`) or the coordinate of one of the dimensions its group's datasets
use; where a line reads a dataset and its comment lists dimensions ("# case, time, observable"),
they must be the table's dimensions of that dataset, in order.
"""
import json
import pathlib
import re
import subprocess
import sys

chaosweep, plots = sys.argv[1], pathlib.Path(sys.argv[2])
table = json.loads(subprocess.run([chaosweep, "schema", "--json"], check=True,
                                  capture_output=True, text=True).stdout)
GROUPS = {"case", "member", "ensemble", "response", "twins", "histogram", "snapshot",
          "trajectory"}
dims_of = {}
for q in table["quantities"]:
    if q["path"]:
        dims_of[q["path"].lstrip("/")] = q["dims"]
coordinates = set()
for path, dims in dims_of.items():
    group = path.split("/")[0] if "/" in path else ""
    for dim in dims:
        coordinates.add(f"{group}/{dim}" if group else dim)

read = re.compile(r'["\'](' + "|".join(sorted(GROUPS)) + r')/([a-z_0-9]+)["\']')
comment = re.compile(r"#\s*([a-z_]+(?:,\s*[a-z_]+)*)\s*$")
failures, seen = [], 0
for source in sorted(plots.glob("*.py")):
    for number, line in enumerate(source.read_text().splitlines(), 1):
        for match in read.finditer(line):
            path = f"{match.group(1)}/{match.group(2)}"
            seen += 1
            where = f"{source.name}:{number}"
            if path not in dims_of and path not in coordinates:
                failures.append(f"{where}: {path} is not in the table of results")
                continue
            note = comment.search(line)
            if note and path in dims_of:
                listed = [d.strip() for d in note.group(1).split(",")]
                if listed != dims_of[path]:
                    failures.append(f"{where}: {path} is noted as ({', '.join(listed)}); "
                                    f"the table says ({', '.join(dims_of[path])})")
if seen == 0:
    failures.append(f"no dataset paths found in {plots}")
for failure in failures:
    print("FAIL:", failure)
if failures:
    sys.exit(1)
print(f"{seen} dataset reads in {plots} match the table of results")
