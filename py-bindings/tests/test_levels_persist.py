"""ReplicateLevels state bytes (docs/state-format.md, "Level payload"): the
bytes equal a blob built field by field from the specification with the
standard library (struct, zlib.crc32), round trips and pickling are exact,
and damaged or forged bytes are refused with StateFormatError. Also the
model accumulator's empty-block refusal (code 4, as for the line)."""

from __future__ import annotations

import pickle
import struct
import zlib

import numpy as np
import pytest

import plumbfit


def spec_blob(records: list[tuple[float, int, float, float, float]], version: int) -> bytes:
    """A level state built from the format tables, independently of the
    library: header, 40-byte records, CRC-32 (zlib's, the same CRC)."""
    payload = b"".join(struct.pack("<dQddd", *r) for r in records)
    head = b"\xc5PFS" + struct.pack("<HBBHHI", version, 4, 0, len(records), 0, len(payload))
    body = head + payload
    return body + struct.pack("<I", zlib.crc32(body))


def version_of(blob: bytes) -> int:
    return int(struct.unpack_from("<H", blob, 4)[0])


def sample() -> plumbfit.ReplicateLevels:
    # Invented readings: x = 1: y = 2, 4 (mean 3, m2 2); x = -0.5: y = 7
    # with weight 2 (mean 7, m2 0); -0.0 and 0.0 are one level at +0.0.
    lv = plumbfit.ReplicateLevels()
    lv.push(1.0, 2.0)
    lv.push(-0.5, 7.0, 2.0)
    lv.push(1.0, 4.0)
    lv.push(-0.0, 5.0)
    lv.push(0.0, 6.0)
    return lv


def test_bytes_match_the_specification() -> None:
    lv = sample()
    blob = lv.to_bytes()
    want = spec_blob(
        [(-0.5, 1, 2.0, 7.0, 0.0), (0.0, 2, 2.0, 5.5, 0.5), (1.0, 2, 2.0, 3.0, 2.0)],
        version_of(blob),
    )
    assert blob == want
    assert len(blob) == 20 + 3 * 40
    info = plumbfit.peek_state(blob)
    assert info == {
        "kind": "levels",
        "version": version_of(blob),
        "params": 3,
        "count": 5,
        "length": 140,
    }


def test_round_trip_and_pickle_are_exact() -> None:
    rng = np.random.default_rng(11)
    lv = plumbfit.ReplicateLevels()
    x = np.repeat(np.arange(12.0) * 0.37 - 1.0, 5)
    lv.extend(x, 2.0 * x + rng.normal(0, 0.1, x.size), rng.uniform(0.5, 2.0, x.size))
    blob = lv.to_bytes()
    for back in (
        plumbfit.ReplicateLevels.from_bytes(blob),
        pickle.loads(pickle.dumps(lv)),
        plumbfit.load_state(blob),
    ):
        assert isinstance(back, plumbfit.ReplicateLevels)
        assert back.to_bytes() == blob
        a, b = lv.levels(), back.levels()
        for k in ("x", "weight_sum", "mean_y", "m2"):
            assert a[k].tobytes() == b[k].tobytes(), k
        assert np.array_equal(a["count"], b["count"])
    # Merging after a round trip equals merging the originals.
    other = sample()
    m1 = plumbfit.ReplicateLevels.from_bytes(blob)
    m1.merge(plumbfit.ReplicateLevels.from_bytes(other.to_bytes()))
    m2 = pickle.loads(pickle.dumps(lv))
    m2.merge(other)
    assert m1.to_bytes() == m2.to_bytes()
    empty = plumbfit.ReplicateLevels()
    assert len(empty.to_bytes()) == 20
    assert plumbfit.ReplicateLevels.from_bytes(empty.to_bytes()).count == 0


def code_of(data: bytes) -> int:
    with pytest.raises(plumbfit.StateFormatError) as ei:
        plumbfit.ReplicateLevels.from_bytes(data)
    return int(ei.value.code)


def test_damaged_forged_and_foreign_bytes_are_refused() -> None:
    blob = sample().to_bytes()
    v = version_of(blob)
    # docs/state-format.md / DEVELOPERS.md codes: 54 truncated, 55 length,
    # 56 checksum, 53 wrong kind, 57 invalid field.
    assert code_of(blob[:-1]) == 54
    assert code_of(blob + b"\0") == 55
    bad = bytearray(blob)
    bad[40] ^= 0x04
    assert code_of(bytes(bad)) == 56
    line = plumbfit.LineAccumulator("lean")
    line.push(1.0, 2.0)
    assert code_of(line.to_bytes()) == 53
    with pytest.raises(plumbfit.StateFormatError) as ei:
        plumbfit.LineAccumulator.from_bytes(blob)
    assert ei.value.code == 53
    # Forged with a correct CRC: duplicate level, -0.0 key, zero count,
    # negative spread, a spread for a single reading.
    for recs in (
        [(1.0, 1, 1.0, 1.0, 0.0), (1.0, 1, 1.0, 1.0, 0.0)],
        [(-0.0, 1, 1.0, 1.0, 0.0)],
        [(2.0, 0, 1.0, 1.0, 0.0)],
        [(2.0, 2, 1.0, 1.0, -1.0)],
        [(2.0, 1, 1.0, 1.0, 0.5)],
        [(float("nan"), 1, 1.0, 1.0, 0.0)],
    ):
        assert code_of(spec_blob(recs, v)) == 57, recs
    # A level count above the cap is refused from the header.
    assert code_of(spec_blob([(float(i), 1, 1.0, 0.0, 0.0) for i in range(63)], v)) == 57


def test_more_levels_than_the_cap_cannot_be_saved() -> None:
    lv = plumbfit.ReplicateLevels()
    lv.extend(np.arange(62.0), np.ones(62))
    assert len(lv.to_bytes()) == 20 + 62 * 40  # docs/state-format.md: 62-level cap
    lv.push(100.0, 1.0)
    with pytest.raises(plumbfit.StateFormatError) as ei:
        lv.to_bytes()
    assert ei.value.code == 57
    with pytest.raises(plumbfit.StateFormatError):
        pickle.dumps(lv)


def test_level_sums_that_would_overflow_are_refused() -> None:
    lv = plumbfit.ReplicateLevels()
    lv.push(1.0, 1.0, 1e308)
    before = lv.to_bytes()
    with pytest.raises(plumbfit.StateOverflowError) as ei:
        lv.push(1.0, 2.0, 1e308)
    assert ei.value.code == 100  # DEVELOPERS.md: 100 overflow
    with pytest.raises(plumbfit.StateOverflowError):
        lv.merge(plumbfit.ReplicateLevels.from_bytes(before))
    assert lv.to_bytes() == before


def test_model_empty_block_is_refused_like_the_line() -> None:
    acc = plumbfit.ModelAccumulator(2)
    acc.push([1.0, 2.0], 3.0)
    before = acc.to_bytes()
    with pytest.raises(plumbfit.EmptyInputError) as ei:
        acc.extend(np.ones((0, 2)), np.ones(0))
    assert ei.value.code == 4  # DEVELOPERS.md: 4 empty input
    with pytest.raises(plumbfit.EmptyInputError) as ep:
        acc.extend_powers(np.ones(0), np.ones(0))
    assert ep.value.code == 4
    assert acc.to_bytes() == before
    line = plumbfit.LineAccumulator("lean")
    with pytest.raises(plumbfit.EmptyInputError) as el:
        line.extend(np.ones(0), np.ones(0))
    assert el.value.code == ei.value.code
