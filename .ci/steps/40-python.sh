#!/usr/bin/env bash
# Python door: Rust lints of the binding crate, stub checks, then the pytest
# suite (reference comparisons, NIST StRD, GIL, Dask LocalCluster) against
# the package that scripts/setup.d/40-python.sh installed.
set -euo pipefail
cd "$(dirname "$0")/../.."
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$PWD/py-bindings/target}"
cargo fmt --manifest-path py-bindings/Cargo.toml -- --check
cargo clippy --manifest-path py-bindings/Cargo.toml --all-targets -- -D warnings
cd py-bindings
# The installed extension must be the one built from this tree.
python3 - <<'PY'
import pathlib, plumbfit
src = pathlib.Path("python/plumbfit/_native.pyi").read_text()
inst = (pathlib.Path(plumbfit.__file__).parent / "_native.pyi").read_text()
assert src == inst, "installed plumbfit is stale: run scripts/setup.d/40-python.sh"
PY
python3 -m mypy python/plumbfit tests
python3 -m mypy.stubtest plumbfit._native --allowlist stubtest-allowlist.txt
python3 -m pytest -p no:cacheprovider tests
