r"""Figures of the main results: error rates, PAPR, spectra, constellations, channels, loading.

Every function here returns a ``matplotlib.figure.Figure`` and never
shows anything: without ``ax`` it builds a new figure with
``matplotlib.figure.Figure`` directly (no pyplot state, no backend
switch, so it works headless and in threads); with ``ax=`` (an existing
``matplotlib.axes.Axes``) it draws into that axes and returns the
figure the axes belongs to.  Save a figure with ``fig.savefig(path)``;
in a notebook, display it by leaving it as the value of a cell.

matplotlib is an optional dependency (the ``plot`` extra:
``pip install tonebank[plot]``), so this module is **not** imported by
``import tonebank``; import it explicitly::

    from tonebank import plots          # or: import tonebank.plots

The functions:

* :func:`error_rate_figure` -- error rates against SNR with confidence
  bands, upper bounds for points without errors, and theory curves;
* :func:`papr_ccdf_figure` -- the PAPR CCDF with theory curves;
* :func:`psd_figure` -- power spectral densities with a spectral mask;
* :func:`constellation_figure` -- received points over the reference
  constellation;
* :func:`channel_response_figure` -- channel magnitude in dB per
  subcarrier or frequency, several branches and estimates beside the truth;
* :func:`bit_loading_figure` -- bits per tone with the SNR per tone.

Spectra and masks drawn here are engineering estimates from simulation
models, not compliance measurements: follow local radio regulations and
accredited test practice (see :mod:`tonebank.spectrum`).
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping

import numpy as np

from .constellation import Constellation
from .loading import BitTable
from .metrics import ErrorCount
from .spectrum import MaskCheck, _mask_points

__all__ = [
    "bit_loading_figure",
    "channel_response_figure",
    "constellation_figure",
    "error_rate_figure",
    "papr_ccdf_figure",
    "psd_figure",
]

#: The short caution drawn on every spectrum figure.
SPECTRUM_NOTE = "engineering estimate, not a compliance measurement"

_THEORY_POINTS = 200       # samples of a theory curve given as a callable


# -- matplotlib, figures and axes ------------------------------------------------------


def _figure_class():
    """matplotlib's Figure class, imported only when a figure is drawn."""
    try:
        from matplotlib.figure import Figure
    except ImportError as exc:
        raise ImportError("tonebank.plots needs matplotlib, which is not installed; "
                          "install the extra: pip install tonebank[plot]") from exc
    return Figure


def _axes(ax, figsize):
    """(figure, axes): a new pyplot-free figure, or the figure of ``ax``."""
    Figure = _figure_class()
    if ax is None:
        size = _figsize(figsize)
        fig = Figure(figsize=size, layout="constrained")
        return fig, fig.add_subplot()
    from matplotlib.axes import Axes
    if not isinstance(ax, Axes):
        raise TypeError(f"ax must be a matplotlib.axes.Axes or None; got "
                        f"{type(ax).__name__}")
    # The figure that is saved, also for the axes of a subfigure.
    try:
        fig = ax.get_figure(root=True)
    except TypeError:            # matplotlib before 3.10: .figure of a subfigure is the root
        fig = getattr(ax.figure, "figure", ax.figure)
    return fig, ax


def _figsize(figsize) -> tuple[float, float]:
    try:
        size = tuple(float(v) for v in figsize)
    except (TypeError, ValueError):
        raise TypeError(f"figsize must be two numbers (width, height) in inches; got "
                        f"{figsize!r}") from None
    if len(size) != 2 or not all(math.isfinite(v) and v > 0 for v in size):
        raise ValueError(f"figsize={figsize!r} is not allowed; need two positive finite "
                         "numbers (width, height) in inches")
    return size


def _title(ax, title) -> None:
    if title is None:
        return
    if not isinstance(title, str):
        raise TypeError(f"title must be a string or None; got {type(title).__name__}")
    ax.set_title(title)


def _text(value, name: str) -> str:
    if not isinstance(value, str):
        raise TypeError(f"{name} must be a string; got {value!r} ({type(value).__name__})")
    return value


# -- argument checks -------------------------------------------------------------------


def _real_vector(value, name: str, *, size=None, minimum_size=1) -> np.ndarray:
    """A finite 1-D float64 array, or TypeError/ValueError naming ``name``."""
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError):
        raise TypeError(f"{name} must be a 1-D array of real numbers; got "
                        f"{type(value).__name__}") from None
    if arr.dtype.kind not in "iuf":
        raise TypeError(f"{name} must hold real numbers; got dtype {arr.dtype}")
    if arr.ndim != 1:
        raise ValueError(f"{name} must be 1-D; got shape {arr.shape}")
    if size is not None and arr.size != size:
        raise ValueError(f"{name} has {arr.size} values but {size} are needed (one per "
                         "point; nothing is truncated or broadcast)")
    if arr.size < minimum_size:
        raise ValueError(f"{name} needs at least {minimum_size} value(s); got {arr.size}")
    arr = arr.astype(np.float64)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite (no NaN or infinity)")
    return arr


def _series(value, name: str, convert) -> list[tuple[str | None, object]]:
    """``[(label, converted)]``: one unlabelled series, or one per mapping entry."""
    if isinstance(value, Mapping):
        if not value:
            raise ValueError(f"{name} is an empty mapping; give at least one series")
        out = []
        for key, item in value.items():
            if not isinstance(key, str):
                raise TypeError(f"{name} keys are legend labels and must be strings; got "
                                f"{key!r}")
            out.append((key, convert(item, f"{name}[{key!r}]")))
        return out
    return [(None, convert(value, name))]


def _db_or_nan(power: np.ndarray) -> np.ndarray:
    """10 log10 of a power, with zeros as NaN (a gap, not minus infinity)."""
    with np.errstate(divide="ignore"):
        level = 10.0 * np.log10(power)
    return np.where(np.isfinite(level), level, np.nan)


def _theory_values(theory, name: str, x: np.ndarray):
    """``(x_curve, y_curve)`` of a theory given as values at ``x`` or as a callable."""
    if callable(theory):
        grid = np.linspace(x.min(), x.max(), _THEORY_POINTS) if x.size > 1 else x.copy()
        try:
            y = np.asarray(theory(grid), dtype=np.float64)
        except (TypeError, ValueError) as exc:
            raise ValueError(f"{name} (a callable) failed on the x values: {exc}") from exc
        if y.shape != grid.shape:
            raise ValueError(f"{name} (a callable) returned shape {y.shape} for "
                             f"{grid.size} x values; it must return one value per x")
        return grid, y
    y = _real_vector(theory, name, size=x.size)
    return x, y


def _theories(theory, name: str, x: np.ndarray, default_label: str):
    if theory is None:
        return []
    items = _series(theory, name, lambda v, n: _theory_values(v, n, x))
    return [(default_label if key is None else key, curve) for key, curve in items]


def _positive_log(y: np.ndarray) -> np.ndarray:
    """NaN where a value cannot sit on a log axis (<= 0)."""
    return np.where(y > 0, y, np.nan)


# -- error rates -----------------------------------------------------------------------


def _counts(value, name: str, n: int) -> list[ErrorCount]:
    if isinstance(value, np.ndarray) and value.dtype == object:
        value = list(value)          # e.g. np.array of ErrorCount objects
    items = None
    if not isinstance(value, (np.ndarray, str, bytes)):
        try:
            items = list(value)
        except TypeError:
            raise TypeError(f"{name} must be a sequence of ErrorCount or an integer array "
                            f"of shape (2, {n}) (errors, totals); got "
                            f"{type(value).__name__}") from None
    if items is not None and items and all(isinstance(c, ErrorCount) for c in items):
        counts = items
        if len(counts) != n:
            raise ValueError(f"{name} holds {len(counts)} counts but x has {n} values; "
                             "give one count per x value")
    else:
        arr = np.asarray(value)
        if arr.dtype.kind not in "iu":
            raise TypeError(f"{name} must be a sequence of ErrorCount or an integer array "
                            f"of shape (2, {n}) (errors, totals); got dtype {arr.dtype}")
        if arr.shape != (2, n):
            raise ValueError(f"{name} has shape {arr.shape}; as an array it must have shape "
                             f"(2, {n}): errors in row 0, totals in row 1, one column "
                             "per x value")
        counts = []
        for i, (errors, total) in enumerate(arr.T):
            try:
                counts.append(ErrorCount(int(errors), int(total)))
            except ValueError as exc:
                raise ValueError(f"{name}, column {i}: {exc}") from None
    for i, count in enumerate(counts):
        if count.total == 0:
            raise ValueError(f"{name}[{i}] has total=0 (no trials); every point needs "
                             "trials to have a rate")
    return counts


def error_rate_figure(x, counts, *, confidence=0.95, method="wilson", theory=None,
                      theory_label="theory", xlabel="SNR (dB)",
                      ylabel="bit error rate (errors per bit)", title=None, ax=None,
                      figsize=(6.4, 4.0)):
    r"""Error rates against SNR with confidence bands and theory beside them.

    Parameters
    ----------
    x : array_like of float
        Shape ``(n,)``: the x value of each point, e.g. :math:`E_b/N_0`
        in dB (name it with ``xlabel``).
    counts : list of :class:`~tonebank.metrics.ErrorCount`, array_like of int, or dict
        The errors at each point: ``n`` :class:`~tonebank.metrics.ErrorCount`
        objects, or an integer array of shape ``(2, n)`` (errors in row 0,
        totals in row 1).  A mapping ``{label: counts}`` draws several
        curves on one axes, each with its legend label.
    confidence : float, optional
        Confidence level of the bands, ``0 < confidence < 1`` (default
        0.95).
    method : {"wilson", "clopper-pearson"}, optional
        Interval method, as for :meth:`ErrorCount.interval
        <tonebank.metrics.ErrorCount.interval>` (default ``"wilson"``).
    theory : array_like, ``callable`` or dict, optional
        A theory curve: values at ``x`` (shape ``(n,)``), or a callable
        evaluated on 200 points spanning ``x`` (e.g.
        :func:`tonebank.theory.ber_bpsk`); a mapping ``{label: theory}``
        draws several.  A mapping label equal to a label of ``counts``
        takes that curve's colour, and its legend entry reads
        ``"<label>, theory"``.
    theory_label : str, optional
        Legend label of a single (not mapped) theory curve.
    xlabel, ylabel : str, optional
        Axis labels; give the units (default ``"SNR (dB)"`` and ``"bit
        error rate (errors per bit)"``).
    title : str, optional
        Title of the axes; none by default.
    ax : ``matplotlib.axes.Axes``, optional
        Draw into this axes instead of a new figure.
    figsize : tuple of float, optional
        ``(width, height)`` in inches of a new figure (default ``(6.4,
        4.0)``; ignored with ``ax``).

    Returns
    -------
    ``matplotlib.figure.Figure``
        The new figure, or the figure that holds ``ax``.

    Raises
    ------
    ImportError
        If matplotlib is not installed.
    TypeError
        Non-numeric ``x``, counts that are neither ErrorCount objects nor
        integers, non-string labels, an ``ax`` that is not an Axes.
    ValueError
        Lengths that differ from ``x``, a point without trials, errors
        above totals, an empty mapping, non-finite values, a bad
        ``confidence`` or ``method``.

    See Also
    --------
    tonebank.metrics.ErrorCount : counts and their intervals.
    tonebank.theory : closed-form error rates to draw beside.

    Notes
    -----
    Each curve shows the rate ``errors / total`` of its points that have
    errors (markers joined by a line), the two-sided interval
    :meth:`ErrorCount.interval <tonebank.metrics.ErrorCount.interval>`
    as a shaded band, and, for points without errors, a downward
    triangle at the interval's upper limit: the rate is below it with
    the stated confidence, and zero cannot be drawn on the logarithmic
    axis.  With ``k = 0`` errors in ``N`` trials the upper limit is about
    :math:`3/N` (Wilson) or :math:`3.7/N` (Clopper-Pearson) at 95 %.
    Cost: one interval per point.

    Examples
    --------
    >>> from tonebank import plots, theory
    >>> from tonebank.metrics import ErrorCount
    >>> counts = [ErrorCount(790, 10_000), ErrorCount(124, 10_000), ErrorCount(0, 10_000)]
    >>> fig = plots.error_rate_figure([0.0, 4.0, 8.0], counts, theory=theory.ber_bpsk,
    ...                               theory_label="BPSK theory",
    ...                               xlabel="Eb/N0 (dB)")
    >>> ax = fig.axes[0]
    >>> ax.get_yscale(), [t.get_text() for t in ax.get_legend().get_texts()]
    ('log', ['simulated', '95 % interval', 'no errors: upper limit', 'BPSK theory'])
    """
    xs = _real_vector(x, "x")
    _text(xlabel, "xlabel")
    _text(ylabel, "ylabel")
    _text(theory_label, "theory_label")
    curves = _series(counts, "counts", lambda v, n: _counts(v, n, xs.size))
    # Checked once here, so a bad level is reported before anything is drawn.
    ErrorCount(0, 1).interval(confidence, method)
    theories = _theories(theory, "theory", xs, theory_label)

    fig, ax = _axes(ax, figsize)
    colours = {}
    band_named = bound_named = False
    for i, (label, cs) in enumerate(curves):
        colour = f"C{i % 10}"
        name = "simulated" if label is None else label
        colours[name] = colour
        errors = np.array([c.errors for c in cs])
        rates = np.array([c.rate for c in cs])
        limits = np.array([c.interval(confidence, method) for c in cs])
        hit = errors > 0
        ax.plot(xs[hit], rates[hit], "o-", color=colour, ms=4, label=name,
                gid=f"rate:{name}")
        ax.fill_between(xs[hit], limits[hit, 0], limits[hit, 1], color=colour, alpha=0.2,
                        lw=0, gid=f"band:{name}",
                        label="_nolegend_" if band_named
                        else f"{100 * float(confidence):g} % interval")
        band_named = band_named or bool(np.any(hit))
        if np.any(~hit):
            ax.plot(xs[~hit], limits[~hit, 1], "v", color=colour, ms=6, ls="none",
                    gid=f"bound:{name}",
                    label="_nolegend_" if bound_named else "no errors: upper limit")
            bound_named = True
    for label, (tx, ty) in theories:
        # A theory named after a curve takes its colour and says it is theory.
        shown = f"{label}, theory" if label in colours else label
        ax.plot(tx, _positive_log(ty), "--", color=colours.get(label, "k"), lw=1.2,
                label=shown, gid=f"theory:{label}")
    ax.set_yscale("log")
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize="small")
    _title(ax, title)
    return fig


# -- PAPR ------------------------------------------------------------------------------


def papr_ccdf_figure(papr_db, *, thresholds_db=None, theory=None, theory_label="theory",
                     title=None, ax=None, figsize=(6.4, 4.0)):
    r"""Complementary CDF of the PAPR, :math:`\Pr(\mathrm{PAPR} > z)`, on a log axis.

    Parameters
    ----------
    papr_db : array_like of float or dict
        PAPR of many symbols in dB (any shape, flattened), e.g. from
        :func:`tonebank.papr.symbol_papr_db`; a mapping ``{label:
        values}`` draws one measured curve per entry.
    thresholds_db : array_like of float, optional
        Shape ``(m,)``: thresholds :math:`z` in dB at which the CCDFs
        (and array theories) are evaluated; default 100 points spanning
        the measured values.
    theory : array_like, ``callable`` or dict, optional
        Values at ``thresholds_db`` (shape ``(m,)``), or a callable of
        the thresholds in dB, e.g. ``lambda z: ccdf_theory(z, 256)``; a
        mapping ``{label: theory}`` draws several.
    theory_label : str, optional
        Legend label of a single theory curve.
    title : str, optional
        Title of the axes; none by default.
    ax : ``matplotlib.axes.Axes``, optional
        Draw into this axes instead of a new figure.
    figsize : tuple of float, optional
        ``(width, height)`` in inches of a new figure.

    Returns
    -------
    ``matplotlib.figure.Figure``
        The new figure, or the figure that holds ``ax``.

    Raises
    ------
    ImportError
        If matplotlib is not installed.
    TypeError, ValueError
        Non-real or non-finite values, empty PAPR arrays, a theory of the
        wrong length, non-string labels.

    See Also
    --------
    tonebank.papr.papr_ccdf : the measured curve.
    tonebank.papr.ccdf_theory : the curves to compare with.

    Notes
    -----
    The measured curve is :func:`tonebank.papr.papr_ccdf`; points where
    no symbol exceeds the threshold are left out (a log axis has no 0).
    A Monte-Carlo estimate from :math:`S` symbols can be read down to
    about :math:`10/S`.  Cost: one sort per curve.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import plots
    >>> from tonebank.papr import ccdf_theory
    >>> rng = np.random.default_rng(1)
    >>> power = rng.exponential(size=(2000, 64))     # Nyquist samples of 64 tones
    >>> papr = 10 * np.log10(power.max(axis=1) / 1.0)
    >>> fig = plots.papr_ccdf_figure(papr, theory=lambda z: ccdf_theory(z, 64),
    ...                              theory_label="N = 64")
    >>> fig.axes[0].get_yscale(), fig.axes[0].get_xlabel()
    ('log', 'PAPR threshold z (dB)')
    """
    from .papr import papr_ccdf

    def values(v, name):
        arr = np.asarray(v)
        if arr.dtype.kind not in "iuf":
            raise TypeError(f"{name} must hold real numbers (PAPR in dB); got dtype "
                            f"{arr.dtype}")
        return _real_vector(arr.ravel(), name)

    _text(theory_label, "theory_label")
    curves = _series(papr_db, "papr_db", values)
    if thresholds_db is None:
        low = min(float(v.min()) for _, v in curves)
        high = max(float(v.max()) for _, v in curves)
        z = np.linspace(math.floor(low), max(math.ceil(high), math.floor(low) + 1), 100)
    else:
        z = _real_vector(thresholds_db, "thresholds_db")
    theories = _theories(theory, "theory", z, theory_label)

    fig, ax = _axes(ax, figsize)
    for i, (label, v) in enumerate(curves):
        name = "measured" if label is None else label
        ax.plot(z, _positive_log(np.asarray(papr_ccdf(v, z), dtype=float)), "-",
                color=f"C{i % 10}", label=f"{name} ({v.size} symbols)",
                gid=f"ccdf:{name}")
    for j, (label, (tx, ty)) in enumerate(theories):
        ax.plot(tx, _positive_log(ty), "--", color="k" if len(theories) == 1 else
                f"C{(len(curves) + j) % 10}", lw=1.2, label=label, gid=f"theory:{label}")
    ax.set_yscale("log")
    # A measured CCDF resolves down to 1 / symbols: show one decade below
    # that, so that a steep theory curve cannot squash the measurements.
    ax.set_ylim(0.1 / max(v.size for _, v in curves), 1.5)
    ax.set_xlabel("PAPR threshold z (dB)")
    ax.set_ylabel("Pr(PAPR > z) (probability)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize="small")
    _title(ax, title)
    return fig


# -- spectra ---------------------------------------------------------------------------


def _frequency_unit(frequencies: np.ndarray) -> tuple[float, str]:
    """The scale and name of a readable unit for these frequencies."""
    top = float(np.max(np.abs(frequencies)))
    for scale, unit in ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")):
        if top >= scale:
            return scale, unit
    return 1.0, "Hz"


def psd_figure(frequencies, density, *, mask=None, reference="peak", mask_check=None,
               ylabel=None, title=None, ax=None, figsize=(6.4, 4.0)):
    r"""Power spectral densities in dB, with a spectral mask (an engineering estimate).

    Parameters
    ----------
    frequencies : array_like of float
        Shape ``(n,)``, ascending, in Hz, as returned by
        :func:`tonebank.spectrum.psd`; the axis is labelled in Hz, kHz,
        MHz or GHz, whichever reads best.
    density : array_like of float or dict
        Shape ``(n,)``: the PSD on a **linear** scale (power per Hz, as
        :func:`tonebank.spectrum.psd` returns it), drawn as
        :math:`10\log_{10}`; a mapping ``{label: density}`` draws several.
        Zeros are left out (no minus infinity).
    mask : array_like of float, optional
        Shape ``(m, 2)``: points ``(offset_hz, limit_db)`` in the format
        of :func:`tonebank.spectrum.check_mask` (offsets >= 0 and
        non-decreasing, applied at ``+offset`` and ``-offset``).
    reference : "peak" or float, optional
        What 0 dB of the mask means, as for
        :func:`~tonebank.spectrum.check_mask`: ``"peak"`` (default) draws
        every density relative to its own peak (dBr) and the mask as
        given; a number (a density in dB) draws absolute densities and the
        mask shifted up by it.
    mask_check : tonebank.spectrum.MaskCheck, optional
        The result of :func:`~tonebank.spectrum.check_mask`: its
        violations are shaded and its margin is shown in the mask's
        legend entry.
    ylabel : str, optional
        Override the y label (default: ``"PSD relative to peak (dB)"`` or
        ``"PSD (dB/Hz)"``).
    title : str, optional
        Title of the axes; none by default.
    ax : ``matplotlib.axes.Axes``, optional
        Draw into this axes instead of a new figure.
    figsize : tuple of float, optional
        ``(width, height)`` in inches of a new figure.

    Returns
    -------
    ``matplotlib.figure.Figure``
        The new figure, or the figure that holds ``ax``; the axes carry
        the note "engineering estimate, not a compliance measurement".

    Raises
    ------
    ImportError
        If matplotlib is not installed.
    TypeError
        Non-numeric input, a ``reference`` that is neither "peak" nor a
        number, a ``mask_check`` that is not a MaskCheck.
    ValueError
        Frequencies not ascending, densities of another length or
        negative, a density that is zero everywhere, a malformed mask.

    See Also
    --------
    tonebank.spectrum.psd, tonebank.spectrum.check_mask

    Notes
    -----
    The figure shows whatever estimate it is given (Welch's method in
    :func:`tonebank.spectrum.psd`): its resolution bandwidth and window
    are not those a regulation prescribes.  It is an **engineering
    estimate, not a compliance measurement**; follow local radio (or
    wireline) regulations and accredited test practice.  Cost: one
    logarithm per bin.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import plots, spectrum
    >>> rng = np.random.default_rng(2)
    >>> x = rng.standard_normal(1 << 13) + 1j * rng.standard_normal(1 << 13)
    >>> f, p = spectrum.psd(x, 2e6, segment_length=128)
    >>> fig = plots.psd_figure(f, p, mask=[(0.0, 3.0), (1e6, 3.0)])
    >>> fig.axes[0].get_xlabel(), fig.axes[0].get_ylabel()
    ('frequency (MHz)', 'PSD relative to peak (dB)')
    """
    f = _real_vector(frequencies, "frequencies", minimum_size=2)
    if np.any(np.diff(f) <= 0):
        raise ValueError("frequencies must be strictly ascending (as spectrum.psd returns "
                         "them)")

    def level(v, name):
        p = _real_vector(v, name, size=f.size)
        if np.any(p < 0):
            raise ValueError(f"{name} holds a negative density; give the PSD on a linear "
                             "scale (power per Hz), not in dB")
        if not np.any(p > 0):
            raise ValueError(f"{name} is zero everywhere; nothing to draw in dB")
        return _db_or_nan(p)

    curves = _series(density, "density", level)
    if isinstance(reference, str):
        if reference != "peak":
            raise ValueError(f"reference={reference!r} is unknown; allowed: 'peak' or a "
                             "number in dB")
        shift = None
    elif isinstance(reference, (bool, np.bool_)) or not isinstance(reference, numbers.Real):
        raise TypeError(f"reference must be 'peak' or a finite number in dB; got "
                        f"{reference!r}")
    else:
        shift = float(reference)
        if not math.isfinite(shift):
            raise ValueError(f"reference={reference!r} is not allowed; need 'peak' or a "
                             "finite number in dB")
    points = None if mask is None else _mask_points(mask)
    if mask_check is not None and not isinstance(mask_check, MaskCheck):
        raise TypeError(f"mask_check must be a tonebank.spectrum.MaskCheck or None; got "
                        f"{type(mask_check).__name__}")
    if ylabel is None:
        ylabel = "PSD relative to peak (dB)" if shift is None else "PSD (dB/Hz)"
    _text(ylabel, "ylabel")

    scale, unit = _frequency_unit(f)
    fig, ax = _axes(ax, figsize)
    for i, (label, db) in enumerate(curves):
        name = "PSD" if label is None else label
        y = db - np.nanmax(db) if shift is None else db
        ax.plot(f / scale, y, color=f"C{i % 10}", lw=1.0, label=name, gid=f"psd:{name}")
    if points is not None:
        off, lim = points
        lim = lim + (0.0 if shift is None else shift)
        # Both sides in one line, split by a NaN where the mask is undefined.
        mx = np.concatenate((-off[::-1], [np.nan], off)) / scale
        my = np.concatenate((lim[::-1], [np.nan], lim))
        mask_label = "mask"
        if mask_check is not None:
            mask_label = f"mask (margin {mask_check.margin_db:+.1f} dB)"
        ax.plot(mx, my, color="tab:red", lw=1.5, label=mask_label, gid="mask")
    if mask_check is not None:
        for j, (low, high) in enumerate(mask_check.violations):
            ax.axvspan(low / scale, high / scale, color="tab:red", alpha=0.25,
                       gid="violation",
                       label="above the mask" if j == 0 else "_nolegend_")
    ax.set_xlabel(f"frequency ({unit})")
    ax.set_ylabel(ylabel)
    ax.grid(True, alpha=0.3)
    # Headroom above the data keeps the caution clear of the curves.
    low, high = ax.get_ylim()
    ax.set_ylim(low, high + 0.1 * (high - low))
    ax.text(0.01, 0.99, SPECTRUM_NOTE, transform=ax.transAxes, ha="left", va="top",
            fontsize="x-small", style="italic", gid="caution")
    if len(curves) > 1 or points is not None or mask_check is not None:
        # Below the occupied band is where a spectrum is usually empty.
        ax.legend(fontsize="small", loc="lower center")
    _title(ax, title)
    return fig


# -- constellations --------------------------------------------------------------------


def _square_axes(figsize):
    """A new figure with one square axes at the left, room for a legend right.

    Placed by hand: the layout engines do not combine a fixed aspect ratio
    with a legend outside the axes reliably (labels were cut off).
    """
    Figure = _figure_class()
    width, height = _figsize(figsize)
    left, bottom, top, legend = 0.85, 0.6, 0.35, 1.9        # margins in inches
    room = height - bottom - top
    side = max(min(room, width - left - legend), 0.5)
    bottom += max(room - side, 0.0) / 2                     # centred vertically
    fig = Figure(figsize=(width, height))
    ax = fig.add_axes((left / width, bottom / height, side / width, side / height))
    return fig, ax


def _complex_points(value, name: str) -> np.ndarray:
    arr = np.asarray(value)
    if arr.dtype.kind not in "iufc":
        raise TypeError(f"{name} must hold real or complex numbers; got dtype {arr.dtype}")
    arr = arr.astype(np.complex128).ravel()
    if arr.size == 0:
        raise ValueError(f"{name} is empty; give at least one point")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite (drop erased points before drawing)")
    return arr


def constellation_figure(received, reference=None, *, evm_percent=None, title=None,
                         ax=None, figsize=(6.0, 4.4)):
    """Received constellation points over the reference points, equal axes.

    Parameters
    ----------
    received : array_like of complex
        Received (equalised) points, any shape (flattened).
    reference : :class:`~tonebank.Constellation` or array_like of complex, optional
        The ideal points, drawn as large crosses: a
        :class:`~tonebank.Constellation` (its :attr:`points
        <tonebank.Constellation.points>`) or an array.
    evm_percent : float, optional
        An EVM in percent (e.g. from :func:`tonebank.metrics.evm`), shown
        in the legend entry of the received points.
    title : str, optional
        Title of the axes; none by default.
    ax : ``matplotlib.axes.Axes``, optional
        Draw into this axes instead of a new figure.
    figsize : tuple of float, optional
        ``(width, height)`` in inches of a new figure.

    Returns
    -------
    ``matplotlib.figure.Figure``
        The new figure, or the figure that holds ``ax``.

    Raises
    ------
    ImportError
        If matplotlib is not installed.
    TypeError
        Non-numeric points, an ``evm_percent`` that is not a number.
    ValueError
        Empty or non-finite points, a negative or non-finite EVM.

    See Also
    --------
    tonebank.metrics.evm, tonebank.Constellation

    Notes
    -----
    Every point is drawn (small, semi-transparent markers); for very
    long runs pass a slice.  The axes have equal scales and limits
    symmetric about zero, so rotations and gain errors show as they are.
    On a new figure the square axes sit at the left with the legend
    beside them; drawn into ``ax``, the legend goes inside the axes.
    Cost: one marker per point.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import Constellation, plots
    >>> qam = Constellation.qam(16)
    >>> rng = np.random.default_rng(3)
    >>> sent = qam.points[rng.integers(0, 16, 500)]
    >>> rx = sent + 0.05 * (rng.standard_normal(500) + 1j * rng.standard_normal(500))
    >>> fig = plots.constellation_figure(rx, qam, evm_percent=7.1)
    >>> [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    ['received (EVM 7.1 %)', '16-QAM']
    """
    rx = _complex_points(received, "received")
    ref_name = "reference"
    if isinstance(reference, Constellation):
        ref, ref_name = np.asarray(reference.points), reference.name
    elif reference is not None:
        ref = _complex_points(reference, "reference")
    else:
        ref = None
    label = "received"
    if evm_percent is not None:
        if isinstance(evm_percent, (bool, np.bool_)) or not isinstance(evm_percent,
                                                                       numbers.Real):
            raise TypeError(f"evm_percent must be a number (percent) or None; got "
                            f"{evm_percent!r}")
        value = float(evm_percent)
        if not (math.isfinite(value) and value >= 0):
            raise ValueError(f"evm_percent={evm_percent!r} is not allowed; need a finite "
                             "value >= 0 (percent)")
        label = f"received (EVM {value:.3g} %)"

    own = ax is None
    fig, ax = _square_axes(figsize) if own else _axes(ax, figsize)
    ax.plot(rx.real, rx.imag, ".", ms=3, alpha=0.4, color="C0", ls="none", label=label,
            gid="received")
    everything = rx
    if ref is not None:
        ax.plot(ref.real, ref.imag, "x", ms=9, mew=2, color="C3", ls="none",
                label=ref_name, gid="reference")
        everything = np.concatenate((rx, ref))
    reach = 1.1 * float(np.max(np.maximum(np.abs(everything.real),
                                          np.abs(everything.imag))))
    reach = reach if reach > 0 else 1.0
    ax.set_xlim(-reach, reach)
    ax.set_ylim(-reach, reach)
    ax.set_aspect("equal")
    ax.axhline(0.0, color="0.6", lw=0.5)
    ax.axvline(0.0, color="0.6", lw=0.5)
    ax.set_xlabel("in-phase I (linear amplitude)")
    ax.set_ylabel("quadrature Q (linear amplitude)")
    ax.grid(True, alpha=0.3)
    if ref is not None or evm_percent is not None:
        if own:
            # Beside the axes: inside it would hide the outer points.
            ax.legend(fontsize="small", loc="upper left", bbox_to_anchor=(1.03, 1.0),
                      borderaxespad=0.0)
        else:
            ax.legend(fontsize="small", loc="best", framealpha=0.8)
    _title(ax, title)
    return fig


# -- channel response ------------------------------------------------------------------


def _response_rows(value, name: str, shape=None) -> np.ndarray:
    arr = np.asarray(value)
    if arr.dtype.kind not in "iufc":
        raise TypeError(f"{name} must hold real or complex numbers; got dtype {arr.dtype}")
    if arr.ndim not in (1, 2) or arr.shape[-1] == 0:
        raise ValueError(f"{name} must have shape (n_bins,) or (n_branches, n_bins); got "
                         f"{arr.shape}")
    arr = np.atleast_2d(arr)
    if shape is not None and arr.shape != shape:
        raise ValueError(f"{name} has shape {np.shape(value)} but the response has shape "
                         f"{shape if shape[0] > 1 else (shape[1],)}; they must match")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite (no NaN or infinity)")
    return arr


def channel_response_figure(response, *, estimate=None, subcarriers=None, frequencies=None,
                            labels=None, title=None, ax=None, figsize=(6.4, 4.0)):
    r"""Channel magnitude :math:`20\log_{10}|H|` in dB per subcarrier or frequency.

    Parameters
    ----------
    response : array_like
        Shape ``(n_bins,)`` or ``(n_branches, n_bins)``, complex or real:
        the channel (e.g. the true response of a
        :class:`~tonebank.channel.TappedDelayLine`), one row per receive
        branch (antenna).
    estimate : array_like, optional
        An estimate of the same shape, drawn dashed beside the truth in
        the same colour.
    subcarriers : array_like of float, optional
        Shape ``(n_bins,)``: the subcarrier index of each bin (e.g.
        ``plan.data_subcarriers``); default ``0 .. n_bins - 1``.
    frequencies : array_like of float, optional
        Shape ``(n_bins,)``: frequencies in Hz instead of indices (the
        axis is labelled in Hz, kHz, MHz or GHz).  Not with
        ``subcarriers``.
    labels : list of str, optional
        One legend label per branch; default ``"branch 0"``, ... (or
        ``"channel"`` for one branch).
    title : str, optional
        Title of the axes; none by default.
    ax : ``matplotlib.axes.Axes``, optional
        Draw into this axes instead of a new figure.
    figsize : tuple of float, optional
        ``(width, height)`` in inches of a new figure.

    Returns
    -------
    ``matplotlib.figure.Figure``
        The new figure, or the figure that holds ``ax``.

    Raises
    ------
    ImportError
        If matplotlib is not installed.
    TypeError
        Non-numeric input, labels that are not strings.
    ValueError
        Shapes that do not match, non-finite values, both
        ``subcarriers`` and ``frequencies``, a wrong number of labels.

    See Also
    --------
    tonebank.channel.TappedDelayLine, tonebank.estimation.ChannelEstimator

    Notes
    -----
    Bins where :math:`|H| = 0` are left out (no minus infinity).  Cost:
    one logarithm per bin.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import plots
    >>> h = np.fft.fft([1.0, 0.0, 0.5j, 0.2], 64)
    >>> fig = plots.channel_response_figure(h)
    >>> fig.axes[0].get_xlabel(), fig.axes[0].get_ylabel()
    ('subcarrier index', 'channel magnitude |H| (dB)')
    """
    h = _response_rows(response, "response")
    est = None if estimate is None else _response_rows(estimate, "estimate", h.shape)
    n_rows, n = h.shape
    if subcarriers is not None and frequencies is not None:
        raise ValueError("give subcarriers or frequencies, not both")
    if frequencies is not None:
        fx = _real_vector(frequencies, "frequencies", size=n)
        scale, unit = _frequency_unit(fx)
        xs, xlabel = fx / scale, f"frequency ({unit})"
    elif subcarriers is not None:
        xs, xlabel = _real_vector(subcarriers, "subcarriers", size=n), "subcarrier index"
    else:
        xs, xlabel = np.arange(n, dtype=np.float64), "subcarrier index"
    if labels is None:
        names = ["channel"] if n_rows == 1 else [f"branch {r}" for r in range(n_rows)]
    else:
        if isinstance(labels, str):
            labels = [labels]
        names = [_text(v, "labels[...]") for v in labels]
        if len(names) != n_rows:
            raise ValueError(f"labels holds {len(names)} label(s) but response has "
                             f"{n_rows} branch(es); give one label per branch")

    fig, ax = _axes(ax, figsize)
    for r in range(n_rows):
        colour = f"C{r % 10}"
        ax.plot(xs, _db_or_nan(np.abs(h[r]) ** 2), "-", color=colour, lw=1.2,
                label=names[r], gid=f"response:{names[r]}")
        if est is not None:
            ax.plot(xs, _db_or_nan(np.abs(est[r]) ** 2), "--", color=colour, lw=1.0,
                    label=f"{names[r]}, estimate", gid=f"estimate:{names[r]}")
    ax.set_xlabel(xlabel)
    ax.set_ylabel("channel magnitude |H| (dB)")
    ax.grid(True, alpha=0.3)
    if n_rows > 1 or est is not None:
        ax.legend(fontsize="small")
    _title(ax, title)
    return fig


# -- bit loading -----------------------------------------------------------------------


def bit_loading_figure(table, *, snr_db=None, subcarriers=None, title=None, ax=None,
                       figsize=(6.4, 4.0)):
    """Bits per tone as bars, with the SNR per tone on a second axis.

    Parameters
    ----------
    table : :class:`~tonebank.loading.BitTable` or array_like of int
        A :class:`~tonebank.loading.BitTable` (e.g. from
        :func:`~tonebank.loading.levin_campello`), or the bits per tone,
        shape ``(n_tones,)``, integers >= 0.
    snr_db : array_like of float, optional
        Shape ``(n_tones,)``: the SNR of each tone in dB (e.g.
        ``10 log10(E_k g_k)``), drawn as a line against a right-hand axis.
    subcarriers : array_like of float, optional
        Shape ``(n_tones,)``: the subcarrier index of each tone (e.g.
        ``plan.data_subcarriers``); default ``0 .. n_tones - 1``.
    title : str, optional
        Title of the axes; none by default.
    ax : ``matplotlib.axes.Axes``, optional
        Draw into this axes instead of a new figure (the SNR axis is its
        twin).
    figsize : tuple of float, optional
        ``(width, height)`` in inches of a new figure.

    Returns
    -------
    ``matplotlib.figure.Figure``
        The new figure, or the figure that holds ``ax``; with ``snr_db``
        it has a second (twin) axes.

    Raises
    ------
    ImportError
        If matplotlib is not installed.
    TypeError
        Bits that are not integers, non-numeric SNR or indices.
    ValueError
        Lengths that differ, negative bits, non-finite values.

    See Also
    --------
    tonebank.loading.BitTable, tonebank.loading.levin_campello,
    tonebank.loading.water_filling

    Notes
    -----
    The legend gives the bits per multicarrier symbol (the sum of the
    bars).  Link budgets drawn this way are engineering estimates, not
    compliance measurements.  Cost: one bar per tone.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import loading, plots
    >>> g = np.array([400.0, 250.0, 90.0, 20.0, 3.0, 0.5])
    >>> table = loading.levin_campello(g, gap_db=9.8, total_energy=6.0)
    >>> snr = 10 * np.log10(np.maximum(table.energies * g, 1e-3))
    >>> fig = plots.bit_loading_figure(table, snr_db=snr)
    >>> len(fig.axes), fig.axes[1].get_ylabel()
    (2, 'SNR per tone (dB)')
    """
    if isinstance(table, BitTable):
        bits = np.asarray(table.bits)
    else:
        bits = np.asarray(table)
        if bits.dtype.kind not in "iu":
            raise TypeError(f"table must be a BitTable or integer bits per tone; got dtype "
                            f"{bits.dtype}")
        if bits.ndim != 1 or bits.size == 0:
            raise ValueError(f"table (bits per tone) must be a non-empty 1-D array; got "
                             f"shape {bits.shape}")
        if np.any(bits < 0):
            raise ValueError("table (bits per tone) must be >= 0 everywhere")
    n = bits.size
    xs = (np.arange(n, dtype=np.float64) if subcarriers is None
          else _real_vector(subcarriers, "subcarriers", size=n))
    snr = None if snr_db is None else _real_vector(snr_db, "snr_db", size=n)

    fig, ax = _axes(ax, figsize)
    bars = ax.bar(xs, bits, width=1.0, color="C0", alpha=0.8,
                  label=f"bits per tone ({int(bits.sum())} per symbol)", gid="bits")
    handles = [bars]
    ax.set_xlabel("subcarrier index")
    ax.set_ylabel("bits per tone (bits)")
    # Headroom above the bars (and the SNR line) holds the legend.
    ax.set_ylim(0, 1.3 * (max(1, int(bits.max())) + 1))
    ax.grid(True, axis="y", alpha=0.3)
    if snr is not None:
        right = ax.twinx()
        (line,) = right.plot(xs, snr, "-", color="C1", lw=1.2, label="SNR per tone",
                             gid="snr")
        right.set_ylabel("SNR per tone (dB)")
        low, high = right.get_ylim()
        right.set_ylim(low, high + 0.3 * (high - low))
        handles.append(line)
    ax.legend(handles=handles, fontsize="small", loc="upper right")
    _title(ax, title)
    return fig
