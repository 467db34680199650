#!/usr/bin/env bash
# benchmarks/run.sh [--full] [BUILD_DIR]: measures the performance figures of the FFT
# operator and the solves and prints ONE table, each figure beside its target.
# Default: a few minutes (cubes up to 64^3, memory on a 48^3 cube, part of the demo
# sweep). --full: cubes up to 128^3, memory on the 100^3 cube of the target, the whole
# demo sweep and a ~20,000-voxel split ring near its resonance (an hour or more on a
# loaded machine). BUILD_DIR (default build) holds a Release build with the targets
# dipolize, bench_perf and bench_sweep.
set -eu
full=0
build=build
for a in "$@"; do
    case "$a" in
    --full) full=1 ;;
    *) build=$a ;;
    esac
done
here=$(cd "$(dirname "$0")/.." && pwd)
case "$build" in /*) ;; *) build="$here/$build" ;; esac
for t in dipolize bench_perf bench_sweep; do
    [ -x "$build/$t" ] || { echo "run.sh: $build/$t missing (cmake --build $build --target $t)" >&2; exit 2; }
done
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
log() { echo "run.sh: $*" >&2; }
val() { awk -v k="$1" '$1 == k { print $2 }' "$2"; }

log "machine: $(nproc) cores, load $(cut -d' ' -f1-3 /proc/loadavg), $(date -u +%FT%TZ)"

# 1, 3: apply vs six full FFTs, scaling, threads.
log "bench_perf (apply vs FFT, scaling, threads)"
if [ $full = 1 ]; then "$build/bench_perf" --full 7; else "$build/bench_perf" 5; fi >"$work/perf.txt"
grep '^#' "$work/perf.txt" >&2
if [ $full = 1 ]; then
    log "bench_perf --measure (the same with measured FFTW plans)"
    "$build/bench_perf" --full --measure 5 >"$work/perf_m.txt"
    grep '^#' "$work/perf_m.txt" >&2
fi

# 1 (repeatable): instruction counts of one apply and of the six transforms, 32^3.
cg_ratio=n/a
if command -v valgrind >/dev/null && command -v callgrind_annotate >/dev/null; then
    log "callgrind: one apply vs six transforms, 32^3"
    valgrind --tool=callgrind --callgrind-out-file="$work/cg.out" "$build/bench_perf" --once 32 >/dev/null 2>&1
    callgrind_annotate --inclusive=yes "$work/cg.out" 2>/dev/null | tr -d ',' >"$work/cg.txt"
    ia=$(awk '/:dpz_fftop_apply /{print $1; exit}' "$work/cg.txt")
    if=$(awk '/:bench_fft6_once /{print $1; exit}' "$work/cg.txt")
    [ -n "$ia" ] && [ -n "$if" ] && cg_ratio=$(awk -v a="$ia" -v b="$if" 'BEGIN{printf "%.2f", a / b}')
fi

# 2: peak RSS of a whole tensor run on a filled cube.
edge=48
[ $full = 1 ] && edge=100
log "peak RSS of 'dipolize tensor' on a filled ${edge}^3 cube"
"$build/dipolize" shape box --size ${edge}nm,${edge}nm,${edge}nm --spacing 1nm -o "$work/cube.vtk" >/dev/null
/usr/bin/time -v "$build/dipolize" tensor "$work/cube.vtk" --eps 2.25 --wavelength 1000nm --quiet \
    --json >"$work/cube.json" 2>"$work/time.txt"
rss_kb=$(awk -F: '/Maximum resident set size/ {gsub(/ /, "", $2); print $2}' "$work/time.txt")
vox=$((edge * edge * edge))
bpv=$(awk -v k="$rss_kb" -v n="$vox" 'BEGIN{printf "%.0f", k * 1024 / n}')

# 4: sweep iterations and seconds per wavelength, cold vs warm start.
log "bench_sweep: demo split ring"
if [ $full = 1 ]; then
    "$build/bench_sweep" 5 1000 2150 50 1e-5 >"$work/demo.txt"
    log "bench_sweep: ~20,000-voxel split ring near its LC resonance (1600 nm)"
    "$build/bench_sweep" 1.4 1600 1650 50 1e-5 >"$work/big.txt"
else
    "$build/bench_sweep" 5 1000 2150 230 1e-5 >"$work/demo.txt"
fi
grep '^#\|^ ' "$work/demo.txt" >&2
[ -f "$work/big.txt" ] && grep '^#\|^ ' "$work/big.txt" >&2

# 5: wisdom makes a measure-planned run repeatable.
log "wisdom: two measure-planned runs sharing a wisdom file"
"$build/dipolize" shape split-ring --outer-radius 40nm --inner-radius 25nm --thickness 20nm \
    --gap 10nm --spacing 5nm -o "$work/srr.vtk" >/dev/null
m="--eps -60+4i --host-index 1.45 --wavelength 1600nm --solver cocg --tol 1e-6 --quiet --json"
t0=$(date +%s.%N)
"$build/dipolize" tensor "$work/srr.vtk" $m --plan measure --wisdom "$work/w.fftw" >"$work/w1.json"
t1=$(date +%s.%N)
"$build/dipolize" tensor "$work/srr.vtk" $m --plan measure --wisdom "$work/w.fftw" >"$work/w2.json"
t2=$(date +%s.%N)
same=no # apart from the "seconds" timing field
strip() { sed -E 's/"seconds":[-0-9.eE+]+//g' "$1"; }
[ "$(strip "$work/w1.json")" = "$(strip "$work/w2.json")" ] && same=yes

p=$work/perf.txt
printf '\n%-58s %-16s %-14s\n' "figure" "measured" "target"
printf '%-58s %-16s %-14s\n' "1. apply / six full FFTs, filled 32^3 (CPU time, median)" "$(val ratio_32 $p)" "<= 0.8"
printf '%-58s %-16s %-14s\n' "1. apply / six full FFTs, filled 64^3 (CPU time, median)" "$(val ratio_64 $p)" "<= 0.8"
printf '%-58s %-16s %-14s\n' "1. same, instructions (callgrind), 32^3" "$cg_ratio" "(<= 0.8)"
printf '%-58s %-16s %-14s\n' "1. apply, generic product / $(val simd_name $p) product, 32^3" "$(val simd_gain $p)" "-"
printf '%-58s %-16s %-14s\n' "2. peak RSS of 'dipolize tensor', filled ${edge}^3, B/voxel" "$bpv" "<= 1024 (100^3)"
printf '%-58s %-16s %-14s\n' "3. exponent e of t ~ N^e, edges $(val range $p)" "$(val exponent $p)" "<= 1.15"
printf '%-58s %-16s %-14s\n' "3. same after dividing t by log N" "$(val exponent_nlogn $p)" "<= 1.15"
printf '%-58s %-16s %-14s\n' "3. (reference) same fit for the six full FFTs" "$(val exponent_fft6 $p)" "-"
if [ -f "$work/perf_m.txt" ]; then
    q=$work/perf_m.txt
    printf '%-58s %-16s %-14s\n' "3. exponent, --plan measure (operator and FFTs)" "$(val exponent $q)" "(<= 1.15)"
    printf '%-58s %-16s %-14s\n' "3. (reference) six full FFTs, measured plans" "$(val exponent_fft6 $q)" "-"
fi
printf '%-58s %-16s %-14s\n' "3. apply speedup, 2 threads vs 1, 64^3 (wall, median)" "$(val speedup2 $p)" ">= 1.6"
d=$work/demo.txt
printf '%-58s %-16s %-14s\n' "4. demo sweep: iterations / wavelength (6 RHS), cold" "$(val iter_cold $d)" "-"
printf '%-58s %-16s %-14s\n' "4. demo sweep: iterations / wavelength (6 RHS), warm" "$(val iter_warm $d)" "< cold"
printf '%-58s %-16s %-14s\n' "4. demo sweep: CPU s / wavelength, cold -> warm" "$(val sec_cold $d) -> $(val sec_warm $d)" "-"
if [ -f "$work/big.txt" ]; then
    b=$work/big.txt
    printf '%-58s %-16s %-14s\n' "4. $(val voxels $b)-voxel ring: iterations / wavelength, cold" "$(val iter_cold $b)" "-"
    printf '%-58s %-16s %-14s\n' "4. $(val voxels $b)-voxel ring: iterations / wavelength, warm" "$(val iter_warm $b)" "< cold"
    printf '%-58s %-16s %-14s\n' "4. $(val voxels $b)-voxel ring: CPU s / wavelength, cold -> warm" "$(val sec_cold $b) -> $(val sec_warm $b)" "-"
fi
printf '%-58s %-16s %-14s\n' "5. --plan measure --wisdom: 2nd run identical to 1st" "$same" "yes"
printf '%-58s %-16s %-14s\n' "5. wall s of the two runs (plans measured, then loaded)" \
    "$(awk -v a="$t0" -v b="$t1" -v c="$t2" 'BEGIN{printf "%.1f, %.1f", b - a, c - b}')" "2nd faster"
