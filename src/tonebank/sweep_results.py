r"""Results of error-rate sweeps: per-point counts, rates, intervals, files.

A sweep (:mod:`tonebank.sweep`) ends with a :class:`SweepResult`: one
:class:`PointResult` per finished point, holding the summed counts of
the batches the point used.  :func:`read_results` loads the same object
from the JSON-lines file a sweep writes, and :meth:`SweepResult.to_csv`
exports a table for a spreadsheet.

.. rubric:: The results file

One JSON object per line, UTF-8, keys sorted, ``\n`` line ends:

* line 1, the *header*: what is needed to reproduce the sweep (the
  ``format`` tag, tonebank / numpy / Python versions, kernel backend,
  parameter name, seed, stop rule, ``frames_per_batch``, the points and
  the trial descriptions).  It holds no time, host or path, so an
  interrupted and an uninterrupted run of the same sweep write the same
  bytes.
* one line per finished point, in point order: ``index``, ``value``,
  ``snr_db``, ``counts`` (every tally the trial returned, summed over
  the batches used), ``batches``, ``stop_reason``, ``entropy`` (the
  seed) and ``spawn_key_first`` / ``spawn_key_last``: batch ``j`` of
  point ``i`` drew from ``numpy.random.SeedSequence(entropy,
  spawn_key=(i, j))`` for ``j`` from 0 to ``batches - 1``.

Error rates are engineering estimates from a simulation model; the
intervals assume independent trials (see
:class:`~tonebank.metrics.ErrorCount`).
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
from dataclasses import dataclass, field

import numpy as np

from .metrics import ErrorCount

__all__ = ["PointResult", "SweepResult", "read_results"]

#: The ``format`` tag of the first line of a sweep file.
FILE_FORMAT = "tonebank-sweep/1"

#: Unit name -> (errors key, total key) in a trial's counts.
UNITS = {"bit": ("bit_errors", "bits"), "symbol": ("symbol_errors", "symbols"),
         "frame": ("frame_errors", "frames")}

#: Counts every trial must report (integers).
REQUIRED_COUNTS = ("bit_errors", "bits", "symbol_errors", "symbols", "frame_errors", "frames")

#: The two optional counts that give the EVM of a point.
EVM_KEYS = ("evm_error_energy", "evm_reference_energy")


def check_unit(unit) -> tuple[str, str]:
    """``(errors key, total key)`` of *unit*, or TypeError/ValueError naming it."""
    if not isinstance(unit, str):
        raise TypeError(f"unit must be a string, one of {tuple(UNITS)}; got {unit!r}")
    if unit not in UNITS:
        raise ValueError(f"unit={unit!r} is unknown; allowed: 'bit', 'symbol' or 'frame'")
    return UNITS[unit]


def dumps(obj) -> str:
    """The one JSON form used in sweep files: sorted keys, compact, no NaN."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), allow_nan=False)


@dataclass(frozen=True)
class PointResult:
    """The outcome of one point of a sweep (immutable).

    Parameters
    ----------
    index : int
        Position of the point in the sweep, from 0.
    value : int, float or str
        The swept parameter's value at this point (equal to ``snr_db``
        in an SNR sweep).
    snr_db : float
        The SNR passed to the trial, in dB, in the trial's own convention.
    count_items : tuple
        The summed counts as sorted ``(key, value)`` pairs (str, int or float); read them as a
        dict through :attr:`counts`.
    batches : int
        Number of batches summed (batches ``0 .. batches - 1``).
    stop_reason : str
        Why the point ended: ``"errors"`` (minimum errors reached),
        ``"precision"`` (minimum errors and the interval target reached),
        ``"max_bits"`` or ``"max_frames"``.
    seed : int
        The sweep's seed (the entropy of every batch's SeedSequence).

    See Also
    --------
    SweepResult : all points of a sweep.
    tonebank.metrics.ErrorCount : the counts with intervals.

    Examples
    --------
    >>> from tonebank.sweep_results import PointResult
    >>> p = PointResult(0, 4.0, 4.0, (("bit_errors", 25), ("bits", 10000),
    ...                 ("frame_errors", 9), ("frames", 10), ("symbol_errors", 25),
    ...                 ("symbols", 10000)), 1, "errors", 7)
    >>> p.ber, p.error_count("frame")
    (0.0025, ErrorCount(errors=9, total=10))
    """

    index: int
    value: object
    snr_db: float
    count_items: tuple = field(repr=False)
    batches: int
    stop_reason: str
    seed: int

    @property
    def counts(self) -> dict:
        """The summed counts as a new dict (key -> int or float)."""
        return dict(self.count_items)

    def error_count(self, unit: str = "bit") -> ErrorCount:
        """The errors out of the trials of one unit as an ErrorCount.

        Parameters
        ----------
        unit : {"bit", "symbol", "frame"}, optional
            Which count (default ``"bit"``).

        Returns
        -------
        tonebank.metrics.ErrorCount

        Raises
        ------
        TypeError, ValueError
            If ``unit`` is not one of the three names.
        """
        errors_key, total_key = check_unit(unit)
        counts = self.counts
        return ErrorCount(int(counts[errors_key]), int(counts[total_key]))

    def interval(self, unit: str = "bit", confidence: float = 0.95,
                 method: str = "wilson") -> tuple[float, float]:
        """Confidence interval of the error rate of ``unit``.

        See :meth:`tonebank.metrics.ErrorCount.interval` for ``confidence``
        and ``method``.
        """
        return self.error_count(unit).interval(confidence, method)

    @property
    def ber(self) -> float:
        """Bit error rate (NaN without bits)."""
        return self.error_count("bit").rate

    @property
    def ser(self) -> float:
        """Symbol error rate (NaN without symbols)."""
        return self.error_count("symbol").rate

    @property
    def fer(self) -> float:
        """Frame error rate (NaN without frames)."""
        return self.error_count("frame").rate

    @property
    def frames(self) -> int:
        """Number of frames simulated."""
        return int(self.counts["frames"])

    @property
    def evm(self) -> float | None:
        r"""RMS EVM as a ratio, or None when the counts carry no EVM energies.

        :math:`\sqrt{E_e / E_r}` with ``evm_error_energy`` :math:`E_e` and
        ``evm_reference_energy`` :math:`E_r` summed over the batches (the
        same normalisation as :func:`tonebank.metrics.evm` with the
        measured reference power).
        """
        counts = self.counts
        if not all(k in counts for k in EVM_KEYS) or counts[EVM_KEYS[1]] <= 0:
            return None
        return math.sqrt(counts[EVM_KEYS[0]] / counts[EVM_KEYS[1]])

    @property
    def spawn_keys(self) -> tuple[tuple[int, int], ...]:
        """The SeedSequence spawn key of every batch used, ``(index, j)``."""
        return tuple((self.index, j) for j in range(self.batches))

    def to_record(self) -> dict:
        """The point as the dict written on its line of a sweep file."""
        return {"index": self.index, "value": self.value, "snr_db": self.snr_db,
                "counts": self.counts, "batches": self.batches,
                "stop_reason": self.stop_reason, "entropy": self.seed,
                "spawn_key_first": [self.index, 0],
                "spawn_key_last": [self.index, self.batches - 1]}

    @classmethod
    def from_record(cls, record: dict, where: str) -> PointResult:
        """Rebuild a point from its file line (``where`` names it in errors)."""
        try:
            counts = record["counts"]
            return cls(int(record["index"]), record["value"], float(record["snr_db"]),
                       tuple(sorted(counts.items())), int(record["batches"]),
                       str(record["stop_reason"]), int(record["entropy"]))
        except (KeyError, TypeError, ValueError, AttributeError) as exc:
            raise ValueError(f"{where} is not a sweep point record ({exc!r})") from None


@dataclass(frozen=True)
class SweepResult:
    """The finished points of a sweep, in order (immutable).

    Parameters
    ----------
    parameter : str
        Name of the swept parameter (``"snr_db"`` for an SNR sweep).
    points : tuple of PointResult
        The finished points, in order (all of them once the sweep is
        complete).
    n_points : int
        Number of points the sweep defines.
    header_json : str
        The sweep file's header line (JSON); read it as a dict through
        :attr:`metadata`.
    discarded_batches : int
        Speculative batches computed in parallel beyond a point's stop
        and thrown away in this run (0 when serial or loaded from a
        file).  Not part of equality: it depends on the scheduling.

    See Also
    --------
    tonebank.sweep.Sweep.run : produces it.
    read_results : loads it from a sweep file.

    Examples
    --------
    >>> from tonebank.sweep_results import PointResult, SweepResult
    >>> counts = (("bit_errors", 3), ("bits", 1000), ("frame_errors", 2),
    ...           ("frames", 4), ("symbol_errors", 3), ("symbols", 1000))
    >>> r = SweepResult("snr_db", (PointResult(0, 6.0, 6.0, counts, 1, "max_bits", 1),),
    ...                 1, "{}")
    >>> print(r.to_csv(), end="")
    index,snr_db,batches,stop_reason,bit_errors,bits,ber,ber_low,ber_high,...
    0,6.0,1,max_bits,3,1000,0.003,0.00102...,0.00878...,...
    """

    parameter: str
    points: tuple
    n_points: int
    header_json: str = field(repr=False)
    discarded_batches: int = field(default=0, compare=False, repr=False)

    def __len__(self) -> int:
        return len(self.points)

    def __iter__(self):
        return iter(self.points)

    def __getitem__(self, index) -> PointResult:
        return self.points[index]

    @property
    def complete(self) -> bool:
        """True when every point of the sweep has finished."""
        return len(self.points) == self.n_points

    @property
    def metadata(self) -> dict:
        """The header of the sweep file as a new dict (versions, seed, stop rule ...)."""
        return json.loads(self.header_json)

    @property
    def values(self) -> tuple:
        """The swept values of the finished points."""
        return tuple(p.value for p in self.points)

    @property
    def snr_db(self) -> np.ndarray:
        """SNR of each finished point in dB, float64 of shape ``(n,)``."""
        return np.array([p.snr_db for p in self.points], dtype=np.float64)

    def rates(self, unit: str = "bit") -> np.ndarray:
        """Error rate of ``unit`` per finished point, float64 of shape ``(n,)``."""
        check_unit(unit)
        return np.array([p.error_count(unit).rate for p in self.points], dtype=np.float64)

    def intervals(self, unit: str = "bit", confidence: float = 0.95,
                  method: str = "wilson") -> np.ndarray:
        """Confidence intervals per finished point, float64 of shape ``(n, 2)``."""
        check_unit(unit)
        return np.array([p.interval(unit, confidence, method) for p in self.points],
                        dtype=np.float64).reshape(len(self.points), 2)

    @property
    def ber(self) -> np.ndarray:
        """Bit error rate per finished point (``rates("bit")``)."""
        return self.rates("bit")

    @property
    def ser(self) -> np.ndarray:
        """Symbol error rate per finished point (``rates("symbol")``)."""
        return self.rates("symbol")

    @property
    def fer(self) -> np.ndarray:
        """Frame error rate per finished point (``rates("frame")``)."""
        return self.rates("frame")

    def to_csv(self, path=None, *, confidence: float = 0.95, method: str = "wilson"):
        """Write the points as comma-separated values for a spreadsheet.

        Parameters
        ----------
        path : str or os.PathLike, optional
            File to write (overwritten).  None (default) returns the text.
        confidence : float, optional
            Level of the interval columns (default 0.95).
        method : {"wilson", "clopper-pearson"}, optional
            Interval method (default ``"wilson"``).

        Returns
        -------
        str or None
            The CSV text when ``path`` is None.

        Raises
        ------
        TypeError, ValueError
            If ``confidence`` or ``method`` is not allowed (see
            :meth:`tonebank.metrics.ErrorCount.interval`), or ``path`` is
            not a path.

        Notes
        -----
        Columns: ``index``, the parameter (unless it is ``snr_db``),
        ``snr_db``, ``batches``, ``stop_reason``, then per unit (bit,
        symbol, frame) the errors, the total, the rate and the interval
        limits (``ber``, ``ber_low``, ``ber_high`` ...), ``evm_percent``
        where the counts carry EVM energies, then any other counts in key
        order.  Floats are written in Python's shortest round-trip form.
        """
        ErrorCount(0, 0).interval(confidence, method)     # argument checks
        extra = sorted({k for p in self.points for k in p.counts}
                       - set(REQUIRED_COUNTS) - set(EVM_KEYS))
        has_evm = any(p.evm is not None for p in self.points)
        head = ["index"] + ([self.parameter] if self.parameter != "snr_db" else [])
        head += ["snr_db", "batches", "stop_reason"]
        for unit, short in (("bit", "ber"), ("symbol", "ser"), ("frame", "fer")):
            errors_key, total_key = UNITS[unit]
            head += [errors_key, total_key, short, f"{short}_low", f"{short}_high"]
        head += (["evm_percent"] if has_evm else []) + extra
        rows = []
        for p in self.points:
            counts = p.counts
            row = [p.index] + ([p.value] if self.parameter != "snr_db" else [])
            row += [p.snr_db, p.batches, p.stop_reason]
            for unit in UNITS:
                count = p.error_count(unit)
                low, high = count.interval(confidence, method)
                row += [count.errors, count.total, count.rate, low, high]
            if has_evm:
                row.append("" if p.evm is None else 100.0 * p.evm)
            row += [counts.get(k, "") for k in extra]
            rows.append([repr(v) if isinstance(v, float) else v for v in row])
        buffer = io.StringIO(newline="")
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(head)
        writer.writerows(rows)
        text = buffer.getvalue()
        if path is None:
            return text
        if not isinstance(path, (str, os.PathLike)):
            raise TypeError(f"path must be a str, an os.PathLike or None; got {path!r}")
        with open(path, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        return None


# -- the JSON-lines file ---------------------------------------------------------


def scan_file(path) -> tuple[dict | None, list[dict], int, int]:
    """Read a sweep file without changing it.

    Returns ``(header, point records, length of the complete lines in
    bytes, file length)``; the header is None when the file holds no
    complete first line.  A last line without its ``\\n`` (a write cut
    short) is left out of the records; ``complete length < file length``
    then tells the caller.  A complete line that is not JSON raises
    ValueError naming the file and line.
    """
    with open(path, "rb") as handle:
        data = handle.read()
    end = data.rfind(b"\n") + 1          # 0 when there is no complete line
    lines = data[:end].split(b"\n")[:-1]
    records = []
    for number, line in enumerate(lines, start=1):
        try:
            record = json.loads(line.decode("utf-8"))
        except (UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise ValueError(f"{os.fspath(path)!r} line {number} is not JSON ({exc}); the "
                             "file is damaged: repair or remove it") from None
        if not isinstance(record, dict):
            raise ValueError(f"{os.fspath(path)!r} line {number} is not a JSON object")
        records.append(record)
    if not records:
        return None, [], end, len(data)
    header = records[0]
    if header.get("format") != FILE_FORMAT:
        raise ValueError(f"{os.fspath(path)!r} is not a tonebank sweep file: its first line "
                         f"has format={header.get('format')!r}, expected {FILE_FORMAT!r}")
    for number, record in enumerate(records[1:], start=2):
        if record.get("index") != number - 2:
            raise ValueError(f"{os.fspath(path)!r} line {number} holds point "
                             f"index={record.get('index')!r}, expected {number - 2}: "
                             "points must follow each other in order")
    return header, records[1:], end, len(data)


def result_from(header: dict, records: list[dict], path, discarded: int = 0) -> SweepResult:
    """A SweepResult from a parsed header and point records."""
    where = os.fspath(path) if path is not None else "sweep"
    points = tuple(PointResult.from_record(r, f"{where!r} line {i + 2}")
                   for i, r in enumerate(records))
    try:
        parameter, n_points = str(header["parameter"]), len(header["points"])
    except (KeyError, TypeError) as exc:
        raise ValueError(f"{where!r}: the header lacks {exc}") from None
    return SweepResult(parameter, points, n_points, dumps(header), discarded)


def read_results(path) -> SweepResult:
    """Load the results of a sweep from its JSON-lines file.

    Parameters
    ----------
    path : str or os.PathLike
        A file written by :meth:`tonebank.sweep.Sweep.run`.  It may be
        incomplete (an interrupted sweep): the result then holds the
        finished points and ``complete`` is False.  A last line cut short
        is ignored; the file is not changed.

    Returns
    -------
    SweepResult

    Raises
    ------
    TypeError
        If ``path`` is not a path.
    FileNotFoundError
        If the file does not exist.
    ValueError
        If the file is not a sweep file, holds no header, or a complete
        line is damaged.

    See Also
    --------
    tonebank.sweep.Sweep.run

    Examples
    --------
    >>> import os, tempfile
    >>> from tonebank import sweep
    >>> path = os.path.join(tempfile.mkdtemp(), "bpsk.jsonl")
    >>> job = sweep.Sweep.over_snr(sweep.UncodedBpskTrial(), [2.0, 4.0], seed=5,
    ...                            stop=sweep.StopRule(min_errors=50, max_bits=10**6))
    >>> first = job.run(path)
    >>> again = sweep.read_results(path)
    >>> again == first, again.complete
    (True, True)
    """
    if not isinstance(path, (str, os.PathLike)):
        raise TypeError(f"path must be a str or os.PathLike; got {path!r}")
    header, records, _, _ = scan_file(path)
    if header is None:
        raise ValueError(f"{os.fspath(path)!r} holds no complete header line; it is empty "
                         "or its first write was cut short")
    return result_from(header, records, path)
