"""Threaded model extend: same state bits for every thread count, and the
same coefficients as numpy.linalg.lstsq (reference library) to rounding.
Data are invented."""

import numpy as np
import pytest

import plumbfit


def _design(n: int, p: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(2024)
    x = np.empty((n, p))
    x[:, 0] = 1.0
    x[:, 1:] = rng.uniform(-5.0, 5.0, (n, p - 1))
    y = x @ np.linspace(1.0, 2.0, p) + rng.normal(0.0, 1.0, n)
    return x, y


def test_every_thread_count_gives_the_same_state() -> None:
    x, y = _design(3 * 16_384 + 11, 6)
    w = np.linspace(0.5, 1.5, len(y))
    for weights in (None, w):
        states = []
        for threads in (None, 1, 2, 3):
            acc = plumbfit.ModelAccumulator(6)
            acc.extend(x, y, weights, threads=threads)
            states.append(acc.to_bytes())
        assert all(s == states[0] for s in states)
    acc = plumbfit.ModelAccumulator(6)
    acc.extend(x, y, threads=2)
    ref = np.linalg.lstsq(x, y, rcond=None)[0]
    # Well-conditioned invented design: agreement to a few ulps of the
    # coefficients (the reference itself is good to about 1e-15).
    assert np.max(np.abs(acc.fit().coefficients - ref)) < 1e-12


def test_zero_threads_is_refused_and_the_state_kept() -> None:
    x, y = _design(100, 3)
    acc = plumbfit.ModelAccumulator(3)
    acc.extend(x, y)
    before = acc.to_bytes()
    with pytest.raises(ValueError, match="threads"):
        acc.extend(x, y, threads=0)
    assert acc.to_bytes() == before
