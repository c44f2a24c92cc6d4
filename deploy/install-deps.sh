#!/usr/bin/env bash
# Installs factorwatch's build and test dependencies from Debian's packages.
# Idempotent: when every package is already present it changes nothing. Extra package
# names given as arguments are installed too (deploy/run-sanitized-tests.sh: clang).
set -euo pipefail

packages=(
  cmake g++ make pkgconf
  curl python3 zlib1g-dev
  libeigen3-dev libspectra-dev
  libcpp-httplib-dev nlohmann-json3-dev libsqlitecpp-dev libsqlite3-dev
  libgtest-dev libcli11-dev libfast-float-dev libhowardhinnant-date-dev
  "$@"
)

missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed' || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  echo "install-deps: all ${#packages[@]} packages present"
  exit 0
fi

SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
echo "install-deps: installing ${missing[*]}"
$SUDO apt-get update -qq
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
