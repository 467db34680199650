#!/usr/bin/env bash
# e2e_sweep_bad_input.sh: every bad sweep input is refused before any computation with
# exit code 2, one line on stderr naming the problem, and no output directory (or an
# untouched one). Usage: e2e_sweep_bad_input.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"
n_ok=0

"$bin" shape sphere --radius 3nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
"$bin" shape core-shell --radius 2nm --shell 1nm --spacing 1nm -o "$tmp/cs.vtk" >/dev/null ||
    fail "core-shell shape"
# An n,k table covering 400..600 nm only (invented values, for the range check).
printf 'wavelength_nm,n,k\n400,1.5,0.01\n500,1.52,0.02\n600,1.54,0.03\n' >"$tmp/nk.csv"

# bad FRAGMENT ARGS...: `dipolize sweep ARGS -o $tmp/out` must exit 2 with one line on
# stderr containing FRAGMENT and must not create $tmp/out.
bad() {
    local frag=$1
    shift
    "$bin" sweep "$@" -o "$tmp/out" >"$tmp/stdout" 2>"$tmp/err"
    local rc=$?
    [ "$rc" = 2 ] || fail "sweep $*: exit $rc, expected 2 ($(cat "$tmp/err"))"
    grep -q -- "$frag" "$tmp/err" || fail "sweep $*: message lacks \"$frag\": $(cat "$tmp/err")"
    [ "$(wc -l <"$tmp/err")" = 1 ] || fail "sweep $*: not one line on stderr: $(cat "$tmp/err")"
    [ ! -e "$tmp/out" ] || fail "sweep $*: left $tmp/out behind"
    n_ok=$((n_ok + 1))
}

s=("$tmp/s.vtk" --eps 2.25 --quiet)
bad "wavelengths" "${s[@]}" --wavelengths 700nm:400nm:10nm           # inverted range
bad "wavelengths" "${s[@]}" --wavelengths 400nm:700nm:0nm            # zero step
bad "unit" "${s[@]}" --wavelengths 400:700:10                         # no unit
bad "wavelengths" "${s[@]}" --wavelengths 400nm,500nm,400nm           # duplicate
bad "shard" "${s[@]}" --wavelengths 400nm:470nm:10nm --shard 4/4      # index = count
bad "shard" "${s[@]}" --wavelengths 400nm:470nm:10nm --shard 1of4     # malformed
bad "is empty" "${s[@]}" --wavelengths 400nm:470nm:10nm --shard 9/10  # more shards than points
bad "--wavelengths" "${s[@]}"                                         # no list
bad "unknown option" "${s[@]}" --wavelengths 400nm --frobnicate
bad "perpendicular" "${s[@]}" --wavelengths 400nm --incidence 0,0,1:0,0,1
bad "three components" "${s[@]}" --wavelengths 400nm --incidence 0,0,1:1,0
bad "label 2" "$tmp/cs.vtk" --material 1=2.25 --wavelengths 400nm --quiet
bad "label 3" "$tmp/s.vtk" --material 1=2.25 --material 3=4 --wavelengths 400nm --quiet
bad "outside" "$tmp/s.vtk" --material "1=nk:$tmp/nk.csv" --wavelengths 500nm:700nm:50nm --quiet
bad "no material" "$tmp/s.vtk" --wavelengths 400nm --quiet
bad "tol" "${s[@]}" --wavelengths 400nm --tol 2
bad "max-memory" "${s[@]}" --wavelengths 400nm --max-memory 1kB    # estimate above the limit

# No -o at all.
"$bin" sweep "${s[@]}" --wavelengths 400nm 2>"$tmp/err" >/dev/null
[ $? = 2 ] && grep -q -- "-o DIR" "$tmp/err" || fail "sweep without -o: $(cat "$tmp/err")"

# -o names a file.
: >"$tmp/afile"
"$bin" sweep "${s[@]}" --wavelengths 400nm -o "$tmp/afile" 2>"$tmp/err" >/dev/null
[ $? = 2 ] && grep -q "not a directory" "$tmp/err" || fail "-o FILE: $(cat "$tmp/err")"

# A non-empty directory without --resume is refused and left as it was.
mkdir "$tmp/busy" && echo keep >"$tmp/busy/notes.txt"
"$bin" sweep "${s[@]}" --wavelengths 400nm -o "$tmp/busy" 2>"$tmp/err" >/dev/null
[ $? = 2 ] && grep -q "not empty" "$tmp/err" || fail "non-empty DIR: $(cat "$tmp/err")"
[ "$(ls "$tmp/busy")" = notes.txt ] || fail "non-empty DIR was changed: $(ls "$tmp/busy")"
# ... and with --resume it is not taken for a sweep directory either.
"$bin" sweep "${s[@]}" --wavelengths 400nm -o "$tmp/busy" --resume 2>"$tmp/err" >/dev/null
[ $? = 2 ] && grep -q "not a sweep directory" "$tmp/err" || fail "resume of a foreign DIR: $(cat "$tmp/err")"
[ "$(ls "$tmp/busy")" = notes.txt ] || fail "foreign DIR was changed by --resume"

# --resume with other inputs: refused, naming what differs; the run is untouched.
"$bin" sweep "${s[@]}" --wavelengths 400nm,450nm -o "$tmp/run" || fail "small run (exit $?)"
cp -r "$tmp/run" "$tmp/run.before"
resume_bad() {
    local frag=$1
    shift
    "$bin" sweep "$@" -o "$tmp/run" --resume 2>"$tmp/err" >/dev/null
    local rc=$?
    [ "$rc" = 2 ] || fail "resume $*: exit $rc, expected 2"
    grep -q "was made with different inputs: $frag" "$tmp/err" || fail "resume $*: $(cat "$tmp/err")"
    diff -r "$tmp/run" "$tmp/run.before" >/dev/null || fail "resume $*: changed the run"
    n_ok=$((n_ok + 1))
}
resume_bad options "${s[@]}" --wavelengths 400nm,450nm --tol 1e-9
resume_bad options "${s[@]}" --wavelengths 400nm,450nm --host-index 1.33
resume_bad wavelengths_m "${s[@]}" --wavelengths 400nm,460nm
resume_bad materials "$tmp/s.vtk" --eps 2.26 --quiet --wavelengths 400nm,450nm
resume_bad shard "${s[@]}" --wavelengths 400nm,450nm --shard 0/2
"$bin" shape sphere --radius 3nm --spacing 0.5nm -o "$tmp/s2.vtk" >/dev/null
resume_bad input "$tmp/s2.vtk" --eps 2.25 --quiet --wavelengths 400nm,450nm

echo "e2e_sweep_bad_input: ok ($n_ok refusals checked)"
