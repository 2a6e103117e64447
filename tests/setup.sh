# Sourced by the README commands: installs m4 and a C compiler for rug's bundled GMP/MPFR
# build, and the Python packages of the independent checks, when they are missing.
need_apt=()
command -v m4 >/dev/null 2>&1 || need_apt+=(m4)
command -v cc >/dev/null 2>&1 || need_apt+=(gcc)
command -v make >/dev/null 2>&1 || need_apt+=(make)
if [ ${#need_apt[@]} -gt 0 ]; then
  if [ "$(id -u)" -eq 0 ]; then SUDO=""; else SUDO="sudo"; fi
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${need_apt[@]}" >/dev/null
fi
if ! python3 -c 'import mpmath, numpy, ml_dtypes, onnx, onnxruntime' >/dev/null 2>&1; then
  # onnxruntime is optional (its recorder test is skipped without it): if it has no wheel
  # here, install the rest.
  python3 -m pip install --quiet --disable-pip-version-check -r tests/requirements.txt ||
    python3 -m pip install --quiet --disable-pip-version-check -r <(grep -v '^onnx' tests/requirements.txt)
fi
