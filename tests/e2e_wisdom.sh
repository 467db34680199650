#!/usr/bin/env bash
# e2e_wisdom.sh: --plan and --wisdom. A first measure-planned run creates the wisdom file
# (FFTW's s-expression format, "(fftw-3..."); a second run that loads it gives the same
# JSON as the first, apart from the timing field (same plans, same bits); the default
# estimate plans give the same tensor to rounding; an unknown effort and a file that is
# not wisdom are refused with exit code 2 and no output on stdout.
# Usage: e2e_wisdom.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"
strip() { sed -E 's/"seconds":[-0-9.eE+]+//g' "$1"; }

"$bin" shape sphere --radius 6nm --spacing 1.5nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
m=(tensor "$tmp/s.vtk" --eps -10+1i --wavelength 400nm --solver cocg --quiet --json)
"$bin" "${m[@]}" --plan measure --wisdom "$tmp/w.fftw" >"$tmp/a.json" || fail "first run"
[ -s "$tmp/w.fftw" ] || fail "no wisdom file written"
[ "$(head -c 6 "$tmp/w.fftw")" = "(fftw-" ] || fail "wisdom file format"
ls "$tmp" | grep -q '\.tmp\.' && fail "temporary wisdom file left behind"
"$bin" "${m[@]}" --plan measure --wisdom "$tmp/w.fftw" >"$tmp/b.json" || fail "second run"
[ "$(strip "$tmp/a.json")" = "$(strip "$tmp/b.json")" ] ||
    fail "measure-planned runs sharing wisdom differ"
"$bin" "${m[@]}" >"$tmp/c.json" || fail "estimate run"
"$py" - "$tmp/a.json" "$tmp/c.json" <<'PY' || fail "estimate and measure plans disagree"
import json, sys
a, c = (json.load(open(f))["alpha"] for f in sys.argv[1:3])
big = max(abs(complex(*z)) for b in a.values() for row in b for z in row)
diff = max(abs(complex(*x) - complex(*y)) for k in a for ra, rc in zip(a[k], c[k])
           for x, y in zip(ra, rc))
# Different FFT algorithms change only the rounding; the solver tolerance (1e-8 default)
# bounds what a different rounding path can move.
assert diff <= 1e-6 * big, (diff, big)
PY

"$bin" "${m[@]}" --plan fast >"$tmp/out" 2>"$tmp/err"
rc=$?
[ "$rc" = 2 ] || fail "--plan fast: exit $rc, expected 2"
[ -s "$tmp/out" ] && fail "--plan fast: output on stdout"
grep -q "estimate, measure or patient" "$tmp/err" || fail "--plan message: $(cat "$tmp/err")"
echo "(not wisdom)" >"$tmp/bad.fftw"
"$bin" "${m[@]}" --wisdom "$tmp/bad.fftw" >"$tmp/out" 2>"$tmp/err"
rc=$?
[ "$rc" = 2 ] || fail "bad wisdom: exit $rc, expected 2"
[ -s "$tmp/out" ] && fail "bad wisdom: output on stdout"
grep -q "bad.fftw" "$tmp/err" || fail "bad wisdom message: $(cat "$tmp/err")"
echo "e2e_wisdom: ok"
