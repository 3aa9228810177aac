r"""Power-delay profiles: the paths of a multipath channel, as data.

A :class:`DelayProfile` lists the paths of a tapped-delay-line channel:
the excess delay of each path in seconds and its mean power in dB.  It
is plain data; :class:`tonebank.channel.TappedDelayLine` turns it into a
fading channel at a sample rate.

Published profiles
------------------
:meth:`tonebank.channel.DelayProfile.published` builds the profiles of two open
documents, held in :data:`tonebank.channel.PUBLISHED_PROFILES` with their sources:

``"itu_pedestrian_a"``, ``"itu_pedestrian_b"``, ``"itu_vehicular_a"``, ``"itu_vehicular_b"``
    Recommendation ITU-R M.1225, *Guidelines for evaluation of radio
    transmission technologies for IMT-2000* (1997), Annex 2, the
    tapped-delay-line tables of the outdoor-to-indoor and pedestrian
    test environment (channels A and B) and of the vehicular test
    environment (channels A and B).  Delays in ns, powers in dB.
``"tdl_a"``, ``"tdl_b"``, ``"tdl_c"``
    3GPP TR 38.901, *Study on channel model for frequencies from 0.5 to
    100 GHz*, clause 7.7.2, Tables 7.7.2-1 (TDL-A), 7.7.2-2 (TDL-B) and
    7.7.2-3 (TDL-C): non-line-of-sight profiles whose delays are
    *normalised* to an RMS delay spread of 1; they are scaled by a
    chosen delay spread (``delay_spread_s``), e.g. 100 ns or 300 ns.

All table values in this module were recalled, not read from the
documents at the time of writing ("from memory"); the tests check the
properties the documents state (each TR 38.901 table has a normalised
RMS delay spread of 1; the ITU channels have the RMS delay spreads
quoted in M.1225, also from memory).  Check them against your copy of
the documents before relying on them for anything formal.

Notes
-----
For path powers :math:`P_p` (linear) and delays :math:`\tau_p`, the
mean delay and the RMS delay spread are

.. math::

    \bar\tau = \frac{\sum_p P_p \tau_p}{\sum_p P_p}, \qquad
    \tau_\mathrm{rms} = \sqrt{\frac{\sum_p P_p \tau_p^2}{\sum_p P_p}
    - \bar\tau^2}

(the second central moment of the power-delay profile; ITU-R P.1407,
Annex 1, clause on the r.m.s. delay spread, from memory).
"""

from __future__ import annotations

import math
import numbers
import types

import numpy as np

__all__ = ["DelayProfile", "PUBLISHED_PROFILES"]


def _table(delays, powers_db, *, normalised, source):
    return types.MappingProxyType({
        "delays": tuple(float(d) for d in delays),
        "powers_db": tuple(float(p) for p in powers_db),
        "normalised": normalised,
        "source": source,
    })


_M1225 = "ITU-R M.1225 (1997), Annex 2, {} (from memory)"
_TR38901 = "3GPP TR 38.901, clause 7.7.2, Table {} (from memory)"

#: The published profiles, by name.  Each entry is a read-only mapping
#: with ``delays`` (ns for the ITU tables; normalised delays, to be
#: multiplied by a delay spread, for the TR 38.901 tables), ``powers_db``,
#: ``normalised`` (True for the TR 38.901 tables) and ``source`` (the
#: document, clause and table; every value is marked "from memory").
PUBLISHED_PROFILES = types.MappingProxyType({
    "itu_pedestrian_a": _table(
        [0, 110, 190, 410], [0.0, -9.7, -19.2, -22.8], normalised=False,
        source=_M1225.format("outdoor to indoor and pedestrian test environment, channel A")),
    "itu_pedestrian_b": _table(
        [0, 200, 800, 1200, 2300, 3700], [0.0, -0.9, -4.9, -8.0, -7.8, -23.9],
        normalised=False,
        source=_M1225.format("outdoor to indoor and pedestrian test environment, channel B")),
    "itu_vehicular_a": _table(
        [0, 310, 710, 1090, 1730, 2510], [0.0, -1.0, -9.0, -10.0, -15.0, -20.0],
        normalised=False,
        source=_M1225.format("vehicular test environment, channel A")),
    "itu_vehicular_b": _table(
        [0, 300, 8900, 12900, 17100, 20000], [-2.5, 0.0, -12.8, -10.0, -25.2, -16.0],
        normalised=False,
        source=_M1225.format("vehicular test environment, channel B")),
    "tdl_a": _table(
        [0.0000, 0.3819, 0.4025, 0.5868, 0.4610, 0.5375, 0.6708, 0.5750, 0.7618, 1.5375,
         1.8978, 2.2242, 2.1718, 2.4942, 2.5119, 3.0582, 4.0810, 4.4579, 4.5695, 4.7966,
         5.0066, 5.3043, 9.6586],
        [-13.4, 0.0, -2.2, -4.0, -6.0, -8.2, -9.9, -10.5, -7.5, -15.9, -6.6, -16.7, -12.4,
         -15.2, -10.8, -11.3, -12.7, -16.2, -18.3, -18.9, -16.6, -19.9, -29.7],
        normalised=True, source=_TR38901.format("7.7.2-1 (TDL-A)")),
    "tdl_b": _table(
        [0.0000, 0.1072, 0.2155, 0.2095, 0.2870, 0.2986, 0.3752, 0.5055, 0.3681, 0.3697,
         0.5700, 0.5283, 1.1021, 1.2756, 1.5474, 1.7842, 2.0169, 2.8294, 3.0219, 3.6187,
         4.1067, 4.2790, 4.7834],
        [0.0, -2.2, -4.0, -3.2, -9.8, -1.2, -3.4, -5.2, -7.6, -3.0, -8.9, -9.0, -4.8, -5.7,
         -7.5, -1.9, -7.6, -12.2, -9.8, -11.4, -14.9, -9.2, -11.3],
        normalised=True, source=_TR38901.format("7.7.2-2 (TDL-B)")),
    "tdl_c": _table(
        [0.0000, 0.2099, 0.2219, 0.2329, 0.2176, 0.6366, 0.6448, 0.6560, 0.6584, 0.7935,
         0.8213, 0.9336, 1.2285, 1.3083, 2.1704, 2.7105, 4.2589, 4.6003, 5.4902, 5.6077,
         6.3065, 6.6374, 7.0427, 8.6523],
        [-4.4, -1.2, -3.5, -5.2, -2.5, 0.0, -2.2, -3.9, -7.4, -7.1, -10.7, -11.1, -5.1, -6.8,
         -8.7, -13.2, -13.9, -13.9, -15.8, -17.1, -16.0, -15.7, -21.6, -22.8],
        normalised=True, source=_TR38901.format("7.7.2-3 (TDL-C)")),
})


def _readonly(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


def _real_vector(value, name: str) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError):
        arr = np.asarray(value, dtype=object)
    if arr.dtype.kind not in "iuf" or arr.ndim > 1:
        raise TypeError(f"{name} must be a 1-D sequence of real numbers; got {value!r}")
    arr = np.atleast_1d(arr).astype(np.float64)
    if arr.size == 0:
        raise ValueError(f"{name} is empty; a profile needs at least one path")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite; got {value!r}")
    return arr


def _positive(value, name: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number; got {value!r} "
                        f"({type(value).__name__})")
    result = float(value)
    if not (math.isfinite(result) and result > 0):
        raise ValueError(f"{name}={value!r} is not allowed; need a finite value > 0")
    return result


class DelayProfile:
    r"""The paths of a multipath channel: delays and mean powers (immutable).

    Parameters
    ----------
    delays_s : array_like of float
        Shape ``(n_paths,)``.  Excess delay of each path in seconds,
        finite and >= 0, in any order (tables list them as published).
    powers_db : array_like of float
        Shape ``(n_paths,)``.  Mean power of each path in dB, finite;
        only the ratios matter (:attr:`powers` is normalised to sum 1).
    name : str, optional
        A label for printing.
    source : str, optional
        Where the values come from (document, clause, table).

    Raises
    ------
    TypeError
        A sequence is not real-valued, or ``name``/``source`` is not a
        string.
    ValueError
        A delay is negative or not finite, a power is not finite, the two
        sequences differ in length, or they are empty.

    See Also
    --------
    TappedDelayLine : the fading channel built from a profile.

    Notes
    -----
    The RMS delay spread is the second central moment of the profile
    (see the module notes).  Cost: O(n_paths) at construction.

    Examples
    --------
    >>> from tonebank.channel import DelayProfile
    >>> p = DelayProfile([0.0, 1e-6], [0.0, 0.0])
    >>> round(p.rms_delay_spread_s * 1e9, 3)
    500.0
    >>> p.powers.tolist()
    [0.5, 0.5]
    """

    def __init__(self, delays_s, powers_db, *, name=None, source=None):
        delays = _real_vector(delays_s, "delays_s")
        powers_db = _real_vector(powers_db, "powers_db")
        if delays.shape != powers_db.shape:
            raise ValueError(f"delays_s has {delays.size} paths but powers_db has "
                             f"{powers_db.size}; give one power per delay")
        if np.any(delays < 0):
            raise ValueError(f"delays_s holds {float(delays[delays < 0][0])!r} s; every "
                             "delay must be >= 0 (excess delay after the first arrival)")
        for label, value in (("name", name), ("source", source)):
            if value is not None and not isinstance(value, str):
                raise TypeError(f"{label} must be a string or None; got {value!r}")
        self._delays = _readonly(delays)
        self._powers_db = _readonly(powers_db)
        linear = 10.0 ** ((powers_db - powers_db.max()) / 10.0)
        self._powers = _readonly(linear / linear.sum())
        self._name = name
        self._source = source

    # ---- alternative constructors --------------------------------------------

    @classmethod
    def published(cls, name: str, *, delay_spread_s=None) -> DelayProfile:
        """A profile of :data:`PUBLISHED_PROFILES`.

        Parameters
        ----------
        name : str
            One of the keys of :data:`PUBLISHED_PROFILES`
            (``"itu_pedestrian_a"``, ..., ``"tdl_c"``).
        delay_spread_s : float, optional
            Required for the normalised TR 38.901 profiles (``"tdl_*"``):
            the RMS delay spread in seconds that scales the normalised
            delays (TR 38.901 clause 7.7.3 scaling, from memory:
            ``delay = normalised delay * delay spread``).  Not allowed for
            the ITU profiles, whose delays are absolute.

        Returns
        -------
        DelayProfile
            Named after the table, with its source.

        Raises
        ------
        ValueError
            Unknown name, or ``delay_spread_s`` missing / not allowed /
            not finite and > 0.

        Examples
        --------
        >>> from tonebank.channel import DelayProfile
        >>> p = DelayProfile.published("tdl_c", delay_spread_s=300e-9)
        >>> p.n_paths, round(p.rms_delay_spread_s * 1e9, 1)
        (24, 300.0)
        """
        if not isinstance(name, str) or name not in PUBLISHED_PROFILES:
            raise ValueError(f"name={name!r} is not a published profile; allowed: "
                             + ", ".join(repr(k) for k in PUBLISHED_PROFILES))
        table = PUBLISHED_PROFILES[name]
        delays = np.asarray(table["delays"])
        if table["normalised"]:
            if delay_spread_s is None:
                raise ValueError(f"profile {name!r} has normalised delays; give "
                                 "delay_spread_s (seconds, e.g. 300e-9)")
            delays = delays * _positive(delay_spread_s, "delay_spread_s")
            label = f"{name} ({delay_spread_s * 1e9:g} ns)"
        else:
            if delay_spread_s is not None:
                raise ValueError(f"profile {name!r} has absolute delays; delay_spread_s="
                                 f"{delay_spread_s!r} is not allowed for it (leave it out)")
            delays = delays * 1e-9
            label = name
        return cls(delays, table["powers_db"], name=label, source=table["source"])

    @classmethod
    def exponential(cls, rms_delay_spread_s, tap_spacing_s, *,
                    floor_db=-30.0) -> DelayProfile:
        r"""An exponentially decaying profile of a given RMS delay spread.

        Parameters
        ----------
        rms_delay_spread_s : float
            The RMS delay spread of the result in seconds, > 0.
        tap_spacing_s : float
            Delay between neighbouring paths in seconds, > 0 (usually the
            sample period, giving a sample-spaced channel).
        floor_db : float, default -30.0
            The profile stops at the last tap whose power, relative to the
            first, is above ``floor_db`` for a decay constant equal to the
            requested spread (< 0).

        Returns
        -------
        DelayProfile
            Paths at ``m * tap_spacing_s`` with powers
            :math:`\propto e^{-m T / \tau_d}`, the decay :math:`\tau_d`
            solved so that the RMS delay spread of the (truncated,
            discrete) profile equals ``rms_delay_spread_s`` exactly.

        Raises
        ------
        ValueError
            A value is not finite / positive, ``floor_db >= 0``, or the
            spread is too small for the spacing (fewer than 2 taps).

        Notes
        -----
        A continuous exponential profile :math:`\propto e^{-\tau/\tau_d}`
        has RMS delay spread :math:`\tau_d` and frequency correlation
        :math:`r(\Delta f) = 1/(1 + j 2\pi \tau_d \Delta f)` (J.-J. van
        de Beek et al., "On channel estimation in OFDM systems", VTC 1995;
        O. Edfors et al., IEEE Trans. Commun. 46(7), 1998).  The sampled
        and truncated profile approaches it when ``tap_spacing_s`` is well
        below the spread.  Cost: a scalar root search.

        Examples
        --------
        >>> from tonebank.channel import DelayProfile
        >>> p = DelayProfile.exponential(200e-9, 50e-9)
        >>> round(p.rms_delay_spread_s * 1e9, 6), p.n_paths
        (200.0, 28)
        """
        from scipy.optimize import brentq

        tau = _positive(rms_delay_spread_s, "rms_delay_spread_s")
        spacing = _positive(tap_spacing_s, "tap_spacing_s")
        if isinstance(floor_db, (bool, np.bool_)) or not isinstance(floor_db, numbers.Real) \
                or not (math.isfinite(floor_db) and floor_db < 0):
            raise ValueError(f"floor_db={floor_db!r} is not allowed; need a finite value < 0")
        n_taps = int(math.floor(tau / spacing * (-floor_db) * math.log(10) / 10)) + 1
        if n_taps < 2:
            raise ValueError(f"rms_delay_spread_s={tau!r} is too small for tap_spacing_s="
                             f"{spacing!r} at floor_db={floor_db}: fewer than 2 taps; use a "
                             "smaller spacing or a lower floor")
        m = np.arange(n_taps)

        def spread(log_decay):
            w = np.exp(-m / math.exp(log_decay))
            w /= w.sum()
            mean = (w * m).sum()
            return math.sqrt(max((w * m * m).sum() - mean * mean, 0.0)) * spacing - tau

        uniform = spacing * math.sqrt((n_taps ** 2 - 1) / 12.0)
        if not tau < uniform:
            raise ValueError(f"rms_delay_spread_s={tau!r} cannot be reached with {n_taps} "
                             f"taps of spacing {spacing!r}")
        log_decay = brentq(spread, math.log(1e-3), math.log(1e6 * n_taps), xtol=1e-14,
                           rtol=1e-15)
        powers_db = -10.0 * np.log10(np.e) * m / math.exp(log_decay)
        return cls(m * spacing, powers_db, name=f"exponential ({tau * 1e9:g} ns rms)",
                   source="exponential power-delay profile")

    # ---- properties ----------------------------------------------------------

    @property
    def n_paths(self) -> int:
        """Number of paths."""
        return int(self._delays.size)

    @property
    def delays_s(self) -> np.ndarray:
        """Path delays in seconds, shape ``(n_paths,)`` (read-only)."""
        return self._delays

    @property
    def powers_db(self) -> np.ndarray:
        """Path powers in dB as given, shape ``(n_paths,)`` (read-only)."""
        return self._powers_db

    @property
    def powers(self) -> np.ndarray:
        """Linear path powers normalised to sum 1, shape ``(n_paths,)`` (read-only)."""
        return self._powers

    @property
    def mean_delay_s(self) -> float:
        """Power-weighted mean delay in seconds."""
        return float((self._powers * self._delays).sum())

    @property
    def rms_delay_spread_s(self) -> float:
        """RMS delay spread in seconds (second central moment, see the module notes)."""
        mean = self.mean_delay_s
        second = float((self._powers * (self._delays - mean) ** 2).sum())
        return math.sqrt(second)

    @property
    def max_delay_s(self) -> float:
        """Largest path delay in seconds."""
        return float(self._delays.max())

    @property
    def name(self) -> str | None:
        """The profile's label, if any."""
        return self._name

    @property
    def source(self) -> str | None:
        """Where the values come from, if given."""
        return self._source

    def __eq__(self, other):
        if not isinstance(other, DelayProfile):
            return NotImplemented
        return (np.array_equal(self._delays, other._delays)
                and np.array_equal(self._powers_db, other._powers_db)
                and self._name == other._name)

    def __hash__(self):
        return hash((self._delays.tobytes(), self._powers_db.tobytes(), self._name))

    def __repr__(self):
        label = f"{self._name!r}, " if self._name else ""
        return (f"DelayProfile({label}n_paths={self.n_paths}, rms_delay_spread="
                f"{self.rms_delay_spread_s * 1e9:.4g} ns)")
