#!/usr/bin/env bash
# demo.sh BIN: the main job of dipolize on a built-in scenario: a gold-like split-ring
# meta-atom in a glass-like host (n = 1.45), reduced to its 6x6 point-dipole
# polarizability at one near-infrared wavelength, plus its quasi-static tensor.
#
# The metal is an ILLUSTRATIVE Drude model (eps_inf 9.5, hbar omega_p 8.9 eV,
# hbar gamma 0.07 eV: round numbers of the size usually quoted for gold, from memory),
# not measured gold data: use tabulated optical constants (--material 1=nk:FILE.csv)
# for real designs.
#
# Writes into ./demo-out/ and lists what it wrote. Takes about a minute on two cores
# (about 940 dipoles; metals at negative permittivity need many Krylov iterations).
set -eu
bin=${1:?usage: scripts/demo.sh PATH_TO_DIPOLIZE}
case "$bin" in /*) ;; *) bin="$PWD/$bin" ;; esac
out=demo-out
mkdir -p "$out"

metal="drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV"   # illustrative, see above
host=1.45
lambda=1200nm

echo "== dipolize demo: gold-like split ring (illustrative Drude metal) in n = $host glass"
echo
echo "-- 1. voxelize the split ring (outer radius 40 nm, inner 25 nm, 20 nm thick, 10 nm gap)"
"$bin" shape split-ring --outer-radius 40nm --inner-radius 25nm --thickness 20nm \
    --gap 10nm --spacing 4nm -o "$out/srr.vtk"
echo
echo "-- 2. grid facts"
"$bin" info "$out/srr.vtk" | tee "$out/info.txt"
"$bin" info "$out/srr.vtk" --json >"$out/info.json"
echo
echo "-- 3. quasi-static tensor with the metal permittivity at $lambda"
"$bin" static "$out/srr.vtk" --material "1=$metal" --host-index $host \
    --wavelength $lambda --solver cocg --quiet --json >"$out/static.json"
/usr/bin/python3 - "$out/static.json" <<'PY' | tee "$out/static.txt"
import json, sys
d = json.load(open(sys.argv[1]))
print(f"chi / V (V = {d['volume_m3']:.4e} m^3, {d['voxels']} voxels):")
for row in d["chi_over_volume"]:
    print("   " + "  ".join(f"{re:+10.4f}{im:+10.4f}i" for re, im in row))
print(f"solver converged: {d['solver']['converged']}, iterations {d['solver']['iterations']}")
PY
echo
echo "-- 4. 6x6 polarizability at $lambda (origin: centroid of the voxels)"
"$bin" tensor "$out/srr.vtk" --material "1=$metal" --host-index $host \
    --wavelength $lambda --solver cocg --cross-sections --quiet --json >"$out/tensor.json"
/usr/bin/python3 - "$out/tensor.json" <<'PY' | tee "$out/tensor.txt"
import json, sys
d = json.load(open(sys.argv[1]))
V = d["volume_m3"]
print(f"wavelength {d['wavelength_m']*1e9:.0f} nm, x = k a_eq = {d['size_parameter']:.3f}, "
      f"V = {V:.4e} m^3, eps = {d['materials'][0]['eps'][0]:.2f}{d['materials'][0]['eps'][1]:+.2f}i")
for b in ("ee", "em", "me", "mm"):
    print(f"a_{b} / V:")
    for row in d["alpha"][b]:
        print("   " + "  ".join(f"{re/V:+10.4f}{im/V:+10.4f}i" for re, im in row))
dg = d["diagnostics"]
for k, v in dg["verdicts"].items():
    print(f"{k}: {v}")
x = d.get("cross_sections")
if x:
    print(f"extinction (+z, x-pol): {x['ext_m2']:.4e} m^2 full solve, "
          f"{x['ext_dipole_m2']:.4e} m^2 from the 6x6 dipole ({100*x['rel_diff']:.1f}% apart)")
print(f"solver converged: {d['solver']['converged']}, iterations {d['solver']['iterations']}")
PY
echo
echo "== wrote:"
for f in "$out"/srr.vtk "$out"/info.txt "$out"/info.json "$out"/static.txt \
    "$out"/static.json "$out"/tensor.json "$out"/tensor.txt; do
    printf '   %-24s %8d bytes\n' "$f" "$(wc -c <"$f")"
done
echo "   (srr.vtk opens in any VTK viewer; the JSON files hold every number in SI units)"
