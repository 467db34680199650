#!/usr/bin/env bash
# e2e_sweep_noconv.sh: a sweep whose solves cannot converge (--max-iter 3 for a
# high-index sphere that needs about 40 iterations) marks every row converged=0, writes nan
# instead of unconverged numbers, keeps going through the list, records the failure in
# summary.json and static.json, and exits with code 1; such a run still resumes and merges.
# Usage: e2e_sweep_noconv.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"

"$bin" shape sphere --radius 3nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
args=(sweep "$tmp/s.vtk" --eps 12.25+0.5i --wavelengths 300nm,350nm,400nm --max-iter 3
      --threads 1 --quiet)
"$bin" "${args[@]}" -o "$tmp/run" 2>"$tmp/err"
rc=$?
[ "$rc" = 1 ] || fail "exit $rc, expected 1 ($(cat "$tmp/err"))"

"$py" - "$tmp/run" <<'PY' || fail "tables of the unconverged run"
import json, sys
d = sys.argv[1]
def rows(name):
    lines = [l.rstrip("\n") for l in open(f"{d}/{name}") if not l.startswith("#")]
    return [l.split(",") for l in lines[1:]]
bad = []
a = rows("alpha.csv")
if len(a) != 3 * 36:
    bad.append(f"alpha.csv has {len(a)} rows, expected 108")
if any(r[6] != "0" or r[4] != "nan" or r[5] != "nan" for r in a):
    bad.append("alpha.csv: a row with converged != 0 or a number instead of nan")
x = rows("cross_sections.csv")
if len(x) != 3 or any(r[8] != "0" or any(v != "nan" for v in r[1:8]) for r in x):
    bad.append("cross_sections.csv: expected 3 rows of nan with converged 0")
g = rows("diagnostics.csv")
if len(g) != 3 or any(r[1] != "3" or not float(r[2]) > 1e-8 or r[3] != "0" for r in g):
    bad.append("diagnostics.csv: expected iterations 3, residual above tol, converged 0")
if any(v != "nan" for r in g for v in r[4:]):
    bad.append("diagnostics.csv: physics columns should be nan")
s = json.load(open(f"{d}/summary.json"))
if not s["finished"] or [r["converged"] for r in s["results"]] != [False] * 3:
    bad.append("summary.json: expected 3 unconverged results and finished")
st = json.load(open(f"{d}/static.json"))
if st["chi"] is not None or st["solver"]["converged"] is not False:
    bad.append("static.json: expected chi null and converged false")
for b in bad:
    print(b)
sys.exit(1 if bad else 0)
PY

# A finished run with failures: --resume has nothing to do but still reports exit 1.
"$bin" "${args[@]}" -o "$tmp/run" --resume 2>/dev/null
rc=$?
[ "$rc" = 1 ] || fail "resume of the unconverged run: exit $rc, expected 1"
# Shards with failures merge (the flags travel with the rows).
"$bin" "${args[@]}" --shard 0/2 -o "$tmp/s0" 2>/dev/null
"$bin" "${args[@]}" --shard 1/2 -o "$tmp/s1" 2>/dev/null
"$bin" merge "$tmp/s0" "$tmp/s1" -o "$tmp/merged" --quiet || fail "merge (exit $?)"
cmp -s "$tmp/run/alpha.csv" "$tmp/merged/alpha.csv" || fail "merged alpha.csv differs"
echo "e2e_sweep_noconv: ok"
