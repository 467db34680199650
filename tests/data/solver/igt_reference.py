#!/usr/bin/python3
"""Reference values for tests/test_solver_dipole.c, computed independently with scipy's
adaptive cubature (scipy.integrate.tplquad, scipy 1.10.1): the cube integrals behind the
integrated-Green-tensor prescription. Run with Debian's /usr/bin/python3 (numpy, scipy).
Not part of the test suite; kept so that the pasted numbers can be reproduced."""
import numpy as np
from scipy import integrate

OPT = dict(epsabs=1e-13, epsrel=1e-13)

# 1) integral of 1/|u| over the unit cube centred at the origin (8 octants)
v, e = integrate.tplquad(lambda z, y, x: 1.0 / np.sqrt(x*x + y*y + z*z),
                         0, 0.5, 0, 0.5, 0, 0.5, **OPT)
print("cube 1/r:", repr(8 * v), e)

# 2) J = int_cube e^{ikR}/R dV for d = 1
for k in (0.5, 1.3):
    r = lambda x, y, z: np.sqrt(x*x + y*y + z*z)
    c, e1 = integrate.tplquad(lambda z, y, x: np.cos(k*r(x, y, z)) / r(x, y, z),
                              0, 0.5, 0, 0.5, 0, 0.5, **OPT)
    s, e2 = integrate.tplquad(lambda z, y, x: np.sin(k*r(x, y, z)) / r(x, y, z),
                              0, 0.5, 0, 0.5, 0, 0.5, **OPT)
    print("J k=%g:" % k, repr(8 * c), repr(8 * s), e1, e2)


# 3) cube average of the Green tensor (Jackson, eq. 9.18, E = G p/eps0) over the source
#    cube centred at offset n (d = 1)
def G(k, R, a, b):
    rr = np.linalg.norm(R)
    u = R / rr
    kr = k * rr
    pref = np.exp(1j * kr) / (4 * np.pi * rr**3)
    return pref * ((kr*kr + 1j*kr - 1) * (a == b) - (kr*kr + 3j*kr - 3) * u[a] * u[b])


def avg(k, n, a, b):
    out = []
    for part in (np.real, np.imag):
        f = lambda z, y, x: part(G(k, np.array([x, y, z]), a, b))
        v, _ = integrate.tplquad(f, n[0] - .5, n[0] + .5, n[1] - .5, n[1] + .5,
                                 n[2] - .5, n[2] + .5, epsabs=1e-12, epsrel=1e-12)
        out.append(v)
    return out


for n, a, b in (((1, 0, 0), 0, 0), ((1, 0, 0), 1, 1), ((1, 1, 0), 0, 1), ((2, 1, 1), 1, 2)):
    print("k=0.5", n, a, b, ["%.17g" % v for v in avg(0.5, n, a, b)])
for n, a, b in (((1, 0, 0), 0, 0), ((1, 1, 0), 0, 1)):
    print("k=0", n, a, b, ["%.17g" % v for v in avg(0.0, n, a, b)])
