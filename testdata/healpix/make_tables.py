#!/usr/bin/python3
"""Reference tables for crossmatch/sky/healpix, made with healpy (nest=True).

Run: /usr/bin/python3 testdata/healpix/make_tables.py  (from the repository
root or this directory). Writes ang2pix.csv, pix2ang.csv, neighbours.csv and
disc.csv next to this script. Floats are written with repr (round-trip exact).
"""
import math
import os

import healpy as hp
import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261203)


def out(name):
    return open(os.path.join(HERE, name), "w")


def special_points():
    z23 = math.acos(2.0 / 3.0)
    zm23 = math.acos(-2.0 / 3.0)
    thetas = [0.0, 1e-15, 1e-13, 1e-12, 1e-9, 1e-6, 0.01, 0.1,
              math.pi, math.pi - 1e-15, math.pi - 1e-12, math.pi - 1e-9,
              math.pi / 2, np.nextafter(math.pi / 2, 0.0), np.nextafter(math.pi / 2, 4.0),
              z23, np.nextafter(z23, 0.0), np.nextafter(z23, 4.0),
              zm23, np.nextafter(zm23, 0.0), np.nextafter(zm23, 4.0)]
    phis = [0.0, 1e-15, 2 * math.pi, np.nextafter(2 * math.pi, 0.0),
            2 * math.pi - 1e-12, -1e-15, math.pi / 4, np.nextafter(math.pi / 2, 0.0),
            3.0, 7.0]
    return [(t, p) for t in thetas for p in phis]


def ang2pix():
    z = rng.uniform(-1, 1, 100)
    theta = np.arccos(z)
    phi = rng.uniform(0, 2 * math.pi, 100)
    pts = [(t, p, "random") for t, p in zip(theta.tolist(), phi.tolist())]
    pts += [(t, p, "special") for t, p in special_points()]
    with out("ang2pix.csv") as f:
        f.write("# healpy %s ang2pix(nside=2**order, theta, phi, nest=True)\n" % hp.__version__)
        # z and sin_theta are the C library's cos(theta) and sin(theta), which
        # healpy uses; kind is random, special, or boundary (pixel corners and
        # edge midpoints from healpy.boundaries, exactly on pixel edges).
        f.write("order,theta_rad,phi_rad,z,sin_theta,kind,pix\n")
        for order in range(30):
            nside = 1 << order
            rows = list(pts)
            # Pixel corners and edge midpoints (boundaries) at this order.
            for pix in rng.integers(0, 12 * nside * nside, 3).tolist():
                v = hp.boundaries(nside, pix, step=2, nest=True)
                th, ph = hp.vec2ang(v.T)
                rows += [(t, p, "boundary") for t, p in zip(th.tolist(), ph.tolist())]
            th = np.array([r[0] for r in rows])
            ph = np.array([r[1] for r in rows])
            pix = hp.ang2pix(nside, th, ph, nest=True)
            for (t, p, kind), q in zip(rows, pix.tolist()):
                f.write("%d,%r,%r,%r,%r,%s,%d\n" % (order, t, p, math.cos(t), math.sin(t), kind, q))


def special_pixels(order):
    nside = 1 << order
    npf = nside * nside
    px = set()
    for face in range(12):
        base = face * npf
        # corners of the face: (x,y) = (0,0), (n-1,0), (0,n-1), (n-1,n-1)
        px.update([base, base + npf - 1,
                   int(hp.xyf2pix(nside, nside - 1, 0, face, nest=True)),
                   int(hp.xyf2pix(nside, 0, nside - 1, face, nest=True))])
        if nside > 2:
            px.add(int(hp.xyf2pix(nside, nside - 1, nside // 2, face, nest=True)))
            px.add(int(hp.xyf2pix(nside, 0, nside // 2, face, nest=True)))
            px.add(int(hp.xyf2pix(nside, nside // 2, nside - 1, face, nest=True)))
            px.add(int(hp.xyf2pix(nside, nside // 2, 0, face, nest=True)))
            px.add(int(hp.xyf2pix(nside, nside - 2, nside - 1, face, nest=True)))
            px.add(int(hp.xyf2pix(nside, 1, 0, face, nest=True)))
    return sorted(int(p) for p in px)


def pixel_sets(order, nrandom):
    nside = 1 << order
    if order <= 2:
        return list(range(12 * nside * nside))
    pix = set(special_pixels(order))
    pix.update(rng.integers(0, 12 * nside * nside, nrandom).tolist())
    return sorted(pix)


def pix2ang():
    with out("pix2ang.csv") as f:
        f.write("# healpy %s pix2ang(nside=2**order, pix, nest=True)\n" % hp.__version__)
        f.write("order,pix,theta_rad,phi_rad\n")
        for order in [0, 1, 5, 12, 20, 29]:
            pix = np.array(pixel_sets(order, 200), dtype=np.int64)
            th, ph = hp.pix2ang(1 << order, pix, nest=True)
            for q, t, p in zip(pix.tolist(), th.tolist(), ph.tolist()):
                f.write("%d,%d,%r,%r\n" % (order, q, t, p))


def neighbours():
    with out("neighbours.csv") as f:
        f.write("# healpy %s get_all_neighbours(nside=2**order, pix, nest=True): SW,W,NW,N,NE,E,SE,S\n" % hp.__version__)
        f.write("order,pix,sw,w,nw,n,ne,e,se,s\n")
        for order in [0, 1, 2, 3, 5, 12, 20, 29]:
            pix = np.array(pixel_sets(order, 100), dtype=np.int64)
            nb = hp.get_all_neighbours(1 << order, pix, nest=True)
            for i, q in enumerate(pix.tolist()):
                f.write("%d,%d,%s\n" % (order, q, ",".join(str(int(v)) for v in nb[:, i])))


def disc():
    arcsec = math.pi / 180 / 3600
    radii = [1e-3 * arcsec, arcsec, 60 * arcsec, 3600 * arcsec * 0.25, math.pi / 180, 10 * math.pi / 180]
    z23 = math.acos(2.0 / 3.0)
    centres = [(0.0, 0.0), (1e-12, 1.0), (math.pi, 0.0), (math.pi - 1e-7, 4.0),
               (math.pi / 2, 1e-9), (math.pi / 2, 2 * math.pi - 1e-9), (0.7, 0.0), (2.0, 2 * math.pi - 1e-4),
               (z23, 0.3), (z23 + 1e-6, 1.2), (math.pi - z23, 3.9), (math.pi / 2, math.pi / 4)]
    z = rng.uniform(-1, 1, 6)
    centres += list(zip(np.arccos(z).tolist(), rng.uniform(0, 2 * math.pi, 6).tolist()))
    with out("disc.csv") as f:
        f.write("# healpy %s query_disc(nside=2**order, ang2vec(theta, phi), radius, inclusive, nest=True); pixels space-separated\n" % hp.__version__)
        f.write("order,theta_rad,phi_rad,radius_rad,inclusive,pixels\n")
        for order in [0, 2, 4, 6, 8, 10, 13, 16, 20, 24, 29]:
            nside = 1 << order
            for r in radii:
                expected = 3 * r * r * 4 ** order
                if expected > 800:
                    continue
                for t, p in centres:
                    vec = hp.ang2vec(t, p)
                    for inc in (False, True):
                        # healpy needs fact * nside < 2**30 (a power of 2 in NEST).
                        fact = min(4, 1 << (29 - order))
                        pix = np.sort(hp.query_disc(nside, vec, r, inclusive=inc, fact=fact, nest=True))
                        f.write("%d,%r,%r,%r,%d,%s\n" % (order, t, p, r, int(inc), " ".join(str(int(q)) for q in pix)))


ang2pix()
pix2ang()
neighbours()
disc()
