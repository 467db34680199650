#!/usr/bin/env bash
# Installs the Debian packages dipolize needs to build and test, when they are missing.
# As root (or with password-less sudo) it runs apt-get; otherwise it prints the exact
# install line and fails. Usage: scripts/deps.sh [--mpi] [--fuzz]
set -eu
pkgs="cmake make gcc pkg-config libfftw3-dev libopenblas-dev liblapacke-dev libcmocka-dev
libcjson-dev python3-numpy python3-scipy"
for arg in "$@"; do
  case "$arg" in
    --mpi) pkgs="$pkgs libopenmpi-dev openmpi-bin" ;;
    --fuzz) pkgs="$pkgs clang libclang-rt-14-dev" ;;
    --memcheck) pkgs="$pkgs valgrind" ;;
    *) echo "deps.sh: unknown option $arg" >&2; exit 2 ;;
  esac
done
missing=""
for p in $pkgs; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing="$missing $p"
  fi
done
[ -z "$missing" ] && exit 0
echo "deps.sh: installing missing Debian packages:$missing"
if [ "$(id -u)" = 0 ]; then
  apt-get update -qq
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $missing
elif command -v sudo >/dev/null 2>&1 && sudo -n true 2>/dev/null; then
  sudo apt-get update -qq
  sudo DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $missing
else
  echo "deps.sh: cannot install packages without root; run:" >&2
  echo "  sudo apt-get install$missing" >&2
  exit 1
fi
