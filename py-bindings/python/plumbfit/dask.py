"""Fit one line over data spread across Dask workers.

Each block of a ``dask.array`` (or each partition of two dask dataframe
columns) is folded into its own :class:`~plumbfit.LineAccumulator` on the
worker that holds it; only the accumulator's state bytes (a few hundred
bytes, the persisted state format) travel back, and they are merged in a
tree, in block order. The result equals a single pass over all pairs to
rounding, whatever the chunking.

Needs ``dask[array]`` (``pip install "plumbfit[dask]"``); dataframe
columns need ``dask[dataframe]`` as well.

>>> import dask.array as da
>>> import plumbfit.dask
>>> x = da.arange(1000.0, chunks=250)
>>> acc = plumbfit.dask.line_accumulator(x, 2.0 * x + 1.0)
>>> round(acc.fit().slope, 12), acc.count
(2.0, 1000)
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from ._native import LineAccumulator, LineFit

try:
    import dask.array as da
    from dask.base import compute as dask_compute
    from dask.delayed import delayed
except ImportError as exc:  # pragma: no cover - exercised without dask only
    raise ImportError(
        "plumbfit.dask needs dask: pip install 'dask[array]' (or 'plumbfit[dask]')"
    ) from exc

if TYPE_CHECKING:
    from dask.delayed import Delayed

__all__ = ["fit_line", "line_accumulator", "line_accumulator_from_columns"]

Tier = Literal["lean", "full"]


def _block_state(x: Any, y: Any, w: Any, tier: Tier) -> bytes:
    """One block: accumulate on the worker, return the state bytes."""
    acc = LineAccumulator(tier)
    xs = np.ascontiguousarray(x, dtype=np.float64).ravel()
    ys = np.ascontiguousarray(y, dtype=np.float64).ravel()
    if xs.size:
        if w is None:
            acc.extend(xs, ys)
        else:
            acc.extend(xs, ys, np.ascontiguousarray(w, dtype=np.float64).ravel())
    return acc.to_bytes()


def _merge_states(*states: bytes) -> bytes:
    """Merges states in the given (time) order."""
    acc = LineAccumulator.from_bytes(states[0])
    for s in states[1:]:
        acc.merge(LineAccumulator.from_bytes(s))
    return acc.to_bytes()


def _tree(parts: Sequence[Delayed], split_every: int) -> Delayed:
    if split_every < 2:
        raise ValueError("split_every must be at least 2")
    level = list(parts)
    while len(level) > 1:
        level = [
            delayed(_merge_states, pure=True)(*level[i : i + split_every])
            for i in range(0, len(level), split_every)
        ]
    return level[0]


def _states_1d(x: da.Array, y: da.Array, w: da.Array | None, tier: Tier) -> list[Delayed]:
    x, y = da.asarray(x), da.asarray(y)
    if x.ndim != 1 or y.ndim != 1:
        raise ValueError(f"expected 1-D arrays, got shapes {x.shape} and {y.shape}")
    if x.shape != y.shape:
        raise ValueError(f"x and y differ in length: {x.shape} and {y.shape}")
    y = y.rechunk(x.chunks)
    xb, yb = x.to_delayed().ravel(), y.to_delayed().ravel()
    if w is None:
        wb: list[Any] = [None] * len(xb)
    else:
        w = da.asarray(w)
        if w.shape != x.shape:
            raise ValueError(f"weights differ in length from x: {w.shape} and {x.shape}")
        wb = list(w.rechunk(x.chunks).to_delayed().ravel())
    block = delayed(_block_state, pure=True)
    return [block(a, b, c, tier) for a, b, c in zip(xb, yb, wb)]


def line_accumulator(
    x: Any,
    y: Any,
    weights: Any | None = None,
    *,
    tier: Tier = "lean",
    split_every: int = 8,
    compute: bool = True,
) -> Any:
    """Accumulates the pairs of two 1-D dask arrays (``y`` and ``weights``
    are rechunked to ``x``'s chunks).

    Returns a :class:`~plumbfit.LineAccumulator`, or with ``compute=False`` a
    ``dask.delayed`` object whose result is the accumulator's state bytes
    (restore with :meth:`LineAccumulator.from_bytes`). Empty blocks are
    allowed. Errors inside a block (NaN, bad weights) are raised from
    ``compute`` with the index counted within that block.
    """
    states = _states_1d(x, y, weights, tier)
    root = _tree(states, split_every)
    if not compute:
        return root
    (blob,) = dask_compute(root)
    return LineAccumulator.from_bytes(blob)


def fit_line(
    x: Any,
    y: Any,
    weights: Any | None = None,
    *,
    tier: Tier = "lean",
    split_every: int = 8,
    through_origin: bool = False,
) -> LineFit:
    """:func:`line_accumulator` followed by :meth:`LineAccumulator.fit`."""
    acc = line_accumulator(x, y, weights, tier=tier, split_every=split_every)
    fit: LineFit = acc.fit(through_origin=through_origin)
    return fit


def _partition_state(frame: Any, x: str, y: str, tier: Tier) -> bytes:
    return _block_state(frame[x].to_numpy(), frame[y].to_numpy(), None, tier)


def line_accumulator_from_columns(
    frame: Any, x: str, y: str, *, tier: Tier = "lean", split_every: int = 8
) -> LineAccumulator:
    """Accumulates columns ``x`` and ``y`` of a dask dataframe, one
    partition per block, merged in partition order."""
    parts = frame[[x, y]].to_delayed()
    block = delayed(_partition_state, pure=True)
    root = _tree([block(p, x, y, tier) for p in parts], split_every)
    (blob,) = dask_compute(root)
    return LineAccumulator.from_bytes(blob)
