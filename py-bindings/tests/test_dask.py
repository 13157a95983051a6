"""plumbfit.dask on a real dask.distributed LocalCluster (2 worker
processes): 10^7 pairs in 16 chunks, generated in the workers, fitted by
mapping blocks to accumulator bytes and tree-merging; the result matches a
single pass over the same pairs. Then the model helpers (design rows or
columns, checked against numpy.linalg.lstsq) and the dask dataframe column
helpers for both."""

from __future__ import annotations

import importlib
from collections.abc import Iterator
from typing import Any

import numpy as np
import pytest

import plumbfit

da = pytest.importorskip("dask.array")
distributed = pytest.importorskip("distributed")
import plumbfit.dask as pfd  # noqa: E402


@pytest.fixture(scope="module")
def client() -> Iterator[object]:
    cluster = distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=True,
        dashboard_address=None,
        memory_limit="4GiB",
    )
    c = distributed.Client(cluster)
    try:
        yield c
    finally:
        c.close()
        cluster.close()


N = 10_000_000
CHUNK = N // 16


def make_data() -> tuple[Any, Any]:
    rng = da.random.default_rng(20261201)
    x = rng.uniform(-50.0, 150.0, size=N, chunks=CHUNK)
    y = 3.25 - 0.75 * x + rng.normal(0.0, 2.0, size=N, chunks=CHUNK)
    return x, y


@pytest.mark.timeout(300)
def test_cluster_fit_matches_single_pass(client: object) -> None:
    x, y = make_data()
    assert x.numblocks == (16,)
    acc = pfd.line_accumulator(x, y, split_every=4)
    assert acc.count == N
    # Single pass over the very same pairs, here in this process.
    xs, ys = (np.asarray(a) for a in da.compute(x, y))
    ref = plumbfit.LineAccumulator()
    ref.extend(xs, ys)
    fm, fr = acc.fit(), ref.fit()
    # Exact merges: only rounding differs; 1e-12 relative is the bound
    # promised for merged fits.
    for name in ("slope", "intercept", "residual_sd", "se_slope", "r_squared"):
        assert getattr(fm, name) == pytest.approx(getattr(fr, name), rel=1e-12), name
    # Cross-check the single pass itself against numpy.polyfit (different
    # algorithm; 1e-9 relative for 1e7 pairs of double rounding).
    slope, intercept = np.polyfit(xs, ys, 1)
    assert fr.slope == pytest.approx(slope, rel=1e-9), f"numpy {np.__version__} polyfit"


def test_cluster_full_tier_weights_and_order(client: object) -> None:
    rng = np.random.default_rng(5)
    xs = rng.uniform(0, 10, 20_000)
    ys = 1.0 + 0.5 * xs + rng.normal(0, 0.2, xs.size)
    ws = rng.uniform(0.5, 2.0, xs.size)
    x = da.from_array(xs, chunks=3_000)
    y = da.from_array(ys, chunks=7_000)  # rechunked to x's chunks
    w = da.from_array(ws, chunks=5_000)
    acc = pfd.line_accumulator(x, y, w, tier="full")
    ref = plumbfit.LineAccumulator("full")
    ref.extend(xs, ys, ws)
    assert acc.fit().slope == pytest.approx(ref.fit().slope, rel=1e-12)
    assert acc.x_range == ref.x_range
    fit = pfd.fit_line(x, y, tier="full")
    assert fit.count == xs.size


def test_errors_surface() -> None:
    x = da.from_array(np.array([0.0, 1.0, np.nan, 3.0]), chunks=2)
    with pytest.raises(plumbfit.NonFiniteError):
        pfd.line_accumulator(x, x, compute=True)
    with pytest.raises(ValueError):
        pfd.line_accumulator(da.ones(4, chunks=2), da.ones(5, chunks=2))


# ---------------------------------------------------------------------------
# Models: design rows or columns as dask arrays, fitted block by block and
# checked against numpy.linalg.lstsq (LAPACK's SVD solver, an independent
# algorithm), with the NumPy version named in each assertion message.

M_ROWS = 400_000
M_CHUNK = M_ROWS // 8


def make_design() -> tuple[Any, Any]:
    """Rows [1, x1, x2, x1*x2] with a known model plus noise (invented
    data), generated in the workers, chunked along both axes so that the
    helper has to join the column chunks."""
    rng = da.random.default_rng(20261202)
    x1 = rng.uniform(0.0, 10.0, size=M_ROWS, chunks=M_CHUNK)
    x2 = rng.uniform(-1.0, 1.0, size=M_ROWS, chunks=M_CHUNK)
    rows = da.stack([da.ones_like(x1), x1, x2, x1 * x2], axis=1).rechunk((M_CHUNK, 2))
    y = 2.0 - 0.5 * x1 + 3.0 * x2 + 0.25 * x1 * x2 + rng.normal(0.0, 0.5, size=M_ROWS, chunks=M_CHUNK)
    return rows, y


def lstsq_reference(rows: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float, np.ndarray]:
    """Coefficients, residual sd and standard errors from numpy.linalg.lstsq
    and the textbook covariance s²(XᵀX)⁻¹ (common practice)."""
    coef, _, rank, _ = np.linalg.lstsq(rows, y, rcond=None)
    assert rank == rows.shape[1]
    resid = y - rows @ coef
    dof = rows.shape[0] - rows.shape[1]
    s2 = float(resid @ resid) / dof
    se = np.sqrt(s2 * np.diag(np.linalg.inv(rows.T @ rows)))
    return coef, float(np.sqrt(s2)), se


@pytest.mark.timeout(300)
def test_cluster_model_matches_lstsq_and_single_pass(client: object) -> None:
    rows, y = make_design()
    assert rows.numblocks == (8, 2)
    acc = pfd.model_accumulator(rows, y, split_every=3)
    assert acc.params == 4 and acc.count == M_ROWS
    fit = acc.fit()
    assert fit.has_intercept  # column 0 is constant and nonzero
    xs, ys = (np.asarray(a) for a in da.compute(rows, y))
    coef, sd, se = lstsq_reference(xs, ys)
    # The design is well conditioned (condition number about 20), so both
    # solvers agree to far better than 1e-9 relative; a lost or doubled
    # block would move the coefficients by about 1e-3.
    np.testing.assert_allclose(
        fit.coefficients, coef, rtol=1e-9, err_msg=f"numpy {np.__version__} linalg.lstsq"
    )
    assert fit.residual_sd == pytest.approx(sd, rel=1e-9), f"numpy {np.__version__} lstsq"
    # Standard errors go through an explicit inverse on the NumPy side:
    # 1e-8 relative leaves room for its rounding.
    np.testing.assert_allclose(
        fit.std_errors, se, rtol=1e-8, err_msg=f"numpy {np.__version__} inv(XᵀX)"
    )
    # Merging block states is exact up to rounding: against one pass here,
    # 1e-12 relative (the bound promised for merged fits).
    ref = plumbfit.ModelAccumulator(4)
    ref.extend(xs, ys)
    np.testing.assert_allclose(fit.coefficients, ref.fit().coefficients, rtol=1e-12)
    assert fit.sse == pytest.approx(ref.fit().sse, rel=1e-12)


def test_cluster_model_columns_weights_and_delayed(client: object) -> None:
    rng = np.random.default_rng(11)
    x = rng.uniform(-2.0, 3.0, 30_000)
    w = rng.uniform(0.2, 5.0, x.size)
    y = 0.75 + 1.5 * x - 0.4 * x * x + rng.normal(0.0, 1.0, x.size) / np.sqrt(w)
    cols = [
        da.ones(x.size, chunks=4_000),
        da.from_array(x, chunks=7_000),  # rechunked to the first column's chunks
        da.from_array(x * x, chunks=5_500),
    ]
    wd = da.from_array(w, chunks=9_000)
    acc = pfd.model_accumulator(cols, da.from_array(y, chunks=3_000), wd)
    # Weighted least squares as ordinary least squares on rows and y
    # scaled by √w (common practice), solved by numpy.linalg.lstsq.
    design = np.column_stack([np.ones_like(x), x, x * x])
    sw = np.sqrt(w)
    coef, _, _, _ = np.linalg.lstsq(design * sw[:, None], y * sw, rcond=None)
    # Condition number of the scaled design is about 5; 1e-9 relative.
    np.testing.assert_allclose(
        acc.fit().coefficients, coef, rtol=1e-9, err_msg=f"numpy {np.__version__} lstsq"
    )
    assert acc.weight_sum == pytest.approx(float(w.sum()), rel=1e-12)
    # compute=False hands back the state bytes as a delayed object.
    blob = pfd.model_accumulator(cols, da.from_array(y, chunks=3_000), wd, compute=False).compute()
    assert plumbfit.ModelAccumulator.from_bytes(blob) == acc
    fit = pfd.fit_model(cols, da.from_array(y, chunks=3_000), intercept="none")
    assert not fit.has_intercept and fit.rows == x.size


def test_model_empty_blocks_and_errors() -> None:
    rng = np.random.default_rng(3)
    xs = np.column_stack([np.ones(12), rng.uniform(0, 1, 12)])
    ys = 1.0 + 2.0 * xs[:, 1] + rng.normal(0, 0.01, 12)
    rows = da.from_array(xs, chunks=((0, 5, 0, 7), (2,)))
    assert rows.numblocks == (4, 1)  # two of them empty
    acc = pfd.model_accumulator(rows, da.from_array(ys, chunks=6))
    ref = plumbfit.ModelAccumulator(2)
    ref.extend(xs, ys)
    assert acc.count == 12
    np.testing.assert_allclose(acc.fit().coefficients, ref.fit().coefficients, rtol=1e-12)

    bad = xs.copy()
    bad[8, 1] = np.nan
    with pytest.raises(plumbfit.NonFiniteError):
        pfd.model_accumulator(da.from_array(bad, chunks=(4, 2)), da.from_array(ys, chunks=4))
    with pytest.raises(ValueError, match="expected"):
        pfd.model_accumulator(rows, da.ones(11, chunks=4))
    with pytest.raises(ValueError, match="2-D"):
        pfd.model_accumulator(da.ones(12, chunks=4), da.ones(12, chunks=4))
    with pytest.raises(ValueError, match="column 1"):
        pfd.model_accumulator([da.ones(12, chunks=4), da.ones(10, chunks=4)], da.ones(12, chunks=4))
    with pytest.raises(plumbfit.InvalidInputError):  # 17 coefficients: over the limit
        pfd.model_accumulator(da.ones((20, 17), chunks=10), da.ones(20, chunks=10))


# ---------------------------------------------------------------------------
# Dask dataframe columns, one partition per block.

dd: Any
pd: Any
try:
    dd = importlib.import_module("dask.dataframe")
    pd = importlib.import_module("pandas")
except ImportError:  # dask[dataframe] missing: only these tests skip
    dd = pd = None
needs_frames = pytest.mark.skipif(dd is None, reason="needs dask[dataframe]")


def make_frame() -> tuple[Any, Any]:
    rng = np.random.default_rng(17)
    n = 25_000
    x = rng.uniform(0.0, 50.0, n)
    z = rng.normal(10.0, 3.0, n)
    w = rng.uniform(0.5, 2.0, n)
    y = -4.0 + 0.3 * x + 1.2 * z + rng.normal(0.0, 1.0, n)
    df = pd.DataFrame({"x": x, "z": z, "y": y, "w": w, "label": "invented"})
    return df, dd.from_pandas(df, npartitions=6)


@needs_frames
def test_cluster_dataframe_line_columns(client: object) -> None:
    df, frame = make_frame()
    acc = pfd.line_accumulator_from_columns(frame, "x", "y", tier="full")
    ref = plumbfit.LineAccumulator("full")
    ref.extend(df["x"].to_numpy(), df["y"].to_numpy())
    assert acc.count == len(df)
    assert acc.x_range == ref.x_range
    assert acc.fit().slope == pytest.approx(ref.fit().slope, rel=1e-12)
    # Independent check of the line itself: numpy.polyfit, 1e-9 relative.
    slope, intercept = np.polyfit(df["x"], df["y"], 1)
    assert acc.fit().slope == pytest.approx(slope, rel=1e-9), f"numpy {np.__version__} polyfit"
    assert acc.fit().intercept == pytest.approx(intercept, rel=1e-9)
    wacc = pfd.line_accumulator_from_columns(frame, "x", "y", weights="w")
    wref = plumbfit.LineAccumulator()
    wref.extend(df["x"].to_numpy(), df["y"].to_numpy(), df["w"].to_numpy())
    assert wacc.fit().slope == pytest.approx(wref.fit().slope, rel=1e-12)


@needs_frames
def test_cluster_dataframe_model_columns(client: object) -> None:
    df, frame = make_frame()
    acc = pfd.model_accumulator_from_columns(frame, ["x", "z"], "y")
    assert acc.params == 3 and acc.count == len(df)
    design = np.column_stack([np.ones(len(df)), df["x"], df["z"]])
    coef, sd, _ = lstsq_reference(design, df["y"].to_numpy())
    fit = acc.fit()
    # Condition number about 120 (column scales 1, 50, 10); 1e-9 relative.
    np.testing.assert_allclose(
        fit.coefficients, coef, rtol=1e-9, err_msg=f"numpy {np.__version__} lstsq"
    )
    assert fit.residual_sd == pytest.approx(sd, rel=1e-9)
    # Without the leading ones and with weights: √w-scaled lstsq (condition
    # number about 5).
    wacc = pfd.model_accumulator_from_columns(frame, ["x", "z"], "y", weights="w", intercept=False)
    sw = np.sqrt(df["w"].to_numpy())
    coef2, _, _, _ = np.linalg.lstsq(design[:, 1:] * sw[:, None], df["y"].to_numpy() * sw, rcond=None)
    np.testing.assert_allclose(
        wacc.fit().coefficients, coef2, rtol=1e-9, err_msg=f"numpy {np.__version__} lstsq"
    )


@needs_frames
def test_dataframe_refusals() -> None:
    df, frame = make_frame()
    with pytest.raises(KeyError, match="nope"):
        pfd.model_accumulator_from_columns(frame, ["x", "nope"], "y")
    with pytest.raises(TypeError):
        pfd.model_accumulator_from_columns(frame, "x", "y")
    gap = df.copy()
    gap.loc[12_345, "y"] = np.nan  # a missing value is refused, not skipped
    with pytest.raises(plumbfit.NonFiniteError):
        pfd.line_accumulator_from_columns(dd.from_pandas(gap, npartitions=4), "x", "y")
    with pytest.raises(plumbfit.NonFiniteError):
        pfd.model_accumulator_from_columns(dd.from_pandas(gap, npartitions=4), ["x"], "y")


def test_module_docstring_examples() -> None:
    import doctest

    result = doctest.testmod(pfd, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0
    assert result.failed == 0
