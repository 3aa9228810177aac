r"""Sweep descriptions in TOML files, for ``tonebank sweep CONFIG``.

A file has two tables: ``[link]`` (the parts of a :class:`tonebank.link.Link`)
and ``[sweep]`` (what to vary, when to stop, where to write).  Every key is
checked before anything runs; a mistake raises :class:`ConfigError` whose
message names the file, the line and the dotted key, and nothing is
written.  An example, every key shown (values are examples; only
``link.constellation`` and ``sweep.snr_db`` are required)::

    [link]
    constellation = "qam16"     # bpsk, qpsk, psk8, qam16, qam64, qam256, qam1024
    n_symbols = 14              # symbols per frame
    waveform = "cp"             # cp, wola, filtered, fbmc
    snr = "esn0"                # meaning of snr_db: esn0 or ebn0

    [link.plan]                 # either preset = "ieee80211a", or a centred plan:
    n_fft = 64
    n_active = 52
    cp_length = 16
    pilot_spacing = 13          # 0: no plan pilots
    sample_rate = 20e6          # Hz

    [link.pilots]               # optional: a pilot pattern instead of the plan's pilots
    kind = "comb"               # comb, scattered, block
    spacing = 3                 # comb/scattered spacing, block period
    shift = 3                   # scattered only

    [link.peak]                 # optional peak control
    kind = "slm"                # slm, clip, clip_and_filter
    n_candidates = 8            # slm
    side_tones = 4              # slm: data subcarriers reserved for the index (0: blind)
    clip_ratio_db = 5.0         # clip, clip_and_filter
    iterations = 4              # clip_and_filter

    [link.amplifier]            # optional
    model = "rapp"              # rapp, soft_limiter, saleh
    smoothness = 2.0            # rapp
    input_backoff_db = 8.0      # or output_backoff_db

    [link.channel]              # optional: multipath fading (else AWGN only)
    profile = "tdl_a"           # a published profile (tonebank.channel.PUBLISHED_PROFILES)
    delay_spread_s = 100e-9     # scaling of normalised profiles
    max_doppler_hz = 0.0
    n_rx = 2

    [link.receiver]             # optional; see tonebank.link.Receiver
    estimation = "pilots"       # pilots or perfect
    frequency = "lmmse"
    time = "average"
    combining = "mrc"

    [sweep]
    snr_db = [0.0, 2.0, 4.0]    # the points; or one value when another key is swept:
    # parameter = "amplifier.input_backoff_db"
    # values = [4.0, 6.0, 8.0]
    seed = 2026
    frames_per_batch = 20
    workers = 1
    output = "results.jsonl"    # relative to the file's folder

    [sweep.stop]
    min_errors = 100            # stop a point after this many errors ...
    max_bits = 1e6              # ... or this many bits
    watch = "bit"               # count bit, symbol or frame errors
    # relative_half_width = 0.2 # or when the interval is this tight ...
    # confidence = 0.95         # ... at this confidence

The format is the project's own; it is read with ``tomllib``
(Python 3.11 and later) or ``tomli`` (the ``config`` extra) before that.
"""

from __future__ import annotations

import functools
import math
import re
import pathlib
from pathlib import Path
from typing import Any, NamedTuple

from . import presets
from .amplifier import RappAmplifier, SalehAmplifier, SoftLimiter
from .channel import DelayProfile
from .constellation import Constellation
from .link import Amplifier, ClipAndFilter, Clipping, Fading, Link, Receiver
from .papr import SelectiveMapping
from .pilots import PilotPattern
from .plan import CarrierPlan
from .waveforms import CpOfdm, FbmcOqam, FilteredOfdm, WolaOfdm

__all__ = ["ConfigError", "SweepConfig", "load_config", "parse_config"]


class ConfigError(ValueError):
    """A sweep configuration that cannot be run (the message names the key and line)."""


class SweepConfig(NamedTuple):
    """A checked sweep configuration."""

    #: The link at the first point (all points were built once to check them).
    link: Link
    #: Name of the swept key, ``"snr_db"`` or a dotted link key such as
    #: ``"amplifier.input_backoff_db"``.
    parameter: str
    #: The values of the swept key.
    values: tuple
    #: The SNR of every point when another key is swept (None when SNR is swept).
    snr_db: float | None
    #: Builds the link for one value of the swept key (the same link when SNR is swept).
    build: Any
    #: Root seed of the random streams.
    seed: int
    #: Frames per unit of work.
    frames_per_batch: int
    #: Number of worker processes (1 runs in this process).
    workers: int
    #: Result file (JSON lines), or None.
    output: pathlib.Path | None
    #: When each point stops (from ``[sweep.stop]``; the rule's defaults
    #: where the table is absent).
    stop: Any


# ---- locating keys -------------------------------------------------------------------

_HEADER = re.compile(r"^\s*\[\s*([A-Za-z0-9_.\-\s\"]+?)\s*\]\s*(#.*)?$")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-\"]+(?:\s*\.\s*[A-Za-z0-9_\-\"]+)*)\s*=")


def _key_lines(text: str) -> dict:
    """Dotted key -> line number (1-based) of its table header or ``key =`` line."""
    lines: dict = {}
    table = ""
    for number, line in enumerate(text.splitlines(), start=1):
        header = _HEADER.match(line)
        if header and not line.lstrip().startswith("[["):
            table = ".".join(p.strip().strip('"') for p in header.group(1).split("."))
            lines.setdefault(table, number)
            continue
        key = _KEY.match(line)
        if key:
            name = ".".join(p.strip().strip('"') for p in key.group(1).split("."))
            lines.setdefault(f"{table}.{name}" if table else name, number)
    return lines


class _Table:
    """Typed reads from one TOML table; unknown keys are an error at :meth:`done`."""

    def __init__(self, data: dict, prefix: str, where):
        self._data = data
        self._prefix = prefix
        self._where = where
        self._seen: set = set()

    def key(self, name: str) -> str:
        return f"{self._prefix}.{name}" if self._prefix else name

    def fail(self, name: str | None, message: str):
        raise ConfigError(self._where(self.key(name) if name else self._prefix) + message)

    def has(self, name: str) -> bool:
        return name in self._data

    def get(self, name: str, kind: str, default=None, *, required=False, minimum=None,
            choices=None):
        self._seen.add(name)
        if name not in self._data:
            if required:
                self.fail(None, f"the key {self.key(name)!r} is required")
            return default
        value = self._data[name]
        value = self._typed(name, value, kind)
        if minimum is not None:
            items = value if isinstance(value, list) else [value]
            for v in items:
                if v < minimum:
                    self.fail(name, f"must be >= {minimum}, got {v!r}")
        if choices is not None and value not in choices:
            self.fail(name, f"{value!r} is not allowed; use one of {', '.join(choices)}")
        return value

    def _typed(self, name, value, kind):
        def bad(what):
            self.fail(name, f"must be {what}, got {value!r} ({type(value).__name__})")
        if kind == "int":
            if isinstance(value, bool) or not isinstance(value, int):
                if isinstance(value, float) and value.is_integer() and abs(value) < 2**53:
                    return int(value)        # 1e6 written for a count
                bad("an integer")
            return value
        if kind == "float":
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                bad("a number")
            if not math.isfinite(value):
                bad("a finite number")
            return float(value)
        if kind == "str":
            if not isinstance(value, str):
                bad("a string")
            return value
        if kind == "bool":
            if not isinstance(value, bool):
                bad("true or false")
            return value
        if kind == "floats":
            if not isinstance(value, list) or not value:
                bad("a non-empty array of numbers")
            return [self._typed(name, v, "float") for v in value]
        if kind == "table":
            if not isinstance(value, dict):
                bad("a table")
            return value
        raise AssertionError(kind)  # pragma: no cover - programming error

    def sub(self, name: str) -> _Table | None:
        value = self.get(name, "table")
        return None if value is None else _Table(value, self.key(name), self._where)

    def done(self):
        unknown = sorted(set(self._data) - self._seen)
        if unknown:
            allowed = ", ".join(sorted(self._seen))
            self.fail(unknown[0], f"unknown key; allowed here: {allowed}")


# ---- the link ------------------------------------------------------------------------

_CONSTELLATIONS = {
    "bpsk": Constellation.bpsk, "qpsk": Constellation.qpsk,
    "psk8": functools.partial(Constellation.psk, 8),
    **{f"qam{m}": functools.partial(Constellation.qam, m) for m in (16, 64, 256, 1024)},
}
_WAVEFORMS = ("cp", "wola", "filtered", "fbmc")
_PRESETS = {"ieee80211a": presets.ieee80211a}


def _plan(t: _Table | None) -> CarrierPlan:
    if t is None:
        return presets.ieee80211a()
    preset = t.get("preset", "str", choices=tuple(_PRESETS))
    if preset is not None:
        t.done()
        return _PRESETS[preset]()
    n_fft = t.get("n_fft", "int", required=True, minimum=2)
    n_active = t.get("n_active", "int", required=True, minimum=1)
    cp = t.get("cp_length", "int", 0, minimum=0)
    spacing = t.get("pilot_spacing", "int", 0, minimum=0)
    rate = t.get("sample_rate", "float")
    if rate is not None and rate <= 0:
        t.fail("sample_rate", f"must be > 0 Hz, got {rate!r}")
    t.done()
    try:
        return CarrierPlan.centered(n_fft, n_active, cp_length=cp,
                                    pilot_spacing=spacing or None, sample_rate=rate)
    except (TypeError, ValueError) as exc:
        t.fail(None, f"not a valid plan: {exc}")


def _pilots(t: _Table | None, plan: CarrierPlan):
    if t is None:
        return None
    kind = t.get("kind", "str", required=True, choices=("comb", "scattered", "block"))
    spacing = t.get("spacing", "int", 4, minimum=1)
    shift = t.get("shift", "int", 3, minimum=0)
    t.done()
    try:
        if kind == "comb":
            return PilotPattern.comb(plan, spacing)
        if kind == "scattered":
            return PilotPattern.scattered(plan, spacing, shift)
        return PilotPattern.block(plan, spacing)
    except (TypeError, ValueError) as exc:
        t.fail(None, f"not a valid pilot pattern for this plan: {exc}")


def _peak(t: _Table | None, plan: CarrierPlan):
    if t is None:
        return None
    kind = t.get("kind", "str", required=True, choices=("slm", "clip", "clip_and_filter"))
    if kind == "slm":
        n = t.get("n_candidates", "int", 8, minimum=1)
        side = t.get("side_tones", "int", 0, minimum=0)
        t.done()
        if side > plan.n_data:
            t.fail("side_tones", f"must be <= the plan's {plan.n_data} data subcarriers")
        try:
            return SelectiveMapping(plan, n_candidates=n, phases="psk8",
                                    side_subcarriers=plan.data_subcarriers[:side] if side
                                    else None)
        except (TypeError, ValueError) as exc:
            t.fail(None, f"not a valid selective mapping: {exc}")
    ratio = t.get("clip_ratio_db", "float", required=True)
    if kind == "clip":
        t.done()
        return Clipping(ratio)
    iterations = t.get("iterations", "int", 4, minimum=1)
    t.done()
    return ClipAndFilter(ratio, iterations=iterations)


def _amplifier(t: _Table | None):
    if t is None:
        return None
    model = t.get("model", "str", "rapp", choices=("rapp", "soft_limiter", "saleh"))
    smooth = t.get("smoothness", "float", 2.0) if model == "rapp" else None
    ibo = t.get("input_backoff_db", "float")
    obo = t.get("output_backoff_db", "float")
    t.done()
    if (ibo is None) == (obo is None):
        t.fail(None, "give exactly one of input_backoff_db and output_backoff_db")
    if smooth is not None and smooth <= 0:
        t.fail("smoothness", f"must be > 0, got {smooth!r}")
    curve = {"rapp": lambda: RappAmplifier(smoothness=smooth), "soft_limiter": SoftLimiter,
             "saleh": SalehAmplifier}[model]()
    return Amplifier(curve, input_backoff_db=ibo, output_backoff_db=obo)


def _channel(t: _Table | None):
    if t is None:
        return None
    from .channel import PUBLISHED_PROFILES
    name = t.get("profile", "str", required=True, choices=tuple(sorted(PUBLISHED_PROFILES)))
    spread = t.get("delay_spread_s", "float")
    doppler = t.get("max_doppler_hz", "float", 0.0, minimum=0.0)
    n_rx = t.get("n_rx", "int", 1, minimum=1)
    t.done()
    try:
        profile = DelayProfile.published(name, delay_spread_s=spread)
    except (TypeError, ValueError) as exc:
        t.fail("delay_spread_s" if spread is not None else "profile", str(exc))
    return Fading(profile, max_doppler_hz=doppler, n_rx=n_rx)


def _receiver(t: _Table | None) -> Receiver:
    if t is None:
        return Receiver()
    options = {}
    for name, choices in (("estimation", ("pilots", "perfect")),
                          ("frequency", ("linear", "spline", "dft", "lmmse")),
                          ("time", ("linear", "average", "wiener")),
                          ("equalizer", ("mmse", "zf")),
                          ("combining", ("mrc", "egc", "selection")),
                          ("slm_recovery", ("side", "blind"))):
        value = t.get(name, "str", choices=choices)
        if value is not None:
            options[name] = value
    n_taps = t.get("n_taps", "int", minimum=1)
    exact = t.get("exact_llr", "bool")
    t.done()
    if n_taps is not None:
        options["n_taps"] = n_taps
    if exact is not None:
        options["exact_llr"] = exact
    return Receiver(**options)


def _link(t: _Table) -> Link:
    name = t.get("constellation", "str", required=True, choices=tuple(_CONSTELLATIONS))
    n_symbols = t.get("n_symbols", "int", 14, minimum=1)
    waveform = t.get("waveform", "str", "cp", choices=_WAVEFORMS)
    snr = t.get("snr", "str", "esn0", choices=("esn0", "ebn0"))
    plan = _plan(t.sub("plan"))
    if waveform == "fbmc" and plan.cp_lengths != (0,):
        plan = plan.replace(cp_length=0)
    parts = dict(pilots=_pilots(t.sub("pilots"), plan), peak=_peak(t.sub("peak"), plan),
                 amplifier=_amplifier(t.sub("amplifier")), channel=_channel(t.sub("channel")),
                 receiver=_receiver(t.sub("receiver")))
    t.done()
    wave = {"cp": CpOfdm, "wola": WolaOfdm, "filtered": FilteredOfdm,
            "fbmc": FbmcOqam}[waveform](plan)
    try:
        return Link(plan, _CONSTELLATIONS[name](), n_symbols=n_symbols, waveform=wave,
                    snr=snr, **parts)
    except (TypeError, ValueError) as exc:
        t.fail(None, f"the parts do not fit together: {exc}")


def _set(tree: dict, dotted: str, value) -> dict:
    """A copy of ``tree`` with ``dotted`` (relative to it) set to ``value``."""
    head, _, rest = dotted.partition(".")
    out = dict(tree)
    if rest:
        out[head] = _set(tree.get(head, {}), rest, value)
    else:
        out[head] = value
    return out


def _link_for(table: dict, where, parameter: str, value) -> Link:
    """The link of ``table`` with the swept key set to ``value`` (called in the parent)."""
    if isinstance(value, float) and value.is_integer():
        value = int(value)            # 2.0 for a count such as channel.n_rx
    return _link(_Table(_set(table, parameter, value), "link", where))


# ---- the file ------------------------------------------------------------------------


def _toml():
    try:
        import tomllib
    except ModuleNotFoundError:                   # Python 3.10
        try:
            import tomli as tomllib
        except ModuleNotFoundError:
            raise ModuleNotFoundError(
                "reading sweep files needs tomllib (Python 3.11+) or tomli: "
                "pip install 'tonebank[config]'") from None
    return tomllib


def parse_config(text: str, *, source: str = "<config>", base: Path | None = None) -> SweepConfig:
    """Check a sweep description given as TOML text.

    Parameters
    ----------
    text : str
        The TOML document (see the module notes for the keys).
    source : str, optional
        Name used in messages (the file name).
    base : pathlib.Path, optional
        Folder that a relative ``sweep.output`` is taken from (default:
        the current folder).

    Returns
    -------
    SweepConfig

    Raises
    ------
    ConfigError
        Invalid TOML, an unknown key, a value of the wrong type or an
        impossible value; the message starts ``source:line: key:``.

    Examples
    --------
    >>> from tonebank.sweep_config import parse_config
    >>> cfg = parse_config('''
    ... [link]
    ... constellation = "qpsk"
    ... [link.receiver]
    ... estimation = "perfect"
    ... [sweep]
    ... snr_db = [4.0, 8.0]
    ... ''')
    >>> cfg.parameter, cfg.values, cfg.link.bits_per_frame
    ('snr_db', (4.0, 8.0), 1344)
    >>> parse_config('[link]\\nconstellation = "qam17"\\n[sweep]\\nsnr_db = [1.0]')
    Traceback (most recent call last):
    ...
    tonebank.sweep_config.ConfigError: <config>:2: link.constellation: 'qam17' is not allowed; use one of bpsk, qpsk, psk8, qam16, qam64, qam256, qam1024
    """
    tomllib = _toml()
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{source}: not valid TOML: {exc}") from None
    lines = _key_lines(text)

    def where(key: str) -> str:
        # The key's own line, else its nearest table's.
        probe = key
        while probe and probe not in lines:
            probe = probe.rpartition(".")[0]
        line = lines.get(probe)
        return f"{source}:{line}: {key}: " if line else f"{source}: {key}: "

    top = _Table(data, "", where)
    link_table = top.get("link", "table", required=True)
    sweep = top.sub("sweep")
    if sweep is None:
        top.fail(None, "the table [sweep] is required")
    top.done()
    link = _link(_Table(link_table, "link", where))

    parameter = sweep.get("parameter", "str", "snr_db")
    if parameter == "snr_db":
        values = tuple(sweep.get("snr_db", "floats", required=True))
        snr_db = None
        if sweep.has("values"):
            sweep.fail("values", "applies only with parameter = <a link key>; list the SNRs "
                       "in snr_db")
        build = functools.partial(_constant, link)
    else:
        values = tuple(sweep.get("values", "floats", required=True))
        snr_db = sweep.get("snr_db", "float", required=True)
        if parameter.partition(".")[0] not in ("plan", "pilots", "peak", "amplifier",
                                               "channel", "receiver", "n_symbols"):
            sweep.fail("parameter", f"{parameter!r} is not a key of [link] that can be "
                       "swept (e.g. 'amplifier.input_backoff_db', 'channel.n_rx')")
        build = functools.partial(_link_for, link_table, where, parameter)
        for v in values:                  # every point is checked before anything runs
            try:
                build(v)
            except ConfigError as exc:
                sweep.fail("values", f"value {v!r} of {parameter}: {exc}")
        link = build(values[0])
    seed = sweep.get("seed", "int", 0, minimum=0)
    per_batch = sweep.get("frames_per_batch", "int", 10, minimum=1)
    workers = sweep.get("workers", "int", 1, minimum=1)
    output = sweep.get("output", "str")
    stop_table = sweep.sub("stop")
    stop = {}
    if stop_table is not None:
        for name, kind, minimum in (("min_errors", "int", 1), ("max_bits", "int", 1),
                                    ("max_frames", "int", 1),
                                    ("relative_half_width", "float", 0.0),
                                    ("confidence", "float", 0.0)):
            value = stop_table.get(name, kind, minimum=minimum)
            if value is not None:
                stop[name] = value
        watch = stop_table.get("watch", "str", choices=("bit", "symbol", "frame"))
        if watch is not None:
            stop["watch"] = watch
        if stop.get("confidence", 0.5) >= 1.0 or stop.get("confidence", 0.5) <= 0.0:
            stop_table.fail("confidence", f"must be between 0 and 1, got {stop['confidence']!r}")
        stop_table.done()
    from .sweep import StopRule

    try:
        rule = StopRule(**stop)
    except (TypeError, ValueError) as exc:
        (stop_table or sweep).fail(None, f"not a valid stopping rule: {exc}")
    sweep.done()
    path = None
    if output is not None:
        path = Path(output)
        if not path.is_absolute():
            path = (base or Path.cwd()) / path
    return SweepConfig(link, parameter, values, snr_db, build, seed, per_batch, workers, path,
                       rule)


def _constant(link: Link, _value) -> Link:
    return link


def load_config(path) -> SweepConfig:
    """Read and check a sweep file (see :func:`tonebank.sweep_config.parse_config`).

    Parameters
    ----------
    path : str or os.PathLike
        The TOML file; a relative ``sweep.output`` is taken from its folder.

    Returns
    -------
    SweepConfig

    Raises
    ------
    ConfigError
        The file cannot be read or is not a valid description.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: cannot read the file: {exc}") from None
    return parse_config(text, source=str(path), base=path.parent)
