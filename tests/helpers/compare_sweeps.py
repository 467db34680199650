"""compare_sweeps.py A B: two sweep directories (docs/sweep-format.md) hold the same
results to the solver tolerance: the same rows, wavelengths, tensor elements and
converged flags; tensor elements and cross sections within RTOL = 1e-6 of the largest
value of their wavelength (the solves stop at a relative residual of 1e-8); rel_diff within
1e-6; summary.json with the same inputs and per-wavelength flags; static.json identical.
Used by the shard and MPI end-to-end tests. Exit 0 when they agree, 1 otherwise (the first
differences are printed)."""
import json, math, sys
A, B = sys.argv[1:3]
RTOL = 1e-6  # relative to the largest value of the wavelength (solver tol 1e-8)

def rows(path):
    lines = [l.rstrip("\n") for l in open(path) if not l.startswith("#")]
    return lines[0], [l.split(",") for l in lines[1:]]

bad = []
for name, numeric in (("alpha.csv", [4, 5]), ("cross_sections.csv", [1, 2, 3, 4, 5, 6]),
                      ("diagnostics.csv", [])):
    ha, ra = rows(f"{A}/{name}")
    hb, rb = rows(f"{B}/{name}")
    if ha != hb or len(ra) != len(rb):
        bad.append(f"{name}: header or row count differs ({len(ra)} vs {len(rb)})")
        continue
    # scale per wavelength: the largest magnitude among its numeric values
    scale = {}
    for r in ra:
        for c in numeric:
            scale[r[0]] = max(scale.get(r[0], 0.0), abs(float(r[c])))
    for k, (x, y) in enumerate(zip(ra, rb)):
        conv = 3 if name == "diagnostics.csv" else -1
        if x[0] != y[0] or x[conv] != y[conv] or (name == "alpha.csv" and x[1:4] != y[1:4]):
            bad.append(f"{name} row {k + 1}: keys differ: {x[:4]} vs {y[:4]}")
            continue
        for c in numeric:
            a, b = float(x[c]), float(y[c])
            if not abs(a - b) <= RTOL * scale[x[0]]:
                bad.append(f"{name} row {k + 1} col {c + 1}: {a!r} vs {b!r}")
        if name == "cross_sections.csv" and abs(float(x[7]) - float(y[7])) > 1e-6:
            bad.append(f"{name} row {k + 1}: rel_diff {x[7]} vs {y[7]}")
sa, sb = (json.load(open(f"{d}/summary.json")) for d in (A, B))
for k in ("version", "materials", "options", "wavelengths_m", "shard", "finished"):
    if sa[k] != sb[k]:
        bad.append(f"summary.json: {k} differs")
if sa["input"]["sha256"] != sb["input"]["sha256"] or sa["input"]["grid"] != sb["input"]["grid"]:
    bad.append("summary.json: input differs")
key = lambda r: (r["wavelength_m"], r["position"], r["converged"])
if [key(r) for r in sa["results"]] != [key(r) for r in sb["results"]]:
    bad.append("summary.json: results differ in wavelengths, positions or flags")
if open(f"{A}/static.json").read() != open(f"{B}/static.json").read():
    bad.append("static.json differs")
for b in bad[:10]:
    print(b)
sys.exit(1 if bad else 0)
