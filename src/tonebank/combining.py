r"""Diversity combining over L receive branches, and branch simulation helpers.

A receiver with several antennas (or several copies of a signal in
time or frequency) sees one noisy, faded copy of every symbol per
**branch**.  The functions here combine the copies cell by cell (per
subcarrier and symbol for OFDM):

* coherent, from channel estimates: :func:`combine_mrc` (maximal ratio),
  :func:`combine_egc` (equal gain: co-phasing only) and
  :func:`combine_selection` (the strongest branch alone);
* non-coherent, for orthogonal signalling (binary or M-ary FSK,
  orthogonal tones): :func:`combine_noncoherent` adds the envelopes or
  squared envelopes of the M candidate outputs over the branches and
  decides for the largest sum.

The coherent combiners return the combined symbols scaled so that a
perfect channel estimate gives an unbiased decision variable
(``z = x + w``), together with the variance of ``w`` per cell, which is
what :meth:`tonebank.Constellation.llr` needs::

    out = combine_mrc(received, channel_estimate, noise_var)
    llr = constellation.llr(out.symbols, out.noise_var)

.. rubric:: Layout

``received`` and ``channel`` hold the branches along ``axis`` (default
0, the leading axis): for OFDM typically ``(L, n_symbols, n_bins)`` or
``(L, ..., n_symbols, n_bins)``.  ``channel`` has the same number of
dimensions and broadcasts to ``received`` (e.g. ``(L, 1, n_bins)`` for a
channel constant over the symbols).  The result drops the branch axis.
``noise_var`` and ``channel_error_var`` are a scalar, a 1-D array of
length ``L`` (one value per branch; this reading wins when the last axis
also has length ``L``), or any array that broadcasts to ``received`` by
numpy's rules without enlarging it (e.g. shape ``(n_bins,)`` for one
value per subcarrier, or the full shape).

.. rubric:: Model and SNR convention

On branch ``l`` a cell is ``y_l = h_l x + n_l`` with ``n_l`` circular
complex Gaussian of variance ``noise_var[l]`` (``N0``; the same
convention as :mod:`tonebank.equalization`) and ``E|x|^2 =
signal_power``.  An estimate ``h_hat_l`` whose error ``e_l = h_l -
h_hat_l`` has variance ``channel_error_var[l]`` and is uncorrelated with
the estimate (as for an LMMSE estimate) adds ``e_l x`` to the noise, so
each branch counts with the total variance ``s_l^2 = noise_var[l] +
channel_error_var[l] * signal_power``.

.. rubric:: Simulation helpers

:func:`rayleigh_branches` draws correlated Rayleigh branch gains from a
correlation matrix (:func:`exponential_correlation` builds a common
one) and :func:`imperfect_estimate` turns true gains into estimates with
a given error variance, for Monte-Carlo runs to set beside the closed
forms of :mod:`tonebank.theory` (:func:`~tonebank.theory.ber_bpsk_mrc`
and the functions after it).

Combining is plain numpy (a few passes over memory per call; see
``benchmarks/test_10_combining.py``): there is no kernel operation, so
both backends give identical results.
"""

from __future__ import annotations

import numbers
import operator
from typing import NamedTuple

import numpy as np

from ._checks import generator, integer, real_array

__all__ = [
    "Combined",
    "NoncoherentDecision",
    "combine_egc",
    "combine_mrc",
    "combine_noncoherent",
    "combine_selection",
    "exponential_correlation",
    "imperfect_estimate",
    "rayleigh_branches",
]

_LAWS = ("square", "envelope")
_ERROR_MODELS = ("orthogonal", "additive")


class Combined(NamedTuple):
    """Combined symbols and what the demapper needs to weigh them."""

    #: Combined symbols ``z = x + w`` (complex), unbiased for perfect estimates.
    symbols: np.ndarray
    #: Variance of ``w`` per cell (real, > 0; ``inf`` where every branch is zero).
    noise_var: np.ndarray
    #: Post-combining SNR per cell, ``signal_power / noise_var`` (linear).
    snr: np.ndarray
    #: Index of the branch used per cell (selection combining only, else None).
    branch: np.ndarray | None = None


class NoncoherentDecision(NamedTuple):
    """Decisions and decision metrics of non-coherent combining."""

    #: Index of the chosen candidate per cell (int64).
    decisions: np.ndarray
    #: The combined metric of every candidate (real), last axis the candidates.
    metrics: np.ndarray


# -- argument handling ---------------------------------------------------------------


def _complex_array(value, name: str) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError) as exc:
        raise TypeError(f"{name} must be an array of numbers; got {type(value).__name__} "
                        f"({exc})") from None
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric (complex, real or integer); got dtype "
                        f"{arr.dtype}")
    if arr.ndim == 0:
        raise ValueError(f"{name} must have at least one dimension (the branches); got a "
                         "0-d array")
    if arr.dtype.kind in "fc":
        # A sum is finite only if every term is (NaN and inf propagate, inf - inf
        # is NaN); one fast pass, and the element-wise test only when it is not.
        with np.errstate(over="ignore", invalid="ignore"):
            total = arr.sum()
        if not np.isfinite(total) and not np.all(np.isfinite(arr)):
            raise ValueError(f"{name} holds NaN or infinite values; all must be finite")
    return arr


def _axis(axis, ndim: int, name: str = "axis") -> int:
    if isinstance(axis, (bool, np.bool_)):
        raise TypeError(f"{name} must be an integer, got {axis!r}")
    try:
        a = operator.index(axis)
    except TypeError:
        raise TypeError(f"{name} must be an integer, got {axis!r} "
                        f"({type(axis).__name__})") from None
    if not -ndim <= a < ndim:
        raise ValueError(f"{name}={a} is out of range for an array of {ndim} "
                         f"dimension(s); allowed: {-ndim} to {ndim - 1}")
    return a % ndim


def _real_scalar(value, name: str, *, positive: bool = False) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number, got {value!r}")
    v = float(value)
    if not np.isfinite(v):
        raise ValueError(f"{name} must be finite, got {value!r}")
    if positive and not v > 0:
        raise ValueError(f"{name} must be > 0, got {value!r}")
    return v


def _branch_values(value, name: str, shape: tuple, axis: int, rdtype,
                   *, positive: bool) -> np.ndarray:
    """A real array broadcastable to ``shape``; 1-D of length L is per branch."""
    arr = np.asarray(value)
    if arr.dtype.kind not in "biuf":
        raise TypeError(f"{name} must be real (a float or an array of floats); got dtype "
                        f"{arr.dtype}")
    arr = arr.astype(rdtype)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite everywhere")
    if positive and not np.all(arr > 0):
        raise ValueError(f"{name} must be > 0 everywhere; got "
                         f"{arr if arr.size <= 4 else 'an array with a value <= 0'}")
    if not positive and not np.all(arr >= 0):
        raise ValueError(f"{name} must be >= 0 everywhere; got "
                         f"{arr if arr.size <= 4 else 'an array with a negative value'}")
    n_branches = shape[axis]
    if arr.ndim == 1 and arr.size == n_branches and len(shape) > 1:
        # One value per branch: put it on the branch axis.
        arr = arr.reshape([n_branches if i == axis else 1 for i in range(len(shape))])
    try:
        broadcast = np.broadcast_shapes(arr.shape, shape)
    except ValueError:
        broadcast = None
    if broadcast != shape:
        raise ValueError(f"{name} of shape {arr.shape} does not broadcast to the shape "
                         f"{shape} of received (it must not enlarge it)")
    if arr.size == 1:
        return arr.reshape(())
    return arr


def _coherent_args(received, channel, noise_var, axis, channel_error_var, signal_power):
    """Validated arrays in the computing precision and the shapes of the result."""
    y = _complex_array(received, "received")
    h = _complex_array(channel, "channel")
    if h.ndim != y.ndim:
        raise ValueError(f"channel has {h.ndim} dimension(s) and received {y.ndim}; they "
                         f"must have the same number (use size-1 axes to broadcast, e.g. "
                         f"channel[:, None, :] for a channel constant over the symbols)")
    try:
        broadcast = np.broadcast_shapes(y.shape, h.shape)
    except ValueError:
        broadcast = None
    if broadcast != y.shape:
        raise ValueError(f"channel of shape {h.shape} does not broadcast to the shape "
                         f"{y.shape} of received (it must not enlarge it)")
    ax = _axis(axis, y.ndim)
    if h.shape[ax] != y.shape[ax]:
        raise ValueError(f"channel has {h.shape[ax]} branch(es) on axis {ax} and received "
                         f"{y.shape[ax]}; every branch needs its own channel")
    single = all(a.dtype in (np.complex64, np.float32) for a in (y, h))
    cdtype = np.dtype(np.complex64 if single else np.complex128)
    rdtype = np.dtype(np.float32 if single else np.float64)
    es = _real_scalar(signal_power, "signal_power", positive=True)
    nv = _branch_values(noise_var, "noise_var", y.shape, ax, np.float64, positive=True)
    ev = _branch_values(channel_error_var, "channel_error_var", y.shape, ax, np.float64,
                        positive=False)
    total = (nv + ev * es).astype(rdtype)      # s_l^2 per branch (and cell)
    y = y.astype(cdtype, copy=False)
    h = h.astype(cdtype, copy=False)
    out_shape = y.shape[:ax] + y.shape[ax + 1:]
    return y, h, total, ax, es, out_shape, cdtype, rdtype


def _finish(z, var, es, out_shape, cdtype, rdtype, branch=None) -> Combined:
    # Copies only where a result is still a broadcast view or of another dtype.
    z = (z.astype(cdtype, copy=False) if z.shape == out_shape
         else np.broadcast_to(z, out_shape).astype(cdtype))
    var = np.asarray(var)
    var = (var.astype(rdtype, copy=False) if var.shape == out_shape
           else np.broadcast_to(var, out_shape).astype(rdtype))
    with np.errstate(divide="ignore"):
        snr = (rdtype.type(es) / var).astype(rdtype)
    return Combined(z, var, snr, branch)


def _power(h: np.ndarray) -> np.ndarray:
    # |h|^2 through numpy's vectorised complex abs: faster here than
    # re^2 + im^2 on strided views, within an ulp of it.
    mag = np.abs(h)
    return np.multiply(mag, mag, out=mag)


def _branches(y: np.ndarray, h: np.ndarray, total: np.ndarray, axis: int):
    """``(y_l, h_l, s_l)`` for each branch: views with the branch axis removed.

    ``s_l`` is None when one variance holds for every branch and cell.
    Working branch by branch keeps the temporaries to one branch's size,
    which keeps the combiners within a few times one read of their inputs.
    """
    yb = np.moveaxis(y, axis, 0)
    hb = np.moveaxis(h, axis, 0)
    sb = None
    if total.ndim:
        full = np.broadcast_shapes(total.shape, (1,) * y.ndim)
        sb = np.moveaxis(np.broadcast_to(total, full), axis, 0)
    for l in range(yb.shape[0]):
        s_l = None
        if sb is not None:
            s_l = sb[l] if sb.shape[0] > 1 else sb[0]
        yield yb[l], hb[l], s_l


def _gather(a: np.ndarray, index: np.ndarray, axis: int, shape=None) -> np.ndarray:
    """``a`` at branch ``index[...]`` along ``axis`` (``a`` broadcast to ``shape``)."""
    if shape is not None:
        a = np.broadcast_to(a, shape)
    moved = np.moveaxis(a, axis, 0)
    if moved.flags.c_contiguous and moved.shape[1:] == index.shape:
        # One flat gather: branch l of cell i sits at l * cells + i.
        flat = index * index.size + np.arange(index.size).reshape(index.shape)
        return moved.reshape(-1).take(flat)
    moved = np.broadcast_to(moved, moved.shape[:1] + index.shape)
    return np.take_along_axis(moved, index[None], axis=0)[0]


# -- coherent combining --------------------------------------------------------------


def combine_mrc(received, channel, noise_var, *, axis=0, channel_error_var=0.0,
                signal_power=1.0) -> Combined:
    r"""Maximal-ratio combining of L branches from channel estimates.

    Parameters
    ----------
    received : array_like of complex
        Received cells ``y``, the branches along ``axis``; shape e.g.
        ``(L, n_symbols, n_bins)``.  complex64 is kept when ``channel`` is
        complex64 too.
    channel : array_like of complex
        Channel estimates ``h_hat``, the same number of dimensions as
        ``received`` and broadcastable to it (size-1 axes allowed), the
        same ``L`` on ``axis``.
    noise_var : float or array_like of float
        Noise variance ``N0`` (> 0): a scalar, shape ``(L,)`` (one per
        branch), or any shape that broadcasts to ``received`` (e.g.
        ``(n_bins,)``, one per subcarrier); see the module docstring.
    axis : int, optional
        The branch axis of ``received`` and ``channel`` (default 0).
    channel_error_var : float or array_like of float, optional
        Variance of each estimate's error (>= 0, default 0), laid out like
        ``noise_var``; the error is taken as uncorrelated with the estimate.
    signal_power : float, optional
        Mean symbol energy ``Es`` (default 1).

    Returns
    -------
    Combined
        ``symbols`` and ``noise_var`` of shape ``received.shape`` without
        ``axis`` (complex64/float32 for complex64 input, complex128/float64
        otherwise), ``snr = signal_power / noise_var``; ``branch`` is None.

    Raises
    ------
    TypeError
        Non-numeric input, complex variances, a non-integer ``axis``.
    ValueError
        Shapes that do not fit, ``axis`` out of range, non-finite input,
        ``noise_var <= 0``, ``channel_error_var < 0``, ``signal_power <= 0``.

    See Also
    --------
    combine_egc, combine_selection, tonebank.theory.ber_bpsk_mrc,
    tonebank.Constellation.llr

    Notes
    -----
    With :math:`s_l^2 = N_{0,l} + \epsilon_l E_s` the weights are
    :math:`\hat h_l^* / s_l^2`, normalised by their gain:

    .. math::

       z = \frac{\sum_l \hat h_l^* y_l / s_l^2}{\sum_l |\hat h_l|^2 / s_l^2},
       \qquad \operatorname{var}(z - x) = \Big(\sum_l |\hat h_l|^2 / s_l^2\Big)^{-1},

    and the SNR :math:`E_s \sum_l |\hat h_l|^2/s_l^2` is the sum of the
    branch SNRs, the largest any linear combiner reaches [1]_.  Cells where
    every estimate is zero give ``z = 0`` and ``noise_var = inf``.  Cost:
    about ``8 L`` real operations per cell and a few passes over memory.

    References
    ----------
    .. [1] J. G. Proakis, *Digital Communications*, 4th ed., McGraw-Hill,
       2001, sec. 14.4 (section number from memory).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.combining import combine_mrc
    >>> h = np.array([[1.0 + 0j], [1j]])            # 2 branches, 1 cell
    >>> out = combine_mrc(h * (1 - 1j), h, 0.1)     # noiseless copies of 1 - 1j
    >>> out.symbols, out.noise_var, out.snr
    (array([1.-1.j]), array([0.05]), array([20.]))
    """
    y, h, total, ax, es, out_shape, cdtype, rdtype = _coherent_args(
        received, channel, noise_var, axis, channel_error_var, signal_power)
    num = gain = None
    for y_l, h_l, s_l in _branches(y, h, total, ax):
        term = np.conj(h_l) * y_l
        power = _power(h_l)
        if s_l is not None:
            # Unequal variances: weigh each branch by 1 / s_l^2.
            term /= s_l
            power = power / s_l
        num = term if num is None else np.add(num, term, out=term)
        gain = power if gain is None else gain + power
    scale = total if total.ndim == 0 else rdtype.type(1.0)
    zero = gain == 0
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.divide(num, gain, out=num)
        var = scale / gain
    if zero.any():
        z[np.broadcast_to(zero, z.shape)] = 0
    return _finish(z, var, es, out_shape, cdtype, rdtype)


def combine_egc(received, channel, noise_var, *, axis=0, channel_error_var=0.0,
                signal_power=1.0) -> Combined:
    r"""Equal-gain combining: co-phase every branch and add them with equal weight.

    Parameters
    ----------
    received, channel, noise_var, axis, channel_error_var, signal_power
        As for :func:`combine_mrc`.

    Returns
    -------
    Combined
        As for :func:`combine_mrc`.

    Raises
    ------
    TypeError, ValueError
        As for :func:`combine_mrc`.

    See Also
    --------
    combine_mrc, combine_selection

    Notes
    -----
    Only the phase of each estimate is used to align the branches:

    .. math::

       z = \frac{\sum_l e^{-j\hat\varphi_l} y_l}{\sum_l |\hat h_l|},
       \qquad \operatorname{var}(z - x) = \frac{\sum_l s_l^2}{(\sum_l |\hat h_l|)^2},

    with :math:`\hat\varphi_l` the phase of :math:`\hat h_l`.  A branch
    whose estimate is exactly zero has no phase and is left out of both
    sums.  EGC
    needs no amplitude estimate in hardware; in i.i.d. Rayleigh fading it
    loses about 1 dB against MRC (common practice, no source).  Cost:
    one magnitude per branch and cell more than :func:`combine_mrc`.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.combining import combine_egc
    >>> h = np.array([[2.0 + 0j], [1j]])
    >>> out = combine_egc(h * 1j, h, 0.3)             # noiseless copies of 1j
    >>> out.symbols, out.noise_var                    # 2 * 0.3 / (2 + 1)**2
    (array([0.+1.j]), array([0.06666667]))
    """
    y, h, total, ax, es, out_shape, cdtype, rdtype = _coherent_args(
        received, channel, noise_var, axis, channel_error_var, signal_power)
    num = amp = noise = None
    for y_l, h_l, s_l in _branches(y, h, total, ax):
        mag = np.abs(h_l)
        used = mag > 0
        term = np.conj(h_l) * y_l
        with np.errstate(divide="ignore", invalid="ignore"):
            term /= mag
        if not used.all():
            term[np.broadcast_to(~used, term.shape)] = 0   # no phase: left out
        s_used = used * (total if s_l is None else s_l)
        num = term if num is None else np.add(num, term, out=term)
        amp = mag if amp is None else amp + mag
        noise = s_used if noise is None else noise + s_used
    zero = amp == 0
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.divide(num, amp, out=num)
        var = noise / (amp * amp)
    if zero.any():
        z[np.broadcast_to(zero, z.shape)] = 0
        var = np.where(zero, np.inf, var)
    return _finish(z, var, es, out_shape, cdtype, rdtype)


def combine_selection(received, channel, noise_var, *, axis=0, channel_error_var=0.0,
                      signal_power=1.0) -> Combined:
    r"""Selection combining: per cell, use the branch with the largest SNR alone.

    Parameters
    ----------
    received, channel, noise_var, axis, channel_error_var, signal_power
        As for :func:`combine_mrc`.

    Returns
    -------
    Combined
        As for :func:`combine_mrc`, and ``branch``: the index (int64) of the
        branch chosen for each cell, of the same shape as ``symbols``.

    Raises
    ------
    TypeError, ValueError
        As for :func:`combine_mrc`.

    See Also
    --------
    combine_mrc, tonebank.theory.ber_bpsk_selection,
    tonebank.theory.selection_outage

    Notes
    -----
    Branch :math:`l^\star = \operatorname{argmax}_l |\hat h_l|^2 / s_l^2` (the lowest
    index on ties), then :math:`z = y_{l^\star} / \hat h_{l^\star}` with
    noise variance :math:`s_{l^\star}^2 / |\hat h_{l^\star}|^2`; a cell
    where every estimate is zero gives ``z = 0`` and ``noise_var = inf``.
    Cost: one pass for the SNRs, an argmax and a gather.

    References
    ----------
    A. Goldsmith, *Wireless Communications*, Cambridge University Press,
    2005, sec. 7.2 (from memory).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.combining import combine_selection
    >>> h = np.array([[0.5, 2.0], [1.0, 1.0]])       # 2 branches x 2 cells
    >>> out = combine_selection(h * -1.0, h, [0.1, 0.2])    # noise per branch
    >>> out.branch, out.symbols.real, out.noise_var
    (array([1, 0]), array([-1., -1.]), array([0.2  , 0.025]))
    """
    y, h, total, ax, es, out_shape, cdtype, rdtype = _coherent_args(
        received, channel, noise_var, axis, channel_error_var, signal_power)
    best = index = None
    for l, (_, h_l, s_l) in enumerate(_branches(y, h, total, ax)):
        metric = _power(h_l) if s_l is None else _power(h_l) / s_l
        if best is None:
            best = np.broadcast_to(metric, out_shape).copy()
            index = np.zeros(out_shape, np.intp)
            continue
        better = metric > best                  # strict: the lowest index wins ties
        np.maximum(best, metric, out=best)
        np.copyto(index, l, where=better)
    y_sel = _gather(y, index, ax)
    h_sel = _gather(h, index, ax)
    s_sel = None if total.ndim == 0 else _gather(total, index, ax, y.shape)
    p_sel = _power(h_sel)
    zero = p_sel == 0
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.divide(y_sel, h_sel, out=y_sel)
        var = (total if s_sel is None else s_sel) / p_sel
    if zero.any():
        z[zero] = 0
    return _finish(z, var, es, out_shape, cdtype, rdtype, index.astype(np.int64, copy=False))


# -- non-coherent combining ----------------------------------------------------------


def combine_noncoherent(outputs, *, law="square", axis=0) -> NoncoherentDecision:
    r"""Non-coherent combining of orthogonal signalling over L branches.

    Parameters
    ----------
    outputs : array_like of complex
        Matched-filter outputs of the ``M`` candidate signals (tones) on
        every branch, shape ``(L, ..., M)`` with the branches along
        ``axis`` and the candidates along the last axis (``M >= 2``).
    law : {"square", "envelope"}, optional
        ``"square"`` (default): add the squared envelopes :math:`|r|^2`
        (square-law combining); ``"envelope"``: add the envelopes
        :math:`|r|`.
    axis : int, optional
        The branch axis (default 0); it must not be the last axis.

    Returns
    -------
    NoncoherentDecision
        ``decisions``: the index of the largest metric per cell (int64,
        lowest index on ties), shape ``outputs.shape`` without ``axis`` and
        without the last axis; ``metrics``: the combined metric of every
        candidate, shape ``outputs.shape`` without ``axis`` (float32 for
        complex64 input, float64 otherwise).

    Raises
    ------
    TypeError
        Non-numeric ``outputs``, ``law`` not a string, non-integer ``axis``.
    ValueError
        Fewer than 2 dimensions or 2 candidates, non-finite values, an
        unknown ``law``, ``axis`` out of range or equal to the last axis.

    See Also
    --------
    tonebank.theory.ber_bfsk_square_law, combine_mrc

    Notes
    -----
    Neither law needs a channel estimate or the noise level.  In
    independent Rayleigh fading with equal mean SNR on every branch the
    square law is the optimum combiner for orthogonal signals and its
    binary error rate has a closed form [1]_
    (:func:`~tonebank.theory.ber_bfsk_square_law`); the envelope sum has
    none and behaves much the same.  With one branch the two decide
    alike.  Cost: ``O(L M)`` per cell.

    References
    ----------
    .. [1] J. G. Proakis, *Digital Communications*, 4th ed., McGraw-Hill,
       2001, sec. 14.4 (section number from memory).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.combining import combine_noncoherent
    >>> r = np.array([[[0.1, 0.9j]], [[0.5, -0.2]]])    # 2 branches, 1 cell, M = 2
    >>> out = combine_noncoherent(r)
    >>> out.decisions, out.metrics.round(2)
    (array([1]), array([[0.26, 0.85]]))
    """
    r = _complex_array(outputs, "outputs")
    if r.ndim < 2:
        raise ValueError(f"outputs must have at least 2 dimensions (branches, "
                         f"candidates); got shape {r.shape}")
    if r.shape[-1] < 2:
        raise ValueError(f"outputs has {r.shape[-1]} candidate(s) on its last axis; "
                         "need at least 2")
    if not isinstance(law, str):
        raise TypeError(f"law must be a string, one of {_LAWS}; got {law!r}")
    if law not in _LAWS:
        raise ValueError(f"law={law!r} is unknown; allowed: {_LAWS}")
    ax = _axis(axis, r.ndim)
    if ax == r.ndim - 1:
        raise ValueError(f"axis={axis} is the candidate axis (the last one); the branches "
                         "must lie on another axis")
    single = r.dtype in (np.complex64, np.float32)
    r = r.astype(np.complex64 if single else np.complex128, copy=False)
    metrics = (_power(r) if law == "square" else np.abs(r)).sum(axis=ax)
    metrics = metrics.astype(np.float32 if single else np.float64, copy=False)
    return NoncoherentDecision(np.argmax(metrics, axis=-1).astype(np.int64), metrics)


# -- simulation helpers ------------------------------------------------------------------


def exponential_correlation(branches, rho) -> np.ndarray:
    r"""Branch correlation matrix of the exponential model, :math:`R_{ij} = \rho^{j-i}`.

    Parameters
    ----------
    branches : int
        Number of branches ``L``, 1 to 1024.
    rho : float or complex
        Correlation of adjacent branches, :math:`|\rho| \le 1`.

    Returns
    -------
    numpy.ndarray
        ``R`` of shape ``(L, L)``: :math:`R_{ij} = \rho^{j-i}` for
        :math:`j \ge i` and :math:`(\rho^*)^{i-j}` below the diagonal
        (Hermitian, positive semidefinite, unit diagonal); float64 for real
        ``rho``, complex128 otherwise.

    Raises
    ------
    TypeError
        If ``branches`` is not an integer or ``rho`` not a number.
    ValueError
        If ``branches`` is out of range or :math:`|\rho| > 1`.

    See Also
    --------
    rayleigh_branches, tonebank.theory.ber_bpsk_mrc

    Notes
    -----
    A common model of equally spaced antennas (correlation falling
    geometrically with the spacing) [1]_.

    References
    ----------
    .. [1] V. A. Aalo, "Performance of maximal-ratio diversity systems in a
       correlated Nakagami-fading environment," IEEE Trans. Commun.,
       vol. 43, no. 8, pp. 2360-2369, 1995 (from memory).

    Examples
    --------
    >>> from tonebank.combining import exponential_correlation
    >>> exponential_correlation(3, 0.5)
    array([[1.  , 0.5 , 0.25],
           [0.5 , 1.  , 0.5 ],
           [0.25, 0.5 , 1.  ]])
    """
    count = integer(branches, "branches", minimum=1, maximum=1024)
    if isinstance(rho, (bool, np.bool_)) or not isinstance(rho, numbers.Number):
        raise TypeError(f"rho must be a real or complex number, got {rho!r}")
    value = complex(rho)
    if not (np.isfinite(value.real) and np.isfinite(value.imag)) or abs(value) > 1.0:
        raise ValueError(f"rho={rho!r} is not allowed; need |rho| <= 1")
    lag = np.subtract.outer(np.arange(count), np.arange(count))   # i - j
    upper = value ** np.maximum(-lag, 0)
    lower = np.conj(value) ** np.maximum(lag, 0)
    r = np.where(lag <= 0, upper, lower)
    return r.real.copy() if value.imag == 0 else r


def _correlation_factor(correlation) -> np.ndarray:
    """``A`` with ``A A^H = R`` (Cholesky, or eigenvectors for singular ``R``)."""
    if isinstance(correlation, numbers.Integral) and not isinstance(correlation,
                                                                     (bool, np.bool_)):
        count = integer(correlation, "correlation", minimum=1, maximum=1024)
        return np.eye(count)
    r = np.asarray(correlation)
    if r.dtype.kind not in "biufc":
        raise TypeError(f"correlation must be a number of branches or an (L, L) matrix; "
                        f"got dtype {r.dtype}")
    if r.ndim != 2 or r.shape[0] != r.shape[1] or r.shape[0] == 0:
        raise ValueError(f"correlation has shape {r.shape}; it must be a square (L, L) "
                         "matrix (or an integer number of independent branches)")
    r = r.astype(np.complex128)
    if not np.all(np.isfinite(r)):
        raise ValueError("correlation must be finite")
    scale = max(float(np.max(np.abs(r))), 1.0)
    if not np.allclose(r, r.conj().T, rtol=0.0, atol=1e-12 * scale):
        raise ValueError("correlation must be Hermitian (equal to its conjugate transpose)")
    try:
        return np.linalg.cholesky(r)
    except np.linalg.LinAlgError:
        pass
    lam, u = np.linalg.eigh(r)
    if lam[0] < -1e-10 * scale:
        raise ValueError(f"correlation must be positive semidefinite; its smallest "
                         f"eigenvalue is {lam[0]:.3g}")
    return u * np.sqrt(np.clip(lam, 0.0, None))


def _shape(shape) -> tuple:
    if isinstance(shape, numbers.Integral) and not isinstance(shape, (bool, np.bool_)):
        shape = (shape,)
    try:
        dims = tuple(shape)
    except TypeError:
        raise TypeError(f"shape must be an integer or a tuple of integers, got "
                        f"{shape!r}") from None
    return tuple(integer(d, "shape", minimum=0) for d in dims)


def rayleigh_branches(correlation, shape=(), *, rng=None, dtype=np.complex128) -> np.ndarray:
    r"""Draw Rayleigh-fading gains of L branches with a given correlation.

    Parameters
    ----------
    correlation : int or array_like
        Either the number of independent unit-power branches ``L``, or the
        correlation matrix :math:`R = E[h h^H]` of shape ``(L, L)``
        (Hermitian positive semidefinite; its diagonal gives each branch's
        mean power).
    shape : int or tuple of int, optional
        Shape of the draws per branch (default ``()``: one gain per branch),
        e.g. ``(n_symbols, n_bins)`` for a gain per cell.
    rng : numpy.random.Generator or int or None, optional
        Random generator or seed.
    dtype : {numpy.complex128, numpy.complex64}, optional
        Result dtype (default complex128).

    Returns
    -------
    numpy.ndarray
        ``h`` of shape ``(L, *shape)``, the branches on axis 0; independent
        draws for every index of ``shape``.

    Raises
    ------
    TypeError
        Wrong argument types or an unsupported ``dtype``.
    ValueError
        A matrix that is not square, Hermitian and positive semidefinite,
        non-finite entries, negative sizes.

    See Also
    --------
    exponential_correlation, imperfect_estimate, combine_mrc

    Notes
    -----
    :math:`h = A w` with :math:`w` i.i.d. circular complex Gaussian of unit
    variance and :math:`A A^H = R`: the Cholesky factor, or for a singular
    ``R`` (fully correlated branches) :math:`U \Lambda^{1/2}` from its
    eigendecomposition.  Each :math:`|h_l|` is then Rayleigh distributed.
    Cost: ``L^2`` complex multiply-adds per draw.

    Examples
    --------
    >>> from tonebank.combining import exponential_correlation, rayleigh_branches
    >>> h = rayleigh_branches(exponential_correlation(2, 0.9), (50_000,), rng=1)
    >>> h.shape
    (2, 50000)
    >>> print(f"{abs(np.mean(h[0] * h[1].conj())):.2f}")
    0.90
    """
    factor = _correlation_factor(correlation)
    dims = _shape(shape)
    dt = np.dtype(dtype) if not isinstance(dtype, np.dtype) else dtype
    if dt not in (np.complex64, np.complex128):
        raise TypeError(f"dtype must be numpy.complex128 or numpy.complex64, got {dtype!r}")
    gen = generator(rng)
    count = factor.shape[0]
    n = int(np.prod(dims, dtype=np.int64))
    w = (gen.standard_normal((count, n)) + 1j * gen.standard_normal((count, n)))
    w *= np.sqrt(0.5)
    h = factor @ w
    return h.reshape((count,) + dims).astype(dt)


def imperfect_estimate(channel, error_var, *, power=1.0, model="orthogonal",
                       rng=None) -> np.ndarray:
    r"""A channel estimate with a given error variance, for simulation.

    Parameters
    ----------
    channel : array_like of complex
        True gains ``h`` (e.g. from :func:`rayleigh_branches`), any shape.
    error_var : float or array_like of float
        Variance :math:`\epsilon` of the estimate's error, >= 0,
        broadcastable to ``channel`` without enlarging it; with
        ``model="orthogonal"`` below ``power``.
    power : float or array_like of float, optional
        Mean power :math:`P = E|h|^2` of the true gains (default 1),
        broadcastable like ``error_var``; used by ``model="orthogonal"``.
    model : {"orthogonal", "additive"}, optional
        How the estimate relates to ``h`` (see Notes).  ``"orthogonal"``
        (default) is what the combiners' ``channel_error_var`` assumes.
    rng : numpy.random.Generator or int or None, optional
        Random generator or seed.

    Returns
    -------
    numpy.ndarray
        ``h_hat``, the shape of ``channel``; complex64 for complex64 input,
        complex128 otherwise.

    Raises
    ------
    TypeError
        Non-numeric input, ``model`` not a string.
    ValueError
        Non-finite input, ``error_var < 0`` (or ``>= power`` for the
        orthogonal model), ``power <= 0``, shapes that do not broadcast, an
        unknown ``model``.

    See Also
    --------
    rayleigh_branches, combine_mrc, tonebank.theory.ber_bpsk_mrc

    Notes
    -----
    ``"orthogonal"``: :math:`h` and :math:`\hat h` jointly Gaussian with
    :math:`h = \hat h + e`, the error :math:`e` (variance :math:`\epsilon`)
    independent of :math:`\hat h` -- what an LMMSE estimate from pilots
    gives.  It is drawn as the MMSE estimate from a noisy look at the
    channel, :math:`\hat h = (1 - \epsilon/P)(h + v)` with :math:`v`
    independent circular Gaussian of variance :math:`P\epsilon/(P -
    \epsilon)`; then :math:`E|\hat h|^2 = P - \epsilon` and
    :math:`E[h \mid \hat h] = \hat h` (exact when :math:`h` is circular
    Gaussian of power :math:`P`).  Each element is estimated on its own:
    with correlated branches the error of one branch stays correlated
    with the other branches' estimates.

    ``"additive"``: :math:`\hat h = h + e` with :math:`e` independent of
    :math:`h` (a raw least-squares estimate).  Its error is correlated with
    :math:`\hat h`; it is equivalent to the orthogonal model with
    :math:`\epsilon' = P\epsilon/(P+\epsilon)` and a gain
    :math:`(P+\epsilon)/P` on the estimate.

    Examples
    --------
    >>> from tonebank.combining import imperfect_estimate, rayleigh_branches
    >>> h = rayleigh_branches(1, (100_000,), rng=4)
    >>> h_hat = imperfect_estimate(h, 0.1, rng=5)
    >>> print(f"{np.mean(abs(h - h_hat) ** 2):.3f} {np.mean(abs(h_hat) ** 2):.3f}")
    0.100 0.898
    """
    h = np.asarray(channel)
    if h.dtype.kind not in "biufc":
        raise TypeError(f"channel must be numeric; got dtype {h.dtype}")
    if not np.all(np.isfinite(h)):
        raise ValueError("channel holds NaN or infinite values; all must be finite")
    if not isinstance(model, str):
        raise TypeError(f"model must be a string, one of {_ERROR_MODELS}; got {model!r}")
    if model not in _ERROR_MODELS:
        raise ValueError(f"model={model!r} is unknown; allowed: {_ERROR_MODELS}")
    values = {}
    for name, value in (("error_var", error_var), ("power", power)):
        arr = real_array(value, name)
        try:
            broadcast = np.broadcast_shapes(arr.shape, h.shape)
        except ValueError:
            broadcast = None
        if broadcast != h.shape:
            raise ValueError(f"{name} of shape {arr.shape} does not broadcast to the shape "
                             f"{h.shape} of channel (it must not enlarge it)")
        values[name] = arr
    eps, p = values["error_var"], values["power"]
    if not np.all(eps >= 0):
        raise ValueError("error_var must be >= 0 everywhere")
    if not np.all(p > 0):
        raise ValueError("power must be > 0 everywhere")
    if model == "orthogonal" and not np.all(eps < p):
        raise ValueError("error_var must be below power everywhere for "
                         "model='orthogonal' (the error cannot exceed the channel's "
                         "own power)")
    gen = generator(rng)
    out_dtype = np.complex64 if h.dtype in (np.complex64, np.float32) else np.complex128
    noise = (gen.standard_normal(h.shape) + 1j * gen.standard_normal(h.shape)) * np.sqrt(0.5)
    h = h.astype(np.complex128)
    if model == "additive":
        est = h + np.sqrt(eps) * noise
    else:
        look = np.sqrt(p * eps / (p - eps))
        est = (1.0 - eps / p) * (h + look * noise)
    return est.astype(out_dtype)
