#!/usr/bin/env bash
# e2e_mpi_sweep.sh: `mpirun -n R dipolize sweep ...` (the MPI task farm) writes the same
# tables as the serial run: with 2 ranks (one worker, wavelengths in order) and with 3
# ranks (two workers taking wavelengths as they come free). Workers warm-start only along
# consecutive wavelengths, so the tables agree to the solver tolerance
# (helpers/compare_sweeps.py), not necessarily bit for bit. An MPI run killed halfway
# continues with --resume.
#
# Skips (exit 0 with a message) when the binary was built without MPI (-DDPZ_MPI=ON) or
# mpirun is absent. Usage: e2e_mpi_sweep.sh PATH_TO_DIPOLIZE
set -u
. "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"
if ! command -v mpirun >/dev/null 2>&1; then
    echo "e2e_mpi_sweep: SKIP (no mpirun on PATH)"
    exit 0
fi
if ! ldd "$bin" 2>/dev/null | grep -q 'libmpi'; then
    echo "e2e_mpi_sweep: SKIP ($bin was built without MPI; configure with -DDPZ_MPI=ON)"
    exit 0
fi
if [ "$(id -u)" = 0 ]; then
    export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
fi
cmp_py="$(dirname "$0")/helpers/compare_sweeps.py"
mpi=(mpirun --oversubscribe)

"$bin" shape sphere --radius 4nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null || fail "shape"
args=(sweep "$tmp/s.vtk" --eps 12.25+0.5i --wavelengths 300nm:370nm:10nm --threads 1 --quiet)

"$bin" "${args[@]}" -o "$tmp/serial" || fail "serial run (exit $?)"
for r in 2 3; do
    timeout 120 "${mpi[@]}" -n "$r" "$bin" "${args[@]}" -o "$tmp/mpi$r" >"$tmp/log$r" 2>&1 ||
        fail "mpirun -n $r (exit $?): $(tail -5 "$tmp/log$r")"
    "$py" "$cmp_py" "$tmp/serial" "$tmp/mpi$r" || fail "mpirun -n $r: tables differ from serial"
    [ ! -e "$tmp/mpi$r/restart.0.bin" ] || fail "mpirun -n $r: restart state left behind"
done

# Bad input under MPI: every rank refuses, exit 2, nothing written.
timeout 60 "${mpi[@]}" -n 2 "$bin" "${args[@]}" --shard 4/4 -o "$tmp/bad" >"$tmp/logb" 2>&1
[ ! -e "$tmp/bad" ] || fail "mpirun with --shard 4/4 created its directory"
grep -q "shard index must be below" "$tmp/logb" || fail "mpirun with --shard 4/4: $(cat "$tmp/logb")"

# Killed halfway (SIGKILL to mpirun and its ranks), then resumed under MPI.
"${mpi[@]}" -n 2 "$bin" "${args[@]}" -o "$tmp/killed" >/dev/null 2>&1 &
pid=$!
for i in $(seq 1 600); do
    n=$(grep -vc '^#' "$tmp/killed/diagnostics.csv" 2>/dev/null || echo 0)
    [ "$n" -ge 4 ] && break
    kill -0 "$pid" 2>/dev/null || break
    sleep 0.05
done
kill -9 "$pid" 2>/dev/null
wait "$pid" 2>/dev/null
# Ranks orphaned by the kill may hold DIR/.lock for a moment: retry while refused.
for i in $(seq 1 40); do
    timeout 120 "${mpi[@]}" -n 2 "$bin" "${args[@]}" -o "$tmp/killed" --resume >"$tmp/logk" 2>&1
    rc=$?
    grep -q "being written by another running sweep" "$tmp/logk" || break
    sleep 0.5
done
[ "$rc" = 0 ] || fail "mpirun --resume (exit $rc): $(tail -5 "$tmp/logk")"
"$py" "$cmp_py" "$tmp/serial" "$tmp/killed" || fail "killed and resumed MPI run differs"

echo "e2e_mpi_sweep: ok"
