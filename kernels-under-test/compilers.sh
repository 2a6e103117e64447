#!/usr/bin/env bash
# Installs the compilers the compiler matrix compares, from the distribution's packages (Debian
# 12 carries gcc-11 and gcc-12, clang-13 to clang-16), when they are missing:
#   source kernels-under-test/compilers.sh    # sets MATRIX_BUILDS, one --build per compiler
# A compiler that cannot be installed is left out with a note; `matrix` then names it as
# skipped. Override the list with ULPGAUGE_COMPILERS="gcc-12 clang-16".
compilers=(${ULPGAUGE_COMPILERS:-gcc-11 gcc-12 clang-14 clang-15})
missing=()
for cc in "${compilers[@]}"; do
  command -v "$cc" >/dev/null 2>&1 || missing+=("$cc")
done
if [ ${#missing[@]} -gt 0 ]; then
  if [ "$(id -u)" -eq 0 ]; then SUDO=""; else SUDO="sudo"; fi
  if command -v apt-get >/dev/null 2>&1; then
    $SUDO apt-get update -qq >/dev/null 2>&1 || true
    for cc in "${missing[@]}"; do
      DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "$cc" >/dev/null 2>&1 \
        || echo "compilers.sh: note: could not install $cc; matrix will show it as skipped" >&2
    done
  else
    echo "compilers.sh: note: no apt-get; missing compilers (${missing[*]}) will show as skipped" >&2
  fi
fi
MATRIX_BUILDS=()
for cc in "${compilers[@]}"; do
  MATRIX_BUILDS+=(--build "$cc -O2")
done
# One build with fast-math beside the plain ones shows what the flag costs in ulps.
MATRIX_BUILDS+=(--build "${compilers[1]:-gcc} -O3 -ffast-math")
