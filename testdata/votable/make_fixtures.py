#!/usr/bin/python3
"""Writes the VOTable fixtures of catalog/votable with an independent
writer, astropy.io.votable (Debian package python3-astropy, 5.2.1 when
these files were made). Run from this directory: /usr/bin/python3
make_fixtures.py. Every star, table and id here is invented.

The values below are what the Go tests compare against ("source:
astropy-written fixtures").
"""
import gzip
import io

import numpy as np
from astropy.io.votable.tree import (CooSys, Field, Info, Resource, Table,
                                     VOTableFile)

# The invented catalog "lark": id, ra, dec, parallax, its error (float32),
# proper motions and errors, rv, visit count (int, VALUES null -1), a note
# (char, unmapped). None = null.
ROWS = [
    ("lark-001", 10.5, -20.25, 1.5, 0.125, 3.25, 0.5, -7.75, 0.25, 101.5, 12, "first"),
    ("lark-002", 200.125, 45.0, 0.3333333333333333, 0.0625, -1.0, 0.75, 2.5, 0.5, -55.25, None, "no visits"),
    ("lark-003", 359.9, -89.5, None, None, 0.1, 0.2, 0.3, 0.4, None, 8, "no parallax"),
    ("lark-004", 0.0, 0.0, 2.0, 0.5, 0.0, 0.1, 0.0, 0.1, 0.0, 30, None),
    ("lark-005", None, 10.0, 1.0, 0.1, 1.0, 0.1, 1.0, 0.1, 1.0, 5, "no ra"),
    ("lark-006", 123.456789012345, 12.345678901234, 0.1, 0.01, 5.5, 0.05, -5.5, 0.05, 300.0, 1, "last"),
]

COLS = [  # name, datatype, arraysize, unit, ucd, csv header
    ("src_name", "char", "*", None, "meta.id;meta.main", "id"),
    ("ra_icrs", "double", None, "deg", "pos.eq.ra;meta.main", "ra"),
    ("de_icrs", "double", None, "deg", "pos.eq.dec;meta.main", "dec"),
    ("plx", "double", None, "mas", "pos.parallax.trig", "parallax"),
    ("e_plx", "float", None, "mas", "stat.error;pos.parallax.trig", "parallax_err"),
    ("pm_a", "double", None, "mas.yr**-1", "pos.pm;pos.eq.ra", "pm_ra"),
    ("e_pm_a", "float", None, "mas.yr**-1", "stat.error;pos.pm;pos.eq.ra", "pm_ra_err"),
    ("pm_d", "double", None, "mas/yr", "pos.pm;pos.eq.dec", "pm_dec"),
    ("e_pm_d", "float", None, "mas/yr", "stat.error;pos.pm;pos.eq.dec", "pm_dec_err"),
    ("vrad", "double", None, "km/s", "spect.dopplerVeloc", "rv"),
    ("fit_visits", "int", None, None, None, "fit_visits"),
    ("note", "char", "*", None, "meta.note", None),
]


def lark_votable(with_overflow=False):
    vot = VOTableFile()
    res = Resource()
    vot.resources.append(res)
    res.coordinate_systems.append(CooSys(ID="lark_sys", system="ICRS", epoch="J2015.5"))
    t = Table(vot, name="lark")
    res.tables.append(t)
    for name, dt, asz, unit, ucd, _ in COLS:
        kw = dict(name=name, datatype=dt)
        if asz:
            kw["arraysize"] = asz
        if unit:
            kw["unit"] = unit
        if ucd:
            kw["ucd"] = ucd
        if name == "ra_icrs":
            kw["ref"] = "lark_sys"
        t.fields.append(Field(vot, **kw))
    t.fields[10].values.null = -1
    t.create_arrays(len(ROWS))
    for i, row in enumerate(ROWS):
        for j, v in enumerate(row):
            name, dt = COLS[j][0], COLS[j][1]
            if v is None:
                t.array.mask[name][i] = True
                t.array.data[name][i] = {"int": -1, "char": ""}.get(dt, np.nan)
            else:
                t.array[name][i] = v
    if with_overflow:
        res.infos.append(Info(name="QUERY_STATUS", value="OVERFLOW"))
    return vot


def write(vot, path, fmt):
    vot.to_xml(path, tabledata_format=fmt)


def main():
    write(lark_votable(), "lark_tabledata.vot", "tabledata")
    write(lark_votable(), "lark_binary.vot", "binary")
    write(lark_votable(), "lark_binary2.vot", "binary2")
    with open("lark_binary2.vot", "rb") as f, open("lark_binary2.vot.gz", "wb") as raw:
        with gzip.GzipFile(filename="", mode="wb", fileobj=raw, mtime=0) as g:
            g.write(f.read())
    write(lark_votable(with_overflow=True), "overflow.vot", "binary2")

    # The same rows as delimited text with canonical headers; float32
    # columns as the double they widen to, every number as Python's
    # shortest round-trip repr.
    with open("lark.csv", "w") as f:
        f.write(",".join(c[5] for c in COLS if c[5]) + "\n")
        for row in ROWS:
            cells = []
            for (name, dt, _, _, _, hdr), v in zip(COLS, row):
                if not hdr:
                    continue
                if v is None:
                    cells.append("")
                elif dt == "float":
                    cells.append(repr(float(np.float32(v))))
                elif dt == "double":
                    cells.append(repr(float(v)))
                else:
                    cells.append(str(v))
            f.write(",".join(cells) + "\n")

    # Two tables in one document: a first one with no positions at all,
    # then "cinder" with id, ra, dec, rv.
    vot = VOTableFile()
    res = Resource()
    vot.resources.append(res)
    t1 = Table(vot, name="ember", ID="ember_t")
    t1.fields.append(Field(vot, name="code", datatype="int"))
    t1.create_arrays(1)
    t1.array["code"][0] = 7
    t2 = Table(vot, name="cinder", ID="cinder_t")
    t2.fields.extend([
        Field(vot, name="id", datatype="long"),
        Field(vot, name="ra", datatype="double", unit="deg"),
        Field(vot, name="dec", datatype="double", unit="deg"),
        Field(vot, name="rv", datatype="float", unit="m/s", ucd="spect.dopplerVeloc"),
    ])
    t2.create_arrays(2)
    t2.array[0] = (9007199254740993, 1.25, 2.5, 1500.0)
    t2.array[1] = (42, 3.75, -4.5, -250.0)
    res.tables.extend([t1, t2])
    write(vot, "two_tables.vot", "binary2")

    # Bad files.
    text = open("lark_tabledata.vot").read()
    open("bad_malformed.vot", "w").write(text.replace("</TD>", "</TX>", 1))
    open("bad_cut_document.vot", "w").write(text[: len(text) // 2])
    # A BINARY2 stream whose base64 text loses its last 8 characters (6
    # bytes of the last row); the XML around it stays well-formed.
    text = open("lark_binary2.vot").read()
    start = text.index("<STREAM")
    start = text.index(">", start) + 1
    end = text.index("</STREAM>")
    b64 = "".join(text[start:end].split())
    open("bad_short_stream.vot", "w").write(text[:start] + "\n" + b64[:-8] + "\n" + text[end:])


if __name__ == "__main__":
    main()
