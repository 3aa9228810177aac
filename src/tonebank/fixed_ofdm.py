"""CP-OFDM synthesis and analysis in fixed point, with every intermediate kept.

:class:`FixedCpOfdm` runs the chain a firmware modem runs: quantise the
grid to the format, inverse FFT in fixed point, copy the cyclic prefix,
(the channel), strip the prefix, forward FFT in fixed point, and back to
complex values.  Each stage reports its exponent and saturations, and
:meth:`FixedCpOfdm.chain` returns every intermediate as integers so that
a port can be checked against it stage by stage (see
:mod:`tonebank.vectors`).

Scaling.  The grid is multiplied by ``grid_scale`` before it is
quantised (the constellation's largest component times ``grid_scale``
must stay below 1).  The inverse FFT has no ``1/n`` of its own: its
schedule's shifts are all the scaling there is, and the exponent says
how much that was; :meth:`FixedCpOfdm.to_grid` undoes both.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .fixedpoint import FixedFft, dequantize, quantize
from .plan import CarrierPlan

__all__ = ["FixedChain", "FixedCpOfdm"]


class FixedChain(NamedTuple):
    """Every stage of one fixed-point CP-OFDM chain (integers as a port computes them)."""

    #: Quantised grid, ``(S, n_fft, 2)``, natural bin order.
    grid_codes: np.ndarray
    #: Inverse-FFT output per symbol, ``(S, n_fft, 2)``.
    time_codes: np.ndarray
    #: Inverse-FFT exponent per symbol, ``(S,)``.
    time_exponent: np.ndarray
    #: The transmitted samples, prefixes included, ``(n_samples, 2)``.
    samples: np.ndarray
    #: Forward-FFT output per symbol, ``(S, n_fft, 2)``.
    rx_codes: np.ndarray
    #: Forward-FFT exponent per symbol, ``(S,)``.
    rx_exponent: np.ndarray
    #: The received grid as complex values, ``(S, n_fft)`` (the float equivalent).
    grid: np.ndarray
    #: Saturated components in the grid quantisation, the inverse FFT and the forward FFT.
    saturations: tuple


class FixedCpOfdm:
    """A CP-OFDM modulator and demodulator in Q15 or Q31 (immutable).

    Parameters
    ----------
    plan : tonebank.CarrierPlan
        Subcarriers and prefixes (one or several prefix lengths).
    fmt : {"q15", "q31"}, optional
        The format (default ``"q15"``).
    ifft_schedule, fft_schedule : str or tuple of int, optional
        Scaling schedules of the two transforms (see
        :mod:`tonebank.fixedpoint`; defaults ``"block"`` and ``"halve"``).
    rounding : {"half_up", "convergent"}, optional
        Rounding of the quantiser and of every shift (default ``"half_up"``).
    grid_scale : float, optional
        Multiplier of the grid before quantisation (default 0.5: a unit-
        energy 16-QAM's largest component, 0.95, lands at 0.47 of full
        scale).

    Raises
    ------
    TypeError, ValueError
        A plan that is not a CarrierPlan, an ``n_fft`` that is not a power
        of two, bad schedules, rounding or scale.

    See Also
    --------
    tonebank.fixed_analysis.evm_floor_db : what the chain adds to a design.

    Notes
    -----
    With the schedule shifts :math:`e_t` (inverse) and :math:`e_r`
    (forward), the receiver's complex grid is
    :math:`Y = 2^{e_t + e_r} \\cdot \\mathrm{codes} / 2^f / (n \\cdot
    \\mathrm{grid\\_scale})`: the inverse transform's missing ``1/n``
    is divided out here, so :math:`Y \\approx X` for the transmitted
    grid :math:`X`.  The channel between the two halves is the caller's
    (:meth:`analyze` takes any samples of the right shape).

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank.fixed_ofdm import FixedCpOfdm
    >>> plan = tonebank.CarrierPlan.centered(64, 48, cp_length=16)
    >>> qam = tonebank.Constellation.qam(16)
    >>> rng = np.random.default_rng(0)
    >>> grid = plan.place(qam.map(rng.integers(0, 2, 4 * 48 * 4)))
    >>> chain = FixedCpOfdm(plan).chain(grid)
    >>> chain.samples.shape, chain.samples.dtype, chain.saturations
    ((320, 2), dtype('int16'), (0, 0, 0))
    >>> err = chain.grid[:, plan.data_bins] - grid[:, plan.data_bins]
    >>> bool(10 * np.log10(np.mean(np.abs(err) ** 2)) < -40)      # EVM floor below -40 dB
    True
    """

    __slots__ = ("_plan", "_fmt", "_ifft", "_fft", "_rounding", "_scale")

    def __init__(self, plan, *, fmt: str = "q15", ifft_schedule="block", fft_schedule="halve",
                 rounding: str = "half_up", grid_scale: float = 0.5):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        self._plan = plan
        self._ifft = FixedFft(plan.n_fft, fmt=fmt, schedule=ifft_schedule, rounding=rounding,
                              inverse=True)
        self._fft = FixedFft(plan.n_fft, fmt=fmt, schedule=fft_schedule, rounding=rounding)
        self._fmt = self._ifft.fmt
        self._rounding = self._ifft.rounding
        scale = float(grid_scale)
        if not math.isfinite(scale) or scale <= 0:
            raise ValueError(f"grid_scale must be finite and > 0, got {grid_scale!r}")
        self._scale = scale

    @property
    def plan(self) -> CarrierPlan:
        """The carrier plan."""
        return self._plan

    @property
    def fmt(self) -> str:
        """Format name."""
        return self._fmt

    @property
    def ifft(self) -> FixedFft:
        """The transmitter's inverse transform."""
        return self._ifft

    @property
    def fft(self) -> FixedFft:
        """The receiver's forward transform."""
        return self._fft

    @property
    def grid_scale(self) -> float:
        """Multiplier of the grid before quantisation."""
        return self._scale

    def __repr__(self):
        return (f"FixedCpOfdm({self._plan!r}, fmt={self._fmt!r}, ifft_schedule="
                f"{self._ifft.schedule!r}, fft_schedule={self._fft.schedule!r}, "
                f"rounding={self._rounding!r}, grid_scale={self._scale!r})")

    def _grid(self, grid) -> np.ndarray:
        g = np.asarray(grid)
        if g.ndim != 2 or g.shape[-1] != self._plan.n_fft:
            raise ValueError(f"grid must have shape (n_symbols, n_fft={self._plan.n_fft}), got "
                             f"{g.shape}")
        return g

    def synthesize(self, grid):
        """Grid ``(S, n_fft)`` to fixed-point samples with prefixes.

        Returns
        -------
        samples : numpy.ndarray
            ``(n_samples, 2)`` codes.
        exponent : numpy.ndarray
            ``(S,)`` inverse-FFT exponent per symbol.
        saturations : tuple of int
            In the grid quantisation and in the inverse FFT.
        grid_codes, time_codes : numpy.ndarray
            The intermediates (see :class:`FixedChain`).
        """
        g = self._grid(grid)
        codes, sat_q = quantize(g, self._fmt, scale=self._scale, rounding=self._rounding)
        inv = self._ifft(codes)
        cps = self._plan.cp_for(g.shape[0])
        parts = []
        for s, cp in enumerate(cps):
            body = inv.values[s]
            parts.append(body[body.shape[0] - int(cp):])
            parts.append(body)
        samples = np.concatenate(parts, axis=0) if parts else inv.values.reshape(0, 2)
        return samples, inv.exponent, (sat_q, int(inv.saturations.sum())), codes, inv.values

    def analyze(self, samples, n_symbols: int):
        """Fixed-point samples ``(n_samples, 2)`` to the fixed-point grid of ``n_symbols``.

        Returns
        -------
        codes : numpy.ndarray
            ``(S, n_fft, 2)``.
        exponent : numpy.ndarray
            ``(S,)``.
        saturations : int
        """
        x = np.asarray(samples)
        need = self._plan.n_samples(n_symbols)
        if x.ndim != 2 or x.shape != (need, 2):
            raise ValueError(f"samples must have shape ({need}, 2) for {n_symbols} symbols, "
                             f"got {x.shape}")
        n = self._plan.n_fft
        starts = np.cumsum(np.concatenate(([0], n + self._plan.cp_for(n_symbols)[:-1])))
        cps = self._plan.cp_for(n_symbols)
        bodies = np.stack([x[int(a + c):int(a + c) + n] for a, c in zip(starts, cps)]) \
            if n_symbols else np.zeros((0, n, 2), x.dtype)
        out = self._fft(bodies)
        return out.values, out.exponent, int(out.saturations.sum())

    def to_grid(self, codes, exponent) -> np.ndarray:
        """Forward-FFT codes and their total exponent (both transforms') to complex values."""
        return dequantize(codes, self._fmt, exponent=exponent,
                          scale=self._scale * self._plan.n_fft)

    def chain(self, grid) -> FixedChain:
        """Run synthesis and analysis back to back (no channel) and keep every stage.

        Parameters
        ----------
        grid : array_like of complex
            ``(S, n_fft)``, natural bin order (e.g. from :meth:`CarrierPlan.place
            <tonebank.CarrierPlan.place>`).

        Returns
        -------
        FixedChain
        """
        g = self._grid(grid)
        samples, t_exp, (sat_q, sat_t), grid_codes, time_codes = self.synthesize(g)
        rx, r_exp, sat_r = self.analyze(samples, g.shape[0])
        out = self.to_grid(rx, t_exp + r_exp)
        return FixedChain(grid_codes, time_codes, t_exp, samples, rx, r_exp, out,
                          (sat_q, sat_t, sat_r))

    def export(self, folder, grid, *, c_header: str | None = None, overwrite: bool = False):
        """Write the whole chain for ``grid`` as firmware test vectors (:mod:`tonebank.vectors`).

        Arrays, in stage order (Q codes as ``(..., 2)`` = (re, im) pairs):
        ``grid_codes`` (symbol, bin); ``ifft_stage_1`` ... ``ifft_stage_m``
        and ``time_codes`` (symbol, sample); ``time_exponent`` (symbol);
        ``samples`` (sample, with prefixes); ``fft_stage_1`` ...
        ``fft_stage_m`` and ``rx_codes`` (symbol, bin); ``rx_exponent``
        (symbol); ``saturations`` (grid, inverse FFT, forward FFT).  The
        metadata give the format, schedules, rounding, grid scale, FFT size
        and prefix lengths.

        Parameters
        ----------
        folder : str or os.PathLike
            Where the files go (created if missing).
        grid : array_like of complex
            ``(S, n_fft)``, natural bin order.
        c_header : str, optional
            Also write ``<c_header>.h`` with the arrays as C initialisers.
        overwrite : bool, optional
            Replace an existing set of vectors (default false).

        Returns
        -------
        tonebank.vectors.Manifest

        Raises
        ------
        ValueError, TypeError
            As :meth:`chain` and :func:`tonebank.vectors.write_vectors` raise them.

        Examples
        --------
        >>> import tempfile, numpy as np, tonebank
        >>> from tonebank.fixed_ofdm import FixedCpOfdm
        >>> from tonebank.vectors import read_vectors
        >>> plan = tonebank.CarrierPlan.centered(16, 12, cp_length=4)
        >>> grid = plan.place(tonebank.Constellation.qpsk().map(np.zeros(2 * 12 * 2, int)))
        >>> with tempfile.TemporaryDirectory() as folder:
        ...     manifest = FixedCpOfdm(plan).export(folder, grid)
        ...     back = read_vectors(folder)
        >>> manifest.names[:3], back["samples"].shape
        (('grid_codes', 'ifft_stage_1', 'ifft_stage_2'), (40, 2))
        """
        from .vectors import write_vectors

        chain = self.chain(grid)
        arrays = {"grid_codes": chain.grid_codes}
        axes = {"grid_codes": ("symbol", "bin")}
        pairs = ["grid_codes"]
        for k, stage in enumerate(self._ifft.stages(chain.grid_codes), start=1):
            arrays[f"ifft_stage_{k}"] = stage
            axes[f"ifft_stage_{k}"] = ("symbol", "sample")
            pairs.append(f"ifft_stage_{k}")
        arrays["time_codes"] = chain.time_codes
        arrays["time_exponent"] = np.asarray(chain.time_exponent, dtype=np.int32)
        arrays["samples"] = chain.samples
        bodies = chain.time_codes                  # the prefix-free windows, as received
        for k, stage in enumerate(self._fft.stages(bodies), start=1):
            arrays[f"fft_stage_{k}"] = stage
            axes[f"fft_stage_{k}"] = ("symbol", "bin")
            pairs.append(f"fft_stage_{k}")
        arrays["rx_codes"] = chain.rx_codes
        arrays["rx_exponent"] = np.asarray(chain.rx_exponent, dtype=np.int32)
        arrays["saturations"] = np.asarray(chain.saturations, dtype=np.int64)
        pairs += ["time_codes", "samples", "rx_codes"]
        axes.update(time_codes=("symbol", "sample"), time_exponent=("symbol",),
                    samples=("sample",), rx_codes=("symbol", "bin"), rx_exponent=("symbol",))
        plan = self._plan
        metadata = {
            "format": self._fmt, "rounding": self._rounding, "grid_scale": self._scale,
            "n_fft": plan.n_fft, "n_symbols": int(chain.grid_codes.shape[0]),
            "cp_lengths": ",".join(str(int(c)) for c in plan.cp_for(chain.grid_codes.shape[0])),
            "ifft_schedule": _schedule_text(self._ifft),
            "fft_schedule": _schedule_text(self._fft),
        }
        return write_vectors(folder, arrays, metadata=metadata, complex_pairs=pairs, axes=axes,
                             c_header=c_header, overwrite=overwrite)


def _schedule_text(fft: FixedFft) -> str:
    """A schedule for a manifest: its name, or the shifts joined by commas."""
    return fft.schedule if isinstance(fft.schedule, str) else ",".join(map(str, fft.shifts))

