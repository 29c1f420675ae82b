# Independent reader for the world generator's tests: opens each file with
# the netCDF4 Python module (Debian python3-netcdf4), reports attributes,
# decodes times with cftime, and computes IVT and IWV with numpy.
# Usage: /usr/bin/python3 check_files.py FILE...
# Prints one JSON object; writes FILE.ivt (float32, little-endian,
# time x lat x lon) for fields files on pressure levels.
import json
import sys

import netCDF4
import numpy as np

G = 9.80665  # standard gravity, 3rd CGPM (1901)


def attrs(v):
    out = {}
    for k in v.ncattrs():
        a = v.getncattr(k)
        out[k] = a.tolist() if hasattr(a, "tolist") else a
    return out


def trapz(y, x, axis):
    # numpy renamed trapz to trapezoid in 2.0; support both.
    f = getattr(np, "trapezoid", None) or np.trapz
    return f(y, x=x, axis=axis)


report = {}
for path in sys.argv[1:]:
    ds = netCDF4.Dataset(path)
    r = {"global": attrs(ds), "vars": {}}
    for name, v in ds.variables.items():
        a = attrs(v)
        a["_dtype"] = str(v.dtype)
        a["_dims"] = list(v.dimensions)
        r["vars"][name] = a
    t = ds.variables["time"]
    dates = netCDF4.num2date(t[:], t.units, t.calendar)
    r["dates"] = [d.strftime("%Y-%m-%d %H:%M") for d in dates]
    if "class_mask" in ds.variables:
        m = ds.variables["class_mask"][:]
        r["mask_counts"] = [int((m == c).sum()) for c in (0, 1, 2)]
    if "hus" in ds.variables and "plev" in ds.variables:
        p = np.asarray(ds.variables["plev"][:], dtype=np.float64)
        sel = (p >= 30000) & (p <= 100000)
        q = np.asarray(ds.variables["hus"][:], dtype=np.float64)[:, sel]
        u = np.asarray(ds.variables["ua"][:], dtype=np.float64)[:, sel]
        v = np.asarray(ds.variables["va"][:], dtype=np.float64)[:, sel]
        ps = p[sel]
        # Levels run from 1000 hPa upward, so the integral over decreasing
        # pressure is the negative of trapz over the file order.
        iu = -trapz(q * u, ps, 1) / G
        iv = -trapz(q * v, ps, 1) / G
        ivt = np.hypot(iu, iv)
        ivt.astype("<f4").tofile(path + ".ivt")
        # IWV from the levels (1000-200 hPa) against the prw variable.
        qa = np.asarray(ds.variables["hus"][:], dtype=np.float64)
        iwv_levels = -trapz(qa, p, 1) / G
        prw = np.asarray(ds.variables["prw"][:], dtype=np.float64)
        r["iwv_median_ratio"] = float(np.median(iwv_levels / prw))
        r["ivt_max"] = float(ivt.max())
    if "lev" in ds.variables:
        a = ds.variables["a"][:]
        b = ds.variables["b"][:]
        p0 = float(ds.variables["p0"][:])
        ps = np.asarray(ds.variables["ps"][:], dtype=np.float64)
        pk = a[None, :, None, None] * p0 + b[None, :, None, None] * ps[:, None]
        r["hybrid_ordered"] = bool((np.diff(pk, axis=1) < 0).all())
        r["hybrid_above_ground"] = bool((pk < ps[:, None]).all())
        r["ps_min"] = float(ps.min())
        # Interpolate temperature, humidity and wind to 500 and 850 hPa,
        # linear in log pressure, where the level is above the ground.
        out = {}
        for target in (85000.0, 50000.0):
            for name in ("ta", "hus", "ua"):
                x = np.asarray(ds.variables[name][:], dtype=np.float64)
                lp = np.log(pk)
                nt, nk, ny, nx = x.shape
                res = np.full((nt, ny, nx), np.nan)
                lt = np.log(target)
                for k in range(nk - 1):
                    lo, hi = lp[:, k], lp[:, k + 1]  # pressure decreases with k
                    inside = (lt <= lo) & (lt >= hi)
                    w = (lt - hi) / (lo - hi)
                    val = w * x[:, k] + (1 - w) * x[:, k + 1]
                    res = np.where(inside & np.isnan(res), val, res)
                res.astype("<f4").tofile(path + ".%s%d" % (name, int(target)))
        r["interpolated"] = True
    report[path] = r
    ds.close()
print(json.dumps(report))
