"""State bytes and pickling go through the core's persisted state format
(docs/state-format.md): round trips are exact and damaged bytes are refused
with StateFormatError."""

from __future__ import annotations

import pickle

import numpy as np
import pytest
from conftest import Tier

import plumbfit


def line(tier: Tier) -> plumbfit.LineAccumulator:
    rng = np.random.default_rng(3)
    acc = plumbfit.LineAccumulator(tier)
    x = rng.uniform(0, 5, 37)
    acc.extend(x, 1.5 * x + rng.normal(0, 0.1, x.size))
    return acc


@pytest.mark.parametrize("tier", ["lean", "full"])
def test_line_round_trip(tier: Tier) -> None:
    acc = line(tier)
    blob = acc.to_bytes()
    back = plumbfit.LineAccumulator.from_bytes(blob)
    assert back == acc and back.tier == tier
    assert pickle.loads(pickle.dumps(acc)) == acc
    info = plumbfit.peek_state(blob)
    assert info["kind"] == f"line-{tier}" and info["count"] == 37
    assert info["length"] == len(blob)
    loaded = plumbfit.load_state(blob)
    assert isinstance(loaded, plumbfit.LineAccumulator) and loaded == acc
    # Few staged pairs (before the frame is fitted) survive too.
    small = plumbfit.LineAccumulator(tier)
    small.push(1.0, 2.0)
    assert pickle.loads(pickle.dumps(small)) == small
    # Merging after a round trip equals merging the originals.
    assert (back + small) == (acc + small)


def test_model_round_trip() -> None:
    acc = plumbfit.ModelAccumulator(3)
    acc.extend_powers(np.linspace(0, 1, 40), np.linspace(0, 1, 40) ** 2)
    blob = acc.to_bytes()
    assert plumbfit.ModelAccumulator.from_bytes(blob) == acc
    assert pickle.loads(pickle.dumps(acc)) == acc
    assert plumbfit.peek_state(blob)["params"] == 3
    assert isinstance(plumbfit.load_state(blob), plumbfit.ModelAccumulator)


def test_damaged_bytes_are_refused() -> None:
    blob = bytearray(line("lean").to_bytes())
    blob[30] ^= 0x01
    with pytest.raises(plumbfit.StateFormatError) as ei:
        plumbfit.LineAccumulator.from_bytes(bytes(blob))
    # docs/state-format.md and DEVELOPERS.md: 50-59 are state-format errors.
    assert 50 <= ei.value.code <= 59
    assert isinstance(ei.value, ValueError)
    with pytest.raises(plumbfit.StateFormatError):
        plumbfit.LineAccumulator.from_bytes(b"not a state")
    with pytest.raises(plumbfit.StateFormatError):
        plumbfit.LineAccumulator.from_bytes(line("lean").to_bytes()[:-1])
    model = plumbfit.ModelAccumulator(2)
    with pytest.raises(plumbfit.StateFormatError):
        plumbfit.LineAccumulator.from_bytes(model.to_bytes())
    with pytest.raises(plumbfit.StateFormatError):
        plumbfit.ModelAccumulator.from_bytes(line("full").to_bytes())
