#!/usr/bin/env bash
# Installs what a fresh Debian/Ubuntu machine lacks to build retinue: the HDF5 C library
# (libhdf5-dev, 1.10 or newer) and pkg-config. Uses sudo when not root. On other systems it
# says what to install and stops.
set -euo pipefail

if ! command -v cargo >/dev/null 2>&1; then
  echo "retinue needs Rust (cargo 1.89 or newer: std file locks); install it with rustup, then re-run." >&2
  exit 1
fi

have_hdf5() {
  pkg-config --exists hdf5 2>/dev/null && return 0
  [ -e /usr/include/hdf5/serial/hdf5.h ] || [ -e /usr/include/hdf5.h ]
}

need=()
have_hdf5 || need+=(libhdf5-dev)
command -v pkg-config >/dev/null 2>&1 || need+=(pkg-config)

if [ ${#need[@]} -gt 0 ]; then
  if command -v apt-get >/dev/null 2>&1; then
    SUDO=""
    if [ "$(id -u)" -ne 0 ]; then
      command -v sudo >/dev/null 2>&1 || { echo "need root or sudo to install: ${need[*]}" >&2; exit 1; }
      SUDO=sudo
    fi
    echo "installing ${need[*]} (apt-get)" >&2
    $SUDO apt-get update -qq
    DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${need[@]}" >/dev/null
  else
    cat >&2 <<MSG
retinue needs the HDF5 C library (1.10 or newer, with headers) and pkg-config, which this
script installs only on Debian/Ubuntu (apt-get). Install them with your package manager, e.g.
  macOS:   brew install hdf5 pkg-config
  Fedora:  sudo dnf install hdf5-devel pkgconf
  Arch:    sudo pacman -S hdf5 pkgconf
then re-run. (Missing now: ${need[*]}.)
MSG
    exit 1
  fi
fi
