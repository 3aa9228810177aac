"""tonebank.papr: PAPR measurement, clipping, clip-and-filter, selective mapping.

Outside references, named beside each check:

* van Nee & Prasad, *OFDM for Wireless Multimedia Communications*, Artech
  House 2000, PAPR chapter: CCDF of Nyquist-rate samples
  ``1 - (1 - e^-z)^N`` for random data on N subcarriers;
* van Nee & de Wild, "Reducing the peak-to-average power ratio of OFDM",
  IEEE VTC 1998: the oversampled approximation with ``alpha N``, alpha
  about 2.8 (from memory);
* Tellambura, IEEE Commun. Lett. 5(5), 2001: oversampling by 4 is enough
  for the continuous-time peak;
* Bäuml, Fischer & Huber, Electron. Lett. 32(22), 1996: SLM with U
  independent candidates gives ``CCDF(z)^U``;
* Ochiai & Imai, IEEE Trans. Commun. 50(1), 2002: Bussgang gain, output
  power and clipping-noise power of a clipped Gaussian signal;
* Armstrong, Electron. Lett. 38(5), 2002: repeated clipping and filtering
  leaves no out-of-band energy and lowers the PAPR stage by stage;
* numpy.fft as the reference transform.

Monte-Carlo checks use fixed seeds and a bound of 5 binomial standard
deviations, sqrt(p (1 - p) / S) (two-sided probability of a false failure
below 1e-6 for a correct implementation).
"""

import math

import numpy as np
import pytest

import tonebank
from tonebank import CarrierPlan, Constellation
from tonebank.papr import (SelectiveMapping, active_constellation_extension, ccdf_theory,
                           clip, clip_and_filter, clipping_theory, oversample, papr_ccdf,
                           papr_db, symbol_papr_db, tone_reservation)


def qpsk_grid(rng, shape):
    return np.exp(0.5j * np.pi * rng.integers(0, 4, shape))


def five_sigma(p, s):
    return 5.0 * math.sqrt(p * (1.0 - p) / s)


# -- measurement ------------------------------------------------------------------


def test_oversample_matches_numpy_zero_padding():
    # Reference: numpy.fft.ifft of the zero-padded spectrum (bin k at k mod M,
    # the placement documented in tonebank.plan / CpOfdm), unitary scaling.
    rng = np.random.default_rng(1)
    for n, factor in ((16, 4), (15, 2), (64, 1)):
        grid = rng.standard_normal((3, n)) + 1j * rng.standard_normal((3, n))
        m = factor * n
        k = np.round(np.fft.fftfreq(n) * n).astype(int)
        padded = np.zeros((3, m), complex)
        padded[:, k % m] = grid
        ref = np.fft.ifft(padded, norm="ortho")
        np.testing.assert_allclose(oversample(grid, oversampling=factor), ref, atol=1e-12)
    x64 = oversample(grid.astype(np.complex64), oversampling=2)
    assert x64.dtype == np.complex64


def test_papr_of_known_signals():
    # A constant envelope has 0 dB; N tones in phase peak at N times the mean
    # power (definition of PAPR; Dirichlet kernel).
    grid = np.zeros((2, 32), complex)
    grid[0, 3] = 2.0
    grid[1] = 1.0
    np.testing.assert_allclose(symbol_papr_db(grid), [0.0, 10 * np.log10(32)], atol=1e-9)
    assert papr_db(np.ones(5)) == pytest.approx(0.0)


def test_ccdf_nyquist_matches_van_nee_prasad():
    # van Nee & Prasad 2000: Pr(PAPR > z) = 1 - (1 - e^-z)^N for Nyquist
    # samples of random data on all N tones.  N = 256 QPSK is Gaussian enough
    # at 8-10 dB (below 8 dB the per-symbol normalisation of the mean shows).
    rng = np.random.default_rng(11)
    s, n = 8000, 256
    z = np.array([8.0, 9.0, 10.0])
    measured = papr_ccdf(symbol_papr_db(qpsk_grid(rng, (s, n)), oversampling=1), z)
    theory = ccdf_theory(z, n)
    for p_hat, p in zip(measured, theory):
        assert abs(p_hat - p) <= five_sigma(p, s)


def test_ccdf_oversampled_above_nyquist_and_near_alpha_2_8():
    # van Nee & de Wild 1998 (from memory): the continuous envelope follows
    # 1 - (1 - e^-z)^(2.8 N) approximately; loose tolerance of 25 % relative
    # at 8-10 dB (an empirical fit, not an exact law).  The oversampled CCDF
    # must lie above the Nyquist one (peaks between samples are seen).
    rng = np.random.default_rng(12)
    s, n = 8000, 256
    grid = qpsk_grid(rng, (s, n))
    z = np.array([8.0, 9.0, 10.0])
    nyq = papr_ccdf(symbol_papr_db(grid, oversampling=1), z)
    over = papr_ccdf(symbol_papr_db(grid, oversampling=4), z)
    assert np.all(over > nyq)
    approx = ccdf_theory(z, n, alpha=2.8)
    np.testing.assert_allclose(over, approx, rtol=0.25)


def test_oversampling_four_is_enough():
    # Tellambura 2001: L = 4 gives the continuous-time peak closely; here the
    # 90 % and 99 % PAPR quantiles move by less than 0.1 dB from L = 4 to 8.
    rng = np.random.default_rng(13)
    grid = qpsk_grid(rng, (4000, 64))
    q4 = np.quantile(symbol_papr_db(grid, oversampling=4), [0.9, 0.99])
    q8 = np.quantile(symbol_papr_db(grid, oversampling=8), [0.9, 0.99])
    assert np.all(np.abs(q8 - q4) < 0.1)
    assert np.all(q8 >= q4 - 1e-9)


def test_ccdf_theory_limits():
    # Closed form: U = 1 and alpha = 1 give 1 - (1 - e^-z)^N directly.
    z = np.array([4.0, 8.0])
    lin = 10 ** (z / 10)
    np.testing.assert_allclose(ccdf_theory(z, 16), 1 - (1 - np.exp(-lin)) ** 16, rtol=1e-12)
    np.testing.assert_allclose(ccdf_theory(z, 16, n_candidates=3),
                               (1 - (1 - np.exp(-lin)) ** 16) ** 3, rtol=1e-12)


# -- clipping ----------------------------------------------------------------------


@pytest.mark.parametrize("ratio_db", [-3.0, 0.0, 3.0])
def test_clipping_matches_ochiai_imai(ratio_db):
    # Ochiai & Imai 2002: for a complex Gaussian input clipped at gamma,
    # alpha = 1 - e^-g^2 + sqrt(pi) g / 2 erfc(g), P_out = (1 - e^-g^2) P_in,
    # P_noise = P_in (1 - e^-g^2 - alpha^2); each within 1 %.  The input is a
    # Nyquist-rate OFDM signal of 1024 QPSK tones (near Gaussian).
    rng = np.random.default_rng(5)
    x = oversample(qpsk_grid(rng, (500, 1024)), oversampling=1)
    p_in = 1.0
    y = clip(x, ratio_db, reference_power=p_in)
    theory = clipping_theory(ratio_db, input_power=p_in)
    gain = np.vdot(x, y).real / np.vdot(x, x).real
    assert gain == pytest.approx(theory.gain, rel=0.01)
    assert np.mean(np.abs(y) ** 2) == pytest.approx(theory.output_power, rel=0.01)
    assert np.mean(np.abs(y - gain * x) ** 2) == pytest.approx(theory.noise_power, rel=0.01)
    # and the closed form itself, against scipy.special.erfc written out here
    g = 10 ** (ratio_db / 20)
    from scipy.special import erfc
    assert theory.gain == pytest.approx(1 - np.exp(-g * g) + np.sqrt(np.pi) * g / 2 * erfc(g),
                                        rel=1e-12)


def test_clip_keeps_phase_and_dtype():
    rng = np.random.default_rng(2)
    x = (rng.standard_normal(1000) + 1j * rng.standard_normal(1000)).astype(np.complex64)
    y = clip(x, 0.0)
    assert y.dtype == np.complex64
    limit = np.sqrt(np.mean(np.abs(x.astype(complex)) ** 2))
    assert np.max(np.abs(y)) <= limit * (1 + 1e-6)
    big = np.abs(x) > limit
    np.testing.assert_allclose(np.angle(y[big]), np.angle(x[big]), atol=1e-5)
    np.testing.assert_array_equal(y[~big], x[~big])
    # per-symbol reference
    rows = np.vstack([x[:500], 3 * x[500:]])
    ys = clip(rows, 0.0, reference_power="symbol")
    np.testing.assert_allclose(ys[1], 3 * clip(x[500:], 0.0), rtol=1e-5)


# -- clip and filter ------------------------------------------------------------------


def test_clip_and_filter_armstrong_properties():
    # Armstrong 2002: after every filter stage no out-of-band energy (here to
    # rounding: numpy.fft of the final samples), PAPR falling over the stages
    # (on average), in-band distortion reported.
    rng = np.random.default_rng(21)
    plan = CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    data = qpsk_grid(rng, (300, plan.n_data)).reshape(-1)
    grid = plan.place(data)
    res = clip_and_filter(grid, 2.0, iterations=4, plan=plan)
    spec = np.fft.fft(res.samples, norm="ortho")
    k = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers))
    used = np.zeros(4 * 64, bool)
    used[k % 256] = True
    assert np.max(np.abs(spec[:, ~used])) < 1e-12 * np.max(np.abs(spec))
    means = res.papr_db.mean(axis=1)
    assert np.all(np.diff(means) <= 0.02)          # non-increasing, to MC noise
    assert means[-1] < means[0] - 2.0
    assert res.evm_percent.shape == (4,) and np.all(res.evm_percent > 0)
    assert np.all(res.evm_percent < 30)
    np.testing.assert_allclose(res.grid[:, plan.null_bins], 0)
    # the grid and the samples agree (numpy.fft reference)
    np.testing.assert_allclose(spec[:, k % 256], res.grid[:, k % 64], atol=1e-12)


def test_clip_and_filter_high_ratio_changes_nothing():
    rng = np.random.default_rng(3)
    grid = qpsk_grid(rng, (10, 32))
    res = clip_and_filter(grid, 30.0, iterations=2)
    np.testing.assert_allclose(res.grid, grid, atol=1e-12)
    np.testing.assert_allclose(res.evm_percent, 0, atol=1e-10)


# -- selective mapping --------------------------------------------------------------------


def full_plan(n):
    k = np.arange(-(n // 2), n - n // 2)
    return CarrierPlan(n, data=k)


def reference_select(grid, phases, factor):
    """Materialise every candidate with numpy.fft; lowest peak, lowest index."""
    n = grid.shape[-1]
    m = factor * n
    k = np.round(np.fft.fftfreq(n) * n).astype(int)
    padded = np.zeros(grid.shape[:1] + phases.shape[:1] + (m,), complex)
    padded[..., k % m] = grid[:, None, :] * phases[None]
    cand = np.fft.ifft(padded, norm="ortho")
    peaks = np.max(np.abs(cand) ** 2, axis=-1)
    idx = np.argmin(peaks, axis=-1)       # argmin returns the first minimum
    return idx, cand[np.arange(len(idx)), idx]


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_select_matches_materialised_reference(dtype):
    plan = CarrierPlan.centered(64, 52, pilot_spacing=13)
    slm = SelectiveMapping(plan, n_candidates=6, side_subcarriers=[-25, -24, -23, 24],
                           rng=4)
    rng = np.random.default_rng(8)
    payload = qpsk_grid(rng, (2, 9, slm.n_payload)).astype(dtype)
    out = slm.select(payload)
    assert out.samples.dtype == dtype and out.grid.dtype == dtype
    assert out.index.shape == (2, 9) and out.samples.shape == (2, 9, 256)
    base = np.zeros((18, 64), complex)
    base[:, slm._payload_bins] = payload.reshape(18, -1)
    base[:, plan.pilot_bins] = np.tile(plan.pilots_for(9), (2, 1))
    base[:, slm._side_bins] = 1
    idx, samples = reference_select(base, slm.phases, 4)
    np.testing.assert_array_equal(out.index.reshape(-1), idx)
    tol = 1e-12 if dtype == np.complex128 else 2e-6
    np.testing.assert_allclose(out.samples.reshape(18, -1), samples, atol=tol)
    np.testing.assert_allclose(out.papr_db.reshape(-1), symbol_papr_db(out.grid).reshape(-1),
                               atol=1e-9 if dtype == np.complex128 else 1e-4)
    # both backends choose alike (the other backend run inside this test)
    other = "numpy" if tonebank.backend_info()["backend"] == "c" else "c"
    if other == "numpy" or tonebank.backend_info()["c_available"]:
        with tonebank.use_backend(other):
            again = slm.select(payload)
        np.testing.assert_array_equal(again.index, out.index)
        np.testing.assert_allclose(again.samples, out.samples, atol=tol)


@pytest.mark.parametrize("n, factor", [(5, 4), (7, 2), (1, 1), (12, 3)])
def test_select_odd_sizes_and_fallback(n, factor):
    # Odd n (the negative half is one bin shorter), m = 14 (no C plan: the C
    # backend falls back to the numpy twin), n = 1; numpy.fft reference.
    plan = full_plan(n)
    slm = SelectiveMapping(plan, n_candidates=5, oversampling=factor, phases="psk8", rng=3)
    rng = np.random.default_rng(n)
    payload = rng.standard_normal((7, n)) + 1j * rng.standard_normal((7, n))
    out = slm.select(payload)
    base = np.zeros((7, n), complex)
    base[:, slm._payload_bins] = payload
    idx, samples = reference_select(base, slm.phases, factor)
    if n > 1:      # n = 1: every candidate has the same peak, index 0 by the tie rule
        np.testing.assert_array_equal(out.index, idx)
    else:
        np.testing.assert_array_equal(out.index, 0)
    np.testing.assert_allclose(out.samples, samples[np.arange(7)] if n > 1 else
                               oversample(base, oversampling=factor), atol=1e-12)


def test_select_ties_go_to_lowest_index():
    # Candidates 1 and 2 equal candidate 0 (given as a structured family):
    # every peak ties, index 0 must win on both backends.
    plan = full_plan(16)
    phases = np.ones((3, 16))
    phases[2] = -1.0          # negation: exactly the same peak
    slm = SelectiveMapping(plan, n_candidates=3, phases=phases)
    rng = np.random.default_rng(0)
    out = slm.select(qpsk_grid(rng, (5, 16)))
    np.testing.assert_array_equal(out.index, 0)


def test_slm_ccdf_is_power_u_bauml():
    # Bäuml, Fischer & Huber 1996: U independent candidates give CCDF^U.
    # Compared with the measured single-candidate CCDF raised to U (so the
    # check does not inherit the approximation of the closed form).
    rng = np.random.default_rng(31)
    n, s, u = 64, 12000, 4
    plan = full_plan(n)
    slm = SelectiveMapping(plan, n_candidates=u, oversampling=1, rng=5)
    z = np.array([6.0, 6.5, 7.0])
    single = papr_ccdf(symbol_papr_db(qpsk_grid(rng, (s, n)), oversampling=1), z)
    chosen = slm.select(qpsk_grid(rng, (s, n)))
    measured = papr_ccdf(chosen.papr_db, z)
    expected = single ** u
    # error of the estimate plus the propagated error of single^U
    for p_hat, p, p1 in zip(measured, expected, single):
        bound = five_sigma(p, s) + u * p1 ** (u - 1) * five_sigma(p1, s)
        assert abs(p_hat - p) <= bound


def test_side_information_recovered_at_high_snr():
    plan = CarrierPlan.centered(64, 52, pilot_spacing=13)
    slm = SelectiveMapping(plan, n_candidates=16, side_subcarriers=[-25, -24, -23, -22,
                                                                    22, 23, 24, 25])
    assert slm.side_bits == 4 and slm.n_side == 8
    rng = np.random.default_rng(40)
    payload = qpsk_grid(rng, (400, slm.n_payload))
    sent = slm.select(payload)
    noise = 10 ** (-25 / 20) * (rng.standard_normal(sent.grid.shape)
                                + 1j * rng.standard_normal(sent.grid.shape)) / np.sqrt(2)
    index, data = slm.recover(sent.grid + noise)
    assert slm.index_errors(sent.index, index).errors == 0
    assert np.max(np.abs(data - payload)) < 0.5


def test_blind_recovery_error_rate_falls_with_snr():
    # Blind maximum-likelihood recovery: error rate measured against Es/N0;
    # it must fall as the SNR rises and reach zero at high SNR.
    plan = full_plan(32)
    qpsk = Constellation.qpsk()
    slm = SelectiveMapping(plan, n_candidates=8, phases="psk8", rng=2)
    rng = np.random.default_rng(41)
    payload = qpsk.points[rng.integers(0, 4, (600, 32))]
    sent = slm.select(payload)
    rates = []
    for esn0_db in (-3.0, 3.0, 20.0):
        noise = 10 ** (-esn0_db / 20) * (rng.standard_normal(sent.grid.shape) + 1j
                                         * rng.standard_normal(sent.grid.shape)) / np.sqrt(2)
        index, _ = slm.recover(sent.grid + noise, method="blind", constellation=qpsk)
        rates.append(slm.index_errors(sent.index, index).rate)
    assert rates[0] > rates[1] > rates[2] == 0.0
    # qpsk phases are a symmetry of QPSK: blind recovery cannot tell them apart
    same = SelectiveMapping(plan, n_candidates=8, phases="qpsk", rng=2)
    sent_q = same.select(payload)
    idx_q, _ = same.recover(sent_q.grid, method="blind", constellation=qpsk)
    assert np.all(idx_q == 0)


# -- tone reservation and active constellation extension ---------------------------------


def test_tone_reservation_leaves_data_alone():
    # Tellado 2000 (from memory): the cancelling signal lives on the reserved
    # tones only, so the data tones are untouched (checked with numpy.fft of
    # the final samples) and nothing appears outside data + reserved tones.
    rng = np.random.default_rng(50)
    n, m = 64, 256
    grid = qpsk_grid(rng, (60, n))
    grid[:, [0, 31, 32, 33]] = 0                       # DC and the band edge empty
    reserved = np.array([-29, -17, -11, -4, 3, 9, 20, 27])
    grid[:, reserved % n] = 0
    res = tone_reservation(grid, reserved, 4.0, iterations=12)
    spec = np.fft.fft(res.samples, norm="ortho")
    k = np.round(np.fft.fftfreq(n) * n).astype(int)
    data = (grid != 0).any(axis=0)
    np.testing.assert_allclose(spec[:, k[data] % m], grid[:, data], atol=1e-12)
    allowed = np.zeros(m, bool)
    allowed[k[data] % m] = True
    allowed[reserved % m] = True
    assert np.max(np.abs(spec[:, ~allowed])) < 1e-12
    np.testing.assert_allclose(res.grid[:, reserved % n], spec[:, reserved % m], atol=1e-12)
    means = res.papr_db.mean(axis=1)
    assert means[-1] < means[0] - 1.0
    assert res.power_increase_db > 0
    # one iteration brings each symbol's largest sample to the target level
    one = tone_reservation(grid, reserved, 4.0, iterations=1)
    x0 = oversample(grid)
    j = np.argmax(np.abs(x0), axis=-1)
    level = 10 ** (4.0 / 20) * np.sqrt(np.mean(np.abs(x0) ** 2, axis=-1))
    got = np.abs(one.samples[np.arange(60), j])
    np.testing.assert_allclose(got, np.minimum(np.abs(x0[np.arange(60), j]), level),
                               rtol=1e-12)


@pytest.mark.parametrize("order", [4, 16])
def test_ace_moves_outer_points_outwards_only(order):
    # Krongold & Jones 2003 (from memory): inner points stay, outer points move
    # only away from the decision boundaries, so hard decisions are unchanged
    # and the distance to a wrong decision never shrinks; PAPR falls.
    const = Constellation.qpsk() if order == 4 else Constellation.qam(16)
    rng = np.random.default_rng(51)
    plan = CarrierPlan.centered(64, 52, pilot_spacing=13)
    data = const.points[rng.integers(0, order, (80 * plan.n_data,))]
    grid = plan.place(data)
    res = active_constellation_extension(grid, const, 3.0, plan=plan)
    before, after = grid[:, plan.data_bins], res.grid[:, plan.data_bins]
    np.testing.assert_array_equal(const.decide(after), const.decide(before))
    top = np.max(const.points.real)
    for part in (np.real, np.imag):
        b, a = part(before), part(after)
        inner = np.abs(b) < top - 1e-9
        np.testing.assert_allclose(a[inner], b[inner], atol=1e-12)
        assert np.all(np.abs(a[~inner]) >= np.abs(b[~inner]) - 1e-12)
        assert np.all(np.sign(a[~inner]) == np.sign(b[~inner]))
    np.testing.assert_allclose(res.grid[:, plan.pilot_bins], grid[:, plan.pilot_bins])
    np.testing.assert_allclose(res.grid[:, plan.null_bins], 0)
    spec = np.fft.fft(res.samples, norm="ortho")
    k = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers))
    inband = np.zeros(256, bool)
    inband[k % 256] = True
    assert np.max(np.abs(spec[:, ~inband])) < 1e-12
    # fewer points may move in 16-QAM (inner ones stay), so it gains less
    means = res.papr_db.mean(axis=1)
    assert means[-1] < means[0] - (0.5 if order == 4 else 0.25)
    assert res.power_increase_db > 0


# -- bad input -------------------------------------------------------------------------


PLAN = CarrierPlan.centered(16, 12)


@pytest.mark.parametrize("call, error, match", [
    (lambda: papr_db("abc"), TypeError, "samples"),
    (lambda: papr_db(np.zeros(4)), ValueError, "zero power"),
    (lambda: papr_db([1, np.nan]), ValueError, "NaN"),
    (lambda: papr_db([[1, 2]], axis=2), ValueError, "axis=2"),
    (lambda: symbol_papr_db(np.ones(8), oversampling=0), ValueError, "oversampling"),
    (lambda: symbol_papr_db(np.ones(8), oversampling=2.5), TypeError, "oversampling"),
    (lambda: papr_ccdf([], [1.0]), ValueError, "papr_values_db"),
    (lambda: ccdf_theory(5.0, 0), ValueError, "n_subcarriers"),
    (lambda: ccdf_theory(5.0, 8, alpha=-1), ValueError, "alpha"),
    (lambda: ccdf_theory(5.0, 8, n_candidates=0), ValueError, "n_candidates"),
    (lambda: clip([1, 2], "3"), TypeError, "clip_ratio_db"),
    (lambda: clip([1, 2], 3.0, reference_power="peak"), ValueError, "reference_power"),
    (lambda: clip([1, 2], 3.0, reference_power=-1.0), ValueError, "reference_power"),
    (lambda: clip(np.zeros(3), 0.0), ValueError, "zero mean power"),
    (lambda: clipping_theory(float("inf")), ValueError, "clip_ratio_db"),
    (lambda: clipping_theory(1.0, input_power=0), ValueError, "input_power"),
    (lambda: clip_and_filter(np.ones(16), 3.0), ValueError, "n_symbols"),
    (lambda: clip_and_filter(np.ones((2, 16)), 3.0, iterations=0), ValueError, "iterations"),
    (lambda: clip_and_filter(np.ones((2, 8)), 3.0, plan=PLAN), ValueError, "n_fft=16"),
    (lambda: clip_and_filter(np.ones((2, 16)), 3.0, plan="x"), TypeError, "plan"),
    (lambda: SelectiveMapping("plan"), TypeError, "plan"),
    (lambda: SelectiveMapping(PLAN, n_candidates=0), ValueError, "n_candidates"),
    (lambda: SelectiveMapping(PLAN, side_subcarriers=[0, 1, 2, 3]), ValueError,
     "not a data subcarrier"),
    (lambda: SelectiveMapping(PLAN, side_subcarriers=[1, 2]), ValueError, "at least 4"),
    (lambda: SelectiveMapping(PLAN, side_subcarriers=[1, 1, 2, 3]), ValueError, "twice"),
    (lambda: SelectiveMapping(PLAN, phases="random"), ValueError, "phases='random'"),
    (lambda: SelectiveMapping(PLAN, n_candidates=2, phases=np.ones((2, 5))), ValueError,
     "shape"),
    (lambda: SelectiveMapping(PLAN, n_candidates=2, phases=2 * np.ones((2, 12))),
     ValueError, "magnitude 1"),
    (lambda: SelectiveMapping(PLAN, rng="seed"), TypeError, "rng"),
    (lambda: SelectiveMapping(PLAN).select(np.ones((2, 5))), ValueError, "n_payload=12"),
    (lambda: SelectiveMapping(PLAN).select(np.ones(12)), ValueError, "dimension"),
    (lambda: SelectiveMapping(PLAN).select(np.zeros((2, 12))), ValueError, "zero power"),
    (lambda: SelectiveMapping(PLAN, side_subcarriers=[1.5]), TypeError, "side_subcarriers"),
    (lambda: SelectiveMapping(PLAN).recover(np.ones((2, 16))), ValueError, "side"),
    (lambda: SelectiveMapping(PLAN).recover(np.ones((2, 16)), method="blind"), ValueError,
     "constellation"),
    (lambda: SelectiveMapping(PLAN).recover(np.ones((2, 16)), method="guess"), ValueError,
     "method='guess'"),
    (lambda: SelectiveMapping(PLAN).recover(np.ones((2, 8))), ValueError, "n_fft=16"),
    (lambda: SelectiveMapping(PLAN, n_candidates=4).index_errors([0, 4], [0, 1]),
     ValueError, "sent"),
    (lambda: tone_reservation(np.ones((2, 16)), [1, 2], 3.0), ValueError, "not zero"),
    (lambda: tone_reservation(np.ones((2, 16)), [], 3.0), ValueError, "reserved_subcarriers"),
    (lambda: tone_reservation(np.ones((2, 16)), [9], 3.0), ValueError, "reserved_subcarriers"),
    (lambda: tone_reservation(np.ones((2, 16)), [1.0], 3.0), TypeError,
     "reserved_subcarriers"),
    (lambda: tone_reservation(np.ones((2, 16)), [1], 3.0, iterations=0), ValueError,
     "iterations"),
    (lambda: active_constellation_extension(np.ones((2, 16)), "qpsk", 3.0), TypeError,
     "constellation"),
    (lambda: active_constellation_extension(np.ones((2, 16)), Constellation.psk(8), 3.0),
     ValueError, "lattice"),
    (lambda: active_constellation_extension(np.ones((2, 8)), Constellation.qpsk(), 3.0,
                                            plan=PLAN), ValueError, "n_fft=16"),
    (lambda: active_constellation_extension(np.ones(16), Constellation.qpsk(), 3.0),
     ValueError, "n_symbols"),
])
def test_bad_input(call, error, match):
    with pytest.raises(error, match=match):
        call()
