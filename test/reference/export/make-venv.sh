#!/usr/bin/env bash
# Creates .venv-torch/ at the repository root: PyPI torch 2.13.0 (CPU), numpy, safetensors and
# scipy, pinned. The export round-trip test (test/reference/export/roundtrip.test.ts) runs exported scripts with
# it, and test/reference/data/make_fixtures.py / test/reference/weights/make_fixtures.py write
# their fixtures with it, and `npm run bench` times its PyTorch / NumPy / SciPy reference with it
# (test/bench/reference.py; SciPy for the eigsh row). torch is pinned to the CPU build so pip never pulls a
# CUDA build: the CPU wheel these machines carry in /opt/wheels (torch 2.13.0+cpu) is required.
set -euo pipefail
cd "$(dirname "$0")/../../.."
VENV=.venv-torch
TORCH=2.13.0
NUMPY=2.4.6
SAFETENSORS=0.8.0
SCIPY=1.17.1
export PIP_RETRIES=0 PIP_DISABLE_PIP_VERSION_CHECK=1
if [ -x "$VENV/bin/python" ] && "$VENV/bin/python" -c "import torch, numpy, safetensors, scipy; assert torch.__version__.startswith('$TORCH') and scipy.__version__ == '$SCIPY'" 2>/dev/null; then
  echo "export venv: $VENV ready (torch $TORCH)"
  exit 0
fi
rm -rf "$VENV"
# a Python 3.11 with venv and ensurepip (the wheel is cp311): Debian's, else the first on PATH
PY=/usr/bin/python3
"$PY" -c 'import venv, ensurepip' 2>/dev/null || PY=python3
"$PY" -m venv "$VENV"
if ! ls /opt/wheels/torch-$TORCH+cpu-*.whl >/dev/null 2>&1; then
  echo "export venv: /opt/wheels/torch-$TORCH+cpu-*.whl is missing; without it pip would fetch a multi-GB CUDA build" >&2
  exit 1
fi
"$VENV/bin/pip" install --quiet --find-links /opt/wheels "torch==$TORCH+cpu" "numpy==$NUMPY" "safetensors==$SAFETENSORS" "scipy==$SCIPY"
"$VENV/bin/python" -c "import torch, numpy, safetensors, scipy; print('export venv: torch', torch.__version__, 'numpy', numpy.__version__, 'safetensors', safetensors.__version__, 'scipy', scipy.__version__)"
