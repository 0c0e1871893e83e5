#!/usr/bin/env bash
# Installs the build into a temporary prefix and runs the installed program on
# the demo; checks the man pages and the bash completion, builds a program of
# its own against the installed CMake package, then builds the Debian package
# and lists what it holds.
# Usage: check_install.sh BUILD_DIR WORK_DIR
set -euo pipefail
build=$1
work=$2
rm -rf "$work"
mkdir -p "$work"
prefix="$work/prefix"

cmake --install "$build" --prefix "$prefix" > "$work/install.log"
"$prefix/bin/levelhead" --version
"$prefix/bin/levelhead" demo --out "$work/demo" > "$work/demo.log"
test -f "$work/demo/report.html" || { echo "the installed program wrote no report"; exit 1; }

completion="$prefix/share/bash-completion/completions/levelhead"
test -f "$completion" || { echo "no bash completion installed"; exit 1; }
bash -c "source '$completion' && complete -p levelhead" > /dev/null
grep -q -- "--sigma0" "$completion" || { echo "the completion lacks adjust's options"; exit 1; }

if [ -d "$build/share/man/man1" ]; then
  for page in levelhead levelhead-adjust levelhead-heads levelhead-run; do
    file="$prefix/share/man/man1/$page.1"
    test -f "$file" || { echo "no man page $page.1"; exit 1; }
    grep -q '^\.TH' "$file" || { echo "$page.1 is not a man page"; exit 1; }
  done
  grep -q -- 'variance\\-groups' "$prefix/share/man/man1/levelhead-adjust.1" ||
    { echo "levelhead-adjust.1 lacks the command's options"; exit 1; }
fi

# A program of the user's own against the installed CMake package.
consumer="$work/consumer"
mkdir -p "$consumer"
cat > "$consumer/CMakeLists.txt" <<'CMAKE'
cmake_minimum_required(VERSION 3.20)
project(uses_levelhead LANGUAGES CXX)
set(CMAKE_CXX_STANDARD 20)
find_package(levelhead REQUIRED)
add_executable(uses_levelhead main.cpp)
target_link_libraries(uses_levelhead PRIVATE levelhead::levelhead)
CMAKE
cat > "$consumer/main.cpp" <<'CPP'
#include <cstdio>
#include "levelhead/levelling/statistics.hpp"
int main() { std::printf("%.5f\n", levelhead::normal_quantile(0.975)); }
CPP
cmake -S "$consumer" -B "$consumer/build" -DCMAKE_PREFIX_PATH="$prefix" > "$work/consumer.log"
cmake --build "$consumer/build" >> "$work/consumer.log"
# z(0.975) = 1.95996 (standard normal table, common practice)
test "$("$consumer/build/uses_levelhead")" = "1.95996" || { echo "the library gave a wrong quantile"; exit 1; }

if command -v dpkg-deb > /dev/null; then
  cpack -G DEB --config "$build/CPackConfig.cmake" -B "$work/package" > "$work/cpack.log"
  deb=$(ls "$work"/package/*.deb)
  dpkg-deb -c "$deb" > "$work/contents.txt"
  grep -q "usr/bin/levelhead" "$work/contents.txt" || { echo ".deb holds no program"; exit 1; }
  grep -q "bash-completion/completions/levelhead" "$work/contents.txt" ||
    { echo ".deb holds no completion"; exit 1; }
  dpkg-deb -f "$deb" Depends | grep -q "proj-data" || { echo ".deb depends on no PROJ data"; exit 1; }
  dpkg-deb -f "$deb" Depends | grep -q "tzdata" || { echo ".deb depends on no tz database"; exit 1; }
  if [ -d "$build/share/man/man1" ]; then
    grep -q "man1/levelhead-heads.1" "$work/contents.txt" || { echo ".deb holds no man pages"; exit 1; }
  fi
  # What the package installs runs: unpacked, the program does the demo.
  dpkg-deb -x "$deb" "$work/deb-root"
  "$work/deb-root/usr/bin/levelhead" demo --out "$work/deb-demo" > "$work/deb-demo.log"
  test -f "$work/deb-demo/report.html" || { echo "the packaged program wrote no report"; exit 1; }
fi
echo "installed, ran the demo, man pages, completion, the CMake package and .deb: fine"
