#!/usr/bin/env python3
"""Check a gathered sweep table (`turbid sweep gather`) with xarray and pandas.

Usage: check_sweep_table.py OUTPUT_DIR [RUNS]

OUTPUT_DIR holds summary.h5 and summary.csv. Checks that summary.h5 opens in
xarray (engine h5netcdf) with the one dimension `run` and `run` as its
coordinate (1, 2, ...), that every numeric variable has `units` and
`long_name` (text variables have no units: CF asks none of text), that every
parameter variable names its `key_path`, and that every numeric column of
summary.csv equals its variable in summary.h5 exactly. With RUNS, also that
there are that many runs, all complete.

Prints one OK line on success; otherwise lists every failure and exits 1.
"""

import math
import sys
from pathlib import Path

import pandas as pd
import xarray as xr


def main() -> int:
    if len(sys.argv) not in (2, 3):
        print(__doc__, file=sys.stderr)
        return 2
    out = Path(sys.argv[1])
    runs = int(sys.argv[2]) if len(sys.argv) == 3 else None
    failures = []
    ds = xr.open_dataset(out / "summary.h5", engine="h5netcdf")
    table = pd.read_csv(out / "summary.csv", comment="#")

    if set(ds.sizes) != {"run"}:
        failures.append(f"dimensions {dict(ds.sizes)}, expected only `run`")
    n = ds.sizes.get("run", 0)
    if "run" not in ds.coords or list(ds["run"].values) != list(range(1, n + 1)):
        failures.append("`run` is not the coordinate 1, 2, ...")
    if runs is not None:
        if n != runs:
            failures.append(f"{n} runs, expected {runs}")
        status = [str(s) for s in ds["status"].values]
        if any(s != "complete" for s in status):
            failures.append(f"not all complete: {status}")
    if len(table) != n:
        failures.append(f"summary.csv has {len(table)} rows, summary.h5 {n}")

    for name, var in ds.variables.items():
        text = var.dtype == object
        if not text and "units" not in var.attrs:
            failures.append(f"{name}: no units")
        if name != "status" and "long_name" not in var.attrs and name != "run":
            failures.append(f"{name}: no long_name")
        if name in ("run", "status"):
            continue
        key = var.attrs.get("key_path")
        if str(var.attrs.get("long_name", "")).startswith("varied parameter") and not key:
            failures.append(f"{name}: a parameter without key_path")
        if text:
            continue
        # The CSV column: the variable's name or key path, plus a unit suffix.
        prefixes = [p for p in (name, key) if p]
        cols = [c for c in table.columns if any(c == p or c.startswith(p + "_") for p in prefixes)]
        if len(cols) != 1:
            failures.append(f"{name}: {len(cols)} matching CSV columns {cols}")
            continue
        a = [float(x) for x in var.values]
        b = [float(x) for x in table[cols[0]]]
        same = all((math.isnan(x) and math.isnan(y)) or x == y for x, y in zip(a, b))
        if not same:
            failures.append(f"{name}: HDF5 {a} differs from CSV {cols[0]} {b}")

    if failures:
        for f in failures:
            print(f"FAIL: {f}", file=sys.stderr)
        return 1
    print(f"OK: {out}: {n} runs, {len(ds.variables)} variables, CSV and HDF5 agree")
    return 0


if __name__ == "__main__":
    sys.exit(main())
