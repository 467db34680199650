#!/usr/bin/python3
"""ref_accuracy_identities.py BIN: physical identities of the 6x6 polarizability of
asymmetric particles (a helix and a split ring), computed here from `BIN tensor --json`
output with numpy, independently of the program's own diagnostics.

* Reciprocity (Onsager-Casimir for a non-magnetic, reciprocal particle; e.g. Sersic,
  Tuambilangana, Kodera & Bourgeois, Phys. Rev. B 83, 245102 (2011), and the reaction
  theorem, Rumsey 1954): a_ee = a_ee^T, a_mm = a_mm^T, a_em = -a_me^T in the units where
  p/(eps0 eps_h) = a_ee E + a_em Z_h H and Z_h m = a_me E + a_mm Z_h H.
* Energy (optical theorem for a lossless scatterer; Belov, Maslovski, Simovski & Tretyakov,
  Tech. Phys. Lett. 29, 718 (2003) for dipoles): (A^-1 - A^-H)/(2i) = -(k^3/(6 pi)) (I + D)
  with D positive semidefinite (D collects the power radiated into multipoles beyond the
  dipole), so the eigenvalues of -(6 pi/k^3)(A^-1 - A^-H)/(2i) - I are >= 0 up to solver
  precision (a sign error in a cross block or in the radiative correction makes some
  negative).
* Lossy particles absorb: (A - A^H)/(2i) - (k^3/(6 pi)) A^H A is positive semidefinite
  (extinction minus dipole scattering; same references).
"""
import math
import os
import sys
import tempfile

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "helpers"))
import accref  # noqa: E402

BIN = sys.argv[1]
TOL = 1e-10  # solver tolerance passed to the program
# Reciprocity holds exactly for the discrete-dipole system (complex symmetric matrix,
# Draine 1988); the solves leave O(tol) asymmetry with a condition-number factor.
RECIP = 1e-7
# Solver precision on the eigenvalues of the normalized anti-Hermitian part.
EIG_FLOOR = -1e-6

CASES = [
    ("helix", ["helix", "--coil-radius", "40nm", "--wire-radius", "12nm", "--pitch",
               "60nm", "--turns", "1.5"], "10nm"),
    ("split ring", ["split-ring", "--outer-radius", "60nm", "--inner-radius", "30nm",
                    "--thickness", "20nm", "--gap", "20nm", "--euler", "0deg,35deg,20deg"],
     "12nm"),
]

failures = 0
with tempfile.TemporaryDirectory() as tmp:
    for name, shape, spacing in CASES:
        vtk = os.path.join(tmp, "g.vtk")
        accref.subprocess.run([BIN, "shape"] + shape + ["--spacing", spacing, "-o", vtk],
                              check=True, capture_output=True)
        for eps in ["12.25", "-10+1i"]:
            o = accref.run_json([BIN, "tensor", vtk, "--eps", eps, "--wavelength", "900nm",
                                 "--host-index", "1.2", "--tol", "%g" % TOL, "--json",
                                 "--threads", "1"])
            A = np.zeros((6, 6), complex)
            for b, (r, c) in {"ee": (0, 0), "em": (0, 3), "me": (3, 0),
                              "mm": (3, 3)}.items():
                A[r:r + 3, c:c + 3] = accref.tensor3(o["alpha"][b])
            k = o["k_per_m"]
            scale = np.abs(A).max()
            rec = max(np.abs(A[:3, :3] - A[:3, :3].T).max(),
                      np.abs(A[3:, 3:] - A[3:, 3:].T).max(),
                      np.abs(A[:3, 3:] + A[3:, :3].T).max()) / scale
            # The opposite sign must NOT hold (it would mean a sign error in a cross block).
            wrong = np.abs(A[:3, 3:] - A[3:, :3].T).max() / scale
            ok = rec < RECIP and wrong > 1e3 * rec
            print("%-10s eps %-7s reciprocity %.2e (opposite sign %.2e) %s"
                  % (name, eps, rec, wrong, "ok" if ok else "FAIL"))
            failures += not ok
            c = k ** 3 / (6 * math.pi)
            if eps == "12.25":
                Ai = np.linalg.inv(A)
                ah = (Ai - Ai.conj().T) / 2j
                D = -ah / c - np.eye(6)
                ev = np.linalg.eigvalsh((D + D.conj().T) / 2)
                ok = ev.min() > EIG_FLOOR
                print("%-10s lossless: eigenvalues of D %.2e .. %.2e %s"
                      % (name, ev.min(), ev.max(), "ok" if ok else "FAIL"))
                failures += not ok
            else:
                Mabs = (A - A.conj().T) / 2j - c * A.conj().T @ A
                ev = np.linalg.eigvalsh((Mabs + Mabs.conj().T) / 2) / scale
                ok = ev.min() > EIG_FLOOR and ev.max() > 0
                print("%-10s lossy: absorption eigenvalues / max|A| %.2e .. %.2e %s"
                      % (name, ev.min(), ev.max(), "ok" if ok else "FAIL"))
                failures += not ok
sys.exit(1 if failures else 0)
