#!/usr/bin/env bash
# e2e_sweep_resume.sh: a sweep killed with SIGKILL at several points and continued with
# --resume ends with tables byte-identical to an uninterrupted run with the same inputs
# and thread count: the tables, the restart state (the warm-start solutions) and
# summary.json are committed together, a resume continues from the last commit, and a
# damaged tail left by the kill is cut off. Usage: e2e_sweep_resume.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"

# A sphere of radius 5 voxels (~500 dipoles), high index: about 0.5 s per wavelength.
"$bin" shape sphere --radius 5nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
args=(sweep "$tmp/s.vtk" --eps 12.25+0.5i --wavelengths 300nm:370nm:10nm --threads 1
      --quiet)


# kill_at DIR MS: runs (resuming) into DIR and kills it after MS milliseconds.
kill_at() {
    "$bin" "${args[@]}" -o "$1" --resume &
    pid=$!
    sleep "$(printf '%d.%03d' $(($2 / 1000)) $(($2 % 1000)))"
    kill -9 "$pid" 2>/dev/null
    wait "$pid" 2>/dev/null
    pid=
    echo "  $(basename "$1"): SIGKILL after $2 ms, $(rows "$1") wavelengths on disk"
}

same_tables() { # same_tables DIR_A DIR_B WHAT
    local f
    for f in alpha.csv cross_sections.csv diagnostics.csv static.json; do
        cmp -s "$1/$f" "$2/$f" || fail "$3: $f differs from the uninterrupted run"
    done
    # summary.json: equal except timings (seconds per wavelength).
    "$py" - "$1/summary.json" "$2/summary.json" <<'PY' || fail "$3: summary.json differs"
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
for s in (a, b):
    for r in s["results"]:
        r.pop("seconds")
sys.exit(0 if a == b else 1)
PY
    [ ! -e "$2/restart.0.bin" ] && [ ! -e "$2/restart.1.bin" ] && [ ! -e "$2/.lock" ] ||
        fail "$3: restart state or lock left behind after the run finished"
}

t0=$(date +%s%N)
"$bin" "${args[@]}" -o "$tmp/A" || fail "uninterrupted run (exit $?)"
run_ms=$((($(date +%s%N) - t0) / 1000000)) # wall time of a whole run, ms
[ "$(rows "$tmp/A")" = 8 ] || fail "uninterrupted run: $(rows "$tmp/A") of 8 wavelengths"

# B: killed after 2, then after 5 finished wavelengths; then a damaged tail (a row cut
# short, as a kill during a write leaves it) before the last resume.
kill_after "$tmp/B" 2 "${args[@]}"
r=$(rows "$tmp/B")
[ "$r" -ge 2 ] && [ "$r" -lt 8 ] || fail "B: killed with $r of 8 wavelengths (expected 2..7)"
kill_after "$tmp/B" 5 "${args[@]}"
printf '3.5e-07,ee,0,0,1.25e-2' >>"$tmp/B/alpha.csv"
"$bin" "${args[@]}" -o "$tmp/B" --resume || fail "B: final resume (exit $?)"
same_tables "$tmp/A" "$tmp/B" "B (killed twice)"

# C: killed at pseudo-random moments (fixed seed), the first one early (during the set-up
# or the first wavelength).
RANDOM=2385
kill_at "$tmp/C" $((run_ms / 20))
for k in 1 2 3 4; do # within the time the remaining wavelengths need
    kill_at "$tmp/C" $((RANDOM % (run_ms * (8 - $(rows "$tmp/C")) / 8 + 1)))
done
"$bin" "${args[@]}" -o "$tmp/C" --resume || fail "C: final resume (exit $?)"
same_tables "$tmp/A" "$tmp/C" "C (killed at random moments)"

# D: a second sweep into a directory that a running sweep is writing (a requeued job
# while the first still runs) is refused without touching it.
"$bin" "${args[@]}" -o "$tmp/D" &
pid=$!
for i in $(seq 1 600); do
    [ "$(rows "$tmp/D")" -ge 1 ] && break
    sleep 0.05
done
"$bin" "${args[@]}" -o "$tmp/D" --resume 2>"$tmp/err"
rc=$?
if kill -0 "$pid" 2>/dev/null; then
    [ "$rc" = 2 ] && grep -q "being written by another running sweep" "$tmp/err" ||
        fail "D: a second writer was not refused (exit $rc): $(cat "$tmp/err")"
fi
kill -9 "$pid" 2>/dev/null
wait "$pid" 2>/dev/null
pid=
"$bin" "${args[@]}" -o "$tmp/D" --resume || fail "D: resume after the refusal (exit $?)"
same_tables "$tmp/A" "$tmp/D" "D (second writer refused)"

# Resuming a finished run changes nothing.
cp -r "$tmp/A" "$tmp/A2"
"$bin" "${args[@]}" -o "$tmp/A2" --resume || fail "resume of a finished run (exit $?)"
same_tables "$tmp/A" "$tmp/A2" "resume of a finished run"

# E: thousands of quick wavelengths (a 27-voxel cube), where the tables, the restart
# state and summary.json are committed together only every few dozen wavelengths (a
# commit waits 20 times its own duration): kills leave rows beyond the last commit, which
# the resume cuts off and computes again, still ending byte-identical.
"$bin" shape box --size 3nm,3nm,3nm --spacing 1nm -o "$tmp/q.vtk" >/dev/null || fail "shape q"
args=(sweep "$tmp/q.vtk" --eps 2.25+0.1i --wavelengths 300nm:599.9nm:0.1nm --threads 1
      --quiet)
t0=$(date +%s%N)
"$bin" "${args[@]}" -o "$tmp/E0" || fail "E: uninterrupted run (exit $?)"
run_ms=$((($(date +%s%N) - t0) / 1000000))
nres() { "$py" -c 'import json,sys; print(len(json.load(open(sys.argv[1]))["results"]))' "$1"; }
ahead=0
for k in 1 2 3 4; do
    kill_at "$tmp/E" $((run_ms / 6 + RANDOM % (run_ms / 6 + 1)))
    [ -f "$tmp/E/summary.json" ] || continue
    committed=$(nres "$tmp/E/summary.json")
    [ "$(rows "$tmp/E")" -gt "$committed" ] && ahead=$((ahead + 1))
done
[ "$ahead" -ge 1 ] || fail "E: no kill left rows beyond the last commit (commits not spaced?)"
"$bin" "${args[@]}" -o "$tmp/E" --resume || fail "E: final resume (exit $?)"
same_tables "$tmp/E0" "$tmp/E" "E (spaced commits, killed 4 times)"

echo "e2e_sweep_resume: ok"
