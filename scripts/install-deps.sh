#!/usr/bin/env bash
# Installs the Debian 12 / Ubuntu packages levelhead builds and tests with,
# only those that are missing. Safe to run again. Needs root or sudo.
# --browser also installs Chromium for the test that opens the report in a
# real headless browser.
set -euo pipefail

packages=(
  build-essential cmake pkg-config
  libproj-dev proj-data proj-bin
  libssl-dev
  libgdal-dev gdal-bin
  libeigen3-dev
  libsuitesparse-dev
  libopenblas0-pthread
  libboost-math-dev
  libcli11-dev
  libtomlplusplus-dev
  nlohmann-json3-dev
  libfmt-dev
  libutfcpp-dev
  libhowardhinnant-date-dev tzdata
  catch2
  python3 python3-numpy python3-jsonschema
  clang-format
  help2man
)
if [ "${1:-}" = "--browser" ]; then packages+=(chromium); fi

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if [ ${#missing[@]} -eq 0 ]; then
  echo "install-deps: all packages present"
  exit 0
fi

echo "install-deps: installing ${missing[*]}"
sudo_cmd=()
if [ "$(id -u)" -ne 0 ]; then sudo_cmd=(sudo); fi
export DEBIAN_FRONTEND=noninteractive
"${sudo_cmd[@]}" apt-get update -qq
"${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
