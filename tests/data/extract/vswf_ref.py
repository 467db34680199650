#!/usr/bin/python3
"""Reference values for tests/test_extract_vswf.c: orthonormal spherical harmonics with the
Condon-Shortley phase (scipy.special.sph_harm, scipy 1.10.1, argument order (m, n, phi,
theta)) and spherical Bessel functions (scipy.special.spherical_jn / spherical_yn), via
Debian's /usr/bin/python3.  Rerun with  /usr/bin/python3 tests/data/extract/vswf_ref.py"""
import numpy as np
from scipy.special import sph_harm, spherical_jn, spherical_yn

pts = [(0.7312, 2.1457), (2.4012, -0.8413), (0.05, 0.3)]
print("/* n, m, theta, phi, Re Y, Im Y */")
for th, ph in pts:
    for n in (1, 2, 3, 7):
        for m in range(-n, n + 1):
            if n == 7 and abs(m) not in (0, 3, 7):
                continue
            y = sph_harm(m, n, ph, th)
            print("    {%d, %d, %.17g, %.17g, %.17g, %.17g}," % (n, m, th, ph, y.real, y.imag))
print("/* n, rho, j_n, y_n */")
for rho in (1e-4, 0.3817, 2.9, 3.141592653589793, 17.3, 45.2):
    for n in (0, 1, 2, 5, 12):
        print("    {%d, %.17g, %.17g, %.17g}," % (n, rho, spherical_jn(n, rho), spherical_yn(n, rho)))
