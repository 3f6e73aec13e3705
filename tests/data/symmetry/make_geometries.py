#!/usr/bin/env python3
"""Writes the symmetry test geometries (XYZ, Å) of this folder from standard bond
lengths and angles. File names state the expected point group.

Bond lengths and angles are rounded literature equilibrium values (from memory,
common textbook values; the symmetry tests do not depend on their exact size):
water O-H 0.958, HOH 104.5; ammonia N-H 1.012, HNH 106.7; methane C-H 1.087;
CO2 C=O 1.160; acetylene C#C 1.203, C-H 1.063; BF3 B-F 1.307; formaldehyde
C=O 1.205, C-H 1.111, HCH 116.1; ethylene C=C 1.339, C-H 1.086, HCH 117.6;
benzene C-C 1.397, C-H 1.084; SF6 S-F 1.561; ethane C-C 1.535, C-H 1.094,
HCC 111.2; allene C=C 1.308, C-H 1.087, HCH 118.2; XeF4 Xe-F 1.95; boric acid
B-O 1.361, O-H 0.967, BOH 113.8; ferrocene Fe-ring 1.66, C-C 1.43, C-H 1.08;
S8 crown ring radius 2.40 and +-0.46 out of plane (S-S 2.05); C60 as a truncated
icosahedron with all edges 1.43; B12H12(2-) B-B 1.78, B-H 1.19; dodecahedrane
C-C 1.54, C-H 1.09.
Run: python3 make_geometries.py (writes into the script's folder).
"""
import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))
PHI = (1 + 5 ** 0.5) / 2


def write(name, title, atoms):
    with open(os.path.join(HERE, name), "w") as f:
        f.write(f"{len(atoms)}\n{title}\n")
        for symbol, (x, y, z) in atoms:
            f.write(f"{symbol:2s} {x:14.8f} {y:14.8f} {z:14.8f}\n")


def polar(r, theta_deg, phi_deg, z0=0.0):
    t, p = math.radians(theta_deg), math.radians(phi_deg)
    return (r * math.sin(t) * math.cos(p), r * math.sin(t) * math.sin(p), z0 + r * math.cos(t))


def cyclic(points):
    out = []
    for (a, b, c) in points:
        out += [(a, b, c), (b, c, a), (c, a, b)]
    return out


def signs(point):
    """All sign choices of the nonzero components."""
    out = [()]
    for v in point:
        out = [o + (s * v,) for o in out for s in ((1, -1) if v != 0 else (1,))]
    return out


def scaled(points, factor):
    return [tuple(factor * v for v in p) for p in points]


def radial(p, extra):
    n = math.sqrt(sum(v * v for v in p))
    return tuple(v * (n + extra) / n for v in p)


half = math.radians(104.5 / 2)
write("water.C2v.xyz", "water", [("O", (0, 0, 0)), ("H", (0.958 * math.sin(half), 0, 0.958 * math.cos(half))),
                                 ("H", (-0.958 * math.sin(half), 0, 0.958 * math.cos(half)))])

sin_theta = math.sqrt((1 - math.cos(math.radians(106.7))) / 1.5)
theta = math.degrees(math.asin(sin_theta))
write("ammonia.C3v.xyz", "ammonia", [("N", (0, 0, 0))] + [("H", polar(1.012, 180 - theta, phi)) for phi in (0, 120, 240)])

d = 1.087 / math.sqrt(3)
write("methane.Td.xyz", "methane", [("C", (0, 0, 0))] + [("H", (d * a, d * b, d * c)) for a, b, c in
                                                         ((1, 1, 1), (1, -1, -1), (-1, 1, -1), (-1, -1, 1))])

write("carbon_dioxide.Dinfh.xyz", "carbon dioxide", [("C", (0, 0, 0)), ("O", (0, 0, 1.160)), ("O", (0, 0, -1.160))])

write("acetylene.Dinfh.xyz", "acetylene", [("C", (0, 0, 0.6015)), ("C", (0, 0, -0.6015)), ("H", (0, 0, 0.6015 + 1.063)),
                                           ("H", (0, 0, -0.6015 - 1.063))])

write("boron_trifluoride.D3h.xyz", "boron trifluoride", [("B", (0, 0, 0))] + [("F", polar(1.307, 90, phi)) for phi in (0, 120, 240)])

h = math.radians(116.1 / 2)
write("formaldehyde.C2v.xyz", "formaldehyde", [("C", (0, 0, 0)), ("O", (0, 0, 1.205)),
                                               ("H", (1.111 * math.sin(h), 0, -1.111 * math.cos(h))),
                                               ("H", (-1.111 * math.sin(h), 0, -1.111 * math.cos(h)))])

a = math.radians(180 - (360 - 117.6) / 2)
cx = 1.339 / 2
write("ethylene.D2h.xyz", "ethylene", [("C", (cx, 0, 0)), ("C", (-cx, 0, 0))] +
      [("H", (sx * (cx + 1.086 * math.cos(a)), sy * 1.086 * math.sin(a), 0)) for sx in (1, -1) for sy in (1, -1)])

write("benzene.D6h.xyz", "benzene", [("C", polar(1.397, 90, 60 * k)) for k in range(6)] +
      [("H", polar(1.397 + 1.084, 90, 60 * k)) for k in range(6)])

write("sulfur_hexafluoride.Oh.xyz", "sulfur hexafluoride", [("S", (0, 0, 0))] +
      [("F", tuple(s * 1.561 * (i == k) for i in range(3))) for k in range(3) for s in (1, -1)])


def ethane(staggered):
    zc = 1.535 / 2
    atoms = [("C", (0, 0, zc)), ("C", (0, 0, -zc))]
    for phi in (0, 120, 240):
        atoms.append(("H", polar(1.094, 180 - 111.2, phi, zc)))
    for phi in (0, 120, 240):
        atoms.append(("H", polar(1.094, 111.2, phi + (60 if staggered else 0), -zc)))
    return atoms


write("ethane_staggered.D3d.xyz", "ethane, staggered", ethane(True))
write("ethane_eclipsed.D3h.xyz", "ethane, eclipsed", ethane(False))

hh = math.radians(118.2 / 2)
write("allene.D2d.xyz", "allene", [("C", (0, 0, 0)), ("C", (0, 0, 1.308)), ("C", (0, 0, -1.308)),
                                   ("H", (1.087 * math.sin(hh), 0, 1.308 + 1.087 * math.cos(hh))),
                                   ("H", (-1.087 * math.sin(hh), 0, 1.308 + 1.087 * math.cos(hh))),
                                   ("H", (0, 1.087 * math.sin(hh), -1.308 - 1.087 * math.cos(hh))),
                                   ("H", (0, -1.087 * math.sin(hh), -1.308 - 1.087 * math.cos(hh)))])

write("xenon_tetrafluoride.D4h.xyz", "xenon tetrafluoride", [("Xe", (0, 0, 0))] +
      [("F", polar(1.95, 90, 90 * k)) for k in range(4)])

boric = [("B", (0, 0, 0))]
for phi in (0, 120, 240):
    o = polar(1.361, 90, phi)
    boric.append(("O", o))
    # H in the plane, the B-O-H angle 113.8 degrees, all turned the same way (C3h).
    direction = phi + 180 - 113.8
    boric.append(("H", (o[0] + 0.967 * math.cos(math.radians(direction + 180)),
                        o[1] + 0.967 * math.sin(math.radians(direction + 180)), 0)))
write("boric_acid.C3h.xyz", "boric acid, planar, propeller", boric)


def ferrocene(staggered):
    rc = 1.43 / (2 * math.sin(math.radians(36)))
    atoms = [("Fe", (0, 0, 0))]
    for zsign, offset in ((1, 0), (-1, 36 if staggered else 0)):
        for k in range(5):
            atoms.append(("C", polar(rc, 90, 72 * k + offset, zsign * 1.66)))
            atoms.append(("H", polar(rc + 1.08, 90, 72 * k + offset, zsign * 1.66)))
    return atoms


write("ferrocene_eclipsed.D5h.xyz", "ferrocene, eclipsed", ferrocene(False))
write("ferrocene_staggered.D5d.xyz", "ferrocene, staggered", ferrocene(True))

write("cyclooctasulfur.D4d.xyz", "S8 crown", [("S", polar(2.40, 90, 45 * k, 0.46 * (-1) ** k)) for k in range(8)])

c60 = []
for base in ((0, 1, 3 * PHI), (1, 2 + PHI, 2 * PHI), (PHI, 2, PHI ** 3)):
    for p in cyclic([base]):
        c60 += signs(p)
write("buckminsterfullerene.Ih.xyz", "C60, truncated icosahedron, equal edges",
      [("C", p) for p in scaled(c60, 1.43 / 2)])

ico = []
for p in cyclic([(0, 1, PHI)]):
    ico += signs(p)
boron = scaled(ico, 1.78 / 2)
write("closo_dodecaborate.Ih.xyz", "B12H12 dianion", [("B", p) for p in boron] + [("H", radial(p, 1.19)) for p in boron])

dod = signs((1, 1, 1))
for p in cyclic([(0, 1 / PHI, PHI)]):
    dod += signs(p)
carbon = scaled(dod, 1.54 / (2 / PHI))
write("dodecahedrane.Ih.xyz", "dodecahedrane", [("C", p) for p in carbon] + [("H", radial(p, 1.09)) for p in carbon])
