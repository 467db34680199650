#!/usr/bin/env bash
# e2e_bad_input_catalogue.sh: runs every case of the bad-input catalogue tests/bad_input/
# (format in tests/bad_input/README.md). Each case must end with its expected exit code,
# exactly one line on stderr starting "dipolize: " that holds the expected fragment,
# nothing on stdout (or, for a failed computation, a stdout holding the fragment of line 3
# of `expect`, which says the result did not converge), and no file or directory left in
# its scratch folder (where its output paths point: no partial output, no temporary file).
# Usage: e2e_bad_input_catalogue.sh PATH_TO_DIPOLIZE [CASE...]
#   DPZ_SHOW=1 prints every case's message (to review wording).
set -u
bin=${1:?usage: e2e_bad_input_catalogue.sh PATH_TO_DIPOLIZE [CASE...]}
case "$bin" in /*) ;; */*) bin="$(cd "$(dirname "$bin")" && pwd)/$(basename "$bin")" ;; esac
shift
here=$(cd "$(dirname "$0")" && pwd)
cat_dir=$(cd "${DPZ_SOURCE_DIR:-$here/..}/tests/bad_input" && pwd)
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
pass=0
fail=0

if [ "$#" -gt 0 ]; then
    cases="$*"
else
    cases=$(cd "$cat_dir" && for d in */; do [ -f "$d/cmd" ] && echo "${d%/}"; done)
fi

for name in $cases; do
    dir="$cat_dir/$name"
    scratch="$tmp/$name"
    mkdir -p "$scratch"
    input=$(ls "$dir"/input.* 2>/dev/null | head -n 1)
    want=$(sed -n 1p "$dir/expect")
    frag=$(sed -n 2p "$dir/expect")
    outfrag=$(sed -n 3p "$dir/expect")
    # Arguments: the cmd line split at blanks, placeholders replaced word by word.
    read -r -a words <"$dir/cmd"
    args=()
    for w in "${words[@]}"; do
        w=${w//@IN@/$input}
        w=${w//@DIR@/$dir}
        w=${w//@DATA@/$cat_dir/_data}
        w=${w//@OUT@/$scratch/out}
        args+=("$w")
    done
    (cd "$scratch" && "$bin" "${args[@]}" >"$tmp/stdout" 2>"$tmp/stderr")
    rc=$?
    why=""
    [ "$rc" = "$want" ] || why="exit $rc, expected $want"
    lines=$(wc -l <"$tmp/stderr")
    [ -z "$why" ] && [ "$lines" != 1 ] && why="$lines lines on stderr, expected 1"
    [ -z "$why" ] && ! head -n 1 "$tmp/stderr" | grep -q '^dipolize: ' &&
        why="stderr lacks the dipolize: prefix"
    [ -z "$why" ] && ! grep -qF -- "$frag" "$tmp/stderr" && why="stderr lacks \"$frag\""
    if [ -z "$outfrag" ]; then
        [ -z "$why" ] && [ -s "$tmp/stdout" ] && why="stdout not empty"
    else
        [ -z "$why" ] && ! grep -qF -- "$outfrag" "$tmp/stdout" && why="stdout lacks \"$outfrag\""
    fi
    left=$(ls -A "$scratch")
    [ -z "$why" ] && [ -n "$left" ] && why="left behind: $left"
    if [ -z "$why" ]; then
        pass=$((pass + 1))
        echo "ok    $name"
        [ "${DPZ_SHOW:-0}" = 1 ] && sed 's/^/      | /' "$tmp/stderr"
    else
        fail=$((fail + 1))
        echo "FAIL  $name: $why"
        echo "      dipolize ${args[*]}"
        sed 's/^/      | /' "$tmp/stderr" | head -n 5
    fi
    rm -rf "$scratch"
done
echo "bad-input catalogue: $pass passed, $fail failed"
[ "$pass" -ge 1 ] && [ "$fail" = 0 ]
