#!/usr/bin/python3
"""check_fields_xarray.py - opens twingyre's fields.nc and budget.nc with
xarray (an independent netCDF/CF reader) and checks the CF-1.8 metadata, and
that the kinetic-energy spectrum of each snapshot adds up to the kinetic
energy of the budget record at the same time.

Usage: /usr/bin/python3 check_fields_xarray.py FIELDS.nc BUDGET.nc

The metadata rules come from the CF conventions document (Eaton et al., 2020,
"NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8";
section numbers from memory): 2.6.1 (Conventions attribute), 3.1 (units),
4 (axis attribute), 4.4 and 4.4.1 (time units and calendar, decoded here by
cftime), and the standard name table (projection_x_coordinate,
projection_y_coordinate, time).

The spectrum check: ke_spectrum(time, layer, wavenumber) summed over
wavenumber and multiplied by the bin width (attribute bin_width of
wavenumber) must equal kinetic_energy(time, layer) of budget.nc to 1e-10
relative. The spectrum is normalized so that this is Parseval's relation for
the discrete Fourier (periodic) or type-I sine (basin) transform, with the
eigenvalue of the five-point Laplacian as the |K|^2 weight (Parseval's
theorem for the DFT: Press et al. 2007, Numerical Recipes 3rd ed., section
12.1, section number from memory; src/model/spectrum.h). The budget record at the
same time is the state the snapshot holds (a record describes the step that
ends at its time); day 0 of a fresh run has a snapshot but no budget record
and is skipped.

Prints one line per check, then "N passed, N failed" as the last line; exits
1 when a check failed, 2 when the files cannot be opened.

Part of twingyre. GPL-3.0-or-later.
"""
import datetime
import sys

SPECTRUM_RTOL = 1e-10

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
        check_spectrum_metadata(c, ds, path, label)


def check_spectrum_metadata(c, ds, path, label):
    """wavenumber coordinate and ke_spectrum(time, layer, wavenumber) (CF-1.8
    1.3 coordinate variables, 3.1 units, 3.2 long_name)."""
    if "wavenumber" not in ds.variables:
        c.check(False, f"{label}: has wavenumber", f"no variable 'wavenumber' in {path}")
        return
    k = ds["wavenumber"]
    c.check(k.dims == ("wavenumber",), f"{label}: wavenumber is a coordinate on dim wavenumber",
            f"dims {k.dims}")
    check_attr(c, k, "units", "rad m-1", label)
    check_attr(c, k, "long_name", "isotropic wavenumber, bin centre", label)
    width = k.attrs.get("bin_width")
    ok = width is not None and float(width) > 0.0
    c.check(ok, f"{label}: wavenumber:bin_width is a positive number", f"got {width!r}")
    if ok:
        kv = k.values
        d = kv[1:] - kv[:-1]
        c.check(kv.size >= 1 and abs(kv[0] - width) <= 1e-12 * width
                and bool((abs(d - width) <= 1e-12 * width).all()),
                f"{label}: wavenumber bin centres are b * bin_width, b = 1, 2, ...",
                f"first {kv[:3]}, bin_width {width}")
    if "ke_spectrum" not in ds.variables:
        c.check(False, f"{label}: has ke_spectrum", f"no variable 'ke_spectrum' in {path}")
        return
    v = ds["ke_spectrum"]
    c.check(v.dims == ("time", "layer", "wavenumber"),
            f"{label}: ke_spectrum dims (time, layer, wavenumber)", f"got {v.dims}")
    check_attr(c, v, "units", "m3 s-2", label)
    c.check(bool(v.attrs.get("long_name")), f"{label}: ke_spectrum has a long_name")
    vals = v.values
    c.check(bool((vals >= 0.0).all()) and bool(abs(vals).max() < float("inf")),
            f"{label}: ke_spectrum is finite and non-negative",
            f"min {vals.min()!r}, max {vals.max()!r}")


def check_spectrum_sum(c, fields_path, budget_path):
    """sum(ke_spectrum * bin_width) == budget kinetic_energy at the same time."""
    label = "spectrum"
    # Raw day numbers: the same double time_s / 86400 in both files.
    with xr.open_dataset(fields_path, decode_times=False) as f, \
            xr.open_dataset(budget_path, decode_times=False) as b:
        for name, ds, path in (("ke_spectrum", f, fields_path), ("kinetic_energy", b, budget_path)):
            if name not in ds.variables:
                c.check(False, f"{label}: has {name}", f"no variable {name!r} in {path}")
                return
        width = float(f["wavenumber"].attrs["bin_width"])
        spec = f["ke_spectrum"].transpose("time", "layer", "wavenumber").values
        ke = b["kinetic_energy"].transpose("time", "layer").values
        ft = f["time"].values
        bt = b["time"].values
        if ke.shape[1] != spec.shape[1]:
            c.check(False, f"{label}: same layer count in both files",
                    f"{spec.shape[1]} vs {ke.shape[1]}")
            return
        matched = 0
        worst = 0.0
        worst_at = None
        for i, t in enumerate(ft):
            hits = [j for j, u in enumerate(bt) if abs(u - t) <= 1e-9 * max(1.0, abs(t))]
            if not hits:
                if bt.size == 0 or t < bt[0]:
                    print(f"# {label}: snapshot at day {t:g} precedes the first budget record "
                          "(the initial state); skipped")
                    continue
                c.check(False, f"{label}: snapshot at day {t:g} has a budget record",
                        "no budget record at that time")
                continue
            if len(hits) > 1:
                c.check(False, f"{label}: one budget record at day {t:g}",
                        f"{len(hits)} records")
                continue
            j = hits[0]
            total = spec[i].sum(axis=-1) * width
            for k in range(ke.shape[1]):
                den = max(abs(ke[j, k]), 1e-300)
                rel = abs(total[k] - ke[j, k]) / den
                if not rel <= worst:  # also catches NaN
                    worst, worst_at = rel, (t, k + 1, total[k], ke[j, k])
            matched += 1
        c.check(matched > 0, f"{label}: some snapshot has a budget record at its time",
                f"snapshot days {list(ft)}, budget days {bt[:3]}..{bt[-3:]}")
        if matched:
            detail = ""
            if worst_at is not None:
                t, k, tot, e = worst_at
                detail = (f"worst at day {t:g}, layer {k}: sum E dk = {tot!r}, "
                          f"kinetic_energy = {e!r}, relative difference {worst:.3e}")
            c.check(worst <= SPECTRUM_RTOL,
                    f"{label}: sum(ke_spectrum) * bin_width equals kinetic_energy to "
                    f"{SPECTRUM_RTOL:g} relative at {matched} snapshot(s) "
                    f"(worst {worst:.2e})", detail)


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
    for check, paths in ((check_fields, argv[1:2]), (check_budget, argv[2:3]),
                         (check_spectrum_sum, argv[1:3])):
        try:
            check(c, *paths)
        except Exception as exc:  # a crash in a check is a failed check, not a traceback
            c.check(False, f"{check.__name__} ran to the end",
                    f"{' / '.join(paths)}: {type(exc).__name__}: {exc}")
    if c.failed:
        print(f"FAILED: {c.failed} check(s) failed for {argv[1]} / {argv[2]}")
    print(f"{c.passed} passed, {c.failed} failed")
    return 1 if c.failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
