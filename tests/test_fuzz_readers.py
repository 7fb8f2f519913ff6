"""Property tests of every reader family: any input ends in the kit's error or a spectrum that
passes its own invariants (a short, seeded run; the long campaign is
tests/benchmarks/fuzz_campaign.py).

Source for all: common practice, no source (property-based mutation fuzzing).
"""

from __future__ import annotations

import warnings

import pytest

from fuzzkit import DICTIONARY, FAMILIES, run_one

hypothesis = pytest.importorskip("hypothesis")
from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

SEEDS = {name: (fmt, fn()) for name, (fmt, fn) in FAMILIES.items()}

# one edit: (operation, where as a fraction of the length, a byte, a dictionary token, a length)
EDIT = st.tuples(st.integers(0, 5), st.floats(0.0, 1.0), st.integers(0, 255),
                 st.sampled_from(DICTIONARY), st.integers(1, 40))


def apply_edits(data: bytes, edits) -> bytes:
    d = bytearray(data)
    for op, where, byte, token, length in edits:
        i = min(int(where * len(d)), len(d))
        if op == 0 and i < len(d):
            d[i] = byte
        elif op == 1:
            del d[i:i + length]
        elif op == 2:
            d[i:i] = bytes([byte]) * (length % 7 + 1)
        elif op == 3:
            d[i:i] = token
        elif op == 4:
            d = d[:i]
        else:
            d[i:i] = d[i:i + length * 50]
    return bytes(d)


@pytest.mark.parametrize("family", sorted(SEEDS))
def test_seeds_are_read(family):
    fmt, seeds = SEEDS[family]
    for data in seeds:
        assert run_one(data, fmt)[0] == "ok", (family, data[:80])


@pytest.mark.parametrize("family", sorted(SEEDS))
@settings(max_examples=120, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(which=st.integers(0, 1000), edits=st.lists(EDIT, min_size=1, max_size=5))
def test_mutated_input_gives_the_kits_error_or_a_valid_spectrum(family, which, edits):
    fmt, seeds = SEEDS[family]
    data = apply_edits(seeds[which % len(seeds)], edits)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        outcome, detail = run_one(data, fmt)
    assert outcome in ("ok", "kit-error"), f"{outcome}: {detail}"
