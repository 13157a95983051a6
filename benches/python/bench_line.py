#!/usr/bin/env python3
"""Side-by-side timing of the Python door's line and model fits, in one
process, on the same arrays.

Line: times fitting n pairs (default 10^7) from float64 NumPy arrays with
plumbfit (both tiers) against scipy.stats.linregress, numpy.polyfit(x, y, 1),
a NumPy two-pass (means, then centred sums) and statsmodels OLS, next to a
plain memory-read reference (``np.add.reduce`` over both arrays). The
statsmodels figure counts building the n x 2 design matrix (a column of ones
beside x, as ``np.column_stack``), ``OLS(y, design).fit()`` and reading
``params`` and ``bse`` (the standard errors are computed lazily; plumbfit's
``fit()`` computes them too); a second row, ``statsmodels_ols_prebuilt``,
times the same fit with the design built beforehand (the two run in
interleaved rounds, see below: they allocate hundreds of MB per call and
their times swing with page faults). Also measures the
per-call costs: one ``push`` from Python, and the fixed cost of an
``extend`` call on a one-pair array, plus the cost of releasing the GIL
(``extend`` just below and at ``plumbfit.GIL_RELEASE_PAIRS``).

Model: for each p in ``--model-params`` (default 2, 4, 8, 12) one C-ordered
float64 design of ``--model-n`` rows (default 10^6; a column of ones, then
p - 1 columns uniform on [-5, 5]) and its y, the same arrays for every
method: ``plumbfit.ModelAccumulator(p)`` ``extend`` then ``fit()`` (its
one mode, the double-double factor; ``fit()`` gives coefficients, standard
errors, covariance and R^2),
``numpy.linalg.lstsq(X, y, rcond=None)``, ``scipy.linalg.lstsq(X, y)``
(its defaults: gelsd driver, finiteness check) and statsmodels
``OLS(y, X).fit()`` with ``params`` and ``bse`` read. The methods run in
interleaved rounds (one call of each per round) so they see the same load;
each figure is the best round. Each call waits 0.15 s first: OpenBLAS
worker threads spin for about 0.1 s after a call, and that CPU time would
otherwise be counted to the next call (CPU figures are process CPU time,
all threads). Each row gives the largest absolute coefficient difference
from numpy.linalg.lstsq. The target line ``model_p8_vs_lstsq >= 1`` judges
the p = 8 ratio (numpy.linalg.lstsq wall time over plumbfit's) at
``--model-n`` rows. plumbfit's rows/s at a given p hardly depend on n (the
double-double arithmetic, not the memory read, limits it); lstsq's fall
once the design no longer fits in cache, so the ratio grows with n, and a
design small enough to stay in cache can favour lstsq.

Threads: plumbfit runs on one thread; the LAPACK paths use OpenBLAS, which
starts one thread per core unless ``OPENBLAS_NUM_THREADS`` (or
``OMP_NUM_THREADS``) says otherwise. The script reports the cores, the
environment and each loaded OpenBLAS library's own thread count (asked
through ctypes), and, where it can set that count, also times
numpy.linalg.lstsq on one thread (``numpy_lstsq_1_thread``, context only;
the judged ratio is against the default, threaded lstsq).

Run (unset the OpenBLAS overrides in this command only, see the environment
notes; they slow current NumPy builds, and the model section times
OpenBLAS; the script prints the OpenBLAS core each library runs on and
warns when an override is set):

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/python/bench_line.py [--json]

Each figure is the best of ``--repeat`` runs (minimum wall time), the usual
way to suppress noise from other processes on a shared machine.
``--model-params ''`` leaves the model section out.
"""

from __future__ import annotations

import argparse
import collections
import ctypes
import json
import operator
import os
import platform
import sys
import time
import timeit
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
import scipy
import scipy.linalg
import scipy.stats
import statsmodels
import statsmodels.api as sm

import plumbfit


def best(fn: Callable[[], object], repeat: int) -> tuple[float, float]:
    """Minimum wall time and minimum process CPU time of `repeat` calls, in
    seconds. CPU time leaves out the time the OS gave to other processes,
    which matters on a shared machine; wall time is the headline figure."""
    wall, cpu = [], []
    for _ in range(repeat):
        c0, t0 = time.process_time(), time.perf_counter()
        fn()
        wall.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    return min(wall), min(cpu)


def per_call(stmt: str, env: dict[str, Any], calls: int, repeat: int) -> tuple[float, float]:
    """Best wall and thread-CPU nanoseconds per execution of `stmt`, timed
    by timeit (its loop adds about 10 ns per call, included here)."""
    wall = timeit.Timer(stmt, globals=env, timer=time.perf_counter)
    cpu = timeit.Timer(stmt, globals=env, timer=time.thread_time)
    w = min(wall.repeat(repeat, calls)) / calls * 1e9
    c = min(cpu.repeat(repeat, calls)) / calls * 1e9
    return w, c


def two_pass(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    mx, my = x.mean(), y.mean()
    dx = x - mx
    slope = float(dx @ (y - my)) / float(dx @ dx)
    return slope, float(my - slope * mx)


def fit_plumbfit(x: np.ndarray, y: np.ndarray, tier: str) -> plumbfit.LineFit:
    acc = plumbfit.LineAccumulator(tier)  # type: ignore[arg-type]
    acc.extend(x, y)
    return acc.fit()


def fit_statsmodels(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """statsmodels OLS of y on (1, x), the design build included."""
    design = np.column_stack((np.ones_like(x), x))
    return ols_params(design, y)


def ols_params(design: np.ndarray, y: np.ndarray) -> np.ndarray:
    res = sm.OLS(y, design).fit()
    res.bse  # noqa: B018 (lazy: the standard errors are computed on access)
    return np.asarray(res.params)


def fit_model(design: np.ndarray, y: np.ndarray, threads: int | None = None) -> np.ndarray:
    acc = plumbfit.ModelAccumulator(design.shape[1])
    acc.extend(design, y, threads=threads)
    return acc.fit().coefficients


class OpenBlas:
    """One loaded OpenBLAS library, its thread count read and set through
    its exported functions (the names differ between the NumPy and SciPy
    wheel builds, hence the candidates)."""

    GET = ("scipy_openblas_get_num_threads64_", "scipy_openblas_get_num_threads",
           "openblas_get_num_threads64_", "openblas_get_num_threads")
    SET = ("scipy_openblas_set_num_threads64_", "scipy_openblas_set_num_threads",
           "openblas_set_num_threads64_", "openblas_set_num_threads")
    CORE = ("scipy_openblas_get_corename64_", "scipy_openblas_get_corename",
            "openblas_get_corename64_", "openblas_get_corename")

    def __init__(self, path: str) -> None:
        self.path = path
        lib = ctypes.CDLL(path)
        self._get = self._first(lib, self.GET, ctypes.c_int)
        self._set = self._first(lib, self.SET, None)
        self._core = self._first(lib, self.CORE, ctypes.c_char_p)

    @staticmethod
    def _first(lib: ctypes.CDLL, names: tuple[str, ...], restype: Any) -> Any:
        for name in names:
            fn = getattr(lib, name, None)
            if fn is not None:
                fn.restype = restype
                return fn
        return None

    @property
    def can_set(self) -> bool:
        return self._set is not None

    def threads(self) -> int | None:
        return int(self._get()) if self._get is not None else None

    def set_threads(self, k: int) -> bool:
        if self._set is None:
            return False
        self._set(ctypes.c_int(k))
        return True

    def corename(self) -> str | None:
        return self._core().decode() if self._core is not None else None


def loaded_openblas() -> list[OpenBlas]:
    """The OpenBLAS libraries mapped into this process (Linux /proc only;
    elsewhere none are found and the one-thread figure is left out)."""
    try:
        with open("/proc/self/maps") as f:
            paths = sorted({ln.split()[-1] for ln in f if "openblas" in ln.lower() and "/" in ln})
    except OSError:
        return []
    libs = []
    for path in paths:
        try:
            libs.append(OpenBlas(path))
        except OSError:
            pass
    return libs


# OpenBLAS workers spin for about 0.1 s after a call before they sleep;
# their CPU time would be counted to whatever runs next.
BLAS_SETTLE_SECONDS = 0.15


def best_interleaved(
    fns: Mapping[str, Callable[[], object]], repeat: int
) -> tuple[dict[str, float], dict[str, float]]:
    """Like `best`, but the calls run in rounds, one of each function per
    round, so that every method sees the same spells of load. Each call
    waits `BLAS_SETTLE_SECONDS` first, so the CPU figure is its own."""
    wall: dict[str, list[float]] = {k: [] for k in fns}
    cpu: dict[str, list[float]] = {k: [] for k in fns}
    for _ in range(repeat):
        for name, fn in fns.items():
            time.sleep(BLAS_SETTLE_SECONDS)
            c0, t0 = time.process_time(), time.perf_counter()
            fn()
            wall[name].append(time.perf_counter() - t0)
            cpu[name].append(time.process_time() - c0)
    return {k: min(v) for k, v in wall.items()}, {k: min(v) for k, v in cpu.items()}


def model_section(n: int, params: list[int], repeat: int, blas: list[OpenBlas]) -> dict[str, Any]:
    """Model fits at each p on one shared design, see the module docs."""
    rng = np.random.default_rng(54321)
    out: dict[str, Any] = {}
    settable = [b for b in blas if b.threads() is not None and b.can_set]
    for p in params:
        design = np.empty((n, p))
        design[:, 0] = 1.0
        design[:, 1:] = rng.uniform(-5.0, 5.0, (n, p - 1))
        y = design @ np.linspace(1.0, 2.0, p) + rng.normal(0.0, 1.0, n)
        fns: dict[str, Callable[[], np.ndarray]] = {
            "memory_read_add_reduce": lambda: np.add.reduce(design, axis=None) + np.add.reduce(y),
            "plumbfit_model": lambda: fit_model(design, y),
            "plumbfit_model_1_thread": lambda: fit_model(design, y, threads=1),
            "numpy_lstsq": lambda: np.linalg.lstsq(design, y, rcond=None)[0],
            "scipy_lstsq": lambda: scipy.linalg.lstsq(design, y)[0],
            "statsmodels_ols": lambda: ols_params(design, y),
        }
        ref = np.linalg.lstsq(design, y, rcond=None)[0]
        diff = {
            k: float(np.max(np.abs(np.asarray(fn()) - ref)))
            for k, fn in fns.items() if k != "memory_read_add_reduce"
        }
        wall, cpu = best_interleaved(fns, repeat)
        if settable:
            before = [b.threads() for b in settable]
            for b in settable:
                b.set_threads(1)
            try:
                w1, c1 = best_interleaved(
                    {"numpy_lstsq_1_thread": lambda: np.linalg.lstsq(design, y, rcond=None)}, repeat
                )
            finally:
                for b, k in zip(settable, before):
                    b.set_threads(k or 1)
            wall.update(w1)
            cpu.update(c1)
        # Both on one core: the figure that does not depend on core count.
        if "numpy_lstsq_1_thread" in wall:
            single = wall["numpy_lstsq_1_thread"] / wall["plumbfit_model_1_thread"]
        else:
            single = None
        out[str(p)] = {
            "seconds_wall": wall,
            "seconds_cpu": cpu,
            "rows_per_second": {k: n / v for k, v in wall.items()},
            "plumbfit_vs_numpy_lstsq": wall["numpy_lstsq"] / wall["plumbfit_model"],
            "plumbfit_vs_scipy_lstsq": wall["scipy_lstsq"] / wall["plumbfit_model"],
            "plumbfit_vs_statsmodels_ols": wall["statsmodels_ols"] / wall["plumbfit_model"],
            "plumbfit_1_thread_vs_numpy_lstsq_1_thread": single,
            "max_abs_coefficient_difference_vs_numpy_lstsq": diff,
        }
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--n", type=int, default=10_000_000, help="pairs per fit")
    ap.add_argument("--repeat", type=int, default=5, help="runs per figure (best is kept)")
    ap.add_argument("--push-pairs", type=int, default=1_000_000, help="pairs for the push figure")
    ap.add_argument("--model-n", type=int, default=1_000_000, help="rows per model fit")
    ap.add_argument(
        "--model-params", default="2,4,8,12",
        help="comma-separated coefficient counts for the model section ('' skips it)",
    )
    ap.add_argument("--json", action="store_true", help="print the figures as JSON")
    args = ap.parse_args()
    model_params = [int(v) for v in args.model_params.split(",") if v.strip()]

    rng = np.random.default_rng(12345)
    x = rng.uniform(0.0, 100.0, args.n)
    y = 2.5 + 0.75 * x + rng.normal(0.0, 1.0, args.n)
    r = args.repeat

    # Same answer first, so the timings compare like with like.
    ref = scipy.stats.linregress(x, y)
    mine = fit_plumbfit(x, y, "lean")
    agree = abs(mine.slope - ref.slope) / abs(ref.slope)

    t: dict[str, float] = {}
    cpu: dict[str, float] = {}
    for name, fn in [
        ("memory_read_add_reduce", lambda: np.add.reduce(x) + np.add.reduce(y)),
        ("plumbfit_lean", lambda: fit_plumbfit(x, y, "lean")),
        ("plumbfit_full", lambda: fit_plumbfit(x, y, "full")),
        ("scipy_linregress", lambda: scipy.stats.linregress(x, y)),
        ("numpy_polyfit", lambda: np.polyfit(x, y, 1)),
        ("numpy_two_pass", lambda: two_pass(x, y)),
    ]:
        t[name], cpu[name] = best(fn, r)
    # Both statsmodels rows allocate hundreds of MB per call, so their times
    # swing with page faults; interleaved rounds give them the same luck.
    design = np.column_stack((np.ones_like(x), x))
    sm_wall, sm_cpu = best_interleaved(
        {
            "statsmodels_ols": lambda: fit_statsmodels(x, y),
            "statsmodels_ols_prebuilt": lambda: ols_params(design, y),
        },
        r,
    )
    t.update(sm_wall)
    cpu.update(sm_cpu)
    sm_agree = abs(fit_statsmodels(x, y)[1] - ref.slope) / abs(ref.slope)
    del design

    # Per-pair push: Python floats fed by map() (the loop runs in C, so the
    # figure is the cost of the call plus map's own iteration; this is
    # `push_ns_per_call`, the figure the 80 ns target applies to), and by a
    # plain for loop (what a streaming script pays, the Python loop's own
    # overhead included). Two baselines are reported beside them, never
    # subtracted: the same map() over the C builtin `operator.is_`, and the
    # empty for loop.
    m = args.push_pairs
    xs, ys = x[:m].tolist(), y[:m].tolist()

    def push_map() -> None:
        acc = plumbfit.LineAccumulator()
        collections.deque(map(acc.push, xs, ys), maxlen=0)

    def push_loop() -> None:
        acc = plumbfit.LineAccumulator()
        push = acc.push
        for a, b in zip(xs, ys):
            push(a, b)

    def empty_loop() -> None:
        for _a, _b in zip(xs, ys):
            pass

    def map_builtin() -> None:
        collections.deque(map(operator.is_, xs, ys), maxlen=0)

    push_ns, push_cpu_ns = (v / m * 1e9 for v in best(push_map, r))
    push_loop_ns, push_loop_cpu_ns = (v / m * 1e9 for v in best(push_loop, r))
    loop_ns, loop_cpu_ns = (v / m * 1e9 for v in best(empty_loop, r))
    map_ns, map_cpu_ns = (v / m * 1e9 for v in best(map_builtin, r))

    # Fixed cost of one batch call: extend() with a one-pair array, on
    # accumulators past their staged start (as in steady use).
    lean = plumbfit.LineAccumulator()
    lean.extend(x[:16], y[:16])
    full = plumbfit.LineAccumulator("full")
    full.extend(x[:16], y[:16])
    k = plumbfit.GIL_RELEASE_PAIRS
    env: dict[str, Any] = {
        "lean": lean,
        "full": full,
        "x1": x[16:17].copy(),
        "y1": y[16:17].copy(),
        "xb": x[: k - 1].copy(),
        "yb": y[: k - 1].copy(),
        "xa": x[:k].copy(),
        "ya": y[:k].copy(),
    }
    tiny, tiny_cpu = per_call("lean.extend(x1, y1)", env, 200_000, r)
    tiny_full, tiny_full_cpu = per_call("full.extend(x1, y1)", env, 100_000, r)
    # GIL release: the same call just below and at the threshold.
    below, below_cpu = per_call("lean.extend(xb, yb)", env, 2_000, r)
    at, at_cpu = per_call("lean.extend(xa, ya)", env, 2_000, r)

    blas = loaded_openblas()
    model = model_section(args.model_n, model_params, r, blas)

    fig: dict[str, Any] = {
        "n": args.n,
        "repeat": r,
        "seconds_wall": t,
        "seconds_cpu": cpu,
        "pairs_per_second_plumbfit_lean": args.n / t["plumbfit_lean"],
        "speedup_vs_scipy_linregress": t["scipy_linregress"] / t["plumbfit_lean"],
        "speedup_vs_scipy_linregress_cpu": cpu["scipy_linregress"] / cpu["plumbfit_lean"],
        "speedup_vs_numpy_polyfit": t["numpy_polyfit"] / t["plumbfit_lean"],
        "speedup_vs_numpy_two_pass": t["numpy_two_pass"] / t["plumbfit_lean"],
        "speedup_vs_statsmodels_ols": t["statsmodels_ols"] / t["plumbfit_lean"],
        "speedup_vs_statsmodels_ols_prebuilt": t["statsmodels_ols_prebuilt"] / t["plumbfit_lean"],
        "plumbfit_lean_vs_memory_read": t["plumbfit_lean"] / t["memory_read_add_reduce"],
        "push_ns_per_call": push_ns,
        "push_cpu_ns_per_call": push_cpu_ns,
        "push_for_loop_ns_per_pair": push_loop_ns,
        "push_for_loop_cpu_ns_per_pair": push_loop_cpu_ns,
        "empty_for_loop_ns_per_pair": loop_ns,
        "empty_for_loop_cpu_ns_per_pair": loop_cpu_ns,
        "map_builtin_is_ns_per_pair": map_ns,
        "map_builtin_is_cpu_ns_per_pair": map_cpu_ns,
        "extend_one_pair_ns": tiny,
        "extend_one_pair_cpu_ns": tiny_cpu,
        "extend_one_pair_full_ns": tiny_full,
        "extend_one_pair_full_cpu_ns": tiny_full_cpu,
        "gil_threshold_pairs": k,
        "extend_below_threshold_ns": below,
        "extend_at_threshold_ns": at,
        "extend_below_threshold_cpu_ns": below_cpu,
        "extend_at_threshold_cpu_ns": at_cpu,
        "slope_relative_difference_vs_scipy": agree,
        "statsmodels_slope_relative_difference_vs_scipy": sm_agree,
        "model_n": args.model_n,
        "model": model,
        "model_p8_vs_lstsq": model["8"]["plumbfit_vs_numpy_lstsq"] if "8" in model else None,
        # Which build was timed: a stale or in-tree (editable) extension
        # shadowing the installed one would make every figure meaningless.
        "module": plumbfit._native.__file__,
        "debug_build": bool(getattr(plumbfit._native, "_debug_build", False)),
        "versions": {
            "python": platform.python_version(),
            "plumbfit": plumbfit.__version__,
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "statsmodels": statsmodels.__version__,
        },
        "openblas_env": {
            v: os.environ.get(v)
            for v in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE", "OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS")
        },
        "threads": {
            "cpu_count": os.cpu_count(),
            "usable_cpus": len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else None,
            "plumbfit_line": 1,
            "plumbfit_model": len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count(),
            "openblas": [
                {"library": b.path, "threads": b.threads(), "core": b.corename()} for b in blas
            ],
        },
        "load_average": os.getloadavg(),
    }
    # Figures from an unoptimised extension say nothing about the release.
    fig["targets_met"] = {} if fig["debug_build"] else {
        "speedup_vs_scipy_linregress >= 10": fig["speedup_vs_scipy_linregress"] >= 10,
        "push_ns_per_call <= 80": push_ns <= 80,
        "extend_one_pair_ns <= 500": tiny <= 500,
    }
    if not fig["debug_build"] and fig["model_p8_vs_lstsq"] is not None:
        fig["targets_met"]["model_p8_vs_lstsq >= 1"] = fig["model_p8_vs_lstsq"] >= 1

    if args.json:
        print(json.dumps(fig, indent=2))
        return 0
    print(f"n = {args.n:,} pairs, best of {r}; numpy {np.__version__}, scipy {scipy.__version__}")
    print(f"load average {fig['load_average']}, OpenBLAS env {fig['openblas_env']}")
    print(f"extension {fig['module']}")
    if fig["debug_build"]:
        print("WARNING: this extension is a debug build; no target is judged")
    overrides = [k for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE") if fig["openblas_env"][k]]
    if overrides:
        print(f"WARNING: {', '.join(overrides)} set; the OpenBLAS figures may be slower than usual")
    print(f"{'method':26} {'wall ms':>9} {'cpu ms':>9} {'wall / plumbfit lean':>21}")
    for name, sec in t.items():
        print(f"{name:26} {sec * 1e3:9.2f} {cpu[name] * 1e3:9.2f} {sec / t['plumbfit_lean']:21.2f}")
    print(f"{'per call':34} {'wall ns':>9} {'cpu ns':>9}")
    rows = [
        ("push (map-driven)", push_ns, push_cpu_ns),
        ("push (for loop, per pair)", push_loop_ns, push_loop_cpu_ns),
        ("empty for loop (per pair)", loop_ns, loop_cpu_ns),
        ("map over operator.is_ (per pair)", map_ns, map_cpu_ns),
        ("extend, one pair (lean)", tiny, tiny_cpu),
        ("extend, one pair (full)", tiny_full, tiny_full_cpu),
        (f"extend, {k - 1} pairs (GIL kept)", below, below_cpu),
        (f"extend, {k} pairs (GIL released)", at, at_cpu),
    ]
    for name, w, c in rows:
        print(f"{name:34} {w:9.1f} {c:9.1f}")
    print(f"slope agrees with scipy to {agree:.1e} relative (statsmodels: {sm_agree:.1e})")
    print("statsmodels_ols counts the n x 2 design build; statsmodels_ols_prebuilt does not")
    th = fig["threads"]
    print(f"threads: {th['cpu_count']} cores ({th['usable_cpus']} usable), plumbfit line 1, "
          f"model {th['plumbfit_model']} (1 in the _1_thread row), OpenBLAS "
          + (", ".join(f"{os.path.basename(b['library'])} {b['threads']} ({b['core']})"
                       for b in th["openblas"]) or "not found"))
    for p, m in model.items():
        w, c = m["seconds_wall"], m["seconds_cpu"]
        d = m["max_abs_coefficient_difference_vs_numpy_lstsq"]
        print(f"model p = {p}, {args.model_n:,} rows x {p}, best of {r} interleaved rounds")
        print(f"{'method':26} {'wall ms':>9} {'cpu ms':>9} {'M rows/s':>9} "
              f"{'wall / plumbfit':>16} {'max |db| vs lstsq':>18}")
        for name, sec in w.items():
            diff = f"{d[name]:18.1e}" if name in d else f"{'':18}"
            print(f"{name:26} {sec * 1e3:9.2f} {c[name] * 1e3:9.2f} {args.model_n / sec / 1e6:9.2f} "
                  f"{sec / w['plumbfit_model']:16.2f} {diff}")
    if fig["model_p8_vs_lstsq"] is not None:
        print(f"model_p8_vs_lstsq = {fig['model_p8_vs_lstsq']:.2f} "
              "(numpy.linalg.lstsq wall over plumbfit extend + fit, p = 8, each on its default threads)")
        single = model.get("8", {}).get("plumbfit_1_thread_vs_numpy_lstsq_1_thread")
        if single is not None:
            print(f"model_p8_one_thread_each = {single:.2f} (both held to one thread; not a target)")
    for name, ok in fig["targets_met"].items():
        print(f"{'met   ' if ok else 'MISSED'} {name}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
