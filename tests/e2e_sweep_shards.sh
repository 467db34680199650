#!/usr/bin/env bash
# e2e_sweep_shards.sh: four shards (--shard I/4) merged with `dipolize merge` equal the
# single run over the whole list, and merge refuses (exit 2, nothing written) shards made
# with other inputs, a missing wavelength, a duplicated one and a damaged table.
#
# Each shard warm-starts along its own chain of wavelengths (I, I+4, ...), the single run
# along all of them, so the tables agree to the solver tolerance, not bit for bit: the
# check allows 1e-6 relative to the largest element of each wavelength's tensor (the
# solves stop at a relative residual of 1e-8). Usage: e2e_sweep_shards.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"

"$bin" shape sphere --radius 4nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
args=(sweep "$tmp/s.vtk" --eps 2.25+0.1i --wavelengths 200nm:270nm:10nm --threads 1 --quiet)

"$bin" "${args[@]}" -o "$tmp/single" || fail "single run (exit $?)"
for i in 0 1 2 3; do
    "$bin" "${args[@]}" --shard "$i/4" -o "$tmp/s$i" || fail "shard $i/4 (exit $?)"
done
n1=$(grep -vc '^#' "$tmp/s1/diagnostics.csv")
[ "$n1" = 3 ] || fail "shard 1/4 of 8 wavelengths should hold 2 rows (file has $n1 lines)"

"$bin" merge "$tmp/s3" "$tmp/s1" "$tmp/s0" "$tmp/s2" -o "$tmp/merged" --quiet ||
    fail "merge of the four shards (exit $?)"

# The merged directory equals the single run to the solver tolerance.
"$py" "$(dirname "$0")/helpers/compare_sweeps.py" "$tmp/single" "$tmp/merged" ||
    fail "merged tables differ from the single run"

# refuse NAME FRAGMENT DIR...: merge must exit 2 with FRAGMENT in its message, no output.
refuse() {
    local what=$1 frag=$2
    shift 2
    "$bin" merge "$@" -o "$tmp/out" 2>"$tmp/err" >/dev/null
    local rc=$?
    [ "$rc" = 2 ] || fail "merge with $what: exit $rc, expected 2"
    grep -q -- "$frag" "$tmp/err" || fail "merge with $what: message lacks \"$frag\": $(cat "$tmp/err")"
    [ "$(wc -l <"$tmp/err")" = 1 ] || fail "merge with $what: more than one line on stderr"
    [ ! -e "$tmp/out" ] || fail "merge with $what left $tmp/out behind"
}

"$bin" "${args[@]}" --tol 1e-9 --shard 1/4 -o "$tmp/other" || fail "shard with --tol 1e-9"
refuse "mixed inputs" "different inputs: options" "$tmp/s0" "$tmp/other" "$tmp/s2" "$tmp/s3"
refuse "a missing shard" "is in none of" "$tmp/s0" "$tmp/s1" "$tmp/s2"
cp -r "$tmp/s1" "$tmp/s1copy"
refuse "a duplicate" "is in both" "$tmp/s0" "$tmp/s1" "$tmp/s2" "$tmp/s3" "$tmp/s1copy"
cp -r "$tmp/s2" "$tmp/damaged"
f="$tmp/damaged/cross_sections.csv"
head -c $(($(wc -c <"$f") - 9)) "$f" >"$f.cut" && mv "$f.cut" "$f"
refuse "a damaged shard" "damaged/cross_sections.csv: line 7" "$tmp/s0" "$tmp/s1" \
    "$tmp/damaged" "$tmp/s3"
refuse "no summary" "not a sweep directory" "$tmp/s0" "$tmp"
refuse "a run given twice" "given twice" "$tmp/s0" "$tmp/s0"

echo "e2e_sweep_shards: ok"
