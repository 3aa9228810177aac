r"""Blind timing and frequency offset from the cyclic prefix (maximum likelihood).

Without a preamble, the cyclic prefix itself is a repetition: the
:math:`c` prefix samples of every symbol equal the last :math:`c` samples
of its body, :math:`N` samples later.  van de Beek, Sandell and Borjesson
derive the joint maximum-likelihood estimate of the symbol timing
:math:`\theta` and the offset :math:`\epsilon` (in spacings) for
Gaussian-like OFDM samples in white noise:

.. math::

    \gamma(m) = \sum_{k=m}^{m+c-1} r_k\, r^*_{k+N}, \qquad
    \Phi(m) = \tfrac12 \sum_{k=m}^{m+c-1} |r_k|^2 + |r_{k+N}|^2,

    \hat\theta = \arg\max_\theta\, |\gamma(\theta)| - \rho\,\Phi(\theta),
    \qquad \hat\epsilon = -\tfrac{1}{2\pi}\angle\gamma(\hat\theta),

with :math:`\rho = \mathrm{SNR}/(\mathrm{SNR}+1)` (their eq. 10-13).
The kernel's running sums give :math:`\gamma` (as its conjugate) and the
later half of :math:`\Phi` in :math:`O(n)`.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .._checks import integer
from .frequency import _finite
from .timing import _correlate, _signal

__all__ = ["CpEstimate", "cp_estimate"]


class CpEstimate(NamedTuple):
    """Result of :func:`tonebank.sync.cp_estimate`."""

    #: Start of a cyclic prefix, modulo the symbol length ``n_fft + cp_length``;
    #: int array of the leading shape (a Python int for one stream).
    timing: np.ndarray | int
    #: The offset in subcarrier spacings, in (-0.5, 0.5]; float64 like ``timing``.
    cfo_spacings: np.ndarray | float
    #: The log-likelihood per candidate start, shape ``(..., n_fft + cp_length)``.
    likelihood: np.ndarray


def cp_estimate(samples, n_fft: int, cp_length: int, *, snr_db: float,
                n_symbols: int | None = None) -> CpEstimate:
    r"""Maximum-likelihood symbol timing and fractional offset from the cyclic prefix.

    Parameters
    ----------
    samples : array_like of complex
        Shape ``(..., n)``: CP-OFDM samples (a constant prefix length),
        ``n >= n_fft + cp_length + (n_fft + cp_length) - 1`` so that every
        candidate start has one whole prefix-and-body in view.
    n_fft, cp_length : int
        Body and prefix lengths in samples (``cp_length >= 1``).
    snr_db : float
        Per-sample SNR assumed by the estimator (sets :math:`\rho`).
    n_symbols : int, optional
        Number of symbol periods averaged (the log-likelihood and
        :math:`\gamma` of the same candidate in successive symbols are
        added); default: as many as fit.

    Returns
    -------
    CpEstimate
        ``(timing, cfo_spacings, likelihood)``.

    Raises
    ------
    TypeError, ValueError
        Bad types, sizes out of range, too few samples.

    Notes
    -----
    Candidates are the ``n_fft + cp_length`` starts ``0 .. n_fft +
    cp_length - 1``; for each, the likelihood terms of ``n_symbols``
    successive symbols are summed (:math:`|\sum_i \gamma_i| - \rho \sum_i
    \Phi_i`, the joint likelihood of independent symbols sharing one
    offset).  Noise-free
    (:math:`\rho = 1`) the likelihood reaches 0 exactly at the true start
    and is negative elsewhere, and :math:`\hat\epsilon` is exact for
    :math:`|\epsilon| < 1/2`.  Cost: :math:`O(n)`.

    References
    ----------
    J.-J. van de Beek, M. Sandell and P. O. Borjesson, "ML estimation of
    time and frequency offset in OFDM systems", IEEE Trans. Signal
    Process. 45 (7), 1997.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank import sync
    >>> plan = tonebank.CarrierPlan.centered(64, 52, cp_length=16)
    >>> rng = np.random.default_rng(4)
    >>> x = tonebank.CpOfdm(plan).modulate(np.exp(2j * np.pi * rng.random(8 * 52)))
    >>> rx = np.roll(x, 23) * np.exp(2j * np.pi * 0.2 * np.arange(x.size) / 64)
    >>> est = sync.cp_estimate(rx, 64, 16, snr_db=30)
    >>> est.timing, round(est.cfo_spacings, 3)
    (23, 0.2)
    """
    x = _signal(samples)
    n_fft = integer(n_fft, "n_fft", minimum=1)
    cp = integer(cp_length, "cp_length", minimum=1, maximum=n_fft)
    snr = 10.0 ** (_finite(snr_db, "snr_db") / 10.0)
    rho = snr / (snr + 1.0)
    period = n_fft + cp
    n = x.shape[-1]
    n_out = n - n_fft - cp + 1
    available = n_out // period if n_out > 0 else 0
    if available < 1:
        raise ValueError(f"samples has {n} samples on its last axis; at least "
                         f"{2 * period - 1} are needed (every start of one symbol period "
                         "with its prefix and body)")
    if n_symbols is None:
        count = available
    else:
        count = integer(n_symbols, "n_symbols", minimum=1)
        if count > available:
            raise ValueError(f"n_symbols={count} symbol periods need "
                             f"{count * period + n_fft + cp - 1} samples, samples has {n}")
    p, r = _correlate(x, n_fft, cp)
    p = p[..., :count * period].astype(np.complex128)
    r_late = r[..., :count * period].astype(np.float64)
    power = np.abs(x[..., :count * period + cp].astype(np.complex128)) ** 2
    cum = np.concatenate((np.zeros(x.shape[:-1] + (1,)), np.cumsum(power, axis=-1)), axis=-1)
    r_early = cum[..., cp:cp + count * period] - cum[..., :count * period]
    lead = x.shape[:-1]
    gamma = p.reshape(lead + (count, period)).sum(axis=-2)
    phi = 0.5 * (r_early + r_late).reshape(lead + (count, period)).sum(axis=-2)
    # One offset for all symbols: the joint likelihood takes |sum gamma|.
    like = np.abs(gamma) - rho * phi
    theta = np.argmax(like, axis=-1)
    g = np.take_along_axis(gamma, theta[..., None], axis=-1)[..., 0]
    # p = conj(gamma of the paper), hence the sign.
    eps = np.angle(g) / (2 * math.pi)
    if theta.ndim == 0:
        return CpEstimate(int(theta), float(eps), like)
    return CpEstimate(theta, eps, like)
