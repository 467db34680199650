#!/usr/bin/python3
"""Reference Mie coefficients for tests/test_extract_mie.c.

Computed independently of the C code with scipy.special.spherical_jn / spherical_yn
(scipy 1.10.1 under Debian's /usr/bin/python3), directly from the Riccati-Bessel form of
Bohren & Huffman 1983 eqs. 4.56-4.57 (mu_1 = mu), evaluating psi_n(mx) with a complex
argument (no logarithmic-derivative recursion).  Rerun with
    /usr/bin/python3 tests/data/extract/mie_ref.py
and paste the printed C initializers into the test.
"""
import numpy as np
from scipy.special import spherical_jn, spherical_yn


def psi(n, z, d=False):
    # psi_n(z) = z j_n(z); psi_n' = j_n + z j_n'
    if d:
        return spherical_jn(n, z) + z * spherical_jn(n, z, derivative=True)
    return z * spherical_jn(n, z)


def chi(n, z, d=False):
    # chi_n(z) = -z y_n(z)
    if d:
        return -(spherical_yn(n, z) + z * spherical_yn(n, z, derivative=True))
    return -z * spherical_yn(n, z)


def ab(m, x, n):
    A = m * psi(n, m * x) * psi(n, x, True) - psi(n, x) * psi(n, m * x, True)
    B = m * psi(n, m * x) * chi(n, x, True) - chi(n, x) * psi(n, m * x, True)
    C = psi(n, m * x) * psi(n, x, True) - m * psi(n, x) * psi(n, m * x, True)
    D = psi(n, m * x) * chi(n, x, True) - m * chi(n, x) * psi(n, m * x, True)
    return A / (A - 1j * B), C / (C - 1j * D)


cases = [(2.25, 0.5), (12.25, 0.5), (12.25, 1.2), (-10 + 1j, 0.3), (2.25 + 0.1j, 3.0),
         (16.0 + 0.5j, 2.0), (2.25, 0.05)]
for eps, x in cases:
    m = np.sqrt(complex(eps))
    print("    /* eps %s, x %g */" % (eps, x))
    for n in (1, 2, 3):
        a, b = ab(m, x, n)
        print("    {%.17g, %.17g, %.17g, %d, %.17g, %.17g, %.17g, %.17g}," % (
            complex(eps).real, complex(eps).imag, x, n, a.real, a.imag, b.real, b.imag))
# Efficiencies with the same n_max rule as the library (x + 4 x^(1/3) + 2, + 2 spare).
for eps, x in cases:
    m = np.sqrt(complex(eps))
    nmax = int(np.ceil(x + 4 * x ** (1 / 3) + 2)) + 2
    qe = qs = 0.0
    for n in range(1, nmax + 1):
        a, b = ab(m, x, n)
        qe += (2 * n + 1) * (a + b).real
        qs += (2 * n + 1) * (abs(a) ** 2 + abs(b) ** 2)
    print("    {%.17g, %.17g, %.17g, %.17g, %.17g}," % (
        complex(eps).real, complex(eps).imag, x, 2 * qe / x ** 2, 2 * qs / x ** 2))
# Large size parameters (efficiencies only): the library's recursions against the direct
# complex-argument evaluation.
print("/* large x */")
for eps, x in [(2.25 + 0.01j, 30.0), (2.25 + 0.01j, 100.0)]:
    m = np.sqrt(complex(eps))
    nmax = int(np.ceil(x + 4 * x ** (1 / 3) + 2)) + 2
    qe = qs = 0.0
    for n in range(1, nmax + 1):
        a, b = ab(m, x, n)
        qe += (2 * n + 1) * (a + b).real
        qs += (2 * n + 1) * (abs(a) ** 2 + abs(b) ** 2)
    print("    {%.17g, %.17g, %.17g, %.17g, %.17g}," % (
        complex(eps).real, complex(eps).imag, x, 2 * qe / x ** 2, 2 * qs / x ** 2))
