"""How arguments reach the core: borrowed or converted, refused with the
right Python exception, and large inputs processed without the GIL."""

from __future__ import annotations

import sys
import threading
import time
import tracemalloc

import numpy as np
import pytest

import plumbfit
from plumbfit import _native


def test_contiguous_float64_is_borrowed() -> None:
    x = np.linspace(0.0, 1.0, 1_000_000)
    y = 2.0 * x + 1.0
    acc = plumbfit.LineAccumulator()
    before = _native._conversion_count()
    tracemalloc.start()
    try:
        acc.extend(x, y)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert _native._conversion_count() == before, "contiguous float64 input was converted"
    # A copy of either array would be 8 MB; the borrowed path allocates
    # nothing that scales with n (NumPy reports its buffers to tracemalloc).
    assert peak < 1_000_000, f"peak traced allocation {peak} bytes"
    assert acc.count == 1_000_000


@pytest.mark.parametrize("n", [1, 2, 255, 256, 257, 4099])
def test_short_copies_and_long_borrows_agree(n: int) -> None:
    # Up to 256 contiguous float64 values are copied into a private buffer,
    # longer inputs are borrowed; neither counts as a conversion. Lists are
    # converted into a fresh array that is always read through the borrow,
    # so equal states (bit for bit: the core sees the same slices) show that
    # the short-copy path hands the core the same values.
    rng = np.random.default_rng(n)
    x = rng.uniform(-5.0, 5.0, n)
    y = 0.5 - 2.0 * x + rng.normal(0.0, 0.1, n)
    ref = plumbfit.LineAccumulator()
    ref.extend(x.tolist(), y.tolist())
    acc = plumbfit.LineAccumulator()
    before = _native._conversion_count()
    acc.extend(x, y)
    assert _native._conversion_count() == before
    assert acc == ref
    assert acc.count == n


def test_converted_inputs_are_counted_and_tracked() -> None:
    # Control for the test above: a conversion does show up in both probes.
    x = np.arange(1_000_000, dtype=np.int64)
    y = np.linspace(0.0, 1.0, x.size)
    acc = plumbfit.LineAccumulator()
    before = _native._conversion_count()
    tracemalloc.start()
    try:
        acc.extend(x, y)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert _native._conversion_count() == before + 1
    assert peak >= 8_000_000, f"peak traced allocation {peak} bytes"


@pytest.mark.parametrize(
    "make",
    [
        lambda a: a.tolist(),  # list of floats
        lambda a: tuple(a.tolist()),
        lambda a: a.astype(np.float32),
        lambda a: (a * 4).astype(np.int32),
        lambda a: np.repeat(a, 2)[::2],  # strided view
        lambda a: a.astype(">f8"),  # non-native byte order
        lambda a: np.frombuffer(b"\0" + a.tobytes(), dtype=np.float64, offset=1),
    ],
    ids=["list", "tuple", "float32", "int32", "strided", "big-endian", "misaligned"],
)
def test_other_array_likes_are_converted(make: object) -> None:
    base = np.array([0.0, 0.25, 0.5, 1.0, 1.25, 2.0, 2.5, 3.0, 4.0, 5.0])
    y = 3.0 * base - 1.0
    ref = plumbfit.LineAccumulator()
    conv = make(base)  # type: ignore[operator]
    ref.extend(np.asarray(conv, dtype=np.float64), y)
    acc = plumbfit.LineAccumulator()
    before = _native._conversion_count()
    acc.extend(conv, y)
    assert _native._conversion_count() == before + 1
    # Same values after conversion, so the state is bit-for-bit the same.
    assert acc == ref


def test_wrong_dtype_is_type_error() -> None:
    acc = plumbfit.LineAccumulator()
    with pytest.raises(TypeError, match="complex128"):
        acc.extend(np.ones(3, dtype=complex), np.ones(3))
    with pytest.raises(TypeError, match="<U"):
        acc.extend(np.array(["a", "b"]), np.ones(2))
    with pytest.raises(TypeError):
        acc.extend(["a", "b"], [1.0, 2.0])  # type: ignore[list-item]
    assert acc.count == 0


def test_wrong_shape_is_value_error_with_shape() -> None:
    acc = plumbfit.LineAccumulator()
    with pytest.raises(ValueError, match=r"\[2, 3\]"):
        acc.extend(np.ones((2, 3)), np.ones(6))
    with pytest.raises(ValueError, match=r"\[\]"):
        acc.extend(np.float64(1.0), np.ones(1))  # type: ignore[arg-type]
    assert acc.count == 0


def _ticks_during_extend(n: int) -> tuple[float, int, int]:
    """Extends a full-tier accumulator by n pairs while a second thread
    records ticks; returns the call's span, the ticks in its middle half
    and the accumulator's count."""
    x = np.linspace(0.0, 1.0, n)
    y = 0.5 * x
    acc = plumbfit.LineAccumulator("full")  # the slower tier: a longer call
    stop = threading.Event()
    ticks: list[float] = []

    def count() -> None:
        while not stop.is_set():
            ticks.append(time.perf_counter())
            time.sleep(0)

    t = threading.Thread(target=count)
    t.start()
    try:
        time.sleep(0.01)
        t0 = time.perf_counter()
        acc.extend(x, y)
        t1 = time.perf_counter()
    finally:
        stop.set()
        t.join()
    span = t1 - t0
    middle = [s for s in ticks if t0 + 0.25 * span < s < t0 + 0.75 * span]
    return span, len(middle), acc.count


def test_extend_releases_the_gil() -> None:
    # A Python thread can only run while the GIL is free. Ticks it records
    # in the middle of a long extend() prove the call released the GIL: a
    # held GIL allows switches only at the call's edges, and a short switch
    # interval keeps those edges well under a quarter of the call. The full
    # tier ran at 250 M to 1 G pairs/s on the machines measured, so the size
    # grows until the call is long enough to judge.
    old = sys.getswitchinterval()
    sys.setswitchinterval(1e-4)
    try:
        n = 24_000_000
        assert n >= plumbfit.GIL_RELEASE_PAIRS
        for _ in range(3):
            span, middle, count = _ticks_during_extend(n)
            assert count == n
            if span > 0.01:
                break
            n *= 3
    finally:
        sys.setswitchinterval(old)
    assert span > 0.01, f"extend too short to judge ({span:.3f} s at {n} pairs)"
    assert middle > 10, f"{middle} ticks in the middle of a {span:.3f} s extend"


def test_push_does_not_convert() -> None:
    acc = plumbfit.LineAccumulator()
    acc.push(1, 2)  # ints are accepted as floats
    acc.push(np.float64(2.0), np.float32(3.0))
    assert acc.count == 2
    with pytest.raises(TypeError):
        acc.push("1", 2.0)  # type: ignore[arg-type]  # deliberately wrong
