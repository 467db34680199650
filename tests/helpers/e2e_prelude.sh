# e2e_prelude.sh: the common start of the end-to-end scripts, sourced right after
# `set -u` as  . "$(dirname "$0")/helpers/e2e_prelude.sh" "$@"
# Defines: bin (the dipolize binary, argument 1), tmp (a scratch folder removed at exit;
# a background run whose process id is left in $pid is killed first), fail (prints the
# reason and exits 1), py (Debian's /usr/bin/python3, which has numpy and scipy, else
# python3 on PATH) and rows (finished wavelengths in DIR/diagnostics.csv).
bin=${1:?usage: $(basename "$0") PATH_TO_DIPOLIZE}
tmp=$(mktemp -d)
pid=
e2e_cleanup() {
    [ -n "$pid" ] && kill -9 "$pid" 2>/dev/null
    rm -rf "$tmp"
}
trap e2e_cleanup EXIT
fail() {
    echo "FAIL: $*"
    exit 1
}
py=/usr/bin/python3
[ -x "$py" ] || py=python3

# kill_after DIR N ARGS...: runs `dipolize ARGS -o DIR --resume` in the background (a new
# run when DIR is absent) and kills it with SIGKILL as soon as N wavelengths are in its
# tables, or after at most 60 s.
kill_after() {
    local dir=$1 n=$2 i
    shift 2
    "$bin" "$@" -o "$dir" --resume &
    pid=$!
    for i in $(seq 1 6000); do
        [ "$(rows "$dir")" -ge "$n" ] && break
        kill -0 "$pid" 2>/dev/null || break
        sleep 0.01
    done
    kill -9 "$pid" 2>/dev/null
    wait "$pid" 2>/dev/null
    pid=
}

# rows DIR: wavelengths with rows in DIR/diagnostics.csv (one header line, comment lines
# start with #).
rows() {
    local f="$1/diagnostics.csv" n
    [ -f "$f" ] || { echo 0; return; }
    n=$(grep -vc '^#' "$f")
    echo $((n > 0 ? n - 1 : 0))
}
