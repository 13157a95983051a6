"""plumbfit.dask on a real dask.distributed LocalCluster (2 worker
processes): 10^7 pairs in 16 chunks, generated in the workers, fitted by
mapping blocks to accumulator bytes and tree-merging; the result matches a
single pass over the same pairs."""

from __future__ import annotations

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
