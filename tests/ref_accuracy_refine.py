#!/usr/bin/python3
"""ref_accuracy_refine.py BIN: --refine through the whole program.

1. A sphere given as a shape (eps 2.25, x = k a = 0.5, 10 dipoles per radius, default
   options, i.e. without boundary fractions): `tensor --refine 3` must bring a_ee within
   0.3% of Mie theory (computed here with scipy.special, Bohren & Huffman 1983 eq. 4.53),
   and its error estimate (`error`) must cover the true error in the real and the
   imaginary part. Measured: 0.05% off with an estimate of 0.14%, against 1.2% for the
   single solve at the same spacing (docs/accuracy.md).
2. The same kind of sphere as a plain voxel file (.npy, radius 5 voxels, centre rule):
   the voxels are the object, so `static --refine 3` splits them and converges to the
   response of that staircase body, which lies about 1.3% above the smooth sphere's
   3 (eps - 1)/(eps + 2) (Clausius-Mossotti; B&H eq. 5.15). Checks: the output says the
   result belongs to the staircase body; the refined value differs from the smooth
   sphere's by more than its error estimate; and it agrees, within that estimate, with an
   independent extrapolation done here from split levels 2, 3, 4 (a least-squares line in
   the spacing, Richardson 1911), which never uses level 1.
"""
import math
import os
import subprocess
import sys
import tempfile

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "helpers"))
import accref  # noqa: E402

BIN = sys.argv[1]
TARGET = 0.003  # the required accuracy of refined a_ee (issue acceptance criterion)
failures = 0

with tempfile.TemporaryDirectory() as tmp:
    # ---- 1. shape
    a = 50e-9
    lam = 2 * math.pi * a / 0.5
    ree, _ = accref.mie_alpha(2.25, 1.0, a, lam)
    vtk = os.path.join(tmp, "s.vtk")
    subprocess.run([BIN, "shape", "sphere", "--radius", "50nm", "--spacing", "5nm", "-o",
                    vtk], check=True, capture_output=True)
    o = accref.run_json([BIN, "tensor", vtk, "--eps", "2.25", "--wavelength",
                         "%.12gnm" % (lam * 1e9), "--refine", "3", "--json",
                         "--threads", "1"])
    ee = np.trace(accref.tensor3(o["alpha"]["ee"])) / 3
    er = accref.tensor3(o["error"]["ee"])[0, 0]
    rel = abs(ee - ree) / abs(ree)
    covered = abs((ee - ree).real) <= er.real and abs((ee - ree).imag) <= er.imag
    shape_said = "shape" in o["refine"]["result_belongs_to"]
    ok = rel <= TARGET and covered and shape_said
    print("shape sphere: a_ee %.3e off Mie (target %.1e), error estimate %.2e%+.2ei vs "
          "true %.2e%+.2ei  %s" % (rel, TARGET, er.real, er.imag, (ee - ree).real,
                                    (ee - ree).imag, "ok" if ok else "FAIL"))
    failures += not ok

    # ---- 2. plain voxel set
    nr = 5
    idx = np.arange(-nr, nr + 1)
    X, Y, Z = np.meshgrid(idx, idx, idx, indexing="ij")
    lab = (X * X + Y * Y + Z * Z <= nr * nr).astype(np.uint8)
    d_nm = 10.0
    npy = os.path.join(tmp, "v.npy")
    np.save(npy, lab)
    o = accref.run_json([BIN, "static", npy, "--spacing", "%gnm" % d_nm, "--eps", "2.25",
                         "--refine", "3", "--json", "--threads", "1"])
    V = o["volume_m3"]
    v_ref = accref.tensor3(o["chi"])[0, 0].real / V
    e_ref = accref.tensor3(o["chi_error"])[0, 0].real / V
    staircase_said = "staircase" in o["refine"]["result_belongs_to"]
    smooth = 3 * 1.25 / 4.25
    # Independent: split levels m = 2, 3, 4 here, line in h = 1/m, intercept.
    hs, vs = [], []
    for m in (2, 3, 4):
        sub = lab.repeat(m, 0).repeat(m, 1).repeat(m, 2)
        np.save(npy, sub)
        om = accref.run_json([BIN, "static", npy, "--spacing", "%.12gnm" % (d_nm / m),
                              "--eps", "2.25", "--json", "--threads", "1"])
        hs.append(1.0 / m)
        vs.append(accref.tensor3(om["chi"])[0, 0].real / om["volume_m3"])
    slope, icpt = np.polyfit(hs, vs, 1)
    ok = (staircase_said and abs(v_ref - smooth) > e_ref and abs(v_ref - icpt) <= e_ref)
    print("voxel set: refined chi/V %.5f +- %.5f, independent (levels 2-4) %.5f, smooth "
          "sphere %.5f (staircase %.2f%% above)  %s"
          % (v_ref, e_ref, icpt, smooth, 100 * (v_ref / smooth - 1), "ok" if ok else "FAIL"))
    failures += not ok
sys.exit(1 if failures else 0)
