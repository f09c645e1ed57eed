#!/usr/bin/python3
"""Opens the sample file written by h5_collective_test with the Python analysis stack.

Usage: check_readers.py FILE WRITER_RANKS

Checks with h5py that every value follows the rules of sample_archive.hpp (restated below),
that string attributes come back as str (not bytes) and strings are UTF-8; and with
xarray.open_dataset(FILE, engine="h5netcdf", group=...) that each group shows the expected
named dimensions, coordinates and values. Exits non-zero with a message on the first failure.
"""
import math
import sys

import h5py
import numpy as np
import xarray as xr

CASES, MEMBERS, TIMES, BOUNDS = 3, 7, 5, 2
OBSERVABLES = ["x", "y", "z", "\u03a9 energy"]
TITLE = "h5 layer test \u2014 Lorenz \u00bd"
SPEC_YAML = "campaign: {name: test}\nmodel:\n  name: lorenz63\n"
NOT_A_VARIABLE = b"This is a netCDF dimension but not a netCDF variable."


def expected_values():
    """Every dataset's values from the rules of sample_archive.hpp, by path."""
    c, m, o = np.meshgrid(np.arange(CASES), np.arange(MEMBERS), np.arange(len(OBSERVABLES)),
                          indexing="ij")
    ens = -(np.arange(CASES)[:, None] + 0.5 * np.arange(len(OBSERVABLES))[None, :])
    ens_written = ens.copy()
    ens_written[-1, :] = np.nan  # the last case is never written: NaN fill
    t, tc = np.meshgrid(np.arange(TIMES), np.arange(CASES), indexing="ij")
    return {
        "case/forcing": 0.5 * np.arange(CASES),
        "member/time_mean": 100.0 * c + m + 0.125 * o,
        "member/transitions": (c[:, :, 0] + 1) * 10**12 + m[:, :, 0],
        "member/status": ((7 * c[:, :, 0] + m[:, :, 0]) % 3).astype(np.uint8),
        "ensemble/time_mean": ens_written,
        "ensemble/time_mean_ci95": np.stack([ens - 0.25, ens + 0.25], axis=-1),
        "snapshot/time": 0.5 * np.arange(TIMES),
        "snapshot/mean": 10.0 * t - tc,
    }


def require(condition, message):
    if not condition:
        sys.exit("check_readers: " + message)


def check_h5py(path, ranks):
    with h5py.File(path, "r") as f:
        attrs = f.attrs
        for name, value in [("title", TITLE), ("spec_yaml", SPEC_YAML), ("status", "complete")]:
            require(type(attrs[name]) is str, f"attribute {name} is {type(attrs[name])}, not str")
            require(attrs[name] == value, f"attribute {name} = {attrs[name]!r}")
        require(attrs["format_version"] == 1 and attrs["format_version"].dtype == np.int64,
                "format_version")
        require(attrs["ranks"] == ranks, f"ranks = {attrs['ranks']}, expected {ranks}")
        require(attrs["dt"] == 0.005 and attrs["dt"].dtype == np.float64, "dt")
        for group in ["", "ensemble/"]:
            names = f[group + "observable"]
            info = h5py.check_string_dtype(names.dtype)
            require(info is not None and info.encoding == "utf-8" and info.length is None,
                    f"{group}observable is not a variable-length UTF-8 string")
            require(list(names.asstr()[...]) == OBSERVABLES, f"{group}observable values")
        for path_in_file, expected in expected_values().items():
            data = f[path_in_file]
            require(data.dtype == expected.dtype or data.dtype.kind == expected.dtype.kind == "f",
                    f"{path_in_file} dtype {data.dtype}")
            require(data.shape == expected.shape, f"{path_in_file} shape {data.shape}")
            require(np.array_equal(data[...], expected, equal_nan=True), f"{path_in_file} values")
        require(f["member/transitions"].dtype == np.int64, "transitions dtype")
        require(f["member/lyapunov"].shape == (CASES, MEMBERS, 0), "lyapunov shape")
        label = f["member/member"].attrs["NAME"]
        require(label == NOT_A_VARIABLE + b"%10d" % MEMBERS, f"member NAME {label!r}")
        require(f["member/time_mean"].attrs["units"] == "1", "time_mean units")


def open_group(path, group):
    return xr.open_dataset(path, engine="h5netcdf", group=group)


def check_xarray(path):
    expected = expected_values()
    with open_group(path, None) as ds:
        require(ds.attrs["title"] == TITLE, "xarray root title")
        require(list(ds["observable"].values) == OBSERVABLES, "xarray root observable coords")
    with open_group(path, "member") as ds:
        require(ds["time_mean"].dims == ("case", "member", "observable"), str(ds["time_mean"].dims))
        require(ds["transitions"].dims == ("case", "member"), "transitions dims")
        require(ds["status"].dims == ("case", "member"), "status dims")
        require(ds["lyapunov"].dims == ("case", "member", "exponent"), "lyapunov dims")
        sizes = {"case": CASES, "member": MEMBERS, "exponent": 0, "observable": len(OBSERVABLES)}
        require(dict(ds.sizes) == sizes, f"member sizes {dict(ds.sizes)}")
        for name in ["case", "member", "exponent"]:
            require(name not in ds.variables, f"dimension {name} shows up as a variable")
        require(np.array_equal(ds["time_mean"].values, expected["member/time_mean"]), "time_mean")
        require(ds["time_mean"].attrs["long_name"] == "time mean of each member", "long_name")
    with open_group(path, "ensemble") as ds:
        require(ds["time_mean"].dims == ("case", "observable"), "ensemble time_mean dims")
        require(ds["time_mean_ci95"].dims == ("case", "observable", "bound"), "ci95 dims")
        require(list(ds["observable"].values) == OBSERVABLES, "ensemble observable coords")
        require("case" not in ds.coords and "bound" not in ds.coords, "uncoordinated dims")
        values = ds["time_mean"].sel(observable="y").values
        require(np.array_equal(values, expected["ensemble/time_mean"][:, 1], equal_nan=True),
                "ensemble time_mean selected by observable name")
        require(math.isnan(values[-1]), "unwritten case is not NaN")
    with open_group(path, "snapshot") as ds:
        require(ds["mean"].dims == ("time", "case"), "snapshot dims")
        require(np.array_equal(ds["time"].values, expected["snapshot/time"]), "time coords")
        require(ds["mean"].sel(time=1.0).values.tolist() == [20.0, 19.0, 18.0], "sel by time")
    with open_group(path, "case") as ds:
        require(ds["forcing"].dims == ("case",), "case/forcing dims")
        require(list(ds.data_vars) == ["forcing"], f"case variables {list(ds.data_vars)}")


def main():
    path, ranks = sys.argv[1], int(sys.argv[2])
    check_h5py(path, ranks)
    check_xarray(path)
    print(f"check_readers: {path} reads correctly with h5py and xarray (h5netcdf)")


if __name__ == "__main__":
    main()
