"""Fit one line, or one p-parameter linear model, over data spread across
Dask workers.

Each block of a ``dask.array`` (or each partition of a dask dataframe) is
folded into its own accumulator on the worker that holds it; only the
accumulator's state bytes (the persisted state format: a few hundred bytes
for a line, a few kilobytes for a model) travel back, and they are merged
in a tree, in block order. The result equals a single pass over all rows to
rounding, whatever the chunking.

* Lines: :func:`line_accumulator` / :func:`fit_line` over two 1-D dask
  arrays, :func:`line_accumulator_from_columns` over two dataframe columns.
* Models: :func:`model_accumulator` / :func:`fit_model` over a 2-D dask
  array of design rows (``n × p``) or a sequence of ``p`` 1-D design
  columns, :func:`model_accumulator_from_columns` over dataframe columns.

Needs ``dask[array]`` (``pip install "plumbfit[dask]"``); dataframe
columns need ``dask[dataframe]`` as well.

>>> import dask.array as da
>>> import plumbfit.dask
>>> x = da.arange(1000.0, chunks=250)
>>> acc = plumbfit.dask.line_accumulator(x, 2.0 * x + 1.0)
>>> round(acc.fit().slope, 12), acc.count
(2.0, 1000)
>>> rows = da.stack([da.ones(1000, chunks=250), x, x * x], axis=1)
>>> model = plumbfit.dask.fit_model(rows, 1.0 + 0.5 * x + 0.25 * x * x)
>>> [round(float(c), 9) for c in model.coefficients], model.rows
([1.0, 0.5, 0.25], 1000)
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from ._native import LineAccumulator, LineFit, ModelAccumulator, ModelFit

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

__all__ = [
    "fit_line",
    "fit_model",
    "line_accumulator",
    "line_accumulator_from_columns",
    "model_accumulator",
    "model_accumulator_from_columns",
]

Tier = Literal["lean", "full"]
Intercept = Literal["detect", "column0", "none"]


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
    """Merges line states in the given (time) order."""
    acc = LineAccumulator.from_bytes(states[0])
    for s in states[1:]:
        acc.merge(LineAccumulator.from_bytes(s))
    return acc.to_bytes()


def _merge_model_states(*states: bytes) -> bytes:
    """Merges model states in the given (time) order."""
    acc = ModelAccumulator.from_bytes(states[0])
    for s in states[1:]:
        acc.merge(ModelAccumulator.from_bytes(s))
    return acc.to_bytes()


def _tree(parts: Sequence[Delayed], split_every: int, merge: Any = _merge_states) -> Delayed:
    if split_every < 2:
        raise ValueError("split_every must be at least 2")
    if not parts:
        raise ValueError("no blocks to accumulate")
    level = list(parts)
    while len(level) > 1:
        level = [
            delayed(merge, pure=True)(*level[i : i + split_every])
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


def _column(frame: Any, name: str) -> Any:
    return np.asarray(frame[name].to_numpy(dtype=np.float64))


def _partition_state(frame: Any, x: str, y: str, w: str | None, tier: Tier) -> bytes:
    ws = None if w is None else _column(frame, w)
    return _block_state(_column(frame, x), _column(frame, y), ws, tier)


def _frame_columns(frame: Any, names: Sequence[str]) -> Any:
    missing = [n for n in names if n not in frame.columns]
    if missing:
        raise KeyError(f"columns not in the dataframe: {missing}")
    # Each name once: the same column may serve twice (e.g. x and weights).
    return frame[list(dict.fromkeys(names))]


def line_accumulator_from_columns(
    frame: Any,
    x: str,
    y: str,
    *,
    weights: str | None = None,
    tier: Tier = "lean",
    split_every: int = 8,
) -> LineAccumulator:
    """Accumulates columns ``x`` and ``y`` (and ``weights``) of a dask
    dataframe, one partition per block, merged in partition order. Columns
    are read as float64; a NaN (for instance a missing value) raises
    :class:`~plumbfit.NonFiniteError` with the index within its partition."""
    names = [x, y] + ([] if weights is None else [weights])
    parts = _frame_columns(frame, names).to_delayed()
    block = delayed(_partition_state, pure=True)
    root = _tree([block(p, x, y, weights, tier) for p in parts], split_every)
    (blob,) = dask_compute(root)
    return LineAccumulator.from_bytes(blob)


def _model_block_state(params: int, rows: Any, y: Any, w: Any) -> bytes:
    """One block of design rows: accumulate on the worker, return the
    state bytes."""
    acc = ModelAccumulator(params)
    r = np.ascontiguousarray(rows, dtype=np.float64).reshape(-1, params)
    if r.shape[0]:
        ys = np.ascontiguousarray(y, dtype=np.float64).ravel()
        if w is None:
            acc.extend(r, ys)
        else:
            acc.extend(r, ys, np.ascontiguousarray(w, dtype=np.float64).ravel())
    return acc.to_bytes()


def _design_rows(design: Any) -> Any:
    """A 2-D dask array of rows, from rows or from a sequence of columns."""
    if isinstance(design, (list, tuple)):
        if not design:
            raise ValueError("the design needs at least one column")
        cols = [da.asarray(c) for c in design]
        for i, c in enumerate(cols):
            if c.ndim != 1 or c.shape != cols[0].shape:
                raise ValueError(
                    f"design column {i} has shape {c.shape}, expected {cols[0].shape}"
                )
        cols = [c.rechunk(cols[0].chunks) for c in cols]
        return da.stack(cols, axis=1)
    rows = da.asarray(design)
    if rows.ndim != 2:
        raise ValueError(f"expected a 2-D array of design rows, got shape {rows.shape}")
    return rows


def _model_states(design: Any, y: Any, w: Any | None) -> tuple[int, list[Delayed]]:
    rows = _design_rows(design)
    if any(np.isnan(c) for c in rows.shape):
        raise ValueError(
            "the design has unknown chunk sizes; compute them first "
            "(e.g. to_dask_array(lengths=True))"
        )
    n, params = rows.shape
    ModelAccumulator(params)  # refuses a bad column count here, not on a worker
    # Whole rows in every block; blocks split along the rows only.
    rows = rows.rechunk({1: -1})
    y = da.asarray(y)
    if y.ndim != 1 or y.shape[0] != n:
        raise ValueError(f"y has shape {y.shape}, expected ({n},) to match the design")
    y = y.rechunk((rows.chunks[0],))
    rb, yb = rows.to_delayed().ravel(), y.to_delayed().ravel()
    if w is None:
        wb: list[Any] = [None] * len(rb)
    else:
        w = da.asarray(w)
        if w.shape != y.shape:
            raise ValueError(f"weights have shape {w.shape}, expected ({n},)")
        wb = list(w.rechunk(y.chunks).to_delayed().ravel())
    block = delayed(_model_block_state, pure=True)
    return params, [block(params, a, b, c) for a, b, c in zip(rb, yb, wb)]


def model_accumulator(
    design: Any,
    y: Any,
    weights: Any | None = None,
    *,
    split_every: int = 8,
    compute: bool = True,
) -> Any:
    """Accumulates a linear model with ``p`` coefficients over dask arrays.

    ``design`` is a 2-D dask array of rows (``n × p``; column chunks are
    joined so that each block holds whole rows), or a sequence of ``p``
    1-D dask arrays, the design columns (rechunked to the first one's
    chunks). ``y`` and ``weights`` are 1-D with ``n`` entries, rechunked
    to the design's row blocks. Include a column of ones for an intercept.

    Returns a :class:`~plumbfit.ModelAccumulator`, or with
    ``compute=False`` a ``dask.delayed`` object whose result is its state
    bytes (restore with :meth:`ModelAccumulator.from_bytes`). Empty blocks
    are allowed. Errors inside a block (NaN, bad weights) are raised from
    ``compute`` with the row counted within that block.
    """
    _, states = _model_states(design, y, weights)
    root = _tree(states, split_every, _merge_model_states)
    if not compute:
        return root
    (blob,) = dask_compute(root)
    return ModelAccumulator.from_bytes(blob)


def fit_model(
    design: Any,
    y: Any,
    weights: Any | None = None,
    *,
    intercept: Intercept = "detect",
    split_every: int = 8,
) -> ModelFit:
    """:func:`model_accumulator` followed by :meth:`ModelAccumulator.fit`."""
    acc = model_accumulator(design, y, weights, split_every=split_every)
    fit: ModelFit = acc.fit(intercept=intercept)
    return fit


def _model_partition_state(
    frame: Any, columns: Sequence[str], y: str, w: str | None, ones: bool
) -> bytes:
    cols = [_column(frame, c) for c in columns]
    n = len(frame)
    if ones:
        cols.insert(0, np.ones(n))
    rows = np.column_stack(cols)
    ws = None if w is None else _column(frame, w)
    return _model_block_state(len(cols), rows, _column(frame, y), ws)


def model_accumulator_from_columns(
    frame: Any,
    columns: Sequence[str],
    y: str,
    *,
    weights: str | None = None,
    intercept: bool = True,
    split_every: int = 8,
) -> ModelAccumulator:
    """Accumulates a linear model of dataframe column ``y`` on the design
    ``columns`` (in that order), one partition per block, merged in
    partition order. With ``intercept=True`` (the default) a column of ones
    comes first, so coefficient 0 is the intercept and coefficient ``j``
    belongs to ``columns[j - 1]``. Columns are read as float64; a NaN (for
    instance a missing value) raises :class:`~plumbfit.NonFiniteError`."""
    if isinstance(columns, str):
        raise TypeError("columns must be a sequence of column names, not one string")
    columns = list(columns)
    if not columns and not intercept:
        raise ValueError("the design needs at least one column")
    names = columns + [y] + ([] if weights is None else [weights])
    parts = _frame_columns(frame, names).to_delayed()
    block = delayed(_model_partition_state, pure=True)
    states = [block(p, columns, y, weights, intercept) for p in parts]
    root = _tree(states, split_every, _merge_model_states)
    (blob,) = dask_compute(root)
    return ModelAccumulator.from_bytes(blob)
