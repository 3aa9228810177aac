"""Link throughput: frames per second of the demo link on each kernel backend.

One timed call = ``Link.run(10, 16.0, rng)`` of the demo scenario's link
(:func:`tonebank.demo.river_sensor_link`: 128-point CP-OFDM, 12 16-QAM
symbols per frame, SLM with 8 candidates, Rapp amplifier, TDL-C fading on 2
antennas, LMMSE estimation, MRC, LLRs), and the same link with perfect
channel knowledge and no peak control or amplifier (``plain``), on the C
and numpy backends (``extra_info["impl"]``).  The counts are checked once
to be equal on both backends (same seed, same numbers).  The machines are
shared and noisy: only ratios within one run mean anything.
"""

from __future__ import annotations

import numpy as np
import pytest

import tonebank
from tonebank.demo import river_sensor_link
from tonebank.link import Receiver

FRAMES = 10
_LINKS: dict = {}
_COUNTS: dict = {}


def link(case: str):
    if case not in _LINKS:
        demo = river_sensor_link()
        _LINKS[case] = demo if case == "demo" else demo.replace(
            peak=None, amplifier=None, receiver=Receiver(estimation="perfect"))
    return _LINKS[case]


C_AVAILABLE = tonebank.backend_info()["c_available"]


@pytest.mark.parametrize("case", ["demo", "plain"])
@pytest.mark.parametrize("impl", ["tb_c", "tb_numpy"])
def test_link_frames(benchmark, case, impl):
    if impl == "tb_c" and not C_AVAILABLE:
        pytest.skip("C kernel not built")
    lk = link(case)
    with tonebank.use_backend("c" if impl == "tb_c" else "numpy"):
        result = benchmark(lambda: lk.run(FRAMES, 16.0, np.random.default_rng(5)))
    # Both backends count alike (a decision on a rounding edge may differ).
    first = _COUNTS.setdefault(case, result.counts)
    assert result.counts["bits"] == first["bits"]
    assert abs(result.counts["bit_errors"] - first["bit_errors"]) <= 2
    benchmark.extra_info.update(kind="link", case=case, impl=impl, frames=FRAMES,
                                samples=FRAMES * lk.samples_per_frame)
