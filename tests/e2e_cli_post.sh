#!/usr/bin/env bash
# e2e_cli_post.sh BIN: the post-processing object of `dipolize tensor --json` (principal
# values, orientation averages, chirality, bianisotropy) against physical identities:
# - a sphere: the Hermitian part of a_ee is (Re a_ee) I, so its three principal values
#   equal Re a_ee,xx (cubic symmetry of the voxel sphere; common practice), and the
#   orientation average of a_ee is a_ee,xx; chirality and bianisotropy vanish (inversion
#   symmetry; Lindell et al. 1994);
# - a helix and its mirror image: the chirality pseudoscalar tr(a_em)/3 changes sign under
#   reflection (Lindell et al. 1994), the bianisotropy measure (a norm) does not;
# - orientation averages are trace/3 of the printed blocks (definition);
# - the principal axes of a rotated ellipsoid's static tensor are its rotated own axes.
set -eu
bin=${1:?usage: e2e_cli_post.sh BIN}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
"$bin" shape sphere --radius 12nm --spacing 3nm -o "$tmp/s.vtk" --quiet
"$bin" shape helix --coil-radius 12nm --wire-radius 4nm --pitch 15nm --turns 1.5 \
    --spacing 3nm -o "$tmp/r.vtk" --quiet
"$bin" shape helix --coil-radius 12nm --wire-radius 4nm --pitch 15nm --turns 1.5 --left \
    --spacing 3nm -o "$tmp/l.vtk" --quiet
"$bin" shape ellipsoid --semi-axes 10nm,20nm,30nm --euler 30deg,40deg,0deg --spacing 2nm \
    -o "$tmp/e.vtk" --quiet
"$bin" static "$tmp/e.vtk" --eps 4 --json --quiet >"$tmp/e.json"
for f in s r l; do
    "$bin" tensor "$tmp/$f.vtk" --eps 12.25 --wavelength 500nm --json --quiet >"$tmp/$f.json"
done
/usr/bin/python3 - "$tmp" <<'PY'
import json, sys
d = sys.argv[1]
def load(n): return json.load(open(f"{d}/{n}.json"))
def c(p): return complex(p[0], p[1])
fail = []
passed = []
def check(ok, what):
    print(("ok    " if ok else "FAIL  ") + what)
    (passed if ok else fail).append(what)

s = load("s"); p = s["post"]; ee = s["alpha"]["ee"]
axx = c(ee[0][0])
check(all(abs(w - axx.real) <= 1e-9 * abs(axx) for w in p["ee_hermitian"]["values_m3"]),
      "sphere: principal values of Herm(a_ee) equal Re a_ee,xx")
avg = c(p["orientation_average_m3"]["ee"])
tr = sum(c(ee[i][i]) for i in range(3)) / 3
check(abs(avg - tr) <= 1e-12 * abs(tr), "sphere: orientation average = tr(a_ee)/3")
check(abs(avg - axx) <= 1e-9 * abs(axx), "sphere: orientation average = a_ee,xx")
check(abs(c(p["chirality_m3"])) <= 1e-9 * abs(axx), "sphere: chirality vanishes")
check(p["bianisotropy"] <= 1e-6, "sphere: bianisotropy vanishes")

r = load("r")["post"]; l = load("l")["post"]
cr, cl = c(r["chirality_m3"]), c(l["chirality_m3"])
check(abs(cr) > 1e-3 * abs(c(r["orientation_average_m3"]["ee"])), "helix: chirality is not negligible")
check(abs(cr + cl) <= 1e-6 * abs(cr), "helix: chirality changes sign under reflection")
check(abs(r["bianisotropy"] - l["bianisotropy"]) <= 1e-6 * r["bianisotropy"],
      "helix: bianisotropy measure is mirror-invariant")
for k in ("ee_hermitian", "mm_hermitian"):
    w = r[k]["values_m3"]
    check(w == sorted(w) and len(r[k]["axes"]) == 3, f"helix: {k} values ascending with 3 axes")
# Rotated triaxial ellipsoid (static): the principal axes of Re chi are the shape's own
# axes, the columns of R = Rz(30 deg) Ry(40 deg) (the --euler definition); the smallest
# semi-axis (own x) has the largest depolarization factor, so the smallest principal value
# (Osborn 1945). The voxel staircase tilts the axes slightly: 2e-2 allowed.
import math
e = load("e")["chi_principal"]
a, b = math.radians(30), math.radians(40)
R = [[math.cos(a) * math.cos(b), -math.sin(a), math.cos(a) * math.sin(b)],
     [math.sin(a) * math.cos(b), math.cos(a), math.sin(a) * math.sin(b)],
     [-math.sin(b), 0.0, math.cos(b)]]
for i in range(3):
    col = [R[r][i] for r in range(3)]
    dot = abs(sum(col[r] * e["axes"][i][r] for r in range(3)))
    check(dot > 1 - 2e-2, f"ellipsoid: principal axis {i} is the rotated own axis {i} (|cos| = {dot:.4f})")
print(f"e2e_cli_post: {len(passed)} passed, {len(fail)} failed")
sys.exit(1 if fail else 0)
PY
