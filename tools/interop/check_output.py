#!/usr/bin/env python3
"""Check that a turbid result file opens correctly in h5py and xarray.

Usage: check_output.py RESULT.nc [EXPECTED.json]

EXPECTED.json (optional) holds expected dimension sizes and, optionally, the
run status, e.g. {"time": 200, "z": 200, "size_class": 12, "species": 1,
"run_status": "complete"}.

h5py: every dataset that is a netCDF variable has a `units` attribute (string
variables excepted: CF asks no units of text); `time`, `z` and `size_class`
are dimension scales (CLASS = DIMENSION_SCALE); every other dataset with
dimensions has its scales attached (DIMENSION_LIST) in the documented order;
profiles are chunked and compressed.

xarray (engine h5netcdf): named dimensions, coordinates, the documented
variables with their dimensions and units, `time` kept as float seconds, and
`volume_fraction` equal to the sum over classes of `volume_fraction_by_class`.

Prints one OK line on success; otherwise lists every failure and exits 1.
"""

import json
import sys
import warnings

import h5py
import numpy as np
import xarray as xr

# name -> (dimensions, units); units None for text variables.
VARIABLES = {
    "time": (("time",), "s"),
    "z": (("z",), "m"),
    "size_class": (("size_class",), "m"),
    "volume_fraction": (("time", "z"), "1"),
    "volume_fraction_by_class": (("time", "size_class", "z"), "1"),
    "mass_concentration": (("time", "z"), "kg m-3"),
    "interface_height": (("time",), "m"),
    "bed_height": (("time",), "m"),
    "solids_volume": (("time",), "m3"),
    "z_bounds": (("z", "bounds"), "m"),
    "class_lower_diameter": (("size_class",), "m"),
    "class_upper_diameter": (("size_class",), "m"),
    "class_terminal_velocity": (("size_class",), "m s-1"),
    "class_species": (("size_class",), "1"),
    "species_name": (("species",), None),
    "species_density": (("species",), "kg m-3"),
    "vessel_area": ((), "m2"),
}
COORDINATES = ("time", "z", "size_class")
PROFILES = ("volume_fraction", "volume_fraction_by_class", "mass_concentration")
GLOBAL_ATTRIBUTES = (
    "Conventions", "title", "source", "history", "scenario_yaml",
    "seed", "engine", "resolution", "run_status",
)
# netCDF writes a dimension without a coordinate variable as a placeholder
# dataset whose NAME starts with this; it is not a variable.
DIMENSION_ONLY = "This is a netCDF dimension but not a netCDF variable"
TOLERANCE = 1e-12


def text(value):
    return value.decode() if isinstance(value, bytes) else str(value)


def check_h5py(path, fail):
    with h5py.File(path, "r") as f:
        datasets = {}

        def collect(name, obj):
            if isinstance(obj, h5py.Dataset):
                datasets[name] = obj
            # Returning None keeps visititems going.

        f.visititems(collect)
        variables = {}
        for name, ds in datasets.items():
            if text(ds.attrs.get("NAME", "")).startswith(DIMENSION_ONLY):
                continue
            variables[name] = ds
            is_text = h5py.check_string_dtype(ds.dtype) is not None
            if "units" not in ds.attrs and not is_text:
                fail(f"h5py: dataset {name} has no units attribute")
        for name in VARIABLES:
            if name not in variables:
                fail(f"h5py: dataset {name} is missing")
        for name in COORDINATES:
            ds = variables.get(name)
            if ds is not None and text(ds.attrs.get("CLASS", "")) != "DIMENSION_SCALE":
                fail(f"h5py: {name} is not a dimension scale (CLASS attribute)")
        for name, (dims, _) in VARIABLES.items():
            ds = variables.get(name)
            if ds is None or name in COORDINATES or not dims:
                continue
            if "DIMENSION_LIST" not in ds.attrs:
                fail(f"h5py: {name} has no DIMENSION_LIST")
                continue
            attached = []
            for axis in range(ds.ndim):
                scales = list(ds.dims[axis].values())
                attached.append(scales[0].name.lstrip("/") if scales else None)
            if tuple(attached) != dims:
                fail(f"h5py: {name} has scales {attached}, expected {list(dims)}")
            if dims[0] == "time" and ds.maxshape[0] is not None:
                fail(f"h5py: {name} cannot grow along time (maxshape {ds.maxshape})")
        for name in PROFILES:
            ds = variables.get(name)
            if ds is not None and (ds.chunks is None or ds.compression != "gzip"):
                fail(f"h5py: {name} is not chunked and deflated "
                     f"(chunks {ds.chunks}, compression {ds.compression})")
        return len(variables)


def check_xarray(path, expected, fail):
    # Older xarray versions decode timedelta-like units by default; asking for
    # it explicitly shows what they would do.
    with xr.open_dataset(path, engine="h5netcdf", decode_timedelta=True) as strict:
        if "time" in strict.variables and strict["time"].dtype != np.float64:
            fail(f"xarray: with decode_timedelta=True, time becomes {strict['time'].dtype}")
    with warnings.catch_warnings():
        # A decoding FutureWarning would mean xarray reinterprets a variable.
        warnings.simplefilter("error", FutureWarning)
        ds = xr.open_dataset(path, engine="h5netcdf")
    with ds:
        for dim in ds.sizes:
            if dim.startswith("phony_dim"):
                fail(f"xarray: unnamed dimension {dim} (dimension scales not read)")
        for dim in ("time", "z", "size_class", "species", "bounds"):
            if dim not in ds.sizes:
                fail(f"xarray: dimension {dim} is missing")
        for name in COORDINATES:
            if name not in ds.coords or name not in ds.indexes:
                fail(f"xarray: {name} is not an indexed coordinate")
        for name, (dims, units) in VARIABLES.items():
            if name not in ds.variables:
                fail(f"xarray: variable {name} is missing")
                continue
            var = ds.variables[name]
            if var.dims != dims:
                fail(f"xarray: {name} has dimensions {var.dims}, expected {dims}")
            got_units = var.attrs.get("units")
            if got_units != units:
                fail(f"xarray: {name} has units {got_units!r}, expected {units!r}")
            if not var.attrs.get("long_name"):
                fail(f"xarray: {name} has no long_name")
        for name in GLOBAL_ATTRIBUTES:
            if name not in ds.attrs:
                fail(f"xarray: global attribute {name} is missing")
        status = ds.attrs.get("run_status")
        if status not in ("complete", "partial"):
            fail(f"xarray: run_status is {status!r}")
        if ds.attrs.get("Conventions") != "CF-1.10":
            fail(f"xarray: Conventions is {ds.attrs.get('Conventions')!r}")
        if "time" in ds.variables and ds["time"].dtype != np.float64:
            fail(f"xarray: time decoded as {ds['time'].dtype}, expected float64 seconds")

        for dim, size in expected.get("dims", {}).items():
            if ds.sizes.get(dim) != size:
                fail(f"xarray: dimension {dim} has size {ds.sizes.get(dim)}, expected {size}")
        if "run_status" in expected and status != expected["run_status"]:
            fail(f"xarray: run_status {status!r}, expected {expected['run_status']!r}")

        if all(v in ds.variables for v in PROFILES + ("class_species", "species_density", "z_bounds")):
            by_class = ds["volume_fraction_by_class"].values
            total = ds["volume_fraction"].values
            err = np.max(np.abs(by_class.sum(axis=1) - total), initial=0.0)
            if not err <= TOLERANCE:
                fail(f"xarray: volume_fraction differs from the sum over classes by {err:.3g}")
            rho = ds["species_density"].values[ds["class_species"].values]
            mass = np.einsum("tcz,c->tz", by_class, rho)
            scale = max(1.0, float(np.max(np.abs(mass), initial=0.0)))
            err = np.max(np.abs(mass - ds["mass_concentration"].values), initial=0.0)
            if not err <= TOLERANCE * scale:
                fail(f"xarray: mass_concentration differs from Σ φ_c ρ_c by {err:.3g}")
            zb, z = ds["z_bounds"].values, ds["z"].values
            if not (np.all(zb[:, 0] < z) and np.all(z < zb[:, 1])):
                fail("xarray: z does not lie inside z_bounds")
        return {dim: int(n) for dim, n in ds.sizes.items()}, status


def main(argv):
    if len(argv) not in (2, 3):
        print(__doc__.strip().splitlines()[2], file=sys.stderr)
        return 2
    path = argv[1]
    expected = {}
    if len(argv) == 3:
        with open(argv[2], encoding="utf-8") as f:
            raw = json.load(f)
        expected = {
            "dims": {k: v for k, v in raw.items() if k != "run_status"},
            **({"run_status": raw["run_status"]} if "run_status" in raw else {}),
        }

    failures = []
    fail = failures.append
    nvars, sizes, status = 0, {}, None
    # An unreadable file is a reported failure, not a traceback.
    try:
        nvars = check_h5py(path, fail)
    except Exception as e:
        fail(f"h5py cannot read {path}: {type(e).__name__}: {e}")
    try:
        sizes, status = check_xarray(path, expected, fail)
    except Exception as e:
        fail(f"xarray cannot read {path}: {type(e).__name__}: {e}")
    if failures:
        print(f"FAILED: {path}: {len(failures)} problem(s)", file=sys.stderr)
        for msg in failures:
            print(f"  - {msg}", file=sys.stderr)
        return 1
    dims = " ".join(f"{d}={n}" for d, n in sizes.items())
    print(f"OK: {path}: {dims}; {nvars} variables; run {status}; "
          f"h5py {h5py.__version__}, xarray {xr.__version__} (h5netcdf) agree")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
