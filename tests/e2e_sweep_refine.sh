#!/usr/bin/env bash
# e2e_sweep_refine.sh: `sweep --refine N` solves every wavelength on the same lattices as
# `tensor --refine N` and writes the same extrapolated tensor and error estimate (the
# extrapolation itself is checked against Mie theory by ref_accuracy_refine.py; here the
# sweep is checked against the tensor command):
#  - alpha.csv gains err_re, err_im only with --refine (a run without it keeps its header);
#  - at every wavelength alpha and error equal `tensor --refine 2 --json` to the solver
#    tolerance (the sweep warm-starts each level from the previous wavelength, tensor
#    starts from zero; both stop at a relative residual of 1e-8), and the cross sections
#    equal those of the finest level (`tensor --refine 2 --cross-sections`);
#  - summary.json records the levels, spacings and what the result belongs to (the true
#    shape for a recorded shape, the staircase body for a plain voxel set);
#  - a bad --refine is refused with exit 2 and no output;
#  - --resume refuses a directory made with another --refine (exit 2), and a refined run
#    killed and resumed writes tables byte-identical to an uninterrupted one (the restart
#    state holds every level's warm-start vectors);
#  - merge accepts refined shards and refuses to mix refined and unrefined ones (exit 2).
# Usage: e2e_sweep_refine.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"

# A dielectric sphere of radius 4 voxels (280 dipoles; 912 on the finer level), given as
# a shape so that --refine re-voxelizes it.
"$bin" shape sphere --radius 4nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
common=(--eps 2.25+0.1i --tol 1e-8 --threads 1 --quiet)
wls=(300nm 320nm 340nm)
args=(sweep "$tmp/s.vtk" "${common[@]}" --wavelengths 300nm,320nm,340nm)

"$bin" "${args[@]}" --refine 2 -o "$tmp/A" || fail "refined sweep (exit $?)"
"$bin" "${args[@]}" -o "$tmp/P" || fail "plain sweep (exit $?)"

# Column headers: err_re, err_im only with --refine.
grep -qx 'wavelength_m,block,row,col,re,im,err_re,err_im,converged' "$tmp/A/alpha.csv" ||
    fail "refined alpha.csv lacks err_re, err_im"
grep -qx 'wavelength_m,block,row,col,re,im,converged' "$tmp/P/alpha.csv" ||
    fail "alpha.csv without --refine changed its columns"
grep -q 'err_re' "$tmp/P/alpha.csv" && fail "alpha.csv without --refine has err_re"
grep -q 'finest level' "$tmp/A/cross_sections.csv" ||
    fail "refined cross_sections.csv does not say it comes from the finest level"

for w in "${wls[@]}"; do
    "$bin" tensor "$tmp/s.vtk" "${common[@]}" --wavelength "$w" --refine 2 \
        --cross-sections --json >"$tmp/t_$w.json" || fail "tensor --refine 2 at $w"
done

"$py" - "$tmp" "${wls[@]}" <<'PY' || fail "sweep --refine differs from tensor --refine"
import csv, json, sys
tmp, wls = sys.argv[1], sys.argv[2:]
# Solver tolerance: both runs stop at relative residual 1e-8; different starting guesses
# (warm vs zero) leave differences of that order, well inside 1e-6 of each block.
REL = 1e-6
rows = [r for r in csv.reader(l for l in open(f"{tmp}/A/alpha.csv") if l[0] != "#")]
head, rows = rows[0], rows[1:]
col = {n: i for i, n in enumerate(head)}
xs = [r for r in csv.reader(l for l in open(f"{tmp}/A/cross_sections.csv")
                             if l[0] != "#")][1:]
lams = sorted({float(r[0]) for r in rows})
assert len(lams) == 3 and len(rows) == 108, (len(lams), len(rows))
worst = {"alpha": 0.0, "error": 0.0, "ext": 0.0}
for lam, w in zip(lams, wls):
    t = json.load(open(f"{tmp}/t_{w}.json"))
    assert abs(t["wavelength_m"] - lam) <= 1e-15 * lam, (t["wavelength_m"], lam)
    mine = [r for r in rows if float(r[0]) == lam]
    for key, cre, cim in (("alpha", "re", "im"), ("error", "err_re", "err_im")):
        for b in ("ee", "em", "me", "mm"):
            ref = t[key][b]
            # scale: the largest magnitude in the block (ee and mm diagonals); the
            # blocks that vanish by symmetry (em, me: rounding noise, 1e-17 of ee) are
            # measured against 1e-6 of the largest element of the whole tensor.
            # The error estimate is a difference of alpha values (the extrapolation
            # step), so its solver noise is that of alpha: it is measured on alpha's
            # scale too (relative to itself it agrees to about 1e-5).
            va = t["alpha"]
            scale = max(abs(c) for rr in va[b] for z in rr for c in z)
            scale = max(scale, max(abs(c) for bb in va.values() for rr in bb
                                   for z in rr for c in z) * 1e-6)
            for r in mine:
                if r[col["block"]] != b:
                    continue
                i, j = int(r[col["row"]]), int(r[col["col"]])
                assert r[col["converged"]] == "1", r
                for part, c in ((0, cre), (1, cim)):
                    d = abs(float(r[col[c]]) - ref[i][j][part]) / scale
                    worst[key] = max(worst[key], d)
                    assert d <= REL, (lam, key, b, i, j, c, r[col[c]], ref[i][j][part])
    x = t["cross_sections"]
    row = [r for r in xs if float(r[0]) == lam][0]
    for k, name in ((1, "ext_m2"), (2, "abs_m2"), (3, "sca_m2"), (4, "ext_dipole_m2")):
        d = abs(float(row[k]) - x[name]) / x["ext_m2"]
        worst["ext"] = max(worst["ext"], d)
        assert d <= REL, (lam, name, row[k], x[name])
    # the error estimate is a real bound candidate: nonzero on the diagonal of ee
    assert float(mine[0][col["err_re"]]) > 0, mine[0]
s = json.load(open(f"{tmp}/A/summary.json"))["refine"]
assert s["levels"] == 2, s
assert abs(s["spacings_m"][0] - 1e-9) < 1e-24 and abs(s["spacings_m"][1] - 1e-9 / 1.5) < 1e-24, s
assert s["how"] == "re-voxelized shape", s
assert s["result_belongs_to"] == "the true shape or mesh, re-voxelized", s
assert s["voxels"] == t["refine"]["voxels"], (s["voxels"], t["refine"]["voxels"])
assert "refine" not in json.load(open(f"{tmp}/P/summary.json"))
print("  largest difference to tensor --refine (relative to the block): alpha %.2e, "
      "error %.2e, cross sections %.2e" % (worst["alpha"], worst["error"], worst["ext"]))
PY

# A plain voxel set (the same voxels without the shape record in the VTK title line) is
# refined by splitting voxels: the result belongs to its staircase body, and says so.
"$py" - "$tmp/s.vtk" "$tmp/p.vtk" <<'PY' || fail "cannot write the plain voxel file"
import sys
b = open(sys.argv[1], "rb").read()
i = b.index(b"\n") + 1
j = b.index(b"\n", i)
assert b[i:j].startswith(b"dipolize-shape"), b[i:j]
open(sys.argv[2], "wb").write(b[:i] + b"plain voxel set" + b[j:])
PY
"$bin" sweep "$tmp/p.vtk" "${common[@]}" --wavelengths 320nm --refine 2 -o "$tmp/V" ||
    fail "refined sweep of a plain voxel set (exit $?)"
"$bin" tensor "$tmp/p.vtk" "${common[@]}" --wavelength 320nm --refine 2 --json \
    >"$tmp/tv.json" || fail "tensor --refine 2 of the plain voxel set"
"$py" - "$tmp" <<'PY' || fail "plain voxel set: refine record or values wrong"
import csv, json, sys
tmp = sys.argv[1]
s = json.load(open(f"{tmp}/V/summary.json"))["refine"]
assert s["how"] == "split voxels", s
assert s["result_belongs_to"] == "the staircase body of the voxel set itself", s
assert s["voxels"] == [280, 280 * 8], s
t = json.load(open(f"{tmp}/tv.json"))
rows = [r for r in csv.reader(l for l in open(f"{tmp}/V/alpha.csv") if l[0] != "#")][1:]
ee = [r for r in rows if r[1] == "ee" and r[2] == r[3]]
for r in ee:  # one cold-started wavelength: the same solves as tensor, to the tolerance
    i = int(r[2])
    for part, k in ((0, 4), (1, 6)):
        ref = t["alpha" if k == 4 else "error"]["ee"][i][i][0]
        assert abs(float(r[k]) - ref) <= 1e-6 * abs(t["alpha"]["ee"][i][i][0]), (r, ref)
PY

# A bad --refine is refused before anything is written.
for n in 1 5 x; do
    "$bin" "${args[@]}" --refine "$n" -o "$tmp/bad" 2>"$tmp/err"
    rc=$?
    [ "$rc" = 2 ] || fail "--refine $n: exit $rc"
    [ ! -e "$tmp/bad" ] || fail "--refine $n left $tmp/bad"
    [ "$(wc -l <"$tmp/err")" = 1 ] || fail "--refine $n: not one message: $(cat "$tmp/err")"
done

# --resume with another --refine (or none) is refused, and the directory is untouched.
cp -r "$tmp/A" "$tmp/A0"
for other in "--refine 3" ""; do
    # shellcheck disable=SC2086
    "$bin" "${args[@]}" $other -o "$tmp/A" --resume 2>"$tmp/err"
    rc=$?
    [ "$rc" = 2 ] || fail "resume with '${other:-no --refine}' of a --refine 2 run: exit $rc"
    grep -q "different inputs: refine" "$tmp/err" ||
        fail "resume refusal does not name refine: $(cat "$tmp/err")"
done
"$bin" "${args[@]}" --refine 2 -o "$tmp/P" --resume 2>"$tmp/err"
[ $? = 2 ] || fail "resume with --refine 2 of a run without it was not refused"
diff -r "$tmp/A" "$tmp/A0" >/dev/null || fail "a refused resume changed the directory"

# Shards: refined shards merge (alpha.csv keeps err_re, err_im); a refined and an
# unrefined shard are refused with nothing written.
"$bin" "${args[@]}" --refine 2 --shard 0/2 -o "$tmp/S0" || fail "shard 0/2"
"$bin" "${args[@]}" --refine 2 --shard 1/2 -o "$tmp/S1" || fail "shard 1/2"
"$bin" "${args[@]}" --shard 1/2 -o "$tmp/U1" || fail "unrefined shard 1/2"
"$bin" merge "$tmp/S0" "$tmp/S1" -o "$tmp/M" --quiet || fail "merge of refined shards"
cmp -s <(grep -v '^#' "$tmp/M/alpha.csv" | head -1) <(grep -v '^#' "$tmp/A/alpha.csv" |
    head -1) || fail "merged alpha.csv has other columns"
[ "$(grep -vc '^#' "$tmp/M/alpha.csv")" = 109 ] || fail "merged alpha.csv: wrong row count"
# Position 0 is computed alike (cold start) by the full run and shard 0.
cmp -s <(grep '^3e-07,' "$tmp/M/alpha.csv") <(grep '^3e-07,' "$tmp/A/alpha.csv") ||
    fail "merged rows of 300 nm differ from the full run"
"$py" -c "import json,sys; sys.exit(0 if json.load(open(sys.argv[1]))['refine']['levels']==2 else 1)" \
    "$tmp/M/summary.json" || fail "merged summary.json lost refine"
"$bin" merge "$tmp/S0" "$tmp/U1" -o "$tmp/X" --quiet 2>"$tmp/err"
rc=$?
[ "$rc" = 2 ] || fail "merging a refined with an unrefined shard: exit $rc"
grep -q "refine" "$tmp/err" || fail "mixed merge refusal does not name refine: $(cat "$tmp/err")"
[ ! -e "$tmp/X" ] || fail "a refused merge left $tmp/X"

# Resume: killed after 2 of 6 wavelengths, then resumed: byte-identical tables, and the
# restart file held both levels' six warm vectors: 32 bytes + 6 x 3 x (280 + 912) x 16.
rargs=(sweep "$tmp/s.vtk" "${common[@]}" --refine 2 --wavelengths 300nm:350nm:10nm)
"$bin" "${rargs[@]}" -o "$tmp/R" || fail "uninterrupted refined run"
for attempt in 1 2 3; do
    rm -rf "$tmp/K"
    kill_after "$tmp/K" 2 "${rargs[@]}"
    n=$(rows "$tmp/K")
    [ "$n" -ge 1 ] && [ "$n" -lt 6 ] && break
done
[ "$n" -ge 1 ] && [ "$n" -lt 6 ] || fail "could not interrupt the refined run ($n of 6)"
want=$((32 + 6 * 3 * (280 + 912) * 16))
found=0
for f in "$tmp"/K/restart.*.bin; do
    [ -e "$f" ] || continue
    found=1
    [ "$(stat -c %s "$f")" = "$want" ] ||
        fail "$f holds $(stat -c %s "$f") bytes, not $want (both levels' warm vectors)"
done
[ "$found" = 1 ] || fail "no restart state after $n of 6 wavelengths"
"$bin" "${rargs[@]}" -o "$tmp/K" --resume || fail "resume of the refined run"
for f in alpha.csv cross_sections.csv diagnostics.csv static.json; do
    cmp -s "$tmp/R/$f" "$tmp/K/$f" || fail "resumed refined run: $f differs (killed at $n)"
done
echo "  killed after $n of 6 wavelengths; the resumed tables are byte-identical"

echo "e2e_sweep_refine: ok"
