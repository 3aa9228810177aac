r"""Error counts with confidence intervals, and constellation quality (EVM, MER).

:class:`ErrorCount` holds a number of errors out of a number of trials,
with the error rate and a binomial confidence interval for it; counts
add up, so the results of a sweep can be pooled.  :func:`bit_errors` and
:func:`symbol_errors` produce them.  :func:`evm` and :func:`mer_db`
measure how far received constellation points lie from the ideal ones.

The figures computed here are engineering estimates from simulated or
captured data, not compliance measurements; for conformance follow the
measurement procedure of the applicable standard, local radio
regulations and accredited test practice.
"""

from __future__ import annotations

import numbers
import operator
from dataclasses import dataclass

import numpy as np

from ._checks import integer

__all__ = ["ErrorCount", "bit_errors", "evm", "mer_db", "symbol_errors"]

_METHODS = ("wilson", "clopper-pearson")
_UNITS = ("percent", "db", "ratio")


@dataclass(frozen=True, slots=True)
class ErrorCount:
    r"""A number of errors out of a number of trials.

    Immutable; counts add with ``+`` (and ``sum()``) to pool the
    trials of several runs, e.g. the blocks of one point of a sweep.

    Parameters
    ----------
    errors : int
        Number of errors, ``0 <= errors <= total``.
    total : int
        Number of trials (bits, symbols, frames ...), ``>= 0``.

    Raises
    ------
    TypeError
        If ``errors`` or ``total`` is not an integer (booleans are
        refused).
    ValueError
        If either is negative or ``errors > total``.

    See Also
    --------
    bit_errors, symbol_errors : produce counts.

    Notes
    -----
    The trials are taken as independent with one error probability
    :math:`p`, so ``errors`` is binomial; :meth:`interval` gives a
    confidence interval for :math:`p`.  Errors that come in bursts (after
    a decoder, over a fading channel) are not independent: count frames
    or blocks instead, or the interval will be too narrow.

    Examples
    --------
    >>> from tonebank.metrics import ErrorCount
    >>> c = ErrorCount(12, 10_000) + ErrorCount(8, 10_000)
    >>> c
    ErrorCount(errors=20, total=20000)
    >>> c.rate
    0.001
    >>> low, high = c.interval(0.95)
    >>> round(low, 6), round(high, 6)
    (0.000647, 0.001544)
    """

    errors: int
    total: int

    def __post_init__(self):
        errors = integer(self.errors, "errors", minimum=0)
        total = integer(self.total, "total", minimum=0)
        if errors > total:
            raise ValueError(f"errors={errors} exceeds total={total}; need errors <= total")
        object.__setattr__(self, "errors", errors)
        object.__setattr__(self, "total", total)

    @property
    def rate(self) -> float:
        """Error rate ``errors / total`` (NaN for an empty count)."""
        return self.errors / self.total if self.total else float("nan")

    def interval(self, confidence=0.95, method="wilson") -> tuple[float, float]:
        r"""Two-sided confidence interval for the error probability.

        Parameters
        ----------
        confidence : float, optional
            Confidence level, ``0 < confidence < 1`` (default 0.95).
        method : {"wilson", "clopper-pearson"}, optional
            ``"wilson"`` (default): the Wilson score interval, close to
            nominal coverage and never outside [0, 1].
            ``"clopper-pearson"``: the exact interval, whose coverage is
            never below ``confidence`` (conservative, wider).

        Returns
        -------
        tuple of float
            ``(low, high)``, with ``low = 0`` when there are no errors
            and ``high = 1`` when every trial failed; ``(0.0, 1.0)`` for
            an empty count.

        Raises
        ------
        TypeError
            If ``confidence`` is not a real number or ``method`` not a
            string.
        ValueError
            If ``confidence`` is outside (0, 1) or ``method`` unknown.

        Notes
        -----
        With :math:`k` errors in :math:`n` trials, :math:`\hat p = k/n`
        and :math:`z` the :math:`1 - \alpha/2` quantile of the standard
        normal distribution (:math:`\alpha = 1 -` ``confidence``), the
        Wilson interval is

        .. math::

            \frac{\hat p + z^2/(2n)}{1 + z^2/n} \pm
            \frac{z}{1 + z^2/n}
            \sqrt{\frac{\hat p (1 - \hat p)}{n} + \frac{z^2}{4n^2}}.

        The Clopper-Pearson limits are quantiles of beta distributions,
        :math:`B^{-1}(\alpha/2;\, k, n-k+1)` and
        :math:`B^{-1}(1-\alpha/2;\, k+1, n-k)`, computed with
        :func:`scipy.special.betaincinv`.  With no errors the exact upper
        limit is :math:`1 - (\alpha/2)^{1/n}`, about :math:`3.7/n` at 95 %.
        Cost: a few special-function evaluations.

        References
        ----------
        E. B. Wilson, "Probable inference, the law of succession, and
        statistical inference", *J. Amer. Statist. Assoc.* 22 (158),
        pp. 209-212, 1927.

        C. J. Clopper and E. S. Pearson, "The use of confidence or
        fiducial limits illustrated in the case of the binomial",
        *Biometrika* 26 (4), pp. 404-413, 1934.

        L. D. Brown, T. T. Cai and A. DasGupta, "Interval estimation for
        a binomial proportion", *Statistical Science* 16 (2),
        pp. 101-133, 2001 (a comparison of the two methods).

        Examples
        --------
        >>> from tonebank.metrics import ErrorCount
        >>> low, high = ErrorCount(0, 1000).interval(0.95, method="clopper-pearson")
        >>> low, round(high, 6)
        (0.0, 0.003682)
        """
        if isinstance(confidence, (bool, np.bool_)) or not isinstance(confidence, numbers.Real):
            raise TypeError(f"confidence must be a real number in (0, 1); got {confidence!r}")
        level = float(confidence)
        if not 0.0 < level < 1.0:
            raise ValueError(f"confidence={confidence!r} is not allowed; need "
                             "0 < confidence < 1 (e.g. 0.95)")
        if not isinstance(method, str):
            raise TypeError(f"method must be a string, one of {_METHODS}; got {method!r}")
        if method not in _METHODS:
            raise ValueError(f"method={method!r} is unknown; allowed: 'wilson' or "
                             "'clopper-pearson'")
        # scipy.special is imported here, not at module level, to keep
        # ``import tonebank`` light.
        from scipy import special

        k, n = self.errors, self.total
        if n == 0:
            return 0.0, 1.0
        alpha = 1.0 - level
        if method == "wilson":
            z = float(special.ndtri(1.0 - alpha / 2.0))
            z2 = z * z
            p = k / n
            centre = (p + z2 / (2 * n)) / (1 + z2 / n)
            half = z / (1 + z2 / n) * np.sqrt(p * (1 - p) / n + z2 / (4 * n * n))
            low = 0.0 if k == 0 else max(0.0, centre - half)
            high = 1.0 if k == n else min(1.0, centre + half)
        else:
            low = 0.0 if k == 0 else float(special.betaincinv(k, n - k + 1, alpha / 2.0))
            high = 1.0 if k == n else float(special.betaincinv(k + 1, n - k,
                                                                1.0 - alpha / 2.0))
        return float(low), float(high)

    def __add__(self, other):
        if isinstance(other, ErrorCount):
            return ErrorCount(self.errors + other.errors, self.total + other.total)
        return NotImplemented

    def __radd__(self, other):
        # Lets sum(counts) start from its default 0.
        if isinstance(other, int) and not isinstance(other, bool) and other == 0:
            return self
        return NotImplemented


# -- counting ------------------------------------------------------------------

def _array(value, name: str) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError) as exc:
        raise TypeError(f"{name} must be an array of numbers; got {type(value).__name__} "
                        f"({exc})") from None
    return arr


def _check_same_shape(a: np.ndarray, b: np.ndarray, names: str) -> None:
    if a.shape != b.shape:
        first, second = names.split(",")
        raise ValueError(f"{first} has shape {a.shape} and {second} has shape {b.shape}; "
                         "they must match exactly (nothing is broadcast or truncated)")


def bit_errors(tx_bits, rx_bits) -> ErrorCount:
    """Count the bits that differ between two bit arrays.

    Parameters
    ----------
    tx_bits, rx_bits : array_like
        Sent and decided bits, bool or integer arrays of the same shape
        holding 0 and 1 only.

    Returns
    -------
    ErrorCount
        Differing positions out of ``tx_bits.size``.

    Raises
    ------
    TypeError
        If either array is not boolean or integer (float input is
        refused: soft values must be decided first).
    ValueError
        If the shapes differ or a value is not 0 or 1.

    See Also
    --------
    symbol_errors, ErrorCount

    Notes
    -----
    Cost: one comparison pass over the arrays and one range check.

    Examples
    --------
    >>> from tonebank.metrics import bit_errors
    >>> bit_errors([0, 1, 1, 0, 1], [0, 1, 0, 0, 0])
    ErrorCount(errors=2, total=5)
    """
    tx = _array(tx_bits, "tx_bits")
    rx = _array(rx_bits, "rx_bits")
    for arr, name in ((tx, "tx_bits"), (rx, "rx_bits")):
        # An empty list arrives as float64; it holds no soft values.
        if arr.dtype.kind not in "biu" and not (arr.size == 0 and arr.dtype.kind == "f"):
            raise TypeError(f"{name} has dtype {arr.dtype}; bits must be bool or integer "
                            "0/1 (decide soft values first)")
    _check_same_shape(tx, rx, "tx_bits,rx_bits")
    for arr, name in ((tx, "tx_bits"), (rx, "rx_bits")):
        if arr.dtype.kind != "b" and arr.size and (arr.min() < 0 or arr.max() > 1):
            bad = arr[(arr != 0) & (arr != 1)].flat[0]
            raise ValueError(f"{name} holds the value {int(bad)}; bits must be 0 or 1")
    return ErrorCount(int(np.count_nonzero(tx != rx)), int(tx.size))


def symbol_errors(tx, rx) -> ErrorCount:
    """Count the symbols (labels or constellation points) that differ.

    Parameters
    ----------
    tx, rx : array_like
        Sent and decided symbols, arrays of the same shape compared
        element by element and exactly: both integer labels (bool or
        integer dtype) or both
        constellation points (float or complex dtype).

    Returns
    -------
    ErrorCount
        Differing elements out of ``tx.size``.

    Raises
    ------
    TypeError
        If an array is not numeric, or one holds labels (integers) and
        the other points (floats).
    ValueError
        If the shapes differ.

    See Also
    --------
    bit_errors, ErrorCount

    Notes
    -----
    The comparison is exact, so points must come from the same table
    (hard decisions of the same constellation), not be recomputed with
    different rounding.  A NaN in either array counts as an error.
    Cost: one comparison pass.

    Examples
    --------
    >>> from tonebank.metrics import symbol_errors
    >>> symbol_errors([3, 0, 2, 1], [3, 1, 2, 1])
    ErrorCount(errors=1, total=4)
    """
    tx_arr = _array(tx, "tx")
    rx_arr = _array(rx, "rx")
    for arr, name in ((tx_arr, "tx"), (rx_arr, "rx")):
        if arr.dtype.kind not in "biufc":
            raise TypeError(f"{name} has dtype {arr.dtype}; symbols must be integer labels "
                            "or float/complex constellation points")
    labels = (tx_arr.dtype.kind in "biu", rx_arr.dtype.kind in "biu")
    if labels[0] != labels[1]:
        raise TypeError(f"tx has dtype {tx_arr.dtype} and rx has dtype {rx_arr.dtype}; "
                        "compare labels with labels or points with points")
    _check_same_shape(tx_arr, rx_arr, "tx,rx")
    return ErrorCount(int(np.count_nonzero(tx_arr != rx_arr)), int(tx_arr.size))


# -- constellation quality -----------------------------------------------------

def _normalise_axis(axis, ndim: int) -> tuple[int, ...]:
    if axis is None:
        return tuple(range(ndim))
    items = axis if isinstance(axis, tuple) else (axis,)
    result = []
    for item in items:
        if isinstance(item, (bool, np.bool_)):
            raise TypeError(f"axis must be None, an integer or a tuple of integers; "
                            f"got {axis!r}")
        try:
            index = operator.index(item)
        except TypeError:
            raise TypeError(f"axis must be None, an integer or a tuple of integers; "
                            f"got {axis!r}") from None
        if not -ndim <= index < ndim:
            raise ValueError(f"axis={axis!r} is out of range for arrays with {ndim} "
                             "dimension(s) (after broadcasting)")
        result.append(index % ndim)
    if len(set(result)) != len(result):
        raise ValueError(f"axis={axis!r} repeats an axis")
    return tuple(result)


def _abs2(a: np.ndarray) -> np.ndarray:
    if a.dtype.kind == "c":
        return a.real * a.real + a.imag * a.imag
    return a * a


def _pair(received, reference, axis):
    """Error and reference energies per element, broadcast, in float64."""
    arrays = []
    for value, name in ((received, "received"), (reference, "reference")):
        arr = _array(value, name)
        if arr.dtype.kind not in "iufc":
            raise TypeError(f"{name} has dtype {arr.dtype}; need real or complex numbers")
        arrays.append(arr.astype(np.complex128 if arr.dtype.kind == "c" else np.float64,
                                 copy=False))
    r, s = arrays
    try:
        shape = np.broadcast_shapes(r.shape, s.shape)
    except ValueError:
        raise ValueError(f"received has shape {r.shape} and reference has shape {s.shape}; "
                         "they do not broadcast together") from None
    axes = _normalise_axis(axis, len(shape))
    if any(shape[a] == 0 for a in axes):
        raise ValueError(f"nothing to average: the broadcast shape is {shape} and axis is "
                         f"{axis!r}")
    return _abs2(r - s), _abs2(np.broadcast_to(s, shape)), axes


def _result(value: np.ndarray):
    value = np.asarray(value, dtype=np.float64)
    return float(value) if value.ndim == 0 else value


def evm(received, reference, *, axis=None, unit="percent", reference_power="measured"):
    r"""RMS error vector magnitude, relative to the mean reference power.

    Parameters
    ----------
    received : array_like
        Received (equalised) constellation points, complex or real.  Pass
        the data subcarriers only, e.g. taken from the grid with the
        plan's ``take``; pilots and unused bins would skew the figure.
    reference : array_like
        The ideal points that were sent, broadcast against ``received``
        with numpy's rules (e.g. a known sequence of shape ``(n,)``
        against ``(n_symbols, n)``).
    axis : None or int or tuple of int, optional
        Axes of the broadcast shape to average over; None (default)
        averages over everything and returns a scalar.
    unit : {"percent", "db", "ratio"}, optional
        ``"percent"`` (default): 100 times the ratio; ``"db"``:
        :math:`20\log_{10}` of the ratio; ``"ratio"``: the plain ratio.
    reference_power : "measured" or float, optional
        The power the error is normalised to: ``"measured"`` (default),
        the mean of :math:`|s|^2` over the same axes; or a positive
        float, such as the nominal mean power of the constellation (1
        for unit-power QAM).

    Returns
    -------
    float or numpy.ndarray
        The EVM in ``unit``, float64 of the broadcast shape without the
        averaged axes; a Python float when every axis is averaged.

    Raises
    ------
    TypeError
        If an input is not numeric, ``axis`` is not None/int/tuple, or
        ``unit`` or ``reference_power`` has the wrong type.
    ValueError
        If the inputs do not broadcast, ``axis`` is out of range or
        repeated, an averaged axis is empty, ``unit`` is unknown,
        ``reference_power`` is not > 0, or the measured reference power
        is zero over some slice.

    See Also
    --------
    mer_db : the same ratio as power, in dB.

    Notes
    -----
    With error vectors :math:`e = r - s`,

    .. math::

        \mathrm{EVM}_\mathrm{rms} =
        \sqrt{\frac{\overline{|r - s|^2}}{P_s}}, \qquad
        P_s = \overline{|s|^2} \text{ (measured) or given},

    the bars meaning means over the chosen axes.  This normalises to
    the *mean* reference power, as OFDM standards commonly do; some
    single-carrier measurement guidelines normalise to the peak
    (outermost) constellation power instead, which gives a smaller
    figure for QAM (common practice, from memory).  With the measured
    reference power, :math:`\mathrm{EVM_{dB}} = -\mathrm{MER_{dB}}`.

    NaN or infinite values are not dropped: they make the result NaN
    (or infinite) for the slices they fall in, so remove erased or
    clipped points before the call.  A perfect match gives 0 (``-inf``
    in dB).  Cost: a few passes over the broadcast arrays, in float64.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.metrics import evm
    >>> rng = np.random.default_rng(5)
    >>> sent = (rng.choice([-1, 1], 1000) + 1j * rng.choice([-1, 1], 1000)) / np.sqrt(2)
    >>> received = sent + 0.05 * np.exp(2j * np.pi * rng.random(1000))
    >>> round(evm(received, sent), 6)           # percent
    5.0
    >>> round(evm(received, sent, unit="db"), 3)
    -26.021
    """
    if not isinstance(unit, str):
        raise TypeError(f"unit must be a string, one of {_UNITS}; got {unit!r}")
    if unit not in _UNITS:
        raise ValueError(f"unit={unit!r} is unknown; allowed: 'percent', 'db' or 'ratio'")
    if isinstance(reference_power, str):
        if reference_power != "measured":
            raise ValueError(f"reference_power={reference_power!r} is unknown; allowed: "
                             "'measured' or a positive float")
        nominal = None
    elif isinstance(reference_power, (bool, np.bool_)) \
            or not isinstance(reference_power, numbers.Real):
        raise TypeError(f"reference_power must be 'measured' or a positive float; got "
                        f"{reference_power!r} ({type(reference_power).__name__})")
    else:
        nominal = float(reference_power)
        if not (np.isfinite(nominal) and nominal > 0):
            raise ValueError(f"reference_power={reference_power!r} is not allowed; need a "
                             "finite value > 0")

    error2, ref2, axes = _pair(received, reference, axis)
    mean_error = np.mean(error2, axis=axes)
    if nominal is None:
        power = np.mean(ref2, axis=axes)
        if np.any(power == 0):
            raise ValueError("reference has zero power over an averaged slice; EVM is "
                             "undefined there (pass reference_power=<nominal power>)")
    else:
        power = nominal
    ratio = np.sqrt(mean_error / power)
    if unit == "percent":
        return _result(100.0 * ratio)
    if unit == "db":
        with np.errstate(divide="ignore"):
            return _result(20.0 * np.log10(ratio))
    return _result(ratio)


def mer_db(received, reference, *, axis=None):
    r"""Modulation error ratio in dB.

    Parameters
    ----------
    received : array_like
        Received (equalised) constellation points, complex or real; the
        data subcarriers only (see :func:`evm`).
    reference : array_like
        The ideal points that were sent, broadcast against ``received``
        with numpy's rules.
    axis : None or int or tuple of int, optional
        Axes of the broadcast shape to sum over; None (default) sums over
        everything and returns a scalar.

    Returns
    -------
    float or numpy.ndarray
        MER in dB, float64 of the broadcast shape without the summed
        axes; a Python float when every axis is summed.  ``inf`` for a
        perfect match.

    Raises
    ------
    TypeError
        If an input is not numeric or ``axis`` is not None/int/tuple.
    ValueError
        If the inputs do not broadcast, ``axis`` is out of range or
        repeated, a summed axis is empty, or the reference has zero power
        over some slice.

    See Also
    --------
    evm : the same ratio as an RMS amplitude.

    Notes
    -----
    .. math::

        \mathrm{MER} = 10 \log_{10}
        \frac{\sum |s|^2}{\sum |r - s|^2}\ \mathrm{dB},

    the ratio of the power of the ideal points to the power of the error
    vectors, as defined in ETSI TR 101 290 (*Measurement guidelines for
    DVB systems*, the MER measurement clause; from memory, clause not
    checked).  It equals minus the EVM in dB with the measured reference
    power.  Against additive noise alone, MER estimates the SNR per
    subcarrier.  NaN propagates as in :func:`evm`.  Cost: a few passes
    over the broadcast arrays, in float64.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.metrics import mer_db
    >>> sent = np.array([1 + 1j, -1 + 1j, -1 - 1j, 1 - 1j]) / np.sqrt(2)
    >>> round(mer_db(sent + 0.1, sent), 6)      # error power 0.01
    20.0
    """
    error2, ref2, axes = _pair(received, reference, axis)
    signal = np.sum(ref2, axis=axes)
    if np.any(signal == 0):
        raise ValueError("reference has zero power over a summed slice; MER is undefined "
                         "there")
    with np.errstate(divide="ignore"):
        return _result(10.0 * np.log10(signal / np.sum(error2, axis=axes)))
