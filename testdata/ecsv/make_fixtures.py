#!/usr/bin/python3
"""Writes the ECSV test fixtures of catalog/ecsv with astropy (an
independent ECSV writer: astropy.table with format="ascii.ecsv") and
expected.json, the values astropy reads back from them, converted by
astropy.units into starvet's canonical units (deg, mas, mas/yr, km/s).

Run from this directory: /usr/bin/python3 make_fixtures.py
Every star, id and value is invented.
"""
import gzip
import json
import math

import astropy
import astropy.units as u
import numpy as np
from astropy.table import MaskedColumn, Table

OUT = {}


def base_table():
    ids = ["qv-0001", "qv-0002", "qv-0003", "qv-0004", "qv-0005", "qv-0006", "qv 0007", "qv-0008"]
    t = Table()
    t["id"] = ids
    t["ra"] = np.array([0.5, 12.25, 45.125, 90.0625, 180.75, 270.5, 300.125, 359.875]) * u.deg
    t["dec"] = np.array([-89.5, -45.25, -10.5, 0.0, 10.75, 30.125, 60.5, 89.25]) * u.deg
    t["parallax"] = np.array([1.25, 0.5, 2.75, 0.125, 3.5, 0.25, 1.75, 0.0625]) * u.mas
    t["parallax_err"] = np.array([0.05, 0.1, 0.02, 0.3, 0.04, 0.2, 0.06, 0.5]) * u.mas
    t["pm_ra"] = np.array([-5.5, 12.25, 0.75, -30.125, 4.0, 8.5, -1.25, 0.0]) * u.mas / u.yr
    t["pm_dec"] = np.array([2.5, -7.75, 15.125, 0.5, -3.0, 1.5, 22.25, -0.25]) * u.mas / u.yr
    rv = np.array([-120.5, 35.25, 0.0, 410.75, -15.5, 88.0, -250.25, 5.5])
    mask = [False, False, True, False, False, True, False, False]
    t["rv"] = MaskedColumn(rv, mask=mask, unit=u.km / u.s)
    t["rv_err"] = MaskedColumn([1.5, 2.0, 0.0, 4.5, 0.75, 0.0, 3.25, 1.0], mask=mask, unit=u.km / u.s)
    t["note"] = ["a", "b", "c d", "e", "f", "g", "h", "i"]
    return t


CANON = {"ra": u.deg, "dec": u.deg, "parallax": u.mas, "parallax_err": u.mas,
         "pm_ra": u.mas / u.yr, "pm_dec": u.mas / u.yr, "rv": u.km / u.s, "rv_err": u.km / u.s}


def expect(name, field_of_column):
    """Read name back with astropy and state its ids and canonical values."""
    t = Table.read(name, format="ascii.ecsv")
    e = {"rows": len(t), "ids": [str(x) for x in t[t.colnames[0]]], "fields": {}, "units": {}}
    for col, field in field_of_column.items():
        c = t[col]
        vals = c.quantity.to_value(CANON[field]) if c.unit is not None else np.asarray(c, dtype=float)
        mask = np.ma.getmaskarray(c)
        e["fields"][field] = [None if m else float(v) for v, m in zip(np.ravel(vals), mask)]
        e["units"][col] = None if c.unit is None else c.unit.to_string()
    OUT[name] = e


def text(name):
    with open(name) as f:
        return f.read()


def write(name, s):
    with open(name, "w") as f:
        f.write(s)


def main():
    t = base_table()
    same = {c: c for c in CANON}
    t.write("space.ecsv", format="ascii.ecsv", overwrite=True)
    expect("space.ecsv", same)
    t.write("comma.ecsv", format="ascii.ecsv", delimiter=",", overwrite=True)
    expect("comma.ecsv", same)
    with open("space.ecsv", "rb") as f, open("space.ecsv.gz", "wb") as raw:
        with gzip.GzipFile(fileobj=raw, mode="wb", mtime=0, filename="") as g:
            g.write(f.read())
    OUT["space.ecsv.gz"] = OUT["space.ecsv"]
    # The same catalog as CSV, by astropy's CSV writer (no units: the
    # columns are in starvet's canonical units already).
    t.write("same.csv", format="ascii.csv", overwrite=True)

    # Columns named otherwise, found by the UCD in their meta; rv in m / s.
    v = Table()
    v["src"] = ["ub-01", "ub-02", "ub-03"]
    v["src"].meta = {"ucd": "meta.id;meta.main"}
    v["alpha"] = [10.5, 200.25, 333.0] * u.deg
    v["alpha"].meta = {"ucd": "pos.eq.ra;meta.main"}
    v["delta"] = [-20.5, 5.25, 70.0] * u.deg
    v["delta"].meta = {"ucd": "pos.eq.dec;meta.main"}
    v["plx"] = [0.75, 1.5, 0.25] * u.mas
    v["plx"].meta = {"ucd": "pos.parallax.trig"}
    v["vrad"] = [12345.0, -2500.5, 300.0] * (u.m / u.s)
    v["vrad"].meta = {"ucd": "spect.dopplerVeloc.opt"}
    v["pmx"] = [1.5, -2.5, 3.25] * (u.mas / u.yr)
    v["pmx"].meta = {"ucd": "pos.pm;pos.eq.ra"}
    v.write("ucd.ecsv", format="ascii.ecsv", delimiter=",", overwrite=True)
    expect("ucd.ecsv", {"alpha": "ra", "delta": "dec", "plx": "parallax", "vrad": "rv", "pmx": "pm_ra"})

    # Derived by editing astropy's output (stated per file):
    s = text("comma.ecsv")
    lines = s.splitlines(keepends=True)
    # masked cells written as the text null instead of empty
    write("null.ecsv", "".join(l if l.startswith("#") else
                               ",".join(c or "null" for c in l.rstrip("\n").split(",")) + "\n" for l in lines))
    expect_null = dict(OUT["comma.ecsv"])
    OUT["null.ecsv"] = expect_null
    # one parallax cell that is not a number
    i = next(k for k, l in enumerate(lines) if l.startswith("qv-0004,"))
    cells = lines[i].split(",")
    cells[3] = "abc"
    lines_bad = lines[:i] + [",".join(cells)] + lines[i + 1:]
    write("badrow.ecsv", "".join(lines_bad))
    OUT["badrow.ecsv"] = {"quarantined_line": i + 1, "quarantined_column": 4, "rows": len(t)}
    # no "# %ECSV 1.0" line
    write("noversion.ecsv", "".join(lines[1:]))
    # column-name line disagreeing with the header: dec and ra swapped
    h = next(k for k, l in enumerate(lines) if not l.startswith("#"))
    write("mismatch.ecsv", "".join(lines[:h] + [lines[h].replace("id,ra,dec,", "id,dec,ra,")] + lines[h + 1:]))
    OUT["mismatch.ecsv"] = {"header_line": h + 1, "column": 2}
    # cut inside the YAML, in the middle of the third datatype entry
    j = next(k for k, l in enumerate(lines) if "name: dec" in l)
    write("truncated.ecsv", "".join(lines[:j]) + lines[j][:lines[j].index("unit")] + "\n")
    OUT["truncated.ecsv"] = {"cut_line": j + 1}

    OUT["_source"] = "astropy %s (astropy.table, format ascii.ecsv; units by astropy.units)" % astropy.__version__
    with open("expected.json", "w") as f:
        json.dump(OUT, f, indent=1, sort_keys=True)
        f.write("\n")


if __name__ == "__main__":
    main()
