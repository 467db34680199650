#!/usr/bin/env bash
# e2e_memcheck_heavy.sh: runs a small sweep, a tensor with cross sections, an expansion,
# a merge of two shards and a few refused inputs under valgrind memcheck: no invalid read
# or write, no use of uninitialised values, no definite or indirect leak, on the success
# paths and on the error paths (which must free what they allocated before exiting).
# "heavy": excluded from the sanitizer run (valgrind and ASan do not mix); skipped with a
# note when valgrind is not installed (scripts/deps.sh --memcheck installs it).
# Usage: e2e_memcheck_heavy.sh PATH_TO_DIPOLIZE
set -u
bin=${1:?usage: e2e_memcheck_heavy.sh PATH_TO_DIPOLIZE}
if ! command -v valgrind >/dev/null 2>&1; then
    echo "SKIP  valgrind is not installed (scripts/deps.sh --memcheck)"
    exit 0
fi
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
export OMP_NUM_THREADS=1 OMP_WAIT_POLICY=PASSIVE
vg=(valgrind --tool=memcheck --leak-check=full --errors-for-leak-kinds=definite,indirect
    --show-leak-kinds=definite,indirect --error-exitcode=99 --track-origins=yes
    --quiet)
pass=0
fail=0

# check WANT_EXIT NAME -- ARGS...: dipolize under memcheck must exit with WANT_EXIT
# (99 means memcheck found an error).
check() {
    local want=$1 name=$2
    shift 3
    "${vg[@]}" --log-file="$tmp/$name.vg" "$bin" "$@" >"$tmp/$name.out" 2>"$tmp/$name.err"
    local rc=$?
    if [ "$rc" = "$want" ] && [ ! -s "$tmp/$name.vg" ]; then
        pass=$((pass + 1))
        echo "ok    $name"
    else
        fail=$((fail + 1))
        echo "FAIL  $name: exit $rc (expected $want; 99 = memcheck error)"
        head -n 40 "$tmp/$name.vg" | sed 's/^/      | /'
        head -n 3 "$tmp/$name.err" | sed 's/^/      | /'
    fi
}

"$bin" shape sphere --radius 2.5nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null 2>&1 ||
    { echo "FAIL  shape"; exit 1; }
check 0 shape -- shape split-ring --outer-radius 4nm --inner-radius 2nm --thickness 2nm \
    --gap 1nm --spacing 1nm -o "$tmp/srr.vtk"
check 0 sweep -- sweep "$tmp/s.vtk" --eps 2.25+0.1i --wavelengths 500nm:600nm:50nm --quiet \
    -o "$tmp/sw"
check 0 shard0 -- sweep "$tmp/s.vtk" --eps 2.25+0.1i --wavelengths 500nm,600nm --shard 0/2 \
    --quiet -o "$tmp/sh0"
check 0 shard1 -- sweep "$tmp/s.vtk" --eps 2.25+0.1i --wavelengths 500nm,600nm --shard 1/2 \
    --quiet -o "$tmp/sh1"
check 0 merge -- merge "$tmp/sh0" "$tmp/sh1" -o "$tmp/merged"
check 0 tensor -- tensor "$tmp/srr.vtk" --eps -8+1.5i --wavelength 700nm --cross-sections \
    --max-iter 300 --json
check 0 expand -- expand "$tmp/s.vtk" --eps 2.25 --json
check 0 info -- info "$tmp/srr.vtk" --json
# Error paths: refused inputs exit 2 and still free everything.
printf 'wavelength_nm,n,k\n400,1.5,0\n300,1.5,0\n' >"$tmp/bad.csv"
check 2 bad_table -- tensor "$tmp/s.vtk" --eps nk:"$tmp/bad.csv" --wavelength 350nm
check 2 bad_memory -- tensor "$tmp/s.vtk" --eps 2.25 --wavelength 500nm --max-memory 1kB
check 2 bad_sweep_out -- sweep "$tmp/s.vtk" --eps 2.25 --wavelengths 500nm -o "$tmp/sw"
check 1 no_convergence -- tensor "$tmp/s.vtk" --eps -10+1i --wavelength 500nm --max-iter 2

echo "memcheck: $pass passed, $fail failed"
[ "$fail" = 0 ]
