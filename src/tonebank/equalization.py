r"""One-tap equalisation per subcarrier, with the noise variance the LLRs need.

With a cyclic prefix longer than the channel, each received cell is
:math:`y = h x + n` (see :mod:`tonebank.estimation`).  A one-tap
equaliser multiplies each cell by one coefficient.  Both functions here
return the equalised symbols **and** the variance of the noise left on
each of them, so that the soft demapper can be told how reliable every
subcarrier is::

    eq = equalize_mmse(rx_data, h_data, noise_var)
    llr = constellation.llr(eq.symbols, eq.noise_var)

An estimated channel :math:`\hat h = h - e` adds :math:`e x` to the
noise; pass its variance as ``channel_error_var`` (for an LMMSE estimate,
:math:`e` is uncorrelated with :math:`\hat h`, so the total is
:math:`\sigma^2 + \epsilon E_s`).

Cells where the channel is exactly zero (null subcarriers of a full
grid) give the symbol 0 and the noise variance ``inf``: take the data
cells before computing LLRs.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .estimation import _real

__all__ = ["Equalized", "equalize_mmse", "equalize_zf"]


class Equalized(NamedTuple):
    """Equalised symbols and the noise variance on each of them."""

    #: The equalised symbols (complex).
    symbols: np.ndarray
    #: Noise variance per symbol (real, > 0; ``inf`` where the channel is zero).
    noise_var: np.ndarray


def _arrays(received, channel, noise_var, channel_error_var):
    y = np.asarray(received)
    h = np.asarray(channel)
    for name, a in (("received", y), ("channel", h)):
        if a.dtype.kind not in "biufc":
            raise TypeError(f"{name} must be numeric, got dtype {a.dtype}")
    single = all(a.dtype in (np.complex64, np.float32) for a in (y, h))
    cdtype = np.complex64 if single else np.complex128
    rdtype = np.float32 if single else np.float64
    try:
        shape = np.broadcast_shapes(y.shape, h.shape)
    except ValueError:
        raise ValueError(f"received of shape {y.shape} and channel of shape {h.shape} do "
                         "not broadcast together") from None
    nv = np.asarray(noise_var)
    ev = np.asarray(channel_error_var)
    for name, a in (("noise_var", nv), ("channel_error_var", ev)):
        if a.dtype.kind not in "biuf":
            raise TypeError(f"{name} must be real, got dtype {a.dtype}")
        if not np.all(np.isfinite(a)):
            raise ValueError(f"{name} must be finite")
        try:
            broadcast = np.broadcast_shapes(a.shape, shape)
        except ValueError:
            broadcast = None
        if broadcast != shape:
            raise ValueError(f"{name} of shape {a.shape} does not broadcast to the shape "
                             f"{shape} of received and channel (it must not enlarge it)")
    if not np.all(nv > 0):
        raise ValueError("noise_var must be > 0 everywhere")
    if not np.all(ev >= 0):
        raise ValueError("channel_error_var must be >= 0 everywhere")
    if not np.all(np.isfinite(y)) or not np.all(np.isfinite(h)):
        raise ValueError("received and channel must be finite")
    return (y.astype(np.complex128), h.astype(np.complex128), nv.astype(float),
            ev.astype(float), shape, cdtype, rdtype)


def equalize_zf(received, channel, noise_var, *, channel_error_var=0.0,
                signal_power: float = 1.0) -> Equalized:
    r"""Zero-forcing one-tap equalisation, :math:`z = y / \hat h`.

    Parameters
    ----------
    received : array_like of complex
        Received cells ``y``, any shape.
    channel : array_like of complex
        Channel (estimate) ``h``, broadcastable with ``received``.
    noise_var : float or array_like
        Noise variance :math:`\sigma^2` of ``y`` (total complex), > 0;
        broadcastable to the result without enlarging it.
    channel_error_var : float or array_like, default 0.0
        Variance :math:`\epsilon` of the channel estimate's error, >= 0.
    signal_power : float, default 1.0
        Mean symbol power :math:`E_s` (weights ``channel_error_var``).

    Returns
    -------
    Equalized
        ``(symbols, noise_var)``: :math:`z = y/h` and
        :math:`(\sigma^2 + \epsilon E_s)/|h|^2`, shape of the broadcast
        of ``received`` and ``channel``; complex64/float32 when both are
        complex64, complex128/float64 otherwise.

    Raises
    ------
    TypeError
        Non-numeric input, complex noise variances.
    ValueError
        Shapes that do not broadcast, non-finite input, ``noise_var <= 0``.

    See Also
    --------
    equalize_mmse, tonebank.Constellation.llr

    Notes
    -----
    :math:`z = x + (n + e x)/h`, so the noise left on :math:`z` has
    variance :math:`(\sigma^2 + \epsilon E_s)/|h|^2` (Gaussian when
    :math:`n` and :math:`e` are).  Cost: one division per cell.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.equalization import equalize_zf
    >>> eq = equalize_zf([1 + 1j, 0.5], [1j, 0.5], 0.01)
    >>> eq.symbols.tolist(), eq.noise_var.tolist()
    ([(1-1j), (1+0j)], [0.01, 0.04])
    """
    y, h, nv, ev, shape, cdtype, rdtype = _arrays(received, channel, noise_var,
                                                  channel_error_var)
    es = _real(signal_power, "signal_power", positive=True)
    y, h = np.broadcast_to(y, shape), np.broadcast_to(h, shape)
    p = np.abs(h) ** 2
    zero = p == 0
    safe = np.where(zero, 1.0, h)
    z = np.where(zero, 0.0, y / safe)
    var = np.where(zero, np.inf, (nv + ev * es) / np.where(zero, 1.0, p))
    return Equalized(z.astype(cdtype), np.broadcast_to(var, shape).astype(rdtype))


def equalize_mmse(received, channel, noise_var, *, channel_error_var=0.0,
                  signal_power: float = 1.0, unbiased: bool = True) -> Equalized:
    r"""MMSE one-tap equalisation per subcarrier.

    Parameters
    ----------
    received, channel, noise_var, channel_error_var, signal_power
        As for :func:`equalize_zf`.
    unbiased : bool, optional
        True (default): return the bias-free output and the variance of
        its noise (what :meth:`tonebank.Constellation.llr` expects).  False:
        return the MMSE output itself and its mean squared error against
        the transmitted symbol.

    Returns
    -------
    Equalized
        ``(symbols, noise_var)``, shapes and dtypes as for
        :func:`equalize_zf`.

    Raises
    ------
    TypeError, ValueError
        As for :func:`equalize_zf`.

    See Also
    --------
    equalize_zf, tonebank.Constellation.llr

    Notes
    -----
    With :math:`s = (\sigma^2 + \epsilon E_s)/E_s` the coefficient is
    :math:`g = \hat h^* / (|\hat h|^2 + s)` and :math:`z = g y = b x + w`
    with the real gain :math:`b = |\hat h|^2/(|\hat h|^2 + s) < 1`.  Its
    mean squared error is :math:`E|z - x|^2 = (1 - b) E_s = E_s s /
    (|\hat h|^2 + s)`, the smallest of any one-tap equaliser (returned
    with ``unbiased=False``).  Decisions and LLRs need the bias removed:
    :math:`z/b = x + w/b`, whose noise variance is :math:`(\sigma^2 +
    \epsilon E_s)/|\hat h|^2` (``unbiased=True``).  For one tap per
    subcarrier the bias-free MMSE output equals the zero-forcing one, so
    the LLRs agree; the two differ in the biased output (lower error
    magnitude, e.g. for EVM against the MMSE) and at a zero channel,
    where the MMSE output is 0 with error :math:`E_s` instead of
    undefined.  Cost: a few operations per cell.

    References
    ----------
    J. G. Proakis, *Digital Communications*, 4th ed., McGraw-Hill, 2001,
    section 10.2 (MMSE linear equalisation; the one-tap case; from
    memory).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.equalization import equalize_mmse
    >>> eq = equalize_mmse([0.5], [0.5], 0.25, unbiased=False)
    >>> eq.symbols.tolist(), eq.noise_var.tolist()      # b = 0.25/0.5
    ([(0.5+0j)], [0.5])
    """
    y, h, nv, ev, shape, cdtype, rdtype = _arrays(received, channel, noise_var,
                                                  channel_error_var)
    es = _real(signal_power, "signal_power", positive=True)
    if not isinstance(unbiased, (bool, np.bool_)):
        raise TypeError(f"unbiased must be True or False, got {unbiased!r}")
    y, h = np.broadcast_to(y, shape), np.broadcast_to(h, shape)
    total = np.broadcast_to(nv + ev * es, shape)
    s = total / es
    p = np.abs(h) ** 2
    g = h.conj() / (p + s)
    z = g * y
    if unbiased:
        zero = p == 0
        b = p / (p + s)
        z = np.where(zero, 0.0, z / np.where(zero, 1.0, b))
        var = np.where(zero, np.inf, total / np.where(zero, 1.0, p))
    else:
        var = es * s / (p + s)
    return Equalized(z.astype(cdtype), np.broadcast_to(var, shape).astype(rdtype))
