r"""Error-rate sweeps: serial, on local processes or on a cluster, resumable.

A *trial* is any picklable object with a method

    ``trial.run(n_frames, snr_db, rng) -> result``

whose ``result.counts`` is a dict of additive tallies over the frames:
always ``"bit_errors"``, ``"bits"``, ``"symbol_errors"``, ``"symbols"``,
``"frame_errors"`` and ``"frames"`` (integers), and possibly more (e.g.
``"evm_error_energy"`` and ``"evm_reference_energy"``, floats).  An
optional ``trial.describe() -> dict`` (JSON-serialisable) describes it
in the sweep file.

A :class:`Sweep` runs a trial at several points (SNR values, or values
of any parameter), each point in batches of ``frames_per_batch`` frames,
until a :class:`StopRule` is met, and returns a
:class:`~tonebank.sweep_results.SweepResult`.

.. rubric:: Reproducibility

Batch ``j`` of point ``i`` draws from its own stream,
``numpy.random.default_rng(numpy.random.SeedSequence(seed, spawn_key=(i, j)))``
-- the same stream as ``SeedSequence(seed).spawn(...)[i].spawn(...)[j]``.
The stop rule is checked on the cumulative counts of batches ``0 .. k``
in order, and a point's result is the sum of batches ``0 .. k`` for the
first ``k`` where the rule is met.  So the results are bit-identical
however the work is split: serial, any number of processes, any
executor.  Each batch runs on the kernel backend in force where
:meth:`Sweep.run` was called (the workers are told which).

Error rates are engineering estimates from simulation models.
"""

from __future__ import annotations

import concurrent.futures as cf
import json
import math
import numbers
import os
import pickle
import platform
from dataclasses import dataclass

import numpy as np

from . import _sweep_engine as _engine
from ._checks import integer, real
from .metrics import ErrorCount
from .sweep_results import (
    FILE_FORMAT,
    UNITS,
    PointResult,
    SweepResult,
    dumps,
    read_results,
    result_from,
)

__all__ = ["PointResult", "StopRule", "Sweep", "SweepPoint", "SweepResult",
           "UncodedBpskTrial", "TrialResult", "read_results"]

_METHODS = ("wilson", "clopper-pearson")


# -- stop rule -------------------------------------------------------------------


@dataclass(frozen=True)
class StopRule:
    r"""When a point of a sweep has seen enough (immutable).

    A point stops after the first batch at which its cumulative counts
    meet the *precision* criteria -- every one that is given --, or reach
    a *maximum*, whichever comes first.

    Parameters
    ----------
    min_errors : int or None, optional
        Errors of the watched unit to collect (default 100); None drops
        this criterion.
    max_bits : int or None, optional
        Stop once this many bits were simulated (default ``10**7``).
    max_frames : int or None, optional
        Stop once this many frames were simulated (default None).  At
        least one of ``max_bits`` and ``max_frames`` is required, so that
        a point without errors still ends.
    relative_half_width : float or None, optional
        Target precision: the interval's half-width over the estimated
        rate, ``(high - low) / (2 rate)``, must be at most this (e.g. 0.2
        for +-20 %); None (default) drops this criterion.
    confidence : float, optional
        Level of that interval, ``0 < confidence < 1`` (default 0.95).
    method : {"wilson", "clopper-pearson"}, optional
        Interval method (default ``"wilson"``), see
        :meth:`tonebank.metrics.ErrorCount.interval`.
    watch : {"bit", "symbol", "frame"}, optional
        Which count ``min_errors`` and the precision target watch
        (default ``"bit"``).

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        If a count is below 1, both maxima are None, the target is not
        positive, or a name is unknown.

    See Also
    --------
    Sweep

    Notes
    -----
    The maxima are checked after each batch, so a point may pass them by
    up to one batch; ``min_errors`` likewise stops at the first batch
    boundary at or beyond it.  With neither ``min_errors`` nor a target,
    every point runs to its maximum (a fixed budget).  Counting errors
    until a fixed number is reached gives a relative precision of about
    :math:`1/\sqrt{\text{errors}}` whatever the rate (100 errors: about
    +-20 % at 95 %; common practice, from memory).

    Examples
    --------
    >>> from tonebank.sweep import StopRule
    >>> rule = StopRule(min_errors=100, max_bits=10**6)
    >>> rule.reason({"bit_errors": 100, "bits": 5000})
    'errors'
    >>> rule.reason({"bit_errors": 3, "bits": 10**6}), rule.reason({"bit_errors": 3, "bits": 10})
    ('max_bits', None)
    """

    min_errors: int | None = 100
    max_bits: int | None = 10_000_000
    max_frames: int | None = None
    relative_half_width: float | None = None
    confidence: float = 0.95
    method: str = "wilson"
    watch: str = "bit"

    def __post_init__(self):
        def optional_count(name):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, integer(value, name, minimum=1))

        for name in ("min_errors", "max_bits", "max_frames"):
            optional_count(name)
        if self.max_bits is None and self.max_frames is None:
            raise ValueError("max_bits and max_frames are both None; give at least one so "
                             "that a point without errors still ends")
        if self.relative_half_width is not None:
            object.__setattr__(self, "relative_half_width", real(
                self.relative_half_width, "relative_half_width", minimum=0.0,
                allow_equal_min=False))
        object.__setattr__(self, "confidence", real(self.confidence, "confidence",
                                                    minimum=0.0, allow_equal_min=False,
                                                    below=1.0))
        for name, allowed in (("method", _METHODS), ("watch", tuple(UNITS))):
            value = getattr(self, name)
            if not isinstance(value, str):
                raise TypeError(f"{name} must be a string, one of {allowed}; got {value!r}")
            if value not in allowed:
                raise ValueError(f"{name}={value!r} is unknown; allowed: {allowed}")

    def reason(self, counts) -> str | None:
        """Why a point with these cumulative counts stops, or None to go on.

        Parameters
        ----------
        counts : dict
            Cumulative counts (at least the watched unit's errors and
            total, ``"bits"`` and ``"frames"`` where a maximum uses them;
            a missing count is taken as 0).

        Returns
        -------
        str or None
            ``"precision"`` (minimum errors and target met), ``"errors"``
            (minimum errors met, no target), ``"max_bits"``,
            ``"max_frames"``, or None.
        """
        errors_key, total_key = UNITS[self.watch]
        errors, total = int(counts.get(errors_key, 0)), int(counts.get(total_key, 0))
        precise = self.min_errors is not None or self.relative_half_width is not None
        if self.min_errors is not None and errors < self.min_errors:
            precise = False
        if precise and self.relative_half_width is not None:
            precise = errors > 0 and self.half_width(ErrorCount(errors, total)) \
                <= self.relative_half_width
        if precise:
            return "precision" if self.relative_half_width is not None else "errors"
        if self.max_bits is not None and counts.get("bits", 0) >= self.max_bits:
            return "max_bits"
        if self.max_frames is not None and counts.get("frames", 0) >= self.max_frames:
            return "max_frames"
        return None

    def half_width(self, count: ErrorCount) -> float:
        """The relative half-width ``(high - low) / (2 rate)`` of ``count``
        at this rule's confidence and method (``inf`` without errors)."""
        if count.errors == 0:
            return math.inf
        low, high = count.interval(self.confidence, self.method)
        return (high - low) / (2.0 * count.rate)

    def to_dict(self) -> dict:
        """The rule as a JSON-serialisable dict (written in sweep files)."""
        return {"min_errors": self.min_errors, "max_bits": self.max_bits,
                "max_frames": self.max_frames,
                "relative_half_width": self.relative_half_width,
                "confidence": self.confidence, "method": self.method, "watch": self.watch}


# -- a trial for trying the machinery -----------------------------------------------


@dataclass(frozen=True)
class TrialResult:
    """What a trial returns: ``counts``, a dict of additive tallies."""

    counts: dict


@dataclass(frozen=True)
class UncodedBpskTrial:
    r"""Uncoded BPSK over AWGN: a small trial to try sweeps with.

    Parameters
    ----------
    bits_per_frame : int, optional
        Bits (= symbols) per frame (default 1000).

    Notes
    -----
    ``snr_db`` is :math:`E_b/N_0` in dB.  With unit-energy symbols
    :math:`\pm 1` the noise is real Gaussian of variance
    :math:`N_0/2 = 1 / (2 \cdot 10^{E_b/N_0/10})`, so the bit error rate is
    :math:`Q(\sqrt{2 E_b/N_0})` (:func:`tonebank.theory.ber_bpsk`).  The
    counts include the EVM energies.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.sweep import UncodedBpskTrial
    >>> r = UncodedBpskTrial(100).run(5, 4.0, np.random.default_rng(1))
    >>> r.counts["bits"], r.counts["frames"]
    (500, 5)
    """

    bits_per_frame: int = 1000

    def __post_init__(self):
        object.__setattr__(self, "bits_per_frame",
                           integer(self.bits_per_frame, "bits_per_frame", minimum=1))

    def run(self, n_frames: int, snr_db: float, rng) -> TrialResult:
        """Simulate ``n_frames`` frames at :math:`E_b/N_0` = ``snr_db`` dB."""
        from .constellation import Constellation

        bpsk = Constellation.bpsk()
        bits = rng.integers(0, 2, (n_frames, self.bits_per_frame), dtype=np.uint8)
        sent = bpsk.map(bits)
        sigma = math.sqrt(0.5 / 10.0 ** (snr_db / 10.0))
        received = sent + sigma * rng.standard_normal(sent.shape)
        wrong = bpsk.demap(received) != bits
        error = received - sent
        return TrialResult({
            "bit_errors": int(wrong.sum()), "bits": int(bits.size),
            "symbol_errors": int(wrong.sum()), "symbols": int(bits.size),
            "frame_errors": int(wrong.any(axis=1).sum()), "frames": int(n_frames),
            "evm_error_energy": float(np.sum(error.real ** 2 + error.imag ** 2)),
            "evm_reference_energy": float(np.sum(np.abs(sent) ** 2)),
        })

    def describe(self) -> dict:
        """JSON description of the trial for sweep files."""
        return {"trial": "uncoded BPSK over AWGN", "snr": "Eb/N0 dB",
                "bits_per_frame": self.bits_per_frame}


# -- the sweep --------------------------------------------------------------------------


@dataclass(frozen=True)
class SweepPoint:
    """One point of a sweep: ``index``, ``value``, ``snr_db`` and its ``trial``."""

    index: int
    value: object
    snr_db: float
    trial: object


def _json_value(value, name: str):
    """A swept value as a JSON scalar (int, finite float or str)."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, bool) or not isinstance(value, (numbers.Real, str)):
        raise TypeError(f"{name} must be an int, a float or a str (it is written to the "
                        f"results file); got {value!r} ({type(value).__name__})")
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        return real(value, name)
    return value


def _describe(trial, name: str) -> dict:
    describe = getattr(trial, "describe", None)
    if describe is None:
        cls = type(trial)
        return {"type": f"{cls.__module__}.{cls.__qualname__}"}
    description = describe()
    if not isinstance(description, dict):
        raise TypeError(f"{name}.describe() must return a dict; got "
                        f"{type(description).__name__}")
    try:
        return json.loads(dumps(description))
    except (TypeError, ValueError) as exc:
        raise TypeError(f"{name}.describe() must return JSON-serialisable data with "
                        f"finite numbers; {exc}") from None


class Sweep:
    """Points to simulate, how each ends, and how its batches are seeded.

    Parameters
    ----------
    points : collections.abc.Iterable
        The points in order, ``(value, snr_db, trial)`` triples: the swept value (int, float or str), the
        SNR in dB passed to the trial, and the trial (see the module
        notes for the contract).
    parameter : str, optional
        Name of the swept parameter (default ``"snr_db"``), used in files
        and CSV headers.
    stop : StopRule, optional
        When a point ends (default ``StopRule()``: 100 bit errors or
        ``10**7`` bits).
    frames_per_batch : int, optional
        Frames per batch, the unit of work (default 10).  Choose it so a
        batch takes well over the executor's per-task overhead (a few
        milliseconds locally, more on a cluster).
    seed : int or None, optional
        Entropy of every batch's SeedSequence; None (default) draws one,
        readable as :attr:`seed` (pass it again to resume a file).

    Raises
    ------
    TypeError
        If a trial has no ``run`` method, ``describe()`` is not JSON, or
        an argument has the wrong type.
    ValueError
        If there are no points, or a number is out of range.

    See Also
    --------
    StopRule, tonebank.sweep_results.SweepResult

    Examples
    --------
    >>> from tonebank import sweep
    >>> job = sweep.Sweep.over_snr(sweep.UncodedBpskTrial(), [0.0, 2.0, 4.0], seed=11,
    ...                            stop=sweep.StopRule(min_errors=200, max_bits=10**6))
    >>> result = job.run()
    >>> [p.error_count().errors for p in result]
    [770, 392, 248]
    >>> [round(float(b), 4) for b in result.ber]
    [0.077, 0.0392, 0.0124]
    """

    def __init__(self, points, *, parameter: str = "snr_db", stop: StopRule | None = None,
                 frames_per_batch: int = 10, seed: int | None = None):
        if not isinstance(parameter, str) or not parameter:
            raise TypeError(f"parameter must be a non-empty string; got {parameter!r}")
        if stop is None:
            stop = StopRule()
        if not isinstance(stop, StopRule):
            raise TypeError(f"stop must be a tonebank.sweep.StopRule; got "
                            f"{type(stop).__name__}")
        self._parameter, self._stop = parameter, stop
        self._frames_per_batch = integer(frames_per_batch, "frames_per_batch", minimum=1)
        if seed is None:
            seed = int(np.random.SeedSequence().entropy)
        self._seed = integer(seed, "seed", minimum=0)
        try:
            items = list(points)
        except TypeError:
            raise TypeError(f"points must be an iterable of (value, snr_db, trial); got "
                            f"{type(points).__name__}") from None
        if not items:
            raise ValueError("points is empty; a sweep needs at least one point")
        checked, descriptions, trial_of = [], [], []
        for i, item in enumerate(items):
            if not isinstance(item, (tuple, list)) or len(item) != 3:
                raise TypeError(f"points[{i}] must be a (value, snr_db, trial) triple; "
                                f"got {item!r}")
            value, snr_db, trial = item
            value = _json_value(value, f"points[{i}] value")
            snr_db = real(snr_db, f"points[{i}] snr_db")
            if not callable(getattr(trial, "run", None)):
                raise TypeError(f"points[{i}] trial must have a run(n_frames, snr_db, rng) "
                                f"method; got {type(trial).__name__}")
            description = _describe(trial, f"points[{i}] trial")
            if description not in descriptions:
                descriptions.append(description)
            trial_of.append(descriptions.index(description))
            checked.append(SweepPoint(i, value, snr_db, trial))
        self._points = tuple(checked)
        self._descriptions = descriptions
        self._trial_of = trial_of

    @classmethod
    def over_snr(cls, trial, snr_db_values, *, stop: StopRule | None = None,
                 frames_per_batch: int = 10, seed: int | None = None) -> Sweep:
        """Sweep one trial over SNR values (``parameter="snr_db"``).

        Parameters
        ----------
        trial : object
            The trial (same object at every point).
        snr_db_values : collections.abc.Iterable
            SNRs in dB, in the trial's convention, in the order run.
        stop, frames_per_batch, seed
            As for :class:`Sweep`.

        Returns
        -------
        Sweep
        """
        try:
            values = list(snr_db_values)
        except TypeError:
            raise TypeError(f"snr_db_values must be an iterable of numbers; got "
                            f"{type(snr_db_values).__name__}") from None
        snrs = [real(v, f"snr_db_values[{i}]") for i, v in enumerate(values)]
        points = [(snr, snr, trial) for snr in snrs]
        return cls(points, parameter="snr_db", stop=stop, frames_per_batch=frames_per_batch,
                   seed=seed)

    @classmethod
    def over(cls, parameter: str, values, build, *, snr_db: float,
             stop: StopRule | None = None, frames_per_batch: int = 10,
             seed: int | None = None) -> Sweep:
        """Sweep any parameter at one SNR: ``build(value)`` makes each trial.

        Parameters
        ----------
        parameter : str
            Name of the parameter (for files and CSV headers).
        values : collections.abc.Iterable
            The values (int, float or str), in the order run.
        build : collections.abc.Callable
            ``build(value) -> trial``, called here, once per value, in this
            process (only the trials travel to workers).
        snr_db : float
            SNR in dB at every point.
        stop, frames_per_batch, seed
            As for :class:`Sweep`.

        Returns
        -------
        Sweep

        Examples
        --------
        >>> from tonebank import sweep
        >>> job = sweep.Sweep.over("bits_per_frame", [100, 400], sweep.UncodedBpskTrial,
        ...                        snr_db=3.0, seed=2,
        ...                        stop=sweep.StopRule(min_errors=None, max_frames=20))
        >>> [p.counts["bits"] for p in job.run()]
        [2000, 8000]
        """
        if not callable(build):
            raise TypeError(f"build must be callable, build(value) -> trial; got "
                            f"{type(build).__name__}")
        snr = real(snr_db, "snr_db")
        try:
            values = list(values)
        except TypeError:
            raise TypeError(f"values must be an iterable; got {type(values).__name__}") \
                from None
        points = [(v, snr, build(v)) for v in values]
        return cls(points, parameter=parameter, stop=stop, frames_per_batch=frames_per_batch,
                   seed=seed)

    # -- read-only views --

    @property
    def points(self) -> tuple:
        """The points, a tuple of :class:`SweepPoint`."""
        return self._points

    @property
    def parameter(self) -> str:
        """Name of the swept parameter."""
        return self._parameter

    @property
    def stop(self) -> StopRule:
        """The stop rule of every point."""
        return self._stop

    @property
    def frames_per_batch(self) -> int:
        """Frames per batch."""
        return self._frames_per_batch

    @property
    def seed(self) -> int:
        """Entropy of every batch's SeedSequence."""
        return self._seed

    def header(self) -> dict:
        """The first line of the results file, as a dict.

        Everything needed to reproduce the sweep and nothing that changes
        between an interrupted and an uninterrupted run on one machine:
        format tag, tonebank / numpy / Python versions, the kernel backend
        in force, parameter, seed and seeding scheme, stop rule, frames per
        batch, points (index, value, snr_db, trial number) and the trial
        descriptions.
        """
        import tonebank

        return {
            "format": FILE_FORMAT,
            "tonebank": tonebank.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
            "backend": tonebank.backend_info()["backend"],
            "parameter": self._parameter,
            "seed": self._seed,
            "seeding": "batch j of point i: numpy SeedSequence(seed, spawn_key=(i, j))",
            "stop": self._stop.to_dict(),
            "frames_per_batch": self._frames_per_batch,
            "points": [{"index": p.index, "value": p.value, "snr_db": p.snr_db,
                        "trial": self._trial_of[p.index]} for p in self._points],
            "trials": self._descriptions,
        }

    def run(self, path=None, *, workers: int | None = None,
            executor=None, max_in_flight: int | None = None,
            progress: bool = True, on_point=None) -> SweepResult:
        """Run the sweep (or the rest of it) and return its results.

        Parameters
        ----------
        path : str or os.PathLike, optional
            JSON-lines results file.  A new file gets the header and one
            line per finished point, in order, appended as each finishes.
            An existing file is resumed: its header must match this sweep,
            its finished points are kept (never rewritten) and only the
            others run; a last line cut short by a crash is dropped.  None
            (default): no file.
        workers : int, optional
            Processes to run batches in.  None or 1 with no ``executor``:
            serial, in this process (the default).  Above 1 with no
            ``executor``: a local process pool of that size, shut down at
            the end.  With an ``executor``: how many batches it runs at
            once (default ``os.cpu_count()``), which sets
            ``max_in_flight``.
        executor : object, optional
            A ``concurrent.futures.Executor``: where batches run, e.g. a
            ``ProcessPoolExecutor`` or a
            dask.distributed ``client.get_executor()``; not shut down here.
        max_in_flight : int, optional
            Batches submitted and not yet returned, at most (default twice
            the workers).  Earlier points get them first.
        progress : bool, optional
            Show a progress line on standard error (default True); shown
            only when standard error is a terminal.
        on_point : collections.abc.Callable, optional
            ``on_point(point_result)`` after each point is finished (and
            written), in order; an exception raised there stops the run
            (finished points stay in the file).

        Returns
        -------
        tonebank.sweep_results.SweepResult
            Every point (those read from the file included).

        Raises
        ------
        TypeError
            If an argument has the wrong type, a trial cannot be pickled
            for parallel work, or a trial's result has no valid counts.
        ValueError
            If the file belongs to another sweep (the message names every
            setting that differs) or is damaged, or a count is invalid.
        Exception
            Whatever a trial raises in a batch the serial order would run.

        Notes
        -----
        Work is cut into batches; with workers, later batches of a point
        may run before its stop is known and are thrown away when it
        stops (counted in ``discarded_batches``).  A point never has more
        than ``max_in_flight`` batches beyond its first unfinished one (so
        at most ``max_in_flight - 1`` are discarded per point), and while
        later points wait a point gets at most about as many batches in
        flight as it still needs by its error rate so far (at least one,
        and no more than it already summed), so the waste stays a small
        fraction of the work.
        Each batch sends its trial to the worker (pickled): keep trials
        small or make them cheap to pickle.
        """
        if path is not None and not isinstance(path, (str, os.PathLike)):
            raise TypeError(f"path must be a str, an os.PathLike or None; got {path!r}")
        if workers is not None:
            workers = integer(workers, "workers", minimum=1)
        if executor is not None and not isinstance(executor, cf.Executor):
            raise TypeError(f"executor must be a concurrent.futures.Executor or None; got "
                            f"{type(executor).__name__}")
        if max_in_flight is not None:
            max_in_flight = integer(max_in_flight, "max_in_flight", minimum=1)
        if not isinstance(progress, (bool, np.bool_)):
            raise TypeError(f"progress must be True or False; got {progress!r}")
        if on_point is not None and not callable(on_point):
            raise TypeError(f"on_point must be callable or None; got {type(on_point).__name__}")

        header = json.loads(dumps(self.header()))
        done_records = []
        if path is not None:
            if os.path.exists(path):
                done_records = _engine.resume(path, header)
            else:
                _engine.append_line(path, dumps(header))
        finished = [PointResult.from_record(r, f"{os.fspath(path)!r} line {i + 2}")
                    for i, r in enumerate(done_records)]
        todo = [p for p in self._points if p.index >= len(finished)]
        engine = _engine.Engine(self, path, header["backend"], finished, on_point, progress)
        own = None
        try:
            if todo and (executor is not None or (workers or 1) > 1):
                for p in {id(p.trial): p for p in todo}.values():
                    try:
                        pickle.dumps(p.trial)
                    except Exception as exc:     # pickling errors have many types
                        raise TypeError(f"the trial of point {p.index} cannot be pickled "
                                        f"for parallel work ({exc!r}); run with workers=1 "
                                        "or make it picklable") from None
                if executor is None:
                    own = executor = cf.ProcessPoolExecutor(workers,
                                                            mp_context=_engine.context())
                slots = max_in_flight or 2 * (workers or os.cpu_count() or 1)
                engine.run_parallel(todo, executor, slots)
            else:
                engine.run_serial(todo)
        finally:
            engine.close()
            if own is not None:
                own.shutdown(wait=True, cancel_futures=True)
        records = [p.to_record() for p in engine.finished]
        return result_from(header, json.loads(dumps(records)), path, engine.discarded)
