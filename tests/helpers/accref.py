"""accref.py: independent reference values for the accuracy checks (tests/ref_accuracy_*.py)
and the accuracy report (benchmarks/accuracy.py), computed here with scipy.special and
nothing from the program under test.

Sources:
* Mie coefficients a_n, b_n: Bohren & Huffman, "Absorption and Scattering of Light by
  Small Particles" (1983), eq. 4.53 with mu_1 = mu, Riccati-Bessel functions
  psi_n(r) = r j_n(r), xi_n(r) = r h_n^(1)(r) (B&H sec. 4.4).
* Dipole polarizabilities in SI volume units: a_ee = 6 pi i a_1 / k^3, a_mm = 6 pi i b_1 / k^3
  (the dipole terms of B&H eqs. 4.45-4.46 written as induced moments; e.g. Doyle 1989,
  Phys. Rev. B 39, 9852, in Gaussian units, times 4 pi).
* Ellipsoids: depolarization factors of Osborn, Phys. Rev. 67, 351 (1945), written with
  Carlson's symmetric integral, L_i = (a1 a2 a3 / 3) R_D(a_j^2, a_k^2, a_i^2) (Carlson,
  Numer. Algorithms 10, 13 (1995); DLMF 19.16.5 and 19.20); static polarizability
  a_i = V (eps - 1)/(1 + L_i (eps - 1)) (B&H eq. 5.32).
"""
import json
import math
import subprocess

import numpy as np
from scipy import special


def mie_a1_b1(eps_rel, x):
    """a_1, b_1 of a sphere of permittivity eps_rel (relative to the host), size x = k a."""
    m = np.sqrt(complex(eps_rel))
    mx = m * x
    n = 1

    def psi(z):
        return z * special.spherical_jn(n, z)

    def dpsi(z):
        return special.spherical_jn(n, z) + z * special.spherical_jn(n, z, derivative=True)

    def xi(z):
        return z * (special.spherical_jn(n, z) + 1j * special.spherical_yn(n, z))

    def dxi(z):
        h = special.spherical_jn(n, z) + 1j * special.spherical_yn(n, z)
        dh = (special.spherical_jn(n, z, derivative=True)
              + 1j * special.spherical_yn(n, z, derivative=True))
        return h + z * dh

    a1 = (m * psi(mx) * dpsi(x) - psi(x) * dpsi(mx)) / (m * psi(mx) * dxi(x) - xi(x) * dpsi(mx))
    b1 = (psi(mx) * dpsi(x) - m * psi(x) * dpsi(mx)) / (psi(mx) * dxi(x) - m * xi(x) * dpsi(mx))
    return complex(a1), complex(b1)


def mie_alpha(eps, host_index, radius_m, lambda0_m):
    """(a_ee, a_mm) in m^3 of a sphere of permittivity eps (relative to vacuum)."""
    k = 2.0 * math.pi * host_index / lambda0_m
    a1, b1 = mie_a1_b1(complex(eps) / host_index**2, k * radius_m)
    return 6j * math.pi * a1 / k**3, 6j * math.pi * b1 / k**3


def depolarization(semi):
    """Osborn (1945) depolarization factors of an ellipsoid with semi-axes a1, a2, a3."""
    a = np.asarray(semi, dtype=float)
    s2 = a * a
    pre = a.prod() / 3.0
    return np.array([pre * special.elliprd(s2[(i + 1) % 3], s2[(i + 2) % 3], s2[i])
                     for i in range(3)])


def euler_zyz(A, B, G):
    """Active rotation R = Rz(A) Ry(B) Rz(G); its columns are the body axes (lab frame)."""
    def rz(t):
        c, s = math.cos(t), math.sin(t)
        return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])

    def ry(t):
        c, s = math.cos(t), math.sin(t)
        return np.array([[c, 0, s], [0, 1, 0], [-s, 0, c]])
    return rz(A) @ ry(B) @ rz(G)


def ellipsoid_alpha(semi, eps_rel, R=None):
    """Static 3x3 polarizability (m^3) of an ellipsoid, lab frame: R diag(a_i) R^T
    (plain transpose also for complex a_i)."""
    L = depolarization(semi)
    V = 4.0 * math.pi * np.prod(semi) / 3.0
    ai = V * (eps_rel - 1.0) / (1.0 + L * (eps_rel - 1.0))
    R = np.eye(3) if R is None else R
    return R @ np.diag(ai) @ R.T


def run_json(cmd):
    """Runs the program, returns the parsed JSON object from stdout."""
    p = subprocess.run(cmd, capture_output=True, text=True)
    if p.returncode != 0:
        raise RuntimeError("%s failed (%d): %s" % (" ".join(cmd), p.returncode, p.stderr))
    return json.loads(p.stdout)


def tensor3(js):
    """A JSON 3x3 tensor of [re, im] pairs as a complex numpy array."""
    return np.array([[complex(v[0], v[1]) for v in row] for row in js])
