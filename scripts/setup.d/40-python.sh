#!/usr/bin/env bash
# Python door: the pinned test dependencies, then the plumbfit package
# itself, built from source by pip through maturin (PEP 517). Safe to re-run:
# pip skips satisfied pins and cargo reuses the build directory.
set -euo pipefail
cd "$(dirname "$0")/../.."
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$PWD/py-bindings/target}"
python3 -m pip install -q --disable-pip-version-check -r py-bindings/requirements-test.txt
python3 -m pip install -q --disable-pip-version-check --force-reinstall --no-deps ./py-bindings
python3 -c "import plumbfit; print('plumbfit', plumbfit.__version__, 'installed')"
