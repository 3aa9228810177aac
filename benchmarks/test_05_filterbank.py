"""Windowed (WOLA) and filtered OFDM: the fused C kernel against the numpy fallback.

For every variant (``wola``: ``WolaOfdm`` with transmit and receive ramps
of cp/4 each; ``fofdm``: ``FilteredOfdm`` with its default filter of
n/2 + 1 taps), direction (``modulate`` / ``demodulate``), FFT size n in
{256, 1024, 4096} and symbols per call in {140, 1}, the same call is timed
on the C backend (``impl="c"``: one fused pass per symbol) and on the
numpy backend (``impl="numpy"``: the batched numpy twin), complex128, one
call per test.  Plans are the CP-OFDM benchmark's (``bench_common.
ofdm_plan_args``: ~80 % of the bins used, pilots every ~12, prefix n/4).
Waveforms are made once per session and every test makes one untimed call
first, so plans and caches are warm.  Each result is checked once, after
timing, against the other backend's result (computed untimed in the
fixture): agreement to 1e-12 relative.

``report.py`` prints the table and the target (C at least 3x faster than
the numpy fallback at 140 symbols) from ``extra_info`` (``kind =
"filterbank"``, ``variant``, ``direction``, ``impl``, ``n``, ``symbols``).
"""

from __future__ import annotations

import numpy as np
import pytest

import tonebank
from bench_common import ofdm_plan_args

SIZES = (256, 1024, 4096)
SYMBOLS = (140, 1)
VARIANTS = ("wola", "fofdm")
DIRECTIONS = ("modulate", "demodulate")

_CASES: dict = {}


def make_waveform(variant: str, plan):
    cp = plan.cp_lengths[0]
    if variant == "wola":
        return tonebank.WolaOfdm(plan, tx_ramp=cp // 4, rx_ramp=cp // 4)
    return tonebank.FilteredOfdm(plan)


def case(variant: str, n: int, symbols: int):
    """``(waveform, data, samples, references)``, made once, read-only."""
    key = (variant, n, symbols)
    if key not in _CASES:
        plan = tonebank.CarrierPlan.centered(**ofdm_plan_args(n))
        wf = make_waveform(variant, plan)
        rng = np.random.default_rng([5, n, symbols])
        data = (rng.standard_normal(symbols * plan.n_data)
                + 1j * rng.standard_normal(symbols * plan.n_data)) / np.sqrt(2)
        with tonebank.use_backend("numpy"):
            tx_ref = wf.modulate(data)
            rx_ref = wf.demodulate(tx_ref)[0]
        for a in (data, tx_ref, rx_ref):
            a.flags.writeable = False
        _CASES[key] = (wf, data, tx_ref, rx_ref)
    return _CASES[key]


def close(a, b):
    err = float(np.max(np.abs(a - b)) / np.max(np.abs(b)))
    assert err <= 1e-12, err


@pytest.mark.parametrize("impl", ["c", "numpy"])
@pytest.mark.parametrize("symbols", SYMBOLS)
@pytest.mark.parametrize("n", SIZES)
@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("variant", VARIANTS)
def test_filterbank(benchmark, variant, direction, n, symbols, impl):
    if impl == "c" and not tonebank.backend_info()["c_available"]:
        pytest.skip("C kernel unavailable")
    wf, data, tx_ref, rx_ref = case(variant, n, symbols)
    benchmark.group = f"filterbank {variant} {direction} n={n} symbols={symbols}"
    benchmark.extra_info.update(kind="filterbank", variant=variant, direction=direction,
                                impl=impl, n=n, symbols=symbols, dtype="complex128",
                                samples=int(tx_ref.shape[-1]))
    with tonebank.use_backend(impl):
        if direction == "modulate":
            wf.modulate(data)
            result = benchmark(wf.modulate, data)
            close(result, tx_ref)
        else:
            wf.demodulate(tx_ref)
            result = benchmark(wf.demodulate, tx_ref)[0]
            close(result, rx_ref)
