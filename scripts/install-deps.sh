#!/usr/bin/env bash
# Installs every Debian package orderband needs to build, test and cross-check.
# Idempotent: packages already present are skipped. Run as root on Debian 12.
set -euo pipefail

packages=(
  g++ cmake make pkg-config clang-format git
  libeigen3-dev libfftw3-dev libhealpix-cxx-dev libcli11-dev libgtest-dev
  gemmi-dev tao-pegtl-dev libstb-dev libboost-dev
  libhdf5-dev libtomlplusplus-dev nlohmann-json3-dev libpng-dev libtiff-dev
  python3-numpy python3-scipy python3-healpy python3-skimage python3-h5py
  chromium
  clang clang-tidy libclang-rt-14-dev libomp-dev
  libopenmpi-dev openmpi-bin
)

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if [ ${#missing[@]} -eq 0 ]; then
  echo "install-deps: all ${#packages[@]} packages present"
  exit 0
fi

if [ "$(id -u)" -ne 0 ]; then
  SUDO=sudo
else
  SUDO=
fi
echo "install-deps: installing ${missing[*]}"
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -q
$SUDO apt-get install -y -q --no-install-recommends "${missing[@]}"
