#!/usr/bin/env bash
# e2e_cli_bad_input.sh: a table of bad dipolize command lines. Each must exit with the
# expected code, print exactly one line on stderr that starts with "dipolize: " and holds
# the expected fragment, print nothing on stdout, and leave no output file behind.
# Usage: e2e_cli_bad_input.sh PATH_TO_DIPOLIZE
set -u
bin=${1:?usage: e2e_cli_bad_input.sh PATH_TO_DIPOLIZE}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
pass=0
fail=0

# A small valid grid to point the commands at (sphere of 4 voxels radius).
if ! "$bin" shape sphere --radius 4nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null 2>"$tmp/err"; then
    echo "FAIL  setup: shape sphere: $(cat "$tmp/err")"
    exit 1
fi
"$bin" shape core-shell --radius 3nm --shell 1nm --spacing 1nm -o "$tmp/cs.vtk" >/dev/null 2>&1
printf 'not a voxel file\n' >"$tmp/junk.vtk"
printf 'i,j,k,label\n0,0,0,1\n1,0,0,1\n' >"$tmp/v.csv"
printf 'solid open\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 0\nvertex 0 1 0\nendloop\nendfacet\nendsolid open\n' >"$tmp/m.stl"
printf '# vtk DataFile Version 3.0\ndipolize voxels v1\nASCII\nDATASET STRUCTURED_POINTS\nDIMENSIONS 2 1 1\nSPACING 1e-9 1e-9 1e-9\nORIGIN 0 0 0\nPOINT_DATA 2\nSCALARS labels unsigned_char 1\nLOOKUP_TABLE default\n1 1\n' >"$tmp/v.vtk"
printf '# n,k table\nwavelength_nm,n,k\n400,1.5,0\n500,1.5,0\n' >"$tmp/glass.csv"

# check CODE FRAGMENT OUTFILE -- ARGS...   (OUTFILE "-" when no file is involved)
check() {
    local want=$1 frag=$2 out=$3
    shift 4
    rm -f "$tmp/stdout" "$tmp/stderr"
    "$bin" "$@" >"$tmp/stdout" 2>"$tmp/stderr"
    local rc=$?
    local why=""
    [ "$rc" = "$want" ] || why="exit $rc, expected $want"
    local lines
    lines=$(wc -l <"$tmp/stderr")
    [ -z "$why" ] && [ "$lines" != 1 ] && why="$lines lines on stderr, expected 1"
    [ -z "$why" ] && ! head -n 1 "$tmp/stderr" | grep -q '^dipolize: ' && why="stderr lacks the dipolize: prefix"
    [ -z "$why" ] && ! grep -qF -- "$frag" "$tmp/stderr" && why="stderr lacks \"$frag\""
    [ -z "$why" ] && [ -s "$tmp/stdout" ] && why="stdout not empty"
    if [ -z "$why" ] && [ "$out" != "-" ]; then
        [ -e "$out" ] && why="output file $out left behind"
        ls "$tmp" | grep -q '\.tmp' && why="temporary file left behind"
    fi
    if [ -z "$why" ]; then
        pass=$((pass + 1))
        echo "ok    $*"
    else
        fail=$((fail + 1))
        echo "FAIL  $* : $why"
        sed 's/^/      | /' "$tmp/stderr"
    fi
}

o="$tmp/out.vtk"
# --- usage -----------------------------------------------------------------------------
check 2 "unknown command" - -- frobnicate
check 2 "unknown option" - -- --frobnicate
check 2 "unknown option --radus" "$o" -- shape sphere --radus 4nm --spacing 1nm -o "$o"
check 2 "did you mean --radius" "$o" -- shape sphere --radus 4nm --spacing 1nm -o "$o"
check 2 "needs a value" - -- shape sphere --radius
check 2 "given twice" "$o" -- shape sphere --radius 4nm --radius 5nm --spacing 1nm -o "$o"
check 2 "missing argument" - -- info
check 2 "unexpected argument" - -- info "$tmp/s.vtk" extra
# --- units -------------------------------------------------------------------------------
check 2 "no unit" "$o" -- shape sphere --radius 6 --spacing 1nm -o "$o"
check 2 "--spacing" "$o" -- shape sphere --radius 6nm --spacing 1 -o "$o"
check 2 "unknown length unit" "$o" -- shape sphere --radius 6km --spacing 1nm -o "$o"
check 2 "positive" "$o" -- shape sphere --radius -6nm --spacing 1nm -o "$o"
check 2 "positive" "$o" -- shape sphere --radius 6nm --spacing 0nm -o "$o"
check 2 "not a length" "$o" -- shape sphere --radius nannm --spacing 1nm -o "$o"
check 2 "no unit" "$o" -- shape box --size 4nm,4nm,6nm --euler 30,0deg,0deg --spacing 1nm -o "$o"
check 2 "expected 3" "$o" -- shape box --size 4nm,4nm --spacing 1nm -o "$o"
# --- shapes ------------------------------------------------------------------------------
check 2 "pyramid" "$o" -- shape pyramid --radius 4nm --spacing 1nm -o "$o"
check 2 "does not apply" "$o" -- shape sphere --radius 4nm --gap 1nm --spacing 1nm -o "$o"
check 2 "needs --gap" "$o" -- shape split-ring --outer-radius 8nm --inner-radius 5nm --thickness 2nm --spacing 1nm -o "$o"
check 2 "inner" "$o" -- shape ring --outer-radius 4nm --inner-radius 5nm --thickness 2nm --spacing 1nm -o "$o"
check 2 "-o FILE.vtk is required" - -- shape sphere --radius 4nm --spacing 1nm
check 2 ".vtk extension" "$tmp/out.npy" -- shape sphere --radius 4nm --spacing 1nm -o "$tmp/out.npy"
check 2 "expected an STL mesh" "$o" -- voxelize "$tmp/s.vtk" --spacing 1nm --stl-unit nm -o "$o"
check 2 "--stl-unit UNIT is required" "$o" -- voxelize "$tmp/m.stl" --spacing 1nm -o "$o"
check 2 "not a length unit" "$o" -- voxelize "$tmp/m.stl" --spacing 1nm --stl-unit inch -o "$o"
check 2 "m.stl" "$o" -- voxelize "$tmp/m.stl" --spacing 1nm --stl-unit nm -o "$o"
check 2 "--spacing" "$o" -- shape sphere --radius 4nm -o "$o"
check 2 "1 to 255" "$o" -- shape sphere --radius 4nm --label 0 --spacing 1nm -o "$o"
check 2 "--max-voxels" "$o" -- shape sphere --radius 40nm --spacing 1nm --max-voxels 1000 -o "$o"
check 2 "deg or rad" "$o" -- shape box --size 4nm,4nm,6nm --euler 30grad,0deg,0deg --spacing 1nm -o "$o"
check 2 "no voxel centre" "$o" -- shape ring --outer-radius 0.3nm --inner-radius 0.2nm --thickness 0.1nm --spacing 1nm -o "$o"
check 2 "$tmp/nodir" "$tmp/nodir/out.vtk" -- shape sphere --radius 4nm --spacing 1nm -o "$tmp/nodir/out.vtk"
# --- files -------------------------------------------------------------------------------
check 2 "cannot open" - -- info "$tmp/missing.vtk"
check 2 "junk.vtk" - -- info "$tmp/junk.vtk"
check 2 "unknown file type" - -- info "$tmp/s.txt"
check 2 "--spacing" - -- info "$tmp/v.csv"
check 2 "plain voxel set" - -- info "$tmp/v.vtk" --spacing 1nm
# --- materials ---------------------------------------------------------------------------
check 2 "no material" - -- static "$tmp/s.vtk"
check 2 "not both" - -- static "$tmp/s.vtk" --eps 2.25 --material 1=2.25
check 2 "not a permittivity" - -- static "$tmp/s.vtk" --eps nan
check 2 "not a permittivity" - -- static "$tmp/s.vtk" --eps 2.25+infi
check 2 "label 2" - -- static "$tmp/cs.vtk" --material 1=2.25
check 2 "no voxel with label 3" - -- static "$tmp/s.vtk" --material 1=2.25 --material 3=4
check 2 "given twice" - -- static "$tmp/s.vtk" --material 1=2.25 --material 1=4
check 2 "LABEL=SPEC" - -- static "$tmp/s.vtk" --material 2.25
check 2 "needs wp" - -- static "$tmp/s.vtk" --eps drude:gamma=0.1eV --wavelength 500nm
check 2 "eV" - -- static "$tmp/s.vtk" --eps drude:wp=9,gamma=0.1eV --wavelength 500nm
check 2 "give --wavelength" - -- static "$tmp/s.vtk" --eps drude:wp=9eV,gamma=0.1eV
check 2 "host index" - -- static "$tmp/s.vtk" --eps 2.25 --host-index -1.45
check 2 "--host-index" - -- static "$tmp/s.vtk" --eps 2.25 --host-index 1.45nm
check 2 "glass.csv" - -- tensor "$tmp/s.vtk" --eps nk:"$tmp/glass.csv" --wavelength 700nm
# --- solver options ----------------------------------------------------------------------
check 2 "--dipole-model" - -- static "$tmp/s.vtk" --eps 2.25 --dipole-model foo
check 2 "--solver" - -- static "$tmp/s.vtk" --eps 2.25 --solver foo
check 2 "between 0 and 1" - -- static "$tmp/s.vtk" --eps 2.25 --tol 2
check 2 "whole number" - -- static "$tmp/s.vtk" --eps 2.25 --max-iter 1.5
check 2 "--threads" - -- static "$tmp/s.vtk" --eps 2.25 --threads 0
check 2 "2 to 4 levels" - -- static "$tmp/s.vtk" --eps 2.25 --refine 1
check 2 "2 to 4 levels" - -- tensor "$tmp/s.vtk" --eps 2.25 --wavelength 500nm --refine 9
check 2 "whole number" - -- static "$tmp/s.vtk" --eps 2.25 --refine two
# --- tensor and expand -------------------------------------------------------------------
check 2 "--wavelength LEN is required" - -- tensor "$tmp/s.vtk" --eps 2.25
check 2 "no unit" - -- tensor "$tmp/s.vtk" --eps 2.25 --wavelength 500
check 2 "--origin" - -- tensor "$tmp/s.vtk" --eps 2.25 --wavelength 500nm --origin 1nm,2nm
check 2 "at least 4" - -- expand "$tmp/s.vtk" --eps 2.25 --size-parameters 0.1,0.2
check 2 "positive" - -- expand "$tmp/s.vtk" --eps 2.25 --size-parameters 0.1,0.2,-0.3,0.4
check 2 "repeats" - -- expand "$tmp/s.vtk" --eps 2.25 --size-parameters 0.1,0.2,0.2,0.4

echo "e2e_cli_bad_input: $pass passed, $fail failed"
[ "$fail" = 0 ]
