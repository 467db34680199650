#!/usr/bin/env bash
# e2e_sweep_consistency.sh: a sweep computes, at each wavelength, what `dipolize tensor`
# computes there on its own: the 36 tensor elements and the plane-wave cross sections of
# the sweep's tables agree with `tensor --cross-sections --json` at the same wavelength.
# The sweep warm-starts each wavelength from the previous one while `tensor` starts from
# zero, so they agree to the solver tolerance (1e-8 residual; checked to 1e-6 of the
# largest value), and at the first wavelength, where both start from zero, bit for bit. A
# dispersive material (Drude model, illustrative parameters) exercises the per-wavelength
# permittivity.
#
# --incidence is checked by symmetry (common practice): the voxelized sphere is mapped
# onto itself by the rotation taking z to y, so a wave along +y polarized along x has the
# cross sections of the default wave along +z polarized along x; and cross sections are
# per |E0|^2, so the circular polarization (1, i, 0), with |E0|^2 = 2, gives the mean of
# the x and y linear ones, which are equal for the sphere.
# Usage: e2e_sweep_consistency.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"

"$bin" shape ellipsoid --semi-axes 4nm,3nm,2nm --spacing 1nm -o "$tmp/e.vtk" >/dev/null ||
    fail "shape"
mat=(--material "1=drude:eps_inf=4.2,wp=6.5eV,gamma=0.35eV" --host-index 1.33)
"$bin" sweep "$tmp/e.vtk" "${mat[@]}" --wavelengths 300nm,345nm,390nm --threads 1 --quiet \
    -o "$tmp/run" || fail "sweep (exit $?)"
for w in 300nm 345nm 390nm; do
    "$bin" tensor "$tmp/e.vtk" "${mat[@]}" --wavelength "$w" --threads 1 --quiet \
        --cross-sections --json >"$tmp/t$w.json" 2>"$tmp/err" ||
        fail "tensor at $w (exit $?): $(cat "$tmp/err")"
done

"$py" - "$tmp" <<'PY' || fail "sweep and tensor disagree"
import csv, json, sys
d = sys.argv[1]
RTOL = 1e-6
def table(name):
    return list(csv.DictReader(l for l in open(f"{d}/run/{name}") if not l.startswith("#")))
alpha, xs = table("alpha.csv"), table("cross_sections.csv")
bad = []
for k, w in enumerate(("300nm", "345nm", "390nm")):
    t = json.load(open(f"{d}/t{w}.json"))
    lam = t["wavelength_m"]
    rows = [r for r in alpha if float(r["wavelength_m"]) == lam]
    if len(rows) != 36:
        bad.append(f"{w}: {len(rows)} alpha rows")
        continue
    scale = max(abs(complex(*v)) for b in "ee em me mm".split() for row in t["alpha"][b] for v in row)
    for r in rows:
        want = complex(*t["alpha"][r["block"]][int(r["row"])][int(r["col"])])
        got = complex(float(r["re"]), float(r["im"]))
        tol = 0.0 if k == 0 else RTOL * scale  # the first wavelength: both from zero
        if abs(got - want) > tol:
            bad.append(f"{w} {r['block']}[{r['row']}][{r['col']}]: sweep {got} tensor {want}")
    cs = t["cross_sections"]
    dirn, pol = cs.get("direction"), cs.get("polarization")
    x = next(r for r in xs if float(r["wavelength_m"]) == lam)
    for col, key in (("ext", "ext_m2"), ("abs", "abs_m2"), ("sca", "sca_m2"),
                     ("ext_dipole", "ext_dipole_m2")):
        a, b = float(x[col]), cs[key]
        if abs(a - b) > RTOL * abs(cs["ext_m2"]):
            bad.append(f"{w} {col}: sweep {a} tensor {b} (incidence {dirn} {pol})")
for b in bad[:12]:
    print(b)
sys.exit(1 if bad else 0)
PY
"$bin" shape sphere --radius 3nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "sphere"
for inc in 0,0,1:1,0,0 0,1,0:1,0,0 0,0,1:1,1i,0; do
    "$bin" sweep "$tmp/s.vtk" --eps 5.5+0.8i --wavelengths 250nm,300nm --threads 1 --quiet \
        --incidence "$inc" -o "$tmp/inc$inc" || fail "sweep --incidence $inc (exit $?)"
done
"$py" - "$tmp/inc0,0,1:1,0,0" "$tmp/inc0,1,0:1,0,0" "$tmp/inc0,0,1:1,1i,0" <<'PY' ||
import csv, json, sys
RTOL = 1e-6  # solver tolerance 1e-8
def xs(d):
    return list(csv.DictReader(l for l in open(f"{d}/cross_sections.csv") if not l.startswith("#")))
ref, along_y, circ = (xs(d) for d in sys.argv[1:4])
bad = []
for name, other in (("along +y", along_y), ("circular", circ)):
    for r, o in zip(ref, other):
        for col in ("ext", "abs", "sca", "ext_dipole", "abs_dipole", "sca_dipole"):
            if abs(float(r[col]) - float(o[col])) > RTOL * float(r["ext"]):
                bad.append(f"{name} {r['wavelength_m']} {col}: {o[col]} vs {r[col]} (+z, x)")
inc = json.load(open(f"{sys.argv[3]}/summary.json"))["options"]["incidence"]
if inc["polarization"] != [[1, 0], [0, 1], [0, 0]]:
    bad.append(f"summary.json incidence: {inc}")
for b in bad[:12]:
    print(b)
sys.exit(1 if bad else 0)
PY
    fail "--incidence: cross sections break the symmetry or the |E0|^2 normalization"
echo "e2e_sweep_consistency: ok"
