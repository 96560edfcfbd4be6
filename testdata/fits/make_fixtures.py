#!/usr/bin/python3
"""Writes the FITS fixtures of starvet's FITS reader (catalog/fits) with an
independent writer, astropy.io.fits, and states in expected.json the values
astropy reads back from them.

Run from this directory: /usr/bin/python3 make_fixtures.py
(Debian: apt-get install python3-astropy). Every column name, id and keyword
here is invented. Check the results with fitsverify (libcfitsio tools).
"""
import gzip
import json
import math

import astropy
import numpy as np
from astropy.io import fits

N = 5


def primary():
    return fits.PrimaryHDU()


def kinds_hdu():
    """One column of every TFORM type, unsigned and signed-byte offsets,
    TNULL, NaN, TSCAL/TZERO, a repeat array and a heap (P) column."""
    cols = [
        fits.Column(name="tag", format="8A", array=np.array(["zx-001", "zx-002", "zx-003", "zx-004", "zx-005"])),
        fits.Column(name="ra", format="D", unit="deg", array=np.array([10.5, 20.25, 30.125, 40.0, 359.5])),
        fits.Column(name="dec", format="D", unit="deg", array=np.array([-10.5, 0.0, 45.25, -89.75, 89.5])),
        fits.Column(name="ok", format="L", array=np.array([True, False, True, True, False])),
        fits.Column(name="bits", format="12X", array=np.array([[1, 0, 1, 0, 0, 0, 0, 0, 1, 1, 0, 1]] * N, dtype=bool)),
        fits.Column(name="b", format="B", array=np.array([0, 1, 127, 128, 255], dtype=np.uint8)),
        fits.Column(name="i", format="I", array=np.array([-32768, -1, 0, 1, 32767], dtype=np.int16)),
        fits.Column(name="j", format="J", array=np.array([-2147483648, -7, 0, 7, 2147483647], dtype=np.int32)),
        fits.Column(name="k", format="K", array=np.array([-9223372036854775808, -3, 0, 3, 9007199254740993], dtype=np.int64)),
        fits.Column(name="e", format="E", array=np.array([1.5, -2.25, 3.4028234663852886e38, 1e-30, 0.1], dtype=np.float32)),
        fits.Column(name="d", format="D", array=np.array([0.1, -1e300, 5e-324, 2.5, 123456789.125])),
        fits.Column(name="c", format="C", array=np.array([1 + 2j] * N, dtype=np.complex64)),
        fits.Column(name="m", format="M", array=np.array([3 - 4j] * N, dtype=np.complex128)),
        fits.Column(name="vec", format="3E", array=np.array([[1, 2, 3]] * N, dtype=np.float32)),
        fits.Column(name="ui", format="I", bzero=32768, array=np.array([0, 1, 32768, 40000, 65535], dtype=np.uint16)),
        fits.Column(name="uj", format="J", bzero=2147483648, array=np.array([0, 1, 2147483648, 3000000000, 4294967295], dtype=np.uint32)),
        fits.Column(name="uk", format="K", bzero=9223372036854775808,
                    array=np.array([0, 1, 9223372036854775808, 12345678901234567890, 18446744073709551615], dtype=np.uint64)),
        # signed bytes: stored 0..255, TZERO18 = -128 patched in below (astropy cannot write it)
        fits.Column(name="sb", format="B", array=np.array([0, 127, 128, 129, 255], dtype=np.uint8)),
        fits.Column(name="jnull", format="J", null=-999, array=np.array([5, -999, 6, -999, 7], dtype=np.int32)),
        # physical = 10 + 0.5 x stored; TNULL 7 is the stored value (physical 13.5); physical 7 (stored -6) is not null
        # stored as written here; TSCAL20 (with a D exponent) and TZERO20 patched in below
        fits.Column(name="scnull", format="I", null=7, array=np.array([7, -6, 2, 7, 0], dtype=np.int16)),
        fits.Column(name="enan", format="E", array=np.array([1.0, np.nan, 2.0, np.nan, 3.0], dtype=np.float32)),
        fits.Column(name="heap", format="PJ()", array=np.array([np.array([1, 2, 3]), np.array([4]), np.array([], dtype=np.int32),
                                                                np.array([5, 6]), np.array([7, 8, 9, 10])], dtype=object)),
    ]
    h = fits.BinTableHDU.from_columns(cols, name="KINDS")
    h.header["TUCD2"] = "pos.eq.ra;meta.main"
    h.header["SBPLACE"] = -128
    h.header["SSPLACE"] = 0
    h.header["SZPLACE"] = 10
    h.header["LONGSTRN"] = "OGIP 1.0"
    h.header["LONGNOTE"] = LONGNOTE
    return h


LONGNOTE = ("an invented note long enough that the writer must continue it on further cards, "
            "with a 'quoted' word and an ampersand & in it, ending here")


def second_hdu():
    cols = [
        fits.Column(name="id", format="J", array=np.array([101, 102, 103], dtype=np.int32)),
        fits.Column(name="ra", format="E", unit="deg", array=np.array([1.0, 2.0, 3.0], dtype=np.float32)),
        fits.Column(name="dec", format="E", unit="deg", array=np.array([-1.0, -2.0, -3.0], dtype=np.float32)),
        fits.Column(name="parallax", format="E", unit="arcsec", array=np.array([0.001, 0.002, 0.004], dtype=np.float32)),
    ]
    return fits.BinTableHDU.from_columns(cols, name="SECOND")


def ascii_hdu():
    cols = [
        fits.Column(name="id", format="A6", array=np.array(["aq-1", "aq-2"])),
        fits.Column(name="ra", format="E12.5", array=np.array([1.5, 2.5])),
        fits.Column(name="dec", format="E12.5", array=np.array([3.5, 4.5])),
    ]
    return fits.TableHDU.from_columns(cols, name="PLAINTEXT")


def bad_rows_hdu():
    """Rows to set aside: a repeated id, an empty id, a null ra, a dec out of
    range; rows 1 and 5 are clean."""
    cols = [
        fits.Column(name="id", format="6A", array=np.array(["qa-1", "qa-2", "qa-1", "", "qa-5", "qa-6"])),
        fits.Column(name="ra", format="D", unit="deg", array=np.array([1.0, 2.0, 3.0, 4.0, 5.0, np.nan])),
        fits.Column(name="dec", format="D", unit="deg", array=np.array([1.0, 95.0, 3.0, 4.0, 5.0, 6.0])),
        fits.Column(name="parallax", format="J", unit="mas", null=-1, array=np.array([1, 2, 3, 4, -1, 6], dtype=np.int32)),
    ]
    return fits.BinTableHDU.from_columns(cols, name="ROWS")


def cards(raw, start, key):
    for i in range(start, len(raw), 80):
        if raw[i:i + 8].decode().rstrip() == key:
            return i
    raise KeyError(key)


def main():
    hl = fits.HDUList([primary(), kinds_hdu(), second_hdu(), ascii_hdu()])
    hl.writeto("kinds.fits", overwrite=True)
    raw = open("kinds.fits", "rb").read()
    # A D exponent in a real value (FITS Standard 4.0, section 4.2.4).
    at = cards(raw, 2880, "SSPLACE")
    raw = raw[:at] + "TSCAL20 =               5.0D-1 / scale written with a D exponent".ljust(80).encode() + raw[at + 80:]
    at = cards(raw, 2880, "SBPLACE")
    raw = raw[:at] + b"TZERO18 " + raw[at + 8:]
    at = cards(raw, 2880, "SZPLACE")
    raw = raw[:at] + b"TZERO20 " + raw[at + 8:]
    open("kinds.fits", "wb").write(raw)

    expected = {}
    expected["source"] = "astropy %s (astropy.io.fits) reading back the files this script wrote" % astropy.__version__
    with fits.open("kinds.fits") as f:
        h = f["KINDS"]
        hdr = h.header
        # The value written; astropy 5.2.1 reads these cards back without
        # the text between the first quote and the ampersand, so its reading
        # is recorded beside it but is not the reference.
        expected["kinds_longnote"] = LONGNOTE
        expected["kinds_longnote_astropy_reads"] = hdr["LONGNOTE"]
        expected["kinds_columns"] = [{"name": c.name, "format": str(c.format), "unit": c.unit or "", "ucd": hdr.get("TUCD%d" % (i + 1), "")}
                                     for i, c in enumerate(h.columns)]
        num = {}
        for c in h.columns:
            if c.format[-1] in "BIJKED" and c.format.repeat == 1:
                vals = h.data[c.name]
                tnull = c.null
                bscale = 1 if c.bscale is None else c.bscale
                bzero = 0 if c.bzero is None else c.bzero
                out = []
                for k in range(N):
                    v = vals[k]
                    if isinstance(v, (float, np.floating)) and math.isnan(v):
                        out.append(None)
                    elif tnull is not None and round((float(v) - bzero) / bscale) == int(tnull):
                        out.append(None)  # TNULL is compared with the stored integer (physical inverted)
                    else:
                        out.append(float(v))
                num[c.name] = out
                if c.format[-1] in "BIJK" and bscale == 1:
                    num[c.name + ":text"] = [None if out[k] is None else str(int(vals[k])) for k in range(N)]
        expected["kinds_numbers"] = num
        expected["kinds_rows"] = N
        expected["kinds_tscal20"] = hdr["TSCAL20"]
    with fits.open("kinds.fits") as f:
        s = f["SECOND"]
        expected["second"] = {"id": [str(int(x)) for x in s.data["id"]], "ra": [float(x) for x in s.data["ra"]],
                              "parallax_arcsec": [float(x) for x in s.data["parallax"]]}
        loc = f.fileinfo(1)["datLoc"]
        rowbytes = f[1].header["NAXIS1"]

    raw = open("kinds.fits", "rb").read()
    with gzip.GzipFile("kinds.fits.gz", "wb", mtime=0) as g:
        g.write(raw)
    # gzip bytes under a plain .fits name: found by the magic bytes
    open("kinds_gzipped_bytes.fits", "wb").write(open("kinds.fits.gz", "rb").read())
    # truncated inside the third row of KINDS
    open("truncated_data.fits", "wb").write(raw[:loc + 2 * rowbytes + 5])
    # the primary header with its END card blanked, and nothing after it
    end = cards(raw, 0, "END")
    open("missing_end.fits", "wb").write(raw[:end] + b" " * 80 + raw[end + 80:2880])
    # a TFORM with a type code the standard does not have
    at = cards(raw, 2880, "TFORM6")
    open("bad_tform.fits", "wb").write(raw[:at] + "TFORM6  = 'Z       '".ljust(80).encode() + raw[at + 80:])

    fits.HDUList([primary(), bad_rows_hdu()]).writeto("bad_rows.fits", overwrite=True)
    with fits.open("bad_rows.fits") as f:
        expected["bad_rows_ids"] = [str(x) for x in f[1].data["id"]]

    # The same invented catalog as CSV and as FITS (float64 columns, the
    # canonical units, parallax found by its UCD under another name).
    rows = [
        ("eq-01", "12.345678901", "-45.678901234", "1.2345", "0.0123", "-3.25", "7.5", "12.5"),
        ("eq-02", "0.000000001", "89.999999999", "0.1", "0.3", "", "0.001", ""),
        ("eq-03", "359.999999999", "-0.5", "-0.25", "0.2", "1e-3", "-2.5e2", "-250.75"),
        ("eq-04", "180", "0", "3.3333333333333335", "0.05", "100.125", "-100.125", "0"),
    ]
    with open("equiv.csv", "w") as f:
        f.write("id,ra,dec,parallax,parallax_err,pm_ra,pm_dec,rv\n")
        for r in rows:
            f.write(",".join(r) + "\n")
    num = lambda k: np.array([float(r[k]) if r[k] != "" else np.nan for r in rows])
    cols = [
        fits.Column(name="id", format="5A", array=np.array([r[0] for r in rows])),
        fits.Column(name="ra", format="D", unit="deg", array=num(1)),
        fits.Column(name="dec", format="D", unit="deg", array=num(2)),
        fits.Column(name="plx", format="D", unit="mas", array=num(3)),
        fits.Column(name="parallax_err", format="D", unit="mas", array=num(4)),
        fits.Column(name="pm_ra", format="D", unit="mas/yr", array=num(5)),
        fits.Column(name="pm_dec", format="D", unit="mas/yr", array=num(6)),
        fits.Column(name="rv", format="D", unit="km/s", array=num(7)),
    ]
    h = fits.BinTableHDU.from_columns(cols, name="EQUIV")
    h.header["TUCD4"] = "pos.parallax.trig"
    fits.HDUList([primary(), h]).writeto("equiv.fits", overwrite=True)

    with open("expected.json", "w") as f:
        json.dump(expected, f, indent=1, sort_keys=True)
        f.write("\n")


if __name__ == "__main__":
    main()
