#!/usr/bin/python3
"""check_fields_xarray.py - opens twingyre's fields.nc and budget.nc with
xarray (an independent netCDF/CF reader) and checks the CF-1.8 metadata.

Usage: /usr/bin/python3 check_fields_xarray.py FIELDS.nc BUDGET.nc

The metadata rules come from the CF conventions document (Eaton et al., 2020,
"NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8";
section numbers from memory): 2.6.1 (Conventions attribute), 3.1 (units),
4 (axis attribute), 4.4 and 4.4.1 (time units and calendar, decoded here by
cftime), and the standard name table (projection_x_coordinate,
projection_y_coordinate, time).

Prints one line per check, then "N passed, N failed" as the last line; exits
1 when a check failed, 2 when the files cannot be opened.

Part of twingyre. GPL-3.0-or-later.
"""
import datetime
import sys

try:
    import cftime
    import xarray as xr
except ImportError as exc:  # Debian packages python3-xarray, python3-cftime
    print(f"cannot import xarray/cftime: {exc}")
    print("0 passed, 1 failed")
    sys.exit(2)


class Checks:
    def __init__(self):
        self.passed = 0
        self.failed = 0

    def check(self, ok, what, detail=""):
        if ok:
            self.passed += 1
            print(f"PASS {what}")
        else:
            self.failed += 1
            print(f"FAIL {what}" + (f": {detail}" if detail else ""))


def check_time(c, ds, label):
    """time decodes to cftime/datetime objects (CF-1.8 4.4, 4.4.1)."""
    if "time" not in ds.variables:
        c.check(False, f"{label}: has a time variable", "no variable 'time'")
        return
    t = ds["time"]
    c.check(t.dims == ("time",), f"{label}: time is a coordinate on dim time", f"dims {t.dims}")
    values = t.values.ravel()
    if values.size == 0:
        c.check(False, f"{label}: time has records", "time has no records")
        return
    first = values[0]
    ok = isinstance(first, (cftime.datetime, datetime.datetime)) or (
        getattr(values, "dtype", None) is not None and values.dtype.kind == "M"
    )
    c.check(ok, f"{label}: time decodes to dates", f"got {type(first).__name__} {first!r}")
    if isinstance(first, cftime.datetime):
        c.check(first.calendar in ("noleap", "365_day"), f"{label}: time calendar is noleap",
                f"calendar {first.calendar!r}")
    enc = t.encoding
    c.check(str(enc.get("units", "")).startswith("days since"),
            f"{label}: time is stored in days", f"units {enc.get('units')!r}")


def check_attr(c, var, name, want, label):
    got = var.attrs.get(name)
    owner = var.name if isinstance(var, xr.DataArray) else "(global)"
    c.check(got == want, f"{label}: {owner}:{name} == {want!r}", f"got {got!r}")


def check_fields(c, path):
    label = "fields"
    try:
        ds = xr.open_dataset(path, use_cftime=True)
    except Exception as exc:  # any failure to open is reported as such
        c.check(False, f"{label}: opens with xarray", f"{path}: {exc}")
        return
    with ds:
        c.check(True, f"{label}: opens with xarray")
        check_attr(c, ds, "Conventions", "CF-1.8", label)
        check_time(c, ds, label)
        for name, units in (("psi", "m2 s-1"), ("q", "s-1")):
            if name not in ds.variables:
                c.check(False, f"{label}: has {name}", f"no variable {name!r} in {path}")
                continue
            v = ds[name]
            c.check(v.dims == ("time", "layer", "y", "x"),
                    f"{label}: {name} dims (time, layer, y, x)", f"got {v.dims}")
            check_attr(c, v, "units", units, label)
            c.check(bool(v.attrs.get("long_name")), f"{label}: {name} has a long_name")
        for name, axis, std in (("x", "X", "projection_x_coordinate"),
                                ("y", "Y", "projection_y_coordinate")):
            if name not in ds.variables:
                c.check(False, f"{label}: has {name}", f"no variable {name!r} in {path}")
                continue
            v = ds[name]
            check_attr(c, v, "units", "m", label)
            check_attr(c, v, "standard_name", std, label)
            check_attr(c, v, "axis", axis, label)
        if "layer" in ds.variables:
            layers = ds["layer"].values
            c.check(list(layers) == list(range(1, len(layers) + 1)),
                    f"{label}: layer runs 1..N", f"got {list(layers)}")
        else:
            c.check(False, f"{label}: has layer", f"no variable 'layer' in {path}")


def check_budget(c, path):
    label = "budget"
    try:
        ds = xr.open_dataset(path, use_cftime=True)
    except Exception as exc:  # any failure to open is reported as such
        c.check(False, f"{label}: opens with xarray", f"{path}: {exc}")
        return
    with ds:
        c.check(True, f"{label}: opens with xarray")
        check_attr(c, ds, "Conventions", "CF-1.8", label)
        check_time(c, ds, label)
        c.check("step" in ds.variables, f"{label}: has step")
        coords = {"time", "step", "layer", "interface"}
        data = [n for n in ds.variables if n not in coords]
        c.check(len(data) > 0, f"{label}: has budget variables", "none besides coordinates")
        for n in data:
            v = ds[n]
            c.check(len(v.dims) >= 1 and v.dims[0] == "time",
                    f"{label}: {n} is per record", f"dims {v.dims}")
            c.check(bool(v.attrs.get("units")) and bool(v.attrs.get("long_name")),
                    f"{label}: {n} has units and long_name", f"attrs {dict(v.attrs)}")


def main(argv):
    if len(argv) != 3:
        print(f"usage: {argv[0]} FIELDS.nc BUDGET.nc")
        print("0 passed, 1 failed")
        return 2
    c = Checks()
    for check, path in ((check_fields, argv[1]), (check_budget, argv[2])):
        try:
            check(c, path)
        except Exception as exc:  # a crash in a check is a failed check, not a traceback
            c.check(False, f"{check.__name__} ran to the end", f"{path}: {type(exc).__name__}: {exc}")
    if c.failed:
        print(f"FAILED: {c.failed} CF metadata check(s) failed for {argv[1]} / {argv[2]}")
    print(f"{c.passed} passed, {c.failed} failed")
    return 1 if c.failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
