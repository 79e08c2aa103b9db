#!/usr/bin/env bash
# Installs qamsight's build and test dependencies from Debian 12 packages (idempotent).
set -euo pipefail

packages=(
  build-essential cmake ninja-build pkg-config
  libfftw3-dev libeigen3-dev catch2 libbenchmark-dev libboost-dev
  libcli11-dev nlohmann-json3-dev libtomlplusplus-dev
  python3 python3-numpy python3-scipy python3-mpmath python3-pybind11 pybind11-dev
  python3-pytest python3-matplotlib python3-pil
  librsvg2-bin
)
# Optional groups, selected by environment: QAMSIGHT_DEPS_EXTRA="mpi sanitizers browser"
for extra in ${QAMSIGHT_DEPS_EXTRA:-}; do
  case "$extra" in
    mpi) packages+=(openmpi-bin libopenmpi-dev) ;;
    sanitizers) packages+=(clang-14 libclang-rt-14-dev) ;;
    browser) packages+=(chromium chromium-driver) ;;
    *) echo "install-deps: unknown extra group '$extra' (allowed: mpi sanitizers browser)" >&2; exit 2 ;;
  esac
done

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done
if [ "${#missing[@]}" -eq 0 ]; then
  exit 0
fi
if [ "$(id -u)" -ne 0 ]; then
  echo "install-deps: missing Debian packages: ${missing[*]} (run as root to install them)" >&2
  exit 1
fi
echo "install-deps: installing ${missing[*]}" >&2
export DEBIAN_FRONTEND=noninteractive
apt-get update -qq >/dev/null
apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
