#!/usr/bin/python3
"""Reference values for tests/test_extract_static.c: Carlson's R_D from
scipy.special.elliprd (scipy 1.10.1, Debian /usr/bin/python3) and depolarization factors of
ellipsoids L_i = (a1 a2 a3 / 3) R_D(a_j^2, a_k^2, a_i^2) (Osborn 1945), cross-checked by
direct quadrature of the Osborn integral with scipy.integrate.quad.
Rerun with  /usr/bin/python3 tests/data/extract/ellipsoid_ref.py"""
import numpy as np
from scipy.special import elliprd
from scipy.integrate import quad

print("/* x, y, z, R_D */")
for x, y, z in [(0.0, 2.0, 1.0), (2.0, 3.0, 4.0), (0.25, 1.0, 0.0625), (1.0, 1.0, 1.0),
                (1e-3, 7.5, 0.3), (5.0, 0.0, 2.5)]:
    print("    {%.17g, %.17g, %.17g, %.17g}," % (x, y, z, elliprd(x, y, z)))
print("/* a1, a2, a3, L1, L2, L3 (R_D), max |R_D - quadrature| */")
for a in [(1.0, 2.0, 3.0), (1.0, 1.0, 4.0), (2.5, 1.0, 0.4), (1.0, 1.0, 1.0)]:
    L = []
    dq = 0.0
    for i in range(3):
        j, k = (i + 1) % 3, (i + 2) % 3
        Li = a[0] * a[1] * a[2] / 3 * elliprd(a[j] ** 2, a[k] ** 2, a[i] ** 2)
        f = lambda q: 1.0 / ((q + a[i] ** 2) * np.sqrt((q + a[0] ** 2) * (q + a[1] ** 2) * (q + a[2] ** 2)))
        Lq = a[0] * a[1] * a[2] / 2 * quad(f, 0, np.inf, epsabs=0, epsrel=1e-13, limit=500)[0]
        dq = max(dq, abs(Li - Lq))
        L.append(Li)
    print("    {%.17g, %.17g, %.17g, %.17g, %.17g, %.17g}, /* quad diff %.1e */" % (a + tuple(L) + (dq,)))
