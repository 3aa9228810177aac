"""Pilot phase tracking (tonebank.sync.tracking).

References
----------
- A residual offset of eps spacings turns every subcarrier of symbol s by
  2 pi eps s (N + c) / N (the phase advance of a tone over one symbol
  period), and a window shift of tau samples turns subcarrier k by
  2 pi k tau / N (the DFT shift theorem); a clock offset delta shifts the
  window by delta n_s at sample n_s.  Textbook DFT properties (e.g.
  Oppenheim and Schafer, Discrete-Time Signal Processing, the circular
  shift property; from memory).
- IEEE Std 802.11a-1999, clause 17.3.5.9 (from memory): pilots on
  -21, -7, 7, 21 (through tonebank.presets).
"""

import numpy as np
import pytest

import tonebank
from tonebank import presets, sync

PLAN = presets.ieee80211a()
K = PLAN.pilot_subcarriers


def _pilot_cells(n_symbols, eps, delta, rng=None, snr_db=None, start=0):
    """Pilots through a channel, an offset of ``eps`` spacings and a clock offset ``delta``."""
    s = np.arange(n_symbols)
    n_s = start + s * 80
    a = 2 * np.pi * eps * 80 / 64 * s
    b = 2 * np.pi * delta * n_s / 64
    h = np.exp(1j * np.linspace(0, 2, K.size)) * np.linspace(0.5, 1.5, K.size)
    x = PLAN.pilots_for(n_symbols)
    y = h * x * np.exp(1j * (a[:, None] + b[:, None] * K))
    if rng is not None:
        sigma = np.sqrt(10 ** (-snr_db / 10) / 2)
        y = y + sigma * (rng.standard_normal(y.shape) + 1j * rng.standard_normal(y.shape))
    return y, x, h, a, b


def test_noise_free_phases_are_exact():
    y, x, h, a, b = _pilot_cells(12, 0.013, 30e-6)
    ph = sync.pilot_phase(y, x, K, channel=h)
    np.testing.assert_allclose(ph.common, np.angle(np.exp(1j * a)), atol=1e-12)
    np.testing.assert_allclose(ph.slope, b, atol=1e-12)
    drift = sync.phase_drift(ph, n_fft=64, symbol_length=80)
    assert drift.cfo_spacings == pytest.approx(0.013, abs=1e-12)
    assert drift.sco_ppm == pytest.approx(30.0, abs=1e-6)


def test_estimates_under_noise_are_unbiased():
    # 30 dB per pilot, 100 symbols, 20 frames: the mean estimates agree
    # with the truth within 5 standard errors of the frame-to-frame spread.
    rng = np.random.default_rng(30)
    cfo, sco = [], []
    for _ in range(20):
        y, x, h, _, _ = _pilot_cells(100, -0.004, 50e-6, rng, 30.0)
        d = sync.phase_drift(sync.pilot_phase(y, x, K, channel=h), n_fft=64,
                             symbol_length=80)
        cfo.append(d.cfo_spacings)
        sco.append(d.sco_ppm)
    for values, truth in ((cfo, -0.004), (sco, 50.0)):
        values = np.asarray(values)
        assert abs(values.mean() - truth) <= 5 * values.std(ddof=1) / np.sqrt(values.size)


def test_derotate_removes_the_rotation_from_data_cells():
    rng = np.random.default_rng(31)
    kd = PLAN.data_subcarriers
    ph = sync.PilotPhase(rng.uniform(-3, 3, 5), rng.uniform(-0.01, 0.01, 5))
    cells = np.exp(1j * (ph.common[:, None] + ph.slope[:, None] * kd))
    np.testing.assert_allclose(sync.derotate(cells, kd, ph), 1.0, atol=1e-12)
    assert sync.derotate(cells.astype(np.complex64), kd, ph).dtype == np.complex64


def test_one_pilot_gives_zero_slope():
    ph = sync.pilot_phase(np.exp(0.4j) * np.ones((3, 1)), 1.0, np.array([5]))
    np.testing.assert_allclose(ph.common, 0.4, atol=1e-12)
    np.testing.assert_array_equal(ph.slope, 0.0)


@pytest.mark.parametrize("call, error, match", [
    (lambda: sync.pilot_phase(np.ones(4), 1, K), ValueError, "received"),
    (lambda: sync.pilot_phase(np.ones((2, 4)), 1, np.arange(3)), ValueError, "subcarriers"),
    (lambda: sync.pilot_phase(np.ones((2, 4)), np.ones((3, 4)), K), ValueError, "broadcast"),
    (lambda: sync.pilot_phase(np.ones((2, 4)), np.ones((5, 2, 4)), K), ValueError, "enlarge"),
    (lambda: sync.pilot_phase(np.full((2, 4), np.nan), 1, K), ValueError, "finite"),
    (lambda: sync.phase_drift((1, 2), n_fft=64, symbol_length=80), TypeError, "PilotPhase"),
    (lambda: sync.phase_drift(sync.PilotPhase(np.ones(1), np.ones(1)), n_fft=64,
                              symbol_length=80), ValueError, "two symbols"),
    (lambda: sync.derotate(np.ones((2, 3)), np.arange(3), sync.PilotPhase(np.ones(3),
                                                                          np.ones(3))),
     ValueError, "phase has shape"),
])
def test_errors_name_the_argument(call, error, match):
    with pytest.raises(error, match=match):
        call()
    assert tonebank is not None
