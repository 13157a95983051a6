"""Python step of the cross-door round trip (sequence in
tests/roundtrip/src/main.rs): restores the states the C program saved,
checks that saving them again gives the same bytes, pushes the first pairs
of part C one at a time and merges in the rest built through the Python API
(more pairs than the door handles with the GIL held), and compares the final bytes and fit with the
reference the Rust door computed for the same three parts and calls.

Every comparison is exact: bytes with ==, floats by their bit patterns (the
same calls in the same order on the same core must give the same bits; no
tolerance applies).

Usage: python3 roundtrip.py <dir>
"""

from __future__ import annotations

import pathlib
import struct
import sys

import numpy as np

import plumbfit

# Pairs of part C pushed one at a time, and the line whose lack of fit is
# tested (as in tests/roundtrip/src/main.rs).
PY_PUSHES = 7
LOF_LINE = [2.0, -0.5]


def bits(v: float) -> int:
    return int(struct.unpack("<Q", struct.pack("<d", v))[0])


def main(folder: str) -> int:
    d = pathlib.Path(folder)
    ref: dict[str, int] = {}
    for line in (d / "ref_fit.txt").read_text().splitlines():
        key, hexbits = line.split()
        ref[key] = int(hexbits, 16)
    cx = np.fromfile(d / "part_c_x.f64", dtype="<f8")
    cy = np.fromfile(d / "part_c_y.f64", dtype="<f8")
    if len(cx) - PY_PUSHES <= plumbfit.GIL_RELEASE_PAIRS:
        print("part C does not reach the GIL-release path", file=sys.stderr)
        return 1
    checked = 0
    failed: list[str] = []

    def same(key: str, value: float) -> None:
        nonlocal checked
        checked += 1
        if bits(value) != ref[key]:
            want = struct.unpack("<d", struct.pack("<Q", ref[key]))[0]
            failed.append(f"{key}: Python {value!r}, Rust {want!r}")

    def same_bytes(what: str, got: bytes, want: bytes) -> None:
        nonlocal checked
        checked += 1
        if got != want:
            at = next((i for i, (a, b) in enumerate(zip(got, want)) if a != b), min(len(got), len(want)))
            failed.append(f"{what}: bytes differ (lengths {len(got)}, {len(want)}; first at {at})")

    for tier in ("lean", "full"):
        blob = (d / f"c_{tier}.state").read_bytes()
        acc = plumbfit.LineAccumulator.from_bytes(blob)
        assert acc.tier == tier
        same_bytes(f"{tier}: Python save of the C state", acc.to_bytes(), blob)
        for i in range(PY_PUSHES):
            acc.push(float(cx[i]), float(cy[i]))
        part = plumbfit.LineAccumulator(tier)
        part.extend(cx[PY_PUSHES:], cy[PY_PUSHES:])
        acc.merge(part)
        same_bytes(f"{tier}: final state", acc.to_bytes(), (d / f"ref_{tier}.state").read_bytes())
        fit = acc.fit()
        for key in ("slope", "intercept", "sse", "se_slope", "se_intercept", "residual_sd", "weight_sum"):
            same(f"{tier}.{key}", getattr(fit, key))
        same(f"{tier}.count", float(fit.count))

    blob = (d / "c_model.state").read_bytes()
    m = plumbfit.ModelAccumulator.from_bytes(blob)
    assert m.params == 3
    same_bytes("model: Python save of the C state", m.to_bytes(), blob)
    rows = np.column_stack([np.ones_like(cx), cx, cx * cx])
    for i in range(PY_PUSHES):
        m.push(rows[i], float(cy[i]))
    part_m = plumbfit.ModelAccumulator(3)
    part_m.extend(rows[PY_PUSHES:], cy[PY_PUSHES:])
    m.merge(part_m)
    same_bytes("model: final state", m.to_bytes(), (d / "ref_model.state").read_bytes())
    mf = m.fit()
    for i, v in enumerate(mf.coefficients):
        same(f"model.coefficients.{i}", float(v))
    for i, v in enumerate(mf.std_errors):
        same(f"model.std_errors.{i}", float(v))
    for i, v in enumerate(mf.covariance.ravel()):
        same(f"model.covariance.{i}", float(v))
    same("model.sse", mf.sse)
    same("model.residual_sd", mf.residual_sd)
    same("model.rows", float(mf.rows))

    clx = np.fromfile(d / "part_c_lx.f64", dtype="<f8")
    blob = (d / "c_levels.state").read_bytes()
    lv = plumbfit.ReplicateLevels.from_bytes(blob)
    same_bytes("levels: Python save of the C state", lv.to_bytes(), blob)
    part_l = plumbfit.ReplicateLevels()
    part_l.extend(clx, cy)
    lv.merge(part_l)
    same_bytes("levels: final state", lv.to_bytes(), (d / "ref_levels.state").read_bytes())
    lof = lv.lack_of_fit_polynomial(LOF_LINE)
    same("levels.count", float(lof.count))
    same("levels.levels", float(lof.levels))
    for key in ("ss_lack_of_fit", "ss_pure_error", "f_stat", "p_value"):
        same(f"levels.{key}", getattr(lof, key))

    # Every reference value was compared (nothing silently skipped).
    expected = len(ref) - 1 + 8  # without "lambda"; plus 8 byte comparisons
    if checked != expected:
        failed.append(f"compared {checked} values, the reference holds {expected}")
    for f in failed:
        print("MISMATCH", f, file=sys.stderr)
    print(f"round trip Rust -> C -> Python: {checked} exact comparisons")
    print(f"{checked - len(failed)} passed, {len(failed)} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    if len(sys.argv) != 2:
        print("usage: roundtrip.py <dir>", file=sys.stderr)
        sys.exit(2)
    sys.exit(main(sys.argv[1]))
