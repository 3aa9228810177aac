"""Carrier plans taken from open standards.

Each function here returns a :class:`tonebank.CarrierPlan` (or, for the
training fields of IEEE 802.11a, plain arrays) whose numbers come from
a named clause or table of an open standard.  Where a value was written
down from memory rather than read from the document while this module
was written, the docstring says so ("from memory"); the tests check such
values against independent properties (sequence generators, carrier
counts stated elsewhere in the same standard, period identities).

.. rubric:: What is here

* IEEE Std 802.11a-1999 clause 17 (the 20 MHz OFDM PHY, also used by
  802.11g): :func:`ieee80211a`, the pilot polarity sequence
  ``IEEE80211A_PILOT_POLARITY``, the training fields
  :func:`ieee80211a_short_training`, :func:`ieee80211a_long_training` and
  the time-domain preamble :func:`ieee80211a_preamble`.
* 3GPP TS 38.211 (NR) clauses 4.2, 4.3.2 and 5.3.1: :func:`nr` and the
  frame-structure record :func:`nr_numerology`.
* 3GPP TS 36.211 (LTE downlink) clause 6.12: :func:`lte`.
* ETSI EN 300 744 (DVB-T) clauses 4.4 to 4.6: :func:`dvbt`,
  :func:`dvbt_parameters`, the reference sequence
  :func:`dvbt_reference_prbs` and the carrier tables
  ``DVBT_CONTINUAL_PILOTS_2K`` and friends.

.. rubric:: Subcarrier numbering

All plans use the convention of the module ``tonebank.plan``: the signed
subcarrier index ``k = 0`` is the carrier frequency (the DC bin of the
FFT), frequency grids are in natural FFT order.  Each function states how
the standard's own carrier numbering maps onto ``k``.

.. rubric:: Known limitations of the plan model

A :class:`tonebank.CarrierPlan` has fixed data and pilot positions.  NR
and LTE reference signals (DM-RS, CSI-RS, CRS ...) move with the
configuration and are not modelled: those plans have no pilots.  The
DVB-T scattered pilots move from symbol to symbol with period 4; they
are expressed as one plan per scattered-pilot phase (see :func:`dvbt`).
"""

from __future__ import annotations

import functools
import math
import numbers
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from ._checks import integer
from .plan import CarrierPlan

__all__ = [
    "DVBT_CONTINUAL_PILOTS_2K",
    "DVBT_CONTINUAL_PILOTS_8K",
    "DVBT_PILOT_BOOST",
    "DVBT_TPS_CARRIERS_2K",
    "DVBT_TPS_CARRIERS_8K",
    "DvbtParameters",
    "IEEE80211A_PILOT_POLARITY",
    "NrNumerology",
    "dvbt",
    "dvbt_parameters",
    "dvbt_reference_prbs",
    "ieee80211a",
    "ieee80211a_long_training",
    "ieee80211a_preamble",
    "ieee80211a_short_training",
    "lte",
    "nr",
    "nr_numerology",
]


def _readonly(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


def _cp_kind(cp) -> str:
    if not isinstance(cp, str) or cp not in ("normal", "extended"):
        raise ValueError(f"cp must be 'normal' or 'extended', got {cp!r}")
    return cp


def _name_arg(name):
    if name is not None and not isinstance(name, str):
        raise TypeError(f"name must be a string, got {name!r}")
    return name


# =============================================================================
# IEEE Std 802.11a-1999, clause 17 (20 MHz OFDM PHY)
# =============================================================================

#: Pilot polarity sequence ``p_0`` to ``p_126`` of IEEE Std 802.11a-1999,
#: clause 17.3.5.9 (equation 17-25), as ``int8`` values +1/-1 (read-only).
#: Written from memory; the tests check it against its definition in the
#: same clause: the 127-bit output of the data scrambler of clause
#: 17.3.5.4 (generator ``x^7 + x^4 + 1``) started in the all-ones state,
#: with bit 0 -> +1 and bit 1 -> -1.  The SIGNAL symbol uses ``p_0``, the
#: data symbols ``p_1, p_2, ...`` cyclically.
IEEE80211A_PILOT_POLARITY = _readonly(np.array([
    1, 1, 1, 1, -1, -1, -1, 1, -1, -1, -1, -1, 1, 1, -1, 1,
    -1, -1, 1, 1, -1, 1, 1, -1, 1, 1, 1, 1, 1, 1, -1, 1,
    1, 1, -1, 1, 1, -1, -1, 1, 1, 1, -1, 1, -1, -1, -1, 1,
    -1, 1, -1, -1, 1, -1, -1, 1, 1, 1, 1, 1, -1, -1, 1, 1,
    -1, -1, 1, -1, 1, -1, 1, 1, -1, -1, -1, 1, 1, -1, -1, -1,
    -1, 1, -1, -1, 1, -1, 1, 1, 1, 1, -1, 1, -1, 1, -1, 1,
    -1, -1, -1, -1, -1, 1, -1, 1, 1, -1, 1, -1, 1, 1, 1, -1,
    -1, 1, -1, -1, -1, 1, 1, 1, -1, -1, -1, -1, -1, -1, -1], dtype=np.int8))

# Clause 17.3.5.9 (from memory): pilots on -21, -7, 7, 21 carry
# P = (1, 1, 1, -1) before the polarity p_n is applied.
_WLAN_PILOTS = np.array([-21, -7, 7, 21])
_WLAN_PILOT_BASE = np.array([1.0, 1.0, 1.0, -1.0])
_WLAN_N_FFT = 64
_WLAN_RATE = 20e6

# Clause 17.3.3 (from memory): the training sequences on k = -26..26,
# written out as in the standard, lowest frequency first.
_WLAN_SHORT = np.array([
    0, 0, 1, 0, 0, 0, -1, 0, 0, 0, 1, 0, 0, 0, -1, 0, 0, 0, -1, 0, 0, 0, 1, 0, 0, 0,
    0,
    0, 0, 0, -1, 0, 0, 0, -1, 0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1, 0, 0,
]) * (1 + 1j)
_WLAN_LONG = np.array([
    1, 1, -1, -1, 1, 1, -1, 1, -1, 1, 1, 1, 1, 1, 1, -1, -1, 1, 1, -1, 1, -1, 1, 1, 1, 1,
    0,
    1, -1, -1, 1, 1, -1, 1, -1, 1, -1, -1, -1, -1, -1, 1, 1, -1, -1, 1, -1, 1, -1, 1, 1, 1, 1,
], dtype=float)


def ieee80211a(*, polarity_start: int = 1, name: str | None = None) -> CarrierPlan:
    """The 20 MHz OFDM plan of IEEE 802.11a (and 802.11g's OFDM rates).

    64 subcarriers at 20 MHz (spacing 312.5 kHz), 48 data subcarriers and
    4 pilots on ``k = -26 .. 26`` without DC, a 16-sample guard interval.

    Parameters
    ----------
    polarity_start : int, default 1
        Index ``n`` of the pilot polarity ``p_n`` that the plan's first
        symbol (symbol 0) takes, ``0 <= polarity_start <= 126``.  The
        default 1 makes symbol 0 the first DATA symbol; 0 makes it the
        SIGNAL symbol (clause 17.3.5.9).
    name : str, optional
        Label of the plan; default ``"IEEE 802.11a 20 MHz"``.

    Returns
    -------
    tonebank.CarrierPlan
        ``n_fft = 64``, ``sample_rate = 20e6``, ``cp_length = 16``, data on
        ``-26..-22, -20..-8, -6..-1, 1..6, 8..20, 22..26``, pilots on
        ``-21, -7, 7, 21`` with ``pilot_values`` of shape ``(127, 4)``:
        row ``s`` is ``p_((polarity_start + s) mod 127) * (1, 1, 1, -1)``.

    Raises
    ------
    ValueError
        ``polarity_start`` outside 0..126.
    TypeError
        ``polarity_start`` not an integer, ``name`` not a string.

    See Also
    --------
    ieee80211a_preamble : the training fields in the time domain.

    Notes
    -----
    Sources (IEEE Std 802.11a-1999): clause 17.3.2.4 (timing-related
    parameters: 52 subcarriers, 48 data and 4 pilots, 3.2 us FFT period,
    0.8 us guard interval = 16 samples at 20 MHz), clause 17.3.5.9 (pilot
    subcarriers -21, -7, 7, 21, base values ``(1, 1, 1, -1)`` multiplied by
    ``p_n``; the SIGNAL symbol takes ``p_0``).  Values from memory,
    checked by the tests as described at
    ``IEEE80211A_PILOT_POLARITY``.

    The standard's subcarrier numbers are already centred, so the plan's
    ``k`` is the standard's subcarrier number.  The pilot pattern has
    period 127 symbols.

    Cost: building the plan is a few microseconds of table work.

    Examples
    --------
    >>> from tonebank import presets
    >>> plan = presets.ieee80211a()
    >>> plan.n_data, plan.pilot_subcarriers.tolist(), plan.cp_lengths
    (48, [-21, -7, 7, 21], (16,))
    >>> plan.pilot_values.shape, plan.pilot_values[3].real.tolist()
    ((127, 4), [-1.0, -1.0, -1.0, 1.0])
    """
    polarity_start = integer(polarity_start, "polarity_start", minimum=0, maximum=126)
    name = _name_arg(name)
    used = np.concatenate((np.arange(-26, 0), np.arange(1, 27)))
    data = np.setdiff1d(used, _WLAN_PILOTS)
    polarity = np.roll(IEEE80211A_PILOT_POLARITY, -polarity_start).astype(float)
    values = polarity[:, None] * _WLAN_PILOT_BASE[None, :]
    return CarrierPlan(_WLAN_N_FFT, data=data, pilots=_WLAN_PILOTS, pilot_values=values,
                       cp_length=16, sample_rate=_WLAN_RATE,
                       name="IEEE 802.11a 20 MHz" if name is None else name)


def _wlan_grid(values: np.ndarray) -> np.ndarray:
    grid = np.zeros(_WLAN_N_FFT, dtype=np.complex128)
    grid[np.arange(-26, 27) % _WLAN_N_FFT] = values
    return grid


def ieee80211a_short_training() -> np.ndarray:
    """The short training sequence S of IEEE 802.11a on the 64-bin grid.

    Returns
    -------
    numpy.ndarray
        complex128, shape ``(64,)``, natural FFT order (bin ``k mod 64``
        holds ``S_k``).  Twelve
        non-zero values ``sqrt(13/6) * (±1 ± 1j)`` on ``k = ±4, ±8, ...,
        ±24``; a new array each call.

    See Also
    --------
    ieee80211a_long_training, ieee80211a_preamble

    Notes
    -----
    Source: IEEE Std 802.11a-1999, clause 17.3.3 (PLCP preamble, the
    sequence S and its factor ``sqrt(13/6)``), values from memory.  The
    factor makes the 12 occupied tones (each of power 2) carry the same
    total power, 52, as the 52 tones of the long training sequence and of
    a data symbol.  Because only every fourth subcarrier is used, the
    inverse FFT is periodic with 16 samples.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import presets
    >>> s = presets.ieee80211a_short_training()
    >>> np.flatnonzero(s).tolist()
    [4, 8, 12, 16, 20, 24, 40, 44, 48, 52, 56, 60]
    >>> round(float(np.sum(np.abs(s) ** 2)), 9)
    52.0
    """
    return _wlan_grid(math.sqrt(13 / 6) * _WLAN_SHORT)


def ieee80211a_long_training() -> np.ndarray:
    """The long training sequence L of IEEE 802.11a on the 64-bin grid.

    Returns
    -------
    numpy.ndarray
        complex128, shape ``(64,)``, natural FFT order (bin ``k mod 64``
        holds ``L_k``): ±1 on the 52
        subcarriers ``k = -26..26`` except DC, zero elsewhere; a new array
        each call.

    See Also
    --------
    ieee80211a_short_training, ieee80211a_preamble

    Notes
    -----
    Source: IEEE Std 802.11a-1999, clause 17.3.3 (the sequence L), values
    from memory; the tests check the time-domain samples against the
    standard's worked example (Annex G), also from memory.

    Examples
    --------
    >>> from tonebank import presets
    >>> lt = presets.ieee80211a_long_training()
    >>> lt[[1, 2, 26, 38, 63]].real.tolist()   # k = 1, 2, 26, -26, -1
    [1.0, -1.0, 1.0, 1.0, 1.0]
    """
    return _wlan_grid(_WLAN_LONG.astype(np.complex128))


def ieee80211a_preamble(*, norm: str = "backward") -> np.ndarray:
    """The 16 us PLCP preamble of IEEE 802.11a in the time domain (320 samples at 20 MHz).

    Ten short training symbols of 16 samples (160 samples, 8 us), then the
    long training field: a 32-sample guard interval GI2 (the last 32
    samples of the long symbol) and two 64-sample long symbols (160
    samples, 8 us).

    Parameters
    ----------
    norm : {"backward", "ortho", "forward"}, default "backward"
        Scaling of the inverse FFT, as in :func:`numpy.fft.ifft`:
        ``"backward"`` divides by 64 (the scaling of the standard's worked
        example in Annex G, where the first short-training sample is
        ``0.046 + 0.046j``), ``"ortho"`` by 8 (energy preserving: one
        64-sample long symbol has energy 52, the power of its 52 tones),
        ``"forward"`` not at all.

    Returns
    -------
    numpy.ndarray
        complex128, shape ``(320,)``: samples 0-159 short training field,
        160-191 GI2, 192-255 and 256-319 the two long symbols.

    Raises
    ------
    ValueError
        Unknown ``norm``.

    See Also
    --------
    ieee80211a_short_training, ieee80211a_long_training

    Notes
    -----
    Source: IEEE Std 802.11a-1999, clause 17.3.3 (PLCP preamble: 10 short
    symbols, GI2 of 1.6 us, two long symbols of 3.2 us), from memory.
    With ``x = ifft(grid)`` the short field is ``x_S`` repeated
    cyclically to 160 samples (``x_S`` has period 16) and the long field
    is ``x_L[32:], x_L, x_L``.  The time windowing that the standard
    shows at field boundaries (halved edge samples in Annex G) is not
    applied: it is a transmitter choice, not part of the signal
    definition.  Both fields have the same mean power
    (``52 / 64**2`` per sample with ``"backward"``).

    Built with :func:`numpy.fft.ifft` directly; cost: two 64-point
    inverse FFTs.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import presets
    >>> x = presets.ieee80211a_preamble()
    >>> x.shape, complex(np.round(x[0], 3))
    ((320,), (0.046+0.046j))
    >>> bool(np.allclose(x[160:192], x[224:256]))   # GI2 = end of the long symbol
    True
    """
    if not isinstance(norm, str) or norm not in ("backward", "ortho", "forward"):
        raise ValueError(f"norm must be 'backward', 'ortho' or 'forward', got {norm!r}")
    short = np.fft.ifft(ieee80211a_short_training(), norm=norm)
    long_ = np.fft.ifft(ieee80211a_long_training(), norm=norm)
    return np.concatenate((np.resize(short, 160), long_[32:], long_, long_))


# =============================================================================
# 3GPP TS 38.211 (NR)
# =============================================================================

_NR_MAX_RB = 275          # TS 38.211 clause 4.4.2 resource grid size limit, from memory
_NR_KAPPA = 64            # TS 38.211 clause 4.1: kappa = T_s / T_c


@dataclass(frozen=True)
class NrNumerology:
    """Frame structure of one NR numerology (TS 38.211 clauses 4.2 and 4.3.2).

    Attributes
    ----------
    mu : int
        Numerology, 0..4.
    cp : str
        ``"normal"`` or ``"extended"``.
    subcarrier_spacing : float
        ``15e3 * 2**mu`` Hz (Table 4.2-1).
    symbols_per_slot : int
        14 normal, 12 extended (Tables 4.3.2-1 and 4.3.2-2).
    slots_per_subframe : int
        ``2**mu``.
    slots_per_frame : int
        ``10 * 2**mu``.
    """

    mu: int
    cp: str
    subcarrier_spacing: float
    symbols_per_slot: int
    slots_per_subframe: int
    slots_per_frame: int

    @property
    def symbols_per_subframe(self) -> int:
        """OFDM symbols in one 1 ms subframe."""
        return self.symbols_per_slot * self.slots_per_subframe


def nr_numerology(mu: int, cp: str = "normal") -> NrNumerology:
    """The frame structure of NR numerology ``mu`` (TS 38.211 Tables 4.2-1, 4.3.2-1/2).

    Parameters
    ----------
    mu : int
        0..4 (subcarrier spacing 15, 30, 60, 120, 240 kHz).
    cp : {"normal", "extended"}, default "normal"
        Extended cyclic prefix exists for ``mu = 2`` only.

    Returns
    -------
    NrNumerology

    Raises
    ------
    ValueError
        ``mu`` outside 0..4, unknown ``cp``, extended CP with ``mu != 2``.
    TypeError
        ``mu`` not an integer.

    See Also
    --------
    nr : the carrier plan.

    Notes
    -----
    TS 38.211 Table 4.2-1 (supported transmission numerologies:
    ``Delta f = 2**mu * 15`` kHz, extended CP only at ``mu = 2``), Table
    4.3.2-1 (normal CP: 14 symbols per slot, ``10 * 2**mu`` slots per
    frame, ``2**mu`` per subframe), Table 4.3.2-2 (extended CP: 12, 40,
    4).  From memory.  Later releases add ``mu = 5, 6`` (480 and 960
    kHz), not offered here.

    Examples
    --------
    >>> from tonebank import presets
    >>> n = presets.nr_numerology(1)
    >>> n.subcarrier_spacing, n.symbols_per_slot, n.slots_per_frame
    (30000.0, 14, 20)
    """
    mu = integer(mu, "mu", minimum=0, maximum=4)
    cp = _cp_kind(cp)
    if cp == "extended" and mu != 2:
        raise ValueError(f"cp='extended' exists only for mu=2 (60 kHz), got mu={mu} "
                         "(TS 38.211 Table 4.2-1)")
    return NrNumerology(mu=mu, cp=cp, subcarrier_spacing=15e3 * 2**mu,
                        symbols_per_slot=14 if cp == "normal" else 12,
                        slots_per_subframe=2**mu, slots_per_frame=10 * 2**mu)


def _nr_default_fft(n_sc: int) -> int:
    # Common practice, no source: the smallest power of two (at least 128,
    # so that the cyclic prefixes are whole samples) whose band is at most
    # 85 % occupied, leaving room for the anti-aliasing filter.
    n_fft = 128
    while n_sc > 0.85 * n_fft:
        n_fft *= 2
    return n_fft


def _whole_samples(value: Fraction, what: str, n_fft: int, hint: str) -> int:
    if value.denominator != 1:
        raise ValueError(f"n_fft={n_fft} makes the {what} {float(value):g} samples, not a "
                         f"whole number; {hint}")
    return int(value)


def nr(mu: int, n_rb: int, *, n_fft: int | None = None, cp: str = "normal",
       name: str | None = None) -> CarrierPlan:
    """An NR carrier of ``n_rb`` resource blocks at numerology ``mu`` (TS 38.211).

    Parameters
    ----------
    mu : int
        Numerology 0..4: subcarrier spacing ``15e3 * 2**mu`` Hz.
    n_rb : int
        Resource blocks of 12 subcarriers, 1..275.
    n_fft : int, optional
        FFT size, at least ``12 * n_rb``; a multiple of 128 with the normal
        CP (a multiple of 4 with the extended one) so that every cyclic
        prefix is a whole number of samples.  Default: the smallest power
        of two >= 128 with ``12 * n_rb <= 0.85 * n_fft`` (common practice,
        no source).
    cp : {"normal", "extended"}, default "normal"
        Extended CP exists only for ``mu = 2``.
    name : str, optional
        Label; default like ``"NR mu=1 30 kHz 106 RB"``.

    Returns
    -------
    tonebank.CarrierPlan
        ``12 * n_rb`` data subcarriers ``k = -6 n_rb .. 6 n_rb - 1`` (DC
        included), no pilots, ``sample_rate = n_fft * 15e3 * 2**mu``, and
        the cyclic prefix pattern of one half subframe (``7 * 2**mu``
        symbols starting with the long one: symbol ``s`` of the plan is
        symbol ``l = s mod (14 * 2**mu)`` of a subframe) for the normal CP,
        or the single extended value.

    Raises
    ------
    ValueError
        ``mu`` outside 0..4, ``n_rb`` outside 1..275, ``n_rb`` too large for
        ``n_fft``, ``n_fft`` giving fractional prefixes, unknown ``cp``,
        extended CP with ``mu != 2``.
    TypeError
        Non-integer ``mu``, ``n_rb`` or ``n_fft``.

    See Also
    --------
    nr_numerology : slots and symbols of the frame structure.
    lte : the LTE downlink, which leaves DC empty.

    Notes
    -----
    **Prefix lengths** (TS 38.211 clause 5.3.1, from memory).  In units of
    ``T_c = 1 / (480 kHz * 4096)``, with ``kappa = 64`` (clause 4.1), the
    useful part is ``N_u = 2048 kappa 2**-mu`` and the prefix is

    * normal CP: ``144 kappa 2**-mu + 16 kappa`` for symbol ``l = 0`` and
      ``l = 7 * 2**mu`` of a subframe, ``144 kappa 2**-mu`` otherwise;
    * extended CP: ``512 kappa 2**-mu``.

    At the plan's rate ``n_fft * Delta f`` one sample is ``131072 /
    (n_fft 2**mu)`` units of ``T_c``, so ``N_u`` is ``n_fft`` samples and
    the prefixes are ``144 n_fft / 2048`` samples, plus ``16 * 2**mu * n_fft
    / 2048`` on the two long symbols (the extra ``16 kappa T_c`` = 0.52 us
    is fixed in time, so it grows in samples with ``mu``), and ``512 n_fft
    / 2048`` for the extended CP.  At ``n_fft = 4096``: 288 samples, 320 at
    ``mu = 0``, 352 at ``mu = 1``.  Every half subframe (0.5 ms, ``7 *
    2**mu`` symbols) then holds exactly ``sample_rate * 0.5e-3`` samples.

    **Centring** (TS 38.211 clause 5.3.1, from memory).  The grid
    subcarrier ``k`` (0 .. ``12 n_rb - 1``) is sent at ``(k + k_0 - 12
    n_rb / 2) Delta f``; with one numerology whose grid is centred on the
    carrier, ``k_0 = 0``, so the plan's index is ``k - 6 n_rb``: the band
    is ``-6 n_rb .. 6 n_rb - 1``, one subcarrier more below DC than above.
    NR does not leave DC empty: the carrier frequency falls on grid
    subcarrier ``6 n_rb`` (subcarrier 0 of resource block ``n_rb / 2`` for
    even ``n_rb``, subcarrier 6 of block ``(n_rb - 1) / 2`` for odd).  The
    optional 7.5 kHz uplink shift is not modelled.

    **Limitations.**  NR reference signals (DM-RS, PT-RS, CSI-RS, SSB) are
    configuration dependent and not part of this plan model: the plan has
    no pilots; all ``12 n_rb`` subcarriers are data.

    Cost: exact integer arithmetic on the prefixes and one sort of ``12
    n_rb`` indices.

    Examples
    --------
    >>> from tonebank import presets
    >>> plan = presets.nr(1, 273)
    >>> plan.n_fft, plan.sample_rate, plan.n_data
    (4096, 122880000.0, 3276)
    >>> plan.cp_lengths[:3], len(plan.cp_lengths)
    ((352, 288, 288), 14)
    """
    numerology = nr_numerology(mu, cp)
    mu = numerology.mu
    n_rb = integer(n_rb, "n_rb", minimum=1, maximum=_NR_MAX_RB)
    name = _name_arg(name)
    n_sc = 12 * n_rb
    if n_fft is None:
        n_fft = _nr_default_fft(n_sc)
    else:
        n_fft = integer(n_fft, "n_fft")
        if n_fft < n_sc:
            raise ValueError(f"n_rb={n_rb} needs {n_sc} subcarriers, more than n_fft={n_fft}; "
                             f"use n_fft >= {n_sc}")
    hint = ("use a multiple of 128" if cp == "normal" else "use a multiple of 4")
    # Work in units of T_c (TS 38.211 clause 4.1) with exact fractions, then
    # convert: samples = T_c units * n_fft * 2**mu / (32 * 4096).
    per_unit = Fraction(n_fft * 2**mu, 32 * 4096)
    kappa = _NR_KAPPA
    if cp == "normal":
        short = _whole_samples(Fraction(144 * kappa, 2**mu) * per_unit, "normal prefix",
                               n_fft, hint)
        long_ = _whole_samples((Fraction(144 * kappa, 2**mu) + 16 * kappa) * per_unit,
                               "long first prefix", n_fft, hint)
        # One half subframe (0.5 ms): the long prefix falls on l = 0 and
        # l = 7 * 2**mu of each subframe, so this is the pattern's period.
        pattern = [long_] + [short] * (7 * 2**mu - 1)
    else:
        pattern = [_whole_samples(Fraction(512 * kappa, 2**mu) * per_unit,
                                  "extended prefix", n_fft, hint)]
    data = np.arange(-n_sc // 2, n_sc // 2)
    scs = numerology.subcarrier_spacing
    label = f"NR mu={mu} {scs / 1e3:g} kHz {n_rb} RB" + (" extended CP" if cp == "extended"
                                                          else "")
    return CarrierPlan(n_fft, data=data, cp_length=pattern, sample_rate=n_fft * scs,
                       name=label if name is None else name)


# =============================================================================
# 3GPP TS 36.211 (LTE downlink)
# =============================================================================

_LTE_MIN_RB, _LTE_MAX_RB = 6, 110   # TS 36.211 clause 6.2, N_RB^DL range, from memory


def lte(n_rb: int, *, n_fft: int = 2048, cp: str = "normal",
        name: str | None = None) -> CarrierPlan:
    """An LTE downlink carrier of ``n_rb`` resource blocks at 15 kHz (TS 36.211 clause 6.12).

    Parameters
    ----------
    n_rb : int
        Downlink resource blocks of 12 subcarriers, 6..110; the channel
        bandwidths 1.4, 3, 5, 10, 15, 20 MHz use 6, 15, 25, 50, 75, 100
        (TS 36.101 / 36.104, from memory).
    n_fft : int, default 2048
        FFT size: a multiple of 128 (so that the prefixes are whole
        samples) with room for the band and its empty DC, ``12 n_rb + 2 <=
        n_fft``.  The sample rate and prefixes scale with ``n_fft / 2048``
        (e.g. 128 at 1.92 MHz for 6 RB, common practice, no source).
    cp : {"normal", "extended"}, default "normal"
    name : str, optional
        Label; default like ``"LTE 50 RB"``.

    Returns
    -------
    tonebank.CarrierPlan
        ``12 n_rb`` data subcarriers ``k = -6 n_rb .. -1`` and ``1 .. 6
        n_rb``, DC empty, no pilots, ``sample_rate = n_fft * 15e3``, prefix
        pattern of one slot: ``(160, 144, 144, 144, 144, 144, 144) * n_fft /
        2048`` (normal) or ``(512 * n_fft / 2048,)`` (extended).

    Raises
    ------
    ValueError
        ``n_rb`` outside 6..110 or too large for ``n_fft``; ``n_fft`` not a
        multiple of 128; unknown ``cp``.
    TypeError
        Non-integer ``n_rb`` or ``n_fft``.

    See Also
    --------
    nr : the NR carrier, which keeps DC.

    Notes
    -----
    TS 36.211 (from memory): ``T_s = 1 / (15000 * 2048)`` s (clause 4), a
    slot is ``T_slot = 15360 T_s = 0.5`` ms (clause 4.1, frame structure
    type 1); Table 6.12-1 gives the prefixes ``N_CP,l = 160`` for ``l = 0``
    and 144 for ``l = 1..6`` (normal, 15 kHz), 512 for ``l = 0..5``
    (extended); the 7.5 kHz MBSFN numerology is not offered.  Clause 6.12
    places resource element ``k^(-) = k + floor(N/2)`` at ``k = -floor(N/2)
    .. -1`` and ``k^(+) = k + floor(N/2) - 1`` at ``k = 1 .. ceil(N/2)`` with
    ``N = 12 n_rb``: the plan's index is the standard's ``k``, and DC is
    empty.  The uplink (SC-FDMA, clause 5.6, shifted by half a
    subcarrier) is not covered.  Cell-specific reference signals depend
    on the cell and antenna ports and are not modelled: no pilots.

    Cost: one sort of ``12 n_rb`` indices.

    Examples
    --------
    >>> from tonebank import presets
    >>> plan = presets.lte(50)
    >>> plan.n_data, plan.cp_lengths, plan.sample_rate
    (600, (160, 144, 144, 144, 144, 144, 144), 30720000.0)
    >>> presets.lte(6, n_fft=128).cp_lengths
    (10, 9, 9, 9, 9, 9, 9)
    """
    n_rb = integer(n_rb, "n_rb", minimum=_LTE_MIN_RB, maximum=_LTE_MAX_RB)
    n_fft = integer(n_fft, "n_fft")
    cp = _cp_kind(cp)
    name = _name_arg(name)
    if n_fft < 128 or n_fft % 128:
        raise ValueError(f"n_fft must be a positive multiple of 128 so that the cyclic "
                         f"prefixes (160 and 144 samples at 2048) are whole samples, "
                         f"got {n_fft}")
    n_sc = 12 * n_rb
    if n_sc + 2 > n_fft:
        raise ValueError(f"n_rb={n_rb} needs {n_sc} subcarriers around an empty DC, which do "
                         f"not fit in n_fft={n_fft}; use n_fft >= {n_sc + 2}")
    # Table 6.12-1 values are at n_fft = 2048; exact for multiples of 128.
    if cp == "normal":
        pattern = [160 * n_fft // 2048] + [144 * n_fft // 2048] * 6
    else:
        pattern = [512 * n_fft // 2048]
    half = n_sc // 2
    data = np.concatenate((np.arange(-half, 0), np.arange(1, half + 1)))
    label = f"LTE {n_rb} RB" + (" extended CP" if cp == "extended" else "")
    return CarrierPlan(n_fft, data=data, cp_length=pattern, sample_rate=n_fft * 15e3,
                       name=label if name is None else name)


# =============================================================================
# ETSI EN 300 744 (DVB-T)
# =============================================================================

#: Continual pilot carriers of the 2K mode, carrier numbers ``K`` (0..1704),
#: ETSI EN 300 744 clause 4.5.4, Table 7 (45 carriers), from memory.
DVBT_CONTINUAL_PILOTS_2K = _readonly(np.array([
    0, 48, 54, 87, 141, 156, 192, 201, 255, 279, 282, 333, 432, 450, 483, 525, 531, 618,
    636, 714, 759, 765, 780, 804, 873, 888, 918, 939, 942, 969, 984, 1050, 1101, 1107,
    1110, 1137, 1140, 1146, 1206, 1269, 1323, 1377, 1491, 1683, 1704], dtype=np.int64))

#: Continual pilot carriers of the 8K mode (177 carriers, 0..6816), ETSI EN
#: 300 744 clause 4.5.4, Table 7, from memory.  The 8K table is the 2K table
#: repeated at offsets 0, 1704, 3408 and 5112 (the shared end points 1704,
#: 3408 and 5112 counted once); written out here as the standard does.
DVBT_CONTINUAL_PILOTS_8K = _readonly(np.array([
    0, 48, 54, 87, 141, 156, 192, 201, 255, 279, 282, 333, 432, 450, 483, 525, 531, 618,
    636, 714, 759, 765, 780, 804, 873, 888, 918, 939, 942, 969, 984, 1050, 1101, 1107,
    1110, 1137, 1140, 1146, 1206, 1269, 1323, 1377, 1491, 1683, 1704, 1752, 1758, 1791,
    1845, 1860, 1896, 1905, 1959, 1983, 1986, 2037, 2136, 2154, 2187, 2229, 2235, 2322,
    2340, 2418, 2463, 2469, 2484, 2508, 2577, 2592, 2622, 2643, 2646, 2673, 2688, 2754,
    2805, 2811, 2814, 2841, 2844, 2850, 2910, 2973, 3027, 3081, 3195, 3387, 3408, 3456,
    3462, 3495, 3549, 3564, 3600, 3609, 3663, 3687, 3690, 3741, 3840, 3858, 3891, 3933,
    3939, 4026, 4044, 4122, 4167, 4173, 4188, 4212, 4281, 4296, 4326, 4347, 4350, 4377,
    4392, 4458, 4509, 4515, 4518, 4545, 4548, 4554, 4614, 4677, 4731, 4785, 4899, 5091,
    5112, 5160, 5166, 5199, 5253, 5268, 5304, 5313, 5367, 5391, 5394, 5445, 5544, 5562,
    5595, 5637, 5643, 5730, 5748, 5826, 5871, 5877, 5892, 5916, 5985, 6000, 6030, 6051,
    6054, 6081, 6096, 6162, 6213, 6219, 6222, 6249, 6252, 6258, 6318, 6381, 6435, 6489,
    6603, 6795, 6816], dtype=np.int64))

#: TPS carriers of the 2K mode (17), ETSI EN 300 744 clause 4.6, Table 8,
#: from memory.
DVBT_TPS_CARRIERS_2K = _readonly(np.array([
    34, 50, 209, 346, 413, 569, 595, 688, 790, 901, 1073, 1219, 1262, 1286, 1469, 1594,
    1687], dtype=np.int64))

#: TPS carriers of the 8K mode (68), ETSI EN 300 744 clause 4.6, Table 8, from
#: memory (the 2K set repeated at offsets 0, 1704, 3408, 5112).
DVBT_TPS_CARRIERS_8K = _readonly(np.array([
    34, 50, 209, 346, 413, 569, 595, 688, 790, 901, 1073, 1219, 1262, 1286, 1469, 1594,
    1687, 1738, 1754, 1913, 2050, 2117, 2273, 2299, 2392, 2494, 2605, 2777, 2923, 2966,
    2990, 3173, 3298, 3391, 3442, 3458, 3617, 3754, 3821, 3977, 4003, 4096, 4198, 4309,
    4481, 4627, 4670, 4694, 4877, 5002, 5095, 5146, 5162, 5321, 5458, 5525, 5681, 5707,
    5800, 5902, 6013, 6185, 6331, 6374, 6398, 6581, 6706, 6799], dtype=np.int64))

#: Amplitude of the continual and scattered pilots relative to the data
#: (EN 300 744 clause 4.5.5, from memory).
DVBT_PILOT_BOOST = 4 / 3

_DVBT_MODES = {
    # mode: (n_fft, K_max, continual pilots, TPS carriers); EN 300 744 clause 4.4.
    "2k": (2048, 1704, DVBT_CONTINUAL_PILOTS_2K, DVBT_TPS_CARRIERS_2K),
    "8k": (8192, 6816, DVBT_CONTINUAL_PILOTS_8K, DVBT_TPS_CARRIERS_8K),
}
_DVBT_GUARDS = {"1/4": Fraction(1, 4), "1/8": Fraction(1, 8), "1/16": Fraction(1, 16),
                "1/32": Fraction(1, 32)}
_DVBT_CHANNELS = (5, 6, 7, 8)
_DVBT_FRAME_SYMBOLS = 68     # EN 300 744 clause 4.4: 68 OFDM symbols per frame


@functools.lru_cache(maxsize=1)
def _dvbt_prbs_period() -> np.ndarray:
    # x^11 + x^2 + 1 started in the all-ones state (EN 300 744 clause 4.5.2):
    # output w_n; the polynomial gives w_(n+11) = w_(n+2) XOR w_n.
    w = np.empty(2047, dtype=np.uint8)
    w[:11] = 1
    for n in range(2047 - 11):
        w[n + 11] = w[n + 2] ^ w[n]
    return _readonly(w)


def dvbt_reference_prbs(n: int) -> np.ndarray:
    """The first ``n`` bits ``w_K`` of the DVB-T pilot reference sequence.

    Parameters
    ----------
    n : int
        Number of bits, >= 0 (``K_max + 1`` covers a whole symbol).

    Returns
    -------
    numpy.ndarray
        uint8 bits 0/1, shape ``(n,)``; ``w_K`` belongs to carrier ``K`` (``K = 0`` is the lowest
        carrier), whether or not that carrier is a pilot.

    Raises
    ------
    ValueError
        ``n`` negative.
    TypeError
        ``n`` not an integer.

    See Also
    --------
    dvbt : uses ``w_K`` for the pilot and TPS values.

    Notes
    -----
    ETSI EN 300 744 clause 4.5.2 (from memory): the sequence comes from
    the generator ``x^11 + x^2 + 1`` whose 11-stage register starts in
    the all-ones state, one bit per carrier, the first bit on ``K_min``.
    Written as a recurrence on the output, ``w_(n+11) = w_(n+2) XOR
    w_n``; the output starts ``11111111111 000000000 11 0 ...`` and has
    period ``2**11 - 1 = 2047``.  The pilot value on carrier ``K`` is
    ``4/3 * 2 (1/2 - w_K)`` (clause 4.5.5).

    Cost: one table of 2047 bits built on first use, then a tile.

    Examples
    --------
    >>> from tonebank import presets
    >>> presets.dvbt_reference_prbs(23).tolist()
    [1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 0]
    """
    n = integer(n, "n")
    if n < 0:
        raise ValueError(f"n must be >= 0, got {n}")
    period = _dvbt_prbs_period()
    return np.resize(period, n) if n else np.zeros(0, dtype=np.uint8)


@dataclass(frozen=True)
class DvbtParameters:
    """Numbers of one DVB-T mode, guard interval and channel width (EN 300 744 clause 4.4).

    Attributes
    ----------
    mode : str
        ``"2k"`` or ``"8k"``.
    guard : str
        Guard interval as a fraction of ``T_U``: ``"1/4"``, ``"1/8"``,
        ``"1/16"`` or ``"1/32"``.
    channel_mhz : int
        Channel width, 5, 6, 7 or 8 MHz.
    n_fft : int
        2048 or 8192: ``T_U / T``.
    k_max : int
        Highest carrier number ``K_max`` (``K_min = 0``): 1704 or 6816.
    elementary_period_s : float
        ``T`` in seconds: ``7 / (8 B)`` us for a channel of ``B`` MHz.
    guard_samples : int
        ``guard * n_fft``: the cyclic prefix in samples of ``T``.
    data_per_symbol : int
        Data carriers in every symbol: 1512 or 6048.
    symbols_per_frame : int
        68.
    """

    mode: str
    guard: str
    channel_mhz: int
    n_fft: int
    k_max: int
    elementary_period_s: float
    guard_samples: int
    data_per_symbol: int
    symbols_per_frame: int = _DVBT_FRAME_SYMBOLS

    @property
    def n_carriers(self) -> int:
        """Active carriers ``K_max + 1``: 1705 or 6817."""
        return self.k_max + 1

    @property
    def sample_rate(self) -> float:
        """``1 / T`` in Hz (64/7 MHz for an 8 MHz channel)."""
        return 8e6 * self.channel_mhz / 7

    @property
    def useful_duration_s(self) -> float:
        """``T_U = n_fft * T`` in seconds (224 us / 896 us at 8 MHz)."""
        return self.n_fft * self.elementary_period_s

    @property
    def guard_duration_s(self) -> float:
        """Guard interval ``Delta`` in seconds."""
        return self.guard_samples * self.elementary_period_s


def _dvbt_mode(mode) -> str:
    key = mode.lower() if isinstance(mode, str) else None
    if key not in _DVBT_MODES:
        raise ValueError(f"mode must be '2k' or '8k', got {mode!r}")
    return key


def _dvbt_guard(guard) -> str:
    if isinstance(guard, str):
        if guard in _DVBT_GUARDS:
            return guard
    elif isinstance(guard, numbers.Real) and not isinstance(guard, bool):
        for label, value in _DVBT_GUARDS.items():
            if guard == value:
                return label
    raise ValueError(f"guard must be one of '1/4', '1/8', '1/16', '1/32' (or the equal "
                     f"number or Fraction), got {guard!r}")


def dvbt_parameters(mode: str, guard="1/4", *, channel_mhz: int = 8) -> DvbtParameters:
    """The numbers of a DVB-T mode (ETSI EN 300 744 clause 4.4).

    Parameters
    ----------
    mode : {"2k", "8k"}
        Transmission mode (case does not matter).
    guard : {"1/4", "1/8", "1/16", "1/32"} or float, default "1/4"
        Guard interval as a fraction of the useful part ``T_U``; a float
        or ``fractions.Fraction`` equal to one of these is accepted.
    channel_mhz : {8, 7, 6, 5}, default 8
        Channel width in MHz; sets the elementary period ``T = 7 / (8 B)``
        us.

    Returns
    -------
    DvbtParameters

    Raises
    ------
    ValueError
        Unknown mode, guard interval or channel width.
    TypeError
        ``channel_mhz`` not an integer.

    See Also
    --------
    dvbt : the carrier plans.

    Notes
    -----
    ETSI EN 300 744 clause 4.4 (from memory): for 8 MHz channels the
    elementary period is ``T = 7/64`` us, ``T_U = 2048 T = 224`` us (2K) or
    ``8192 T = 896`` us (8K), carriers ``K_min = 0 .. K_max = 1704 / 6816``
    spaced ``1 / T_U`` (4464 / 1116 Hz), guard intervals ``Delta / T_U =
    1/4, 1/8, 1/16, 1/32`` (2K: 512, 256, 128, 64 T; 8K: 2048 .. 256 T), 68
    symbols per frame.  The table numbers of these parameter tables differ
    between editions of the standard; their titles read "numerical values
    for the OFDM parameters ..." and "duration of symbol part for the
    allowed guard intervals ...".  The 7 and 6 MHz channels (T = 1/8 us,
    7/48 us) and the 5 MHz channel (T = 7/40 us) come from the annexes of
    later editions (from memory); the carrier layout is the same, only
    ``T`` scales.  The 1512 / 6048 data carriers per symbol are stated in
    clause 4.3.4.2 (symbol interleaver).

    Examples
    --------
    >>> from tonebank import presets
    >>> p = presets.dvbt_parameters("2k", "1/4")
    >>> p.n_carriers, p.guard_samples, round(p.useful_duration_s * 1e6, 9)
    (1705, 512, 224.0)
    """
    mode = _dvbt_mode(mode)
    guard = _dvbt_guard(guard)
    channel_mhz = integer(channel_mhz, "channel_mhz")
    if channel_mhz not in _DVBT_CHANNELS:
        raise ValueError(f"channel_mhz must be one of {_DVBT_CHANNELS}, got {channel_mhz}")
    n_fft, k_max, _, _ = _DVBT_MODES[mode]
    return DvbtParameters(mode=mode, guard=guard, channel_mhz=channel_mhz, n_fft=n_fft,
                          k_max=k_max, elementary_period_s=7e-6 / (8 * channel_mhz),
                          guard_samples=int(_DVBT_GUARDS[guard] * n_fft),
                          data_per_symbol=1512 if mode == "2k" else 6048)


def dvbt(mode: str, guard="1/4", *, channel_mhz: int = 8, symbol_phase: int = 0,
         name: str | None = None) -> CarrierPlan:
    """A DVB-T symbol's carrier plan for one scattered-pilot phase (ETSI EN 300 744).

    DVB-T moves its scattered pilots by three carriers every symbol, with
    period 4, while a :class:`tonebank.CarrierPlan` has fixed positions.
    This function therefore returns the plan of the symbols whose index
    ``l`` in the frame has ``l mod 4 == symbol_phase``; a stream of symbols
    uses the four plans in turn (68 symbols per frame is a multiple of 4,
    so the cycle runs on across frames).

    Parameters
    ----------
    mode : {"2k", "8k"}
        Transmission mode.
    guard : {"1/4", "1/8", "1/16", "1/32"} or float, default "1/4"
        Guard interval as a fraction of ``T_U`` (see
        :func:`dvbt_parameters`).
    channel_mhz : {8, 7, 6, 5}, default 8
        Channel width; the sample rate is ``1 / T = 8 B / 7`` MHz.
    symbol_phase : int, default 0
        ``l mod 4`` of the symbols this plan describes, 0..3.
    name : str, optional
        Label; default like ``"DVB-T 2k 1/4 8 MHz l%4=0"``.

    Returns
    -------
    tonebank.CarrierPlan
        ``n_fft`` 2048 / 8192, ``sample_rate = 1/T``, ``cp_length = guard *
        n_fft``; pilots are the continual pilots, the scattered pilots of
        the phase and the TPS carriers; data are the other 1512 / 6048
        active carriers; the bins outside ``K = 0..K_max`` are empty.

    Raises
    ------
    ValueError
        Unknown mode, guard interval or channel width; ``symbol_phase``
        outside 0..3.
    TypeError
        Non-integer ``symbol_phase`` or ``channel_mhz``.

    See Also
    --------
    dvbt_parameters : the mode's numbers.
    dvbt_reference_prbs : the sequence ``w_K`` behind the pilot values.

    Notes
    -----
    Sources, ETSI EN 300 744 (from memory): clause 4.4 (carrier ``K`` is
    sent at ``k' / T_U`` with ``k' = K - (K_max + K_min) / 2``, so the
    plan's index is ``k = K - K_max / 2``: ``-852 .. 852`` in 2K, ``-3408 ..
    3408`` in 8K, the centre carrier on DC); clause 4.5.3 (scattered
    pilots on ``K = 3 (l mod 4) + 12 p``, ``p >= 0``, within ``0..K_max``);
    clause 4.5.4 and Table 7 (continual pilots, every symbol); clause 4.6
    and Table 8 (TPS carriers); clause 4.5.2 / 4.5.5 (pilot values ``4/3 *
    2 (1/2 - w_K)``, real).

    The TPS carriers are not pilots in the strict sense: they carry the
    DBPSK-coded transmission parameters.  They are listed among the
    plan's pilots so that the data positions are right, and carry the
    placeholder ``2 (1/2 - w_K)`` (unboosted, the value that starts the
    differential modulation at the first symbol of a frame, clause 4.6);
    a transmitter that sends real TPS bits passes its own pilot values
    to :meth:`tonebank.CarrierPlan.place`.

    Every continual pilot is on a multiple of 3, and the four phases give
    the same 1512 / 6048 data carriers (the count the symbol interleaver
    of clause 4.3.4.2 takes).

    Cost: building the plan sorts about ``K_max`` indices.

    Examples
    --------
    >>> from tonebank import presets
    >>> plan = presets.dvbt("2k", "1/8", symbol_phase=1)
    >>> plan.n_data, plan.n_pilots, plan.cp_lengths
    (1512, 193, (256,))
    >>> round(plan.sample_rate)
    9142857
    """
    params = dvbt_parameters(mode, guard, channel_mhz=channel_mhz)
    symbol_phase = integer(symbol_phase, "symbol_phase", minimum=0, maximum=3)
    name = _name_arg(name)
    n_fft, k_max, continual, tps = _DVBT_MODES[params.mode]
    scattered = np.arange(3 * symbol_phase, k_max + 1, 12)
    boosted = np.union1d(continual, scattered)
    pilots = np.union1d(boosted, tps)              # TPS never meets a pilot position
    data = np.setdiff1d(np.arange(k_max + 1), pilots)
    w = dvbt_reference_prbs(k_max + 1)
    sign = 1.0 - 2.0 * w[pilots]                     # 2 (1/2 - w_K)
    values = np.where(np.isin(pilots, tps), 1.0, DVBT_PILOT_BOOST) * sign
    centre = k_max // 2
    label = (f"DVB-T {params.mode} {params.guard} {channel_mhz} MHz l%4={symbol_phase}")
    return CarrierPlan(n_fft, data=data - centre, pilots=pilots - centre,
                       pilot_values=values, cp_length=params.guard_samples,
                       sample_rate=params.sample_rate,
                       name=label if name is None else name)
