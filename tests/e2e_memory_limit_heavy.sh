#!/usr/bin/env bash
# e2e_memory_limit_heavy.sh: the --max-memory estimate against the memory a run really
# uses. For a sphere of 33401 voxels (a 40^3 grid) with BiCGSTAB and GMRES (the largest
# and the smallest share of touched memory), the estimate printed
# by a refused run (--max-memory 1B) must bound the peak resident set of the same run
# without the limit from above, allowing 32 MiB for the program, its libraries and FFTW's
# plans, which the estimate leaves out, and must not exceed it by more than a factor 2.5
# (GMRES's basis is allocated whole but touched only as far as the iterations go).
# A run within --max-memory must succeed. "heavy": sanitizers inflate the resident set, so
# the ASan run skips this test.
# Usage: e2e_memory_limit_heavy.sh PATH_TO_DIPOLIZE
set -u
bin=${1:?usage: e2e_memory_limit_heavy.sh PATH_TO_DIPOLIZE}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
export OMP_NUM_THREADS=1
"$bin" shape sphere --radius 20nm --spacing 1nm -o "$tmp/s.vtk" >/dev/null 2>&1 ||
    { echo "FAIL  shape"; exit 1; }
fail=0
for args in "tensor --wavelength 600nm" "tensor --wavelength 600nm --solver gmres"; do
    # shellcheck disable=SC2086
    msg=$("$bin" $args "$tmp/s.vtk" --eps 2.25 --max-memory 1B 2>&1 >/dev/null)
    need=$(printf '%s\n' "$msg" | grep -o '(about [^(]*([0-9]* bytes\|([0-9]* bytes' | head -n 1 |
        grep -o '[0-9]*')
    if [ -z "$need" ]; then
        echo "FAIL  $args: no estimate in the refusal: $msg"
        fail=1
        continue
    fi
    # shellcheck disable=SC2086
    /usr/bin/python3 - "$need" "$args" "$bin" $args "$tmp/s.vtk" --eps 2.25 --max-memory $((need + 1))B <<'PYEOF' || fail=1
import resource, subprocess, sys

need = int(sys.argv[1])
what = sys.argv[2]
cmd = sys.argv[3:]
r = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * 1024  # kB on Linux
MiB = 2.0 ** 20
SLACK = 32 * MiB  # program, libraries, FFTW plans: not in the estimate
if r.returncode != 0:
    print(f"FAIL  {what}: exit {r.returncode} within its own estimate: {r.stderr.strip()}")
    sys.exit(1)
if peak > need + SLACK or need > 2.5 * peak:
    print(f"FAIL  {what}: estimate {need / MiB:.1f} MiB, peak resident {peak / MiB:.1f} MiB")
    sys.exit(1)
print(f"ok    {what}: estimate {need / MiB:.1f} MiB, peak resident {peak / MiB:.1f} MiB")
PYEOF
done
exit "$fail"
