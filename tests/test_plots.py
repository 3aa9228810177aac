"""tonebank.plots: figures returned without pyplot, drawing exactly the inputs.

Outside references named beside the checks:

- the confidence bands: scipy.stats.binomtest(...).proportion_ci with
  method "wilson" (Wilson score interval, E. B. Wilson, JASA 1927), the
  same reference tests/test_metrics.py checks ErrorCount.interval against;
  for zero errors the Wilson upper limit z^2 / (n + z^2), derived from the
  same formula with k = 0;
- the BPSK theory curve: P_b = 0.5 erfc(sqrt(Eb/N0)) with
  scipy.special.erfc (Proakis & Salehi, Digital Communications, 5th ed.,
  sec. 4.2, binary antipodal signalling);
- the PAPR CCDF: the fraction of values above each threshold counted with
  numpy, and the theory 1 - (1 - exp(-z))^N (R. van Nee and R. Prasad,
  OFDM for Wireless Multimedia Communications, 2000, PAPR chapter)
  evaluated with numpy;
- PSD levels, channel magnitudes: numpy.log10 / numpy.fft of the inputs;
- 16-QAM reference points: levels +-1, +-3 scaled by 1/sqrt(10) (IEEE Std
  802.11a-1999 clause 17.3.5.7, the 16-QAM normalisation factor; from
  memory).

Figures are small and saved at a low resolution to keep the module fast.
"""

import sys

import numpy as np
import pytest
import scipy.special
import scipy.stats

matplotlib = pytest.importorskip("matplotlib")
import matplotlib.image  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from tonebank import Constellation, loading, plots, spectrum, theory  # noqa: E402
from tonebank.metrics import ErrorCount  # noqa: E402

SIZE = (4.0, 3.0)
DPI = 40


@pytest.fixture(autouse=True)
def no_pyplot_figures():
    """Nothing here may register a pyplot figure (or show one)."""
    assert plt.get_fignums() == []
    yield
    assert plt.get_fignums() == []


def saved_png(fig, tmp_path, size=SIZE):
    """Save, read back, check the size and that the picture is not blank."""
    path = tmp_path / "figure.png"
    fig.savefig(path, dpi=DPI)
    image = matplotlib.image.imread(path)
    assert image.shape[:2] == (round(size[1] * DPI), round(size[0] * DPI))
    rgb = image[..., :3]
    assert np.mean(rgb < 0.9) > 0.01          # something dark is drawn
    assert rgb.std() > 0.05
    return image


def by_gid(artists, gid):
    found = [a for a in artists if a.get_gid() == gid]
    assert len(found) == 1, f"expected one artist with gid {gid!r}, got {len(found)}"
    return found[0]


def legend_texts(ax):
    return [t.get_text() for t in ax.get_legend().get_texts()]


# -- error rates -----------------------------------------------------------------------


X = np.array([0.0, 2.0, 4.0, 6.0, 8.0])
COUNTS = [ErrorCount(7_900, 100_000), ErrorCount(3_800, 100_000), ErrorCount(1_250, 100_000),
          ErrorCount(240, 100_000), ErrorCount(0, 100_000)]


def test_error_rates_band_bounds_and_theory(tmp_path):
    fig = plots.error_rate_figure(X, COUNTS, theory=theory.ber_bpsk, theory_label="BPSK",
                                  xlabel="Eb/N0 (dB)", title="invented link", figsize=SIZE)
    assert isinstance(fig, Figure)
    saved_png(fig, tmp_path)
    (ax,) = fig.axes
    assert ax.get_yscale() == "log"
    assert ax.get_xlabel() == "Eb/N0 (dB)" and "(errors per bit)" in ax.get_ylabel()
    assert ax.get_title() == "invented link"
    assert legend_texts(ax) == ["simulated", "95 % interval", "no errors: upper limit",
                                "BPSK"]

    rate = by_gid(ax.lines, "rate:simulated")
    np.testing.assert_array_equal(rate.get_xdata(), X[:4])
    np.testing.assert_array_equal(rate.get_ydata(), [c.errors / c.total for c in COUNTS[:4]])

    # The band: scipy.stats.binomtest(...).proportion_ci("wilson") (Wilson 1927).
    vertices = by_gid(ax.collections, "band:simulated").get_paths()[0].vertices
    for xi, c in zip(X[:4], COUNTS[:4]):
        ref = scipy.stats.binomtest(c.errors, c.total).proportion_ci(0.95, method="wilson")
        for y in (ref.low, ref.high):
            assert np.any(np.isclose(vertices[:, 0], xi)
                          & np.isclose(vertices[:, 1], y, rtol=1e-9, atol=0)), (xi, y)

    # Zero errors: a marker at the Wilson upper limit z^2 / (n + z^2) (Wilson 1927, k = 0).
    bound = by_gid(ax.lines, "bound:simulated")
    z = scipy.special.ndtri(0.975)
    assert bound.get_marker() == "v"
    np.testing.assert_array_equal(bound.get_xdata(), [8.0])
    np.testing.assert_allclose(bound.get_ydata(), [z**2 / (100_000 + z**2)], rtol=1e-12)

    # BPSK theory: 0.5 erfc(sqrt(Eb/N0)) (Proakis & Salehi sec. 4.2), scipy.special.erfc.
    line = by_gid(ax.lines, "theory:BPSK")
    tx = np.asarray(line.get_xdata())
    assert tx[0] == 0.0 and tx[-1] == 8.0 and tx.size == 200
    np.testing.assert_allclose(line.get_ydata(),
                               0.5 * scipy.special.erfc(np.sqrt(10 ** (tx / 10))), rtol=1e-12)


def test_error_rates_several_curves_arrays_and_clopper_pearson(tmp_path):
    errors_totals = np.array([[500, 60, 0], [20_000, 20_000, 20_000]])
    theory_values = np.array([0.03, 0.004, 2e-4])
    fig = plots.error_rate_figure(
        [1.0, 3.0, 5.0], {"first": COUNTS[1:4], "second": errors_totals},
        confidence=0.9, method="clopper-pearson",
        theory={"second": theory_values}, figsize=SIZE)
    saved_png(fig, tmp_path)
    ax = fig.axes[0]
    assert legend_texts(ax) == ["first", "90 % interval", "second",
                                "no errors: upper limit", "second, theory"]
    np.testing.assert_array_equal(by_gid(ax.lines, "rate:second").get_ydata(),
                                  [500 / 20_000, 60 / 20_000])
    # Clopper-Pearson: scipy.stats.binomtest(...).proportion_ci("exact").
    vertices = by_gid(ax.collections, "band:second").get_paths()[0].vertices
    ref = scipy.stats.binomtest(60, 20_000).proportion_ci(0.9, method="exact")
    for y in (ref.low, ref.high):
        assert np.any(np.isclose(vertices[:, 0], 3.0) & np.isclose(vertices[:, 1], y,
                                                                   rtol=1e-7, atol=0))
    # Exact zero-error upper limit 1 - (alpha/2)^(1/n) (Clopper & Pearson 1934, k = 0).
    np.testing.assert_allclose(by_gid(ax.lines, "bound:second").get_ydata(),
                               [1 - 0.05 ** (1 / 20_000)], rtol=1e-9)
    theory_line = by_gid(ax.lines, "theory:second")
    np.testing.assert_array_equal(theory_line.get_ydata(), theory_values)
    # the theory of a labelled curve takes that curve's colour
    assert theory_line.get_color() == by_gid(ax.lines, "rate:second").get_color()


@pytest.mark.parametrize("call, error, words", [
    (lambda: plots.error_rate_figure([0, 1], COUNTS), ValueError, "counts holds 5"),
    (lambda: plots.error_rate_figure([0, 1], [ErrorCount(1, 10), ErrorCount(0, 0)]),
     ValueError, "total=0"),
    (lambda: plots.error_rate_figure([0, 1], [[3, 2], [2, 2]]), ValueError, "column 0"),
    (lambda: plots.error_rate_figure([0, 1], [[0.1, 0.2], [2, 2]]), TypeError, "dtype"),
    (lambda: plots.error_rate_figure([0, 1], np.ones((3, 2), int)), ValueError, "(2, 2)"),
    (lambda: plots.error_rate_figure([0, np.nan], COUNTS[:2]), ValueError, "x must be"),
    (lambda: plots.error_rate_figure([0, 1], COUNTS[:2], confidence=1.5), ValueError,
     "confidence"),
    (lambda: plots.error_rate_figure([0, 1], COUNTS[:2], theory=[1e-2]), ValueError,
     "theory has 1"),
    (lambda: plots.error_rate_figure([0, 1], COUNTS[:2], theory=lambda x: 0.1), ValueError,
     "theory (a callable)"),
    (lambda: plots.error_rate_figure([0, 1], {1: COUNTS[:2]}), TypeError, "keys"),
    (lambda: plots.error_rate_figure([0, 1], {}), ValueError, "empty mapping"),
    (lambda: plots.error_rate_figure([0, 1], COUNTS[:2], ax="axes"), TypeError, "ax must"),
    (lambda: plots.error_rate_figure([0, 1], np.array(COUNTS[:3])), ValueError,
     "counts holds 3"),
    (lambda: plots.error_rate_figure([0, 1], COUNTS[:2], figsize=(0, 3)), ValueError,
     "figsize"),
    (lambda: plots.error_rate_figure([0, 1], COUNTS[:2], title=3), TypeError, "title"),
])
def test_error_rates_bad_input(call, error, words):
    with pytest.raises(error) as info:
        call()
    assert words in str(info.value)


# -- PAPR CCDF -------------------------------------------------------------------------


def test_papr_ccdf_measured_and_theory(tmp_path):
    rng = np.random.default_rng(11)
    power = rng.exponential(size=(3000, 64))           # Nyquist samples of 64 tones
    papr = 10 * np.log10(power.max(axis=1) / 1.0)      # mean power 1 by construction
    z = np.linspace(6.0, 12.0, 25)
    n = 64
    fig = plots.papr_ccdf_figure({"64 tones": papr}, thresholds_db=z,
                                 theory=lambda t: 1 - (1 - np.exp(-10 ** (t / 10))) ** n,
                                 theory_label="N = 64", figsize=SIZE)
    saved_png(fig, tmp_path)
    ax = fig.axes[0]
    assert ax.get_yscale() == "log" and "(dB)" in ax.get_xlabel()
    assert legend_texts(ax) == ["64 tones (3000 symbols)", "N = 64"]
    # measured: the fraction above each threshold, counted with numpy
    expected = np.mean(papr[:, None] > z[None, :], axis=0)
    got = np.asarray(by_gid(ax.lines, "ccdf:64 tones").get_ydata())
    np.testing.assert_array_equal(got[expected > 0], expected[expected > 0])
    assert np.all(np.isnan(got[expected == 0]))        # no log(0)
    # The default theory is tonebank's; here the callable is the closed form
    # of van Nee & Prasad (2000), so compare the library's with it as well.
    line = by_gid(ax.lines, "theory:N = 64")
    from tonebank.papr import ccdf_theory
    np.testing.assert_allclose(ccdf_theory(np.asarray(line.get_xdata()), n),
                               line.get_ydata(), rtol=1e-9)


def test_papr_ccdf_default_thresholds_and_errors():
    fig = plots.papr_ccdf_figure([5.0, 7.5, 9.0], figsize=SIZE)
    z = np.asarray(fig.axes[0].lines[0].get_xdata())
    assert z[0] == 5.0 and z[-1] == 9.0 and z.size == 100
    with pytest.raises(ValueError, match="papr_db needs at least 1"):
        plots.papr_ccdf_figure([])
    with pytest.raises(TypeError, match="papr_db"):
        plots.papr_ccdf_figure([1 + 1j])
    with pytest.raises(ValueError, match="theory has 2 values but 3"):
        plots.papr_ccdf_figure([5.0], thresholds_db=[1.0, 2.0, 3.0], theory=[0.5, 0.1])


# -- PSD and mask ----------------------------------------------------------------------


MASK = [(0.0, 0.0), (2.0e6, 0.0), (2.5e6, -20.0), (4.0e6, -30.0)]


def _band_signal():
    rng = np.random.default_rng(4)
    white = rng.standard_normal(1 << 13) + 1j * rng.standard_normal(1 << 13)
    spectrum_ = np.fft.fft(white)
    spectrum_[np.abs(np.fft.fftfreq(white.size)) > 0.2] *= 0.01   # invented 4 MHz channel
    return np.fft.ifft(spectrum_)


def test_psd_with_mask_relative_to_peak(tmp_path):
    x = _band_signal()
    f, p = spectrum.psd(x, 10e6, segment_length=128)
    check = spectrum.check_mask(x, 10e6, MASK, segment_length=128)
    fig = plots.psd_figure(f, p, mask=MASK, mask_check=check, figsize=SIZE)
    saved_png(fig, tmp_path)
    ax = fig.axes[0]
    assert ax.get_xlabel() == "frequency (MHz)" and "(dB)" in ax.get_ylabel()
    line = by_gid(ax.lines, "psd:PSD")
    np.testing.assert_allclose(line.get_xdata(), f / 1e6, rtol=1e-15)
    level = 10 * np.log10(p)
    np.testing.assert_allclose(line.get_ydata(), level - level.max(), rtol=1e-12)
    mask = by_gid(ax.lines, "mask")
    mx, my = np.asarray(mask.get_xdata()), np.asarray(mask.get_ydata())
    offsets, limits = np.array(MASK).T
    np.testing.assert_array_equal(mx[5:], offsets / 1e6)           # right side
    np.testing.assert_array_equal(my[5:], limits)
    np.testing.assert_array_equal(mx[:4], -offsets[::-1] / 1e6)    # mirrored left side
    assert np.isnan(my[4])
    assert f"mask (margin {check.margin_db:+.1f} dB)" in legend_texts(ax)
    violations = [p for p in ax.patches if p.get_gid() == "violation"]
    assert len(violations) == len(check.violations)
    # the caution sits on the figure (design rule: spectra are estimates)
    note = by_gid(ax.texts, "caution")
    assert "not a compliance measurement" in note.get_text()


def test_psd_absolute_reference_and_several_series(tmp_path):
    f = np.linspace(-4e3, 4e3, 65)[:-1]
    a = np.full(64, 1e-3)
    b = np.where(np.abs(f) < 1e3, 1e-3, 0.0)                   # zeros: gaps, not -inf
    fig = plots.psd_figure(f, {"flat": a, "narrow": b}, mask=[(1e3, -20.0), (4e3, -20.0)],
                           reference=-30.0, figsize=SIZE)
    saved_png(fig, tmp_path)
    ax = fig.axes[0]
    assert ax.get_xlabel() == "frequency (kHz)" and ax.get_ylabel() == "PSD (dB/Hz)"
    np.testing.assert_allclose(by_gid(ax.lines, "psd:flat").get_ydata(), -30.0)
    narrow = np.asarray(by_gid(ax.lines, "psd:narrow").get_ydata())
    assert np.all(np.isnan(narrow[b == 0])) and np.allclose(narrow[b > 0], -30.0)
    my = np.asarray(by_gid(ax.lines, "mask").get_ydata())
    np.testing.assert_array_equal(my[~np.isnan(my)], -50.0)    # limit + reference
    assert legend_texts(ax) == ["flat", "narrow", "mask"]


@pytest.mark.parametrize("kwargs, error, words", [
    (dict(frequencies=[2.0, 1.0, 3.0]), ValueError, "ascending"),
    (dict(density=[1.0, 2.0]), ValueError, "density has 2 values"),
    (dict(density=[-30.0, -20.0, -25.0]), ValueError, "linear scale"),
    (dict(density=[0.0, 0.0, 0.0]), ValueError, "zero everywhere"),
    (dict(mask=[(1.0, 0.0)]), ValueError, "mask must hold at least two"),
    (dict(mask=[(2.0, 0.0), (1.0, 0.0)]), ValueError, "must not decrease"),
    (dict(reference="max"), ValueError, "reference='max'"),
    (dict(reference=None), TypeError, "reference must be"),
    (dict(reference=float("nan")), ValueError, "reference=nan"),
    (dict(mask_check=(True, 1.0)), TypeError, "mask_check"),
])
def test_psd_bad_input(kwargs, error, words):
    args = dict(frequencies=[-1.0, 0.0, 1.0], density=[1.0, 2.0, 1.0])
    args.update(kwargs)
    with pytest.raises(error) as info:
        plots.psd_figure(args.pop("frequencies"), args.pop("density"), **args)
    assert words in str(info.value)


# -- constellation ---------------------------------------------------------------------


def test_constellation_points_reference_and_evm(tmp_path):
    qam = Constellation.qam(16)
    rng = np.random.default_rng(6)
    sent = qam.points[rng.integers(0, 16, (20, 30))]
    rx = sent + 0.04 * (rng.standard_normal(sent.shape) + 1j * rng.standard_normal(sent.shape))
    size = (4.0, 3.0)
    fig = plots.constellation_figure(rx, qam, evm_percent=5.66, figsize=size)
    saved_png(fig, tmp_path, size)
    ax = fig.axes[0]
    assert ax.get_aspect() == 1.0
    assert "(linear amplitude)" in ax.get_xlabel() and "(linear amplitude)" in ax.get_ylabel()
    assert legend_texts(ax) == ["received (EVM 5.66 %)", "16-QAM"]
    received = by_gid(ax.lines, "received")
    np.testing.assert_array_equal(received.get_xdata(), rx.real.ravel())
    np.testing.assert_array_equal(received.get_ydata(), rx.imag.ravel())
    # 16-QAM: levels +-1, +-3 over sqrt(10) on each axis (IEEE 802.11a-1999
    # clause 17.3.5.7, from memory).
    reference = by_gid(ax.lines, "reference")
    ref = np.asarray(reference.get_xdata()) + 1j * np.asarray(reference.get_ydata())
    levels = np.array([-3, -1, 1, 3]) / np.sqrt(10)
    expected = (levels[:, None] + 1j * levels[None, :]).ravel()
    np.testing.assert_allclose(np.sort_complex(ref), np.sort_complex(expected), atol=1e-15)
    low, high = ax.get_xlim()
    assert low == -high and high >= np.abs(rx.real).max()


def test_constellation_array_reference_and_errors():
    outer = Figure(figsize=SIZE)
    fig = plots.constellation_figure([1 + 1j, -1 - 1j], [1, -1], ax=outer.add_subplot())
    assert fig is outer and legend_texts(fig.axes[0]) == ["received", "reference"]
    with pytest.raises(ValueError, match="received is empty"):
        plots.constellation_figure([])
    with pytest.raises(ValueError, match="received must be finite"):
        plots.constellation_figure([1, np.nan])
    with pytest.raises(TypeError, match="reference must hold"):
        plots.constellation_figure([1j], ["a"])
    with pytest.raises(ValueError, match="evm_percent=-1"):
        plots.constellation_figure([1j], evm_percent=-1)
    with pytest.raises(TypeError, match="evm_percent must be"):
        plots.constellation_figure([1j], evm_percent="5 %")


# -- channel response ------------------------------------------------------------------


def test_channel_response_branches_and_estimates(tmp_path):
    taps = np.array([[1.0, 0.0, 0.5j, 0.2], [0.3, 1.0, 0.0, -0.4]])
    h = np.fft.fft(taps, 64, axis=-1)
    rng = np.random.default_rng(8)
    est = h + 0.05 * (rng.standard_normal(h.shape) + 1j * rng.standard_normal(h.shape))
    freqs = (np.arange(64) - 32) * 15e3
    fig = plots.channel_response_figure(h, estimate=est, frequencies=freqs,
                                        labels=["antenna A", "antenna B"], figsize=SIZE)
    saved_png(fig, tmp_path)
    ax = fig.axes[0]
    assert ax.get_xlabel() == "frequency (kHz)" and "(dB)" in ax.get_ylabel()
    assert legend_texts(ax) == ["antenna A", "antenna A, estimate", "antenna B",
                                "antenna B, estimate"]
    for r, name in enumerate(["antenna A", "antenna B"]):
        line = by_gid(ax.lines, f"response:{name}")
        np.testing.assert_allclose(line.get_xdata(), freqs / 1e3, rtol=1e-15)
        # 20 log10 |H| of numpy.fft of the taps
        np.testing.assert_allclose(line.get_ydata(), 20 * np.log10(np.abs(h[r])),
                                   rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(by_gid(ax.lines, f"estimate:{name}").get_ydata(),
                                   20 * np.log10(np.abs(est[r])), rtol=1e-12, atol=1e-12)


def test_channel_response_into_given_axes(tmp_path):
    outer = Figure(figsize=SIZE)
    ax = outer.add_subplot()
    fig = plots.channel_response_figure([1.0, 0.5, 0.0, 2.0], subcarriers=[-2, -1, 1, 2],
                                        title="one branch", ax=ax)
    assert fig is outer
    saved_png(fig, tmp_path)
    y = np.asarray(ax.lines[0].get_ydata())
    np.testing.assert_allclose(y[[0, 1, 3]], 20 * np.log10([1.0, 0.5, 2.0]))
    assert np.isnan(y[2])                                   # |H| = 0: a gap
    np.testing.assert_array_equal(ax.lines[0].get_xdata(), [-2, -1, 1, 2])
    assert ax.get_legend() is None and ax.get_title() == "one branch"
    # axes of a subfigure: the saved (root) figure comes back
    sub_ax = outer.subfigures(1, 1).add_subplot()
    assert plots.channel_response_figure([1.0, 2.0], ax=sub_ax) is outer


@pytest.mark.parametrize("kwargs, error, words", [
    (dict(response=np.ones((2, 2, 2))), ValueError, "(n_branches, n_bins)"),
    (dict(response=["a", "b"]), TypeError, "response must hold"),
    (dict(estimate=np.ones(3)), ValueError, "estimate has shape (3,)"),
    (dict(subcarriers=[0, 1], frequencies=[0.0, 1.0]), ValueError, "not both"),
    (dict(frequencies=[0.0]), ValueError, "frequencies has 1 values"),
    (dict(labels=["a", "b"]), ValueError, "labels holds 2"),
    (dict(labels=[3]), TypeError, "labels"),
])
def test_channel_response_bad_input(kwargs, error, words):
    args = dict(response=[1.0, 2.0])
    args.update(kwargs)
    with pytest.raises(error) as info:
        plots.channel_response_figure(args.pop("response"), **args)
    assert words in str(info.value)


# -- bit loading -----------------------------------------------------------------------


def test_bit_loading_bars_and_snr(tmp_path):
    g = np.array([900.0, 600.0, 250.0, 80.0, 20.0, 3.0, 0.2])
    table = loading.levin_campello(g, gap_db=9.8, total_energy=7.0)
    snr = 10 * np.log10(np.maximum(table.energies * g, 1e-3))
    fig = plots.bit_loading_figure(table, snr_db=snr, subcarriers=np.arange(7) + 10,
                                   title="invented line", figsize=SIZE)
    saved_png(fig, tmp_path)
    left, right = fig.axes
    assert "(bits)" in left.get_ylabel() and right.get_ylabel() == "SNR per tone (dB)"
    heights = [p.get_height() for p in left.patches]
    np.testing.assert_array_equal(heights, table.bits)
    np.testing.assert_array_equal([p.get_x() + p.get_width() / 2 for p in left.patches],
                                  np.arange(7) + 10)
    np.testing.assert_array_equal(by_gid(right.lines, "snr").get_ydata(), snr)
    assert legend_texts(left) == [f"bits per tone ({table.bits_per_symbol} per symbol)",
                                  "SNR per tone"]


def test_bit_loading_plain_bits_and_errors(tmp_path):
    fig = plots.bit_loading_figure([2, 4, 0, 6], figsize=SIZE)
    saved_png(fig, tmp_path)
    assert len(fig.axes) == 1
    assert [p.get_height() for p in fig.axes[0].patches] == [2, 4, 0, 6]
    with pytest.raises(TypeError, match="table must be a BitTable"):
        plots.bit_loading_figure([1.5, 2.0])
    with pytest.raises(ValueError, match="table .bits per tone. must be >= 0"):
        plots.bit_loading_figure([1, -2])
    with pytest.raises(ValueError, match="snr_db has 1 values but 2"):
        plots.bit_loading_figure([1, 2], snr_db=[3.0])


# -- module behaviour ------------------------------------------------------------------


def test_not_imported_by_the_package(backend):
    if backend == "c":
        pytest.skip("backend-independent; checked once, on the numpy run")
    import subprocess
    code = ("import sys, tonebank; "
            "print('tonebank.plots' in sys.modules, 'matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.split()
    assert out == ["False", "False"]


def test_missing_matplotlib_names_the_extra(monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib.figure", None)
    with pytest.raises(ImportError, match=r"pip install tonebank\[plot\]"):
        plots.bit_loading_figure([1, 2])
