#!/usr/bin/python3
"""Reference check of the extraction layer through the dipolize program: a voxelized
sphere's static tensor, 6x6 tensor and size expansion against Mie theory computed here
with scipy.special (Bohren & Huffman 1983, eqs. 4.56-4.57 with mu_1 = mu; the dipole
polarizabilities a_ee = 6 pi i a_1 / k^3, a_mm = 6 pi i b_1 / k^3 in SI volume units) and
the Clausius-Mossotti static limit 3 V (eps - 1)/(eps + 2) (B&H 1983 ch. 5).

Usage (run by ctest): /usr/bin/python3 tests/ref_extract_sphere.py PATH/TO/dipolize
Tolerances are the measured discrete-dipole errors of this resolution (12 dipoles per
diameter, eps 2.25, x = 0.32) with a margin: static 0.9% (measured 0.45%), a_ee 1.5%
(0.46%), a_mm 8% (3.8%)."""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy.special import spherical_jn, spherical_yn


def psi(n, z, d=False):
    if d:
        return spherical_jn(n, z) + z * spherical_jn(n, z, derivative=True)
    return z * spherical_jn(n, z)


def chi(n, z, d=False):
    if d:
        return -(spherical_yn(n, z) + z * spherical_yn(n, z, derivative=True))
    return -z * spherical_yn(n, z)


def mie_ab1(eps, x):
    m = np.sqrt(complex(eps))
    A = m * psi(1, m * x) * psi(1, x, True) - psi(1, x) * psi(1, m * x, True)
    B = m * psi(1, m * x) * chi(1, x, True) - chi(1, x) * psi(1, m * x, True)
    C = psi(1, m * x) * psi(1, x, True) - m * psi(1, x) * psi(1, m * x, True)
    D = psi(1, m * x) * chi(1, x, True) - m * chi(1, x) * psi(1, m * x, True)
    return A / (A - 1j * B), C / (C - 1j * D)


def cplx(pair):
    return complex(pair[0], pair[1])


def run(exe, *args):
    out = subprocess.run([exe, *args], check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def main():
    exe = sys.argv[1]
    failures = []

    def check(name, got, want, tol):
        rel = abs(got - want) / abs(want)
        print("%-28s %.6g%+.6gi  reference %.6g%+.6gi  rel. error %.3g (tol %.3g)" % (
            name, got.real, got.imag, want.real, want.imag, rel, tol))
        if not rel <= tol:
            failures.append(name)

    eps = 2.25
    with tempfile.TemporaryDirectory() as tmp:
        vtk = os.path.join(tmp, "sphere.vtk")
        subprocess.run([exe, "shape", "sphere", "--radius", "30nm", "--spacing", "5nm",
                        "-o", vtk], check=True, capture_output=True)
        st = run(exe, "static", vtk, "--eps", "2.25", "--json")
        V = st["volume_m3"]
        cm = 3 * V * (eps - 1) / (eps + 2)
        for i in range(3):
            check("static chi[%d][%d]" % (i, i), cplx(st["chi"][i][i]), cm, 0.009)
        t = run(exe, "tensor", vtk, "--eps", "2.25", "--wavelength", "600nm", "--json")
        k, a = t["k_per_m"], t["a_eq_m"]
        a1, b1 = mie_ab1(eps, k * a)
        aee, amm = 6j * np.pi * a1 / k ** 3, 6j * np.pi * b1 / k ** 3
        for i in range(3):
            check("alpha ee[%d][%d]" % (i, i), cplx(t["alpha"]["ee"][i][i]), aee, 0.015)
            check("alpha mm[%d][%d]" % (i, i), cplx(t["alpha"]["mm"][i][i]), amm, 0.08)
        d = t["diagnostics"]
        print("reciprocity %.3g, energy balance %.3g" % (d["reciprocity"], d["energy_balance"]))
        if not d["reciprocity"] < 1e-8:
            failures.append("reciprocity")
        if not d["energy_balance"] < 1e-6:
            failures.append("energy balance")
        ex = run(exe, "expand", vtk, "--eps", "2.25", "--json")
        print("radiative check %.3g" % ex["radiative_check"])
        if not ex["radiative_check"] < 0.005:
            failures.append("radiative check")
        # C0 = V chi^-1 must agree with the closed form (eps+2)/(3(eps-1)) like chi does
        check("expand C0[0][0]", cplx(ex["C0"][0][0]), (eps + 2) / (3 * (eps - 1)), 0.009)
    if failures:
        print("FAILED: " + ", ".join(failures))
        return 1
    print("all reference checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
