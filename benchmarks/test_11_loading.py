"""Water-filling and bit loading over 4096 tones (tonebank.loading).

Channels (``extra_info["case"]``), 4096 tones each, gap 9.76 dB
(``snr_gap_db(1e-7)``), budget one unit of energy per tone:

``selective``  an invented 8-path multipath response at 35 dB mean SNR
               (bits 0 to 11 per tone, a few empty tones);
``flat``       every tone alike at 30 dB (the worst case for ties: every
               tone's step has the same cost).

Operations (``extra_info["op"]``), one call each:

``water_filling``       exact water-filling under the budget;
``water_filling_cap``   the same with a per-tone cap (half the tones
                        capped);
``levin_campello``      rate-adaptive Levin-Campello (default start);
``levin_campello_margin``  margin-adaptive, for the rate above minus 10 %;
``chow_cioffi_bingham`` CCB at that same rate;
``hughes_hartogs``      the greedy reference (a Python heap loop, one step
                        per iteration: about 35 000 steps here);
``table_map``           ``BitTable.map`` of 14 symbols of the loaded table;
``table_llr``           ``BitTable.llr`` (max-log) of those 14 symbols.

Everything is numpy: the loading module does not call the C kernel, so
the backend does not matter and only the numpy backend is run.  Each
result is checked once after timing (Levin-Campello's bits equal the
greedy's; the water-filling energies sum to the budget).  Figures from a
shared, noisy machine: only ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest

from tonebank import loading

N = 4096
SYMBOLS = 14
GAP_DB = loading.snr_gap_db(1e-7)
_CASES: dict = {}


def case(name):
    if name not in _CASES:
        rng = np.random.default_rng(11)
        if name == "selective":
            taps = ((rng.standard_normal(8) + 1j * rng.standard_normal(8))
                    * np.exp(-np.arange(8) / 3))
            response = np.fft.fft(taps, N)
            g = np.abs(response) ** 2 / np.mean(np.abs(response) ** 2) * 10 ** 3.5
        else:
            g = np.full(N, 1e3)
        g.flags.writeable = False
        rate = loading.levin_campello(g, gap_db=GAP_DB, total_energy=float(N)).bits_per_symbol
        target = int(0.9 * rate)
        table = loading.levin_campello(g, gap_db=GAP_DB, target_bits=target)
        bits = rng.integers(0, 2, SYMBOLS * table.bits_per_symbol)
        cells = table.map(bits) + 1e-4 * (rng.standard_normal(SYMBOLS * N)
                                          + 1j * rng.standard_normal(SYMBOLS * N))
        _CASES[name] = dict(g=g, target=target, table=table, bits=bits, cells=cells,
                            cap=np.where(np.arange(N) % 2, 0.8, np.inf))
    return _CASES[name]


def operation(op, c):
    g = c["g"]
    return {
        "water_filling": lambda: loading.water_filling(g, float(N), gap_db=GAP_DB),
        "water_filling_cap": lambda: loading.water_filling(g, float(N), gap_db=GAP_DB,
                                                           cap=c["cap"]),
        "levin_campello": lambda: loading.levin_campello(g, gap_db=GAP_DB,
                                                         total_energy=float(N)),
        "levin_campello_margin": lambda: loading.levin_campello(g, gap_db=GAP_DB,
                                                                target_bits=c["target"]),
        "chow_cioffi_bingham": lambda: loading.chow_cioffi_bingham(
            g, gap_db=GAP_DB, total_energy=float(N), target_bits=c["target"]),
        "hughes_hartogs": lambda: loading.hughes_hartogs(g, gap_db=GAP_DB,
                                                         total_energy=float(N)),
        "table_map": lambda: c["table"].map(c["bits"]),
        "table_llr": lambda: c["table"].llr(c["cells"], 1e-4),
    }[op]


OPS = ("water_filling", "water_filling_cap", "levin_campello", "levin_campello_margin",
       "chow_cioffi_bingham", "hughes_hartogs", "table_map", "table_llr")


def check(op, c, result):
    if op.startswith("water_filling"):
        assert abs(result.energies.sum() - N) <= 1e-9 * N
    elif op == "levin_campello":
        greedy = loading.hughes_hartogs(c["g"], gap_db=GAP_DB, total_energy=float(N))
        assert result.bits_per_symbol == greedy.bits_per_symbol
    elif op in ("levin_campello_margin", "chow_cioffi_bingham"):
        assert result.bits_per_symbol == c["target"]
    elif op == "table_map":
        assert result.shape == (SYMBOLS * N,)
    elif op == "table_llr":
        assert np.array_equal(result < 0, c["bits"] == 1)


@pytest.mark.parametrize("name", ["selective", "flat"])
@pytest.mark.parametrize("op", OPS)
def test_loading(benchmark, op, name):
    c = case(name)
    call = operation(op, c)
    benchmark.group = f"loading {name} n={N}"
    benchmark.extra_info.update(kind="loading", op=op, case=name, n=N, impl="tb_numpy")
    if op == "hughes_hartogs":
        result = benchmark.pedantic(call, rounds=3, iterations=1, warmup_rounds=0)
    else:
        result = benchmark(call)
    check(op, c, result)
