#!/usr/bin/env bash
# Install everything from nothing and run the whole test suite, twice over:
#  1. the engine, CLI and IFC tests on numpy 2.x (a plain venv);
#  2. the engine again on numpy 1.26 plus the Blender add-on, headless, in a venv with
#     Blender's Python module (bpy 5.0.1 pins numpy < 2).
# Both venvs get the batch extra (Dask), so the cluster tests run on both numpy versions;
# PLUMBFRAME_REQUIRE_DASK=1 makes them fail rather than skip if it is missing.
# A run that collects no test fails (pytest exit code 5 is not success).
set -euo pipefail
cd "$(dirname "$0")/.."
PY=${PYTHON:-python3}
WORK=${PLUMBFRAME_VENVS:-.venvs}
mkdir -p "$WORK"

run_pytest() {  # run_pytest PYTHON ARGS...; fail on "no tests collected" too
  local py=$1; shift
  set +e
  "$py" -m pytest "$@"
  local rc=$?
  set -e
  if [ $rc -eq 5 ]; then echo "error: pytest collected no tests" >&2; exit 1; fi
  return $rc
}

echo "== engine on numpy 2 =="
"$PY" -m venv "$WORK/np2"
"$WORK/np2/bin/pip" install -q --upgrade pip
"$WORK/np2/bin/pip" install -q -e ".[test,fast,batch]"
# type check the engine (settings in pyproject.toml [tool.mypy])
"$WORK/np2/bin/python" -m mypy analysis
PLUMBFRAME_REQUIRE_DASK=1 run_pytest "$WORK/np2/bin/python" -q -p no:cacheprovider tests --ignore=tests/addon

echo "== engine on numpy 1.26 and the Blender add-on (bpy 5.0.1) =="
"$PY" -m venv "$WORK/bpy"
"$WORK/bpy/bin/pip" install -q --upgrade pip
"$WORK/bpy/bin/pip" install -q "bpy==5.0.1" "numpy>=1.26,<2"
"$WORK/bpy/bin/pip" install -q -e ".[test,batch]" "numpy>=1.26,<2"
"$WORK/bpy/bin/python" -c "import numpy; assert numpy.__version__.startswith('1.'), numpy.__version__"
PLUMBFRAME_REQUIRE_BPY=1 PLUMBFRAME_REQUIRE_DASK=1 run_pytest "$WORK/bpy/bin/python" -q -p no:cacheprovider tests
