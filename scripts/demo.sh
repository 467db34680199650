#!/usr/bin/env bash
# demo.sh BIN: the main job of dipolize end to end on a built-in scenario: a gold-like
# split-ring meta-atom in a glass-like host (n = 1.45), reduced to its 6x6 point-dipole
# polarizability: the grid, the quasi-static tensor, the full tensor with diagnostics at
# the magnetic (LC) resonance, and a sweep over the near infrared with plots and a report.
#
# The metal is an ILLUSTRATIVE Drude model (eps_inf 9.5, hbar omega_p 8.9 eV,
# hbar gamma 0.07 eV: round numbers of the size usually quoted for gold, from memory),
# not measured gold data: use tabulated optical constants (--material 1=nk:FILE.csv)
# for real designs. The lattice (5 nm, about 490 dipoles) and the solver tolerance
# (1e-5 in the sweep) are chosen for speed, not accuracy; refine both for real work.
#
# Writes into ./demo-out/ and lists what it wrote. Takes one to two minutes on two cores.
set -eu
bin=${1:?usage: scripts/demo.sh PATH_TO_DIPOLIZE}
case "$bin" in /*) ;; *) bin="$PWD/$bin" ;; esac
out=demo-out
mkdir -p "$out"
rm -rf "$out/sweep"

metal="drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV" # illustrative, see above
host=1.45
lambda=1600nm
solve="--solver cocg"
t0=$(date +%s)

echo "== dipolize demo: gold-like split ring (illustrative Drude metal) in n = $host glass"
echo
echo "-- 1. voxelize the split ring (outer radius 40 nm, inner 25 nm, 20 nm thick, 10 nm gap)"
"$bin" shape split-ring --outer-radius 40nm --inner-radius 25nm --thickness 20nm \
    --gap 10nm --spacing 5nm -o "$out/srr.vtk"
"$bin" preview "$out/srr.vtk" -o "$out/srr-preview.svg" >/dev/null
echo
echo "-- 2. grid facts"
"$bin" info "$out/srr.vtk" | tee "$out/info.txt"
"$bin" info "$out/srr.vtk" --json >"$out/info.json"
echo
echo "-- 3. quasi-static tensor with the metal permittivity at $lambda"
"$bin" static "$out/srr.vtk" --material "1=$metal" --host-index $host \
    --wavelength $lambda $solve --quiet --json >"$out/static.json"
/usr/bin/python3 - "$out/static.json" <<'PY' | tee "$out/static.txt"
import json, sys
d = json.load(open(sys.argv[1]))
print(f"chi / V (V = {d['volume_m3']:.4e} m^3, {d['voxels']} voxels):")
for row in d["chi_over_volume"]:
    print("   " + "  ".join(f"{re:+10.4f}{im:+10.4f}i" for re, im in row))
print(f"solver converged: {d['solver']['converged']}, iterations {d['solver']['iterations']}")
PY
echo
echo "-- 4. 6x6 polarizability at $lambda, near the magnetic resonance"
"$bin" tensor "$out/srr.vtk" --material "1=$metal" --host-index $host \
    --wavelength $lambda $solve --cross-sections --quiet --json >"$out/tensor.json"
/usr/bin/python3 - "$out/tensor.json" <<'PY' | tee "$out/tensor.txt"
import json, sys
d = json.load(open(sys.argv[1]))
V = d["volume_m3"]
eps = d["materials"][0]["eps"]
print(f"wavelength {d['wavelength_m']*1e9:.0f} nm, x = k a_eq = {d['size_parameter']:.3f}, "
      f"V = {V:.4e} m^3, eps = {eps[0]:.2f}{eps[1]:+.2f}i")
for b in ("ee", "em", "me", "mm"):
    print(f"a_{b} / V:")
    for row in d["alpha"][b]:
        print("   " + "  ".join(f"{re/V:+9.3f}{im/V:+9.3f}i" for re, im in row))
for k, v in d["diagnostics"]["verdicts"].items():
    print(f"{k}: {v}")
x = d.get("cross_sections")
if x:
    print(f"extinction (+z, x-pol): {x['ext_m2']:.4e} m^2 full solve, "
          f"{x['ext_dipole_m2']:.4e} m^2 from the 6x6 dipole ({100*x['rel_diff']:.1f}% apart)")
PY
echo
echo "-- 5. sweep 1000..2450 nm (30 wavelengths, tolerance 1e-5), then plots and a report"
"$bin" sweep "$out/srr.vtk" --material "1=$metal" --host-index $host \
    --wavelengths 1000nm:2450nm:50nm $solve --tol 1e-5 -o "$out/sweep"
"$bin" plot "$out/sweep" >/dev/null
"$bin" report "$out/sweep" >/dev/null
/usr/bin/python3 - "$out/sweep/alpha.csv" <<'PY'
import csv, sys
rows = [r for r in csv.reader(l for l in open(sys.argv[1]) if not l.startswith("#"))][1:]
mm = [(float(r[0]), float(r[5])) for r in rows if r[1] == "mm" and r[2] == "2" and r[3] == "2"]
lam, im = max(mm, key=lambda t: t[1])
print(f"magnetic (LC) resonance: Im a_mm,zz peaks at {lam*1e9:.0f} nm "
      f"({im:.3e} m^3) over {len(mm)} wavelengths")
PY
echo
echo "== wrote (in $(($(date +%s) - t0)) s):"
find "$out" -type f | sort | while read -r f; do
    printf '   %-44s %8d bytes\n' "$f" "$(wc -c <"$f")"
done
echo "   srr.vtk opens in any VTK viewer; the JSON and CSV files hold every number in SI"
echo "   units; $out/sweep/report.html and $out/sweep/plots/*.svg open in a browser."
echo
echo "report: $PWD/$out/sweep/report.html"
