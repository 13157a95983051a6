"""Shared fixtures: reference-data location, NIST StRD reader, versions of
the reference libraries the tests compare against."""

from __future__ import annotations

import json
import math
import os
import pathlib
import sys
from typing import Any, Literal

import numpy as np
import pytest

Tier = Literal["lean", "full"]

REPO_ROOT = pathlib.Path(__file__).resolve().parents[2]


def reference_versions() -> dict[str, str]:
    """Versions of the outside libraries used as references (printed in the
    pytest header and in assertion messages)."""
    import numpy
    import scipy
    import statsmodels

    return {
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
        "statsmodels": statsmodels.__version__,
    }


def pytest_report_header(config: pytest.Config) -> str:
    v = reference_versions()
    return "reference libraries: " + ", ".join(f"{k} {x}" for k, x in v.items())


def refdata_dir() -> pathlib.Path | None:
    """`$PLUMBFIT_REFDATA`, default `../shared/reference-data` beside the
    repository; None when absent."""
    env = os.environ.get("PLUMBFIT_REFDATA")
    path = pathlib.Path(env) if env else REPO_ROOT.parent / "shared" / "reference-data"
    return path if (path / "nist-strd" / "CERTIFIED.json").is_file() else None


def require_refdata() -> pathlib.Path:
    """The reference-data folder; under CI=true a missing folder fails the
    test, elsewhere the test is skipped with a loud reason."""
    path = refdata_dir()
    if path is None:
        where = os.environ.get("PLUMBFIT_REFDATA") or str(
            REPO_ROOT.parent / "shared" / "reference-data"
        )
        msg = f"SKIPPED: NIST StRD reference data not found at {where} (set PLUMBFIT_REFDATA)"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(msg.replace("SKIPPED", "MISSING"))
        print(msg, file=sys.stderr)
        pytest.skip(msg)
    return path


def load_strd(name: str) -> tuple[dict[str, Any], np.ndarray]:
    """Certified values (CERTIFIED.json entry) and the data rows of one NIST
    StRD file, columns in the file's order."""
    root = require_refdata() / "nist-strd"
    meta = json.loads((root / "CERTIFIED.json").read_text())[name]
    lines = (root / meta["file"]).read_text().splitlines()
    # The data follow the last line that starts with "Data:" (the header
    # has an earlier one describing the variables).
    start = max(i for i, line in enumerate(lines) if line.strip().startswith("Data:")) + 1
    rows = [[float(t) for t in line.split()] for line in lines[start:] if line.strip()]
    data = np.array(rows, dtype=np.float64)
    assert data.shape == (meta["n"], len(meta["columns"])), "StRD file shape"
    return meta, data


def lre(computed: float, certified: float) -> float:
    """Log relative error (McCullough 1998), capped at 15; absolute error
    when the certified value is 0."""
    if computed == certified:
        return 15.0
    err = abs(computed - certified)
    if certified != 0.0:
        err /= abs(certified)
    return min(15.0, -math.log10(err))


@pytest.fixture
def rng() -> np.random.Generator:
    """Fixed-seed generator, so failures reproduce."""
    return np.random.default_rng(20261201)
