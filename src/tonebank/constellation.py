"""Constellations: bits to complex symbols and back, with soft decisions.

A :class:`tonebank.Constellation` is an immutable, labelled set of ``M = 2**k``
complex points.  It maps bits to symbols (:meth:`tonebank.Constellation.map`),
makes hard decisions (:meth:`tonebank.Constellation.decide`,
:meth:`tonebank.Constellation.demap`) and computes per-bit log-likelihood ratios
for a soft-input decoder (:meth:`tonebank.Constellation.llr`).

.. rubric:: Bit order (used everywhere in tonebank)

The index ``i`` of a point in :attr:`tonebank.Constellation.points` *is* its
label, and the label written in binary with ``k`` digits, most
significant bit first, is the bit pattern ``b0 b1 ... b(k-1)`` the point
carries.  A bit array ``(..., n*k)`` therefore holds symbol 0's bits
``b0..b(k-1)`` first, then symbol 1's, and so on.

The built-in constellations follow IEEE Std 802.11a-1999, clause
17.3.5.7 (OFDM subcarrier modulation mapping):

* BPSK: ``b0 = 0 -> -1``, ``b0 = 1 -> +1``;
* square QAM (QPSK = 4-QAM, 16-, 64-, and by the same rule 256-, 1024-
  and 4096-QAM): the first half of a symbol's bits (``b0`` first) selects
  the in-phase level and the second half the quadrature level, each
  through the binary-reflected Gray code in which the all-zero pattern
  is the most negative level (16-QAM: ``b0 b1 = 00 -> -3, 01 -> -1,
  11 -> +1, 10 -> +3``);
* everything is scaled to unit average energy (the standard's
  ``K_MOD = 1, 1/sqrt(2), 1/sqrt(10), 1/sqrt(42)``; in general
  ``1/sqrt(2 (M - 1) / 3)`` for square M-QAM).

.. rubric:: Noise model and LLR sign

Soft decisions assume ``y = s + n`` with circular complex Gaussian noise
``n`` of total variance ``noise_var`` (``noise_var / 2`` per real
dimension), equally likely symbols and, for each bit,
``LLR = ln P(b = 0 | y) / P(b = 1 | y)``: a positive LLR favours 0.
"""

from __future__ import annotations

import math
import numbers

import numpy as np
from scipy.special import logsumexp

from ._checks import integer

__all__ = ["Constellation"]

#: Square QAM orders built in (one Gray-coded PAM per axis).
QAM_ORDERS = (4, 16, 64, 256, 1024, 4096)
#: Largest PSK order accepted by :meth:`Constellation.psk`.
MAX_PSK_ORDER = 2**16

# Symbols handled per block by the soft and hard decisions: large enough
# that numpy's per-call overhead vanishes, small enough that the
# temporaries (a few times block x bits, or block x M for a full search)
# stay within a few megabytes.
_BLOCK_SYMBOLS = 1 << 15
_FULL_SEARCH_ELEMENTS = 1 << 19
# A sum of exp() terms below this is recomputed in the log domain: far
# above the subnormal range (2.2e-308), where precision would be lost.
_SMALLEST_SUM = 1e-250

# Symbol input dtype -> working complex dtype (as tonebank.fft does).
_COMPLEX_OF = {
    np.dtype(np.complex128): np.dtype(np.complex128),
    np.dtype(np.complex64): np.dtype(np.complex64),
    np.dtype(np.float64): np.dtype(np.complex128),
    np.dtype(np.float32): np.dtype(np.complex64),
    np.dtype(np.float16): np.dtype(np.complex64),
}
_LLR_DTYPE = {np.dtype(np.complex128): np.dtype(np.float64),
              np.dtype(np.complex64): np.dtype(np.float32)}


def _gray(j):
    """Binary-reflected Gray code of *j* (an int or an integer array)."""
    return j ^ (j >> 1)


def _inverse_gray(g: np.ndarray) -> np.ndarray:
    """Position ``j`` with ``_gray(j) == g``, for an integer array *g*."""
    j = g.copy()
    shift = g >> 1
    while np.any(shift):
        j ^= shift
        shift >>= 1
    return j


class _GrayAxis:
    """Gray-coded PAM on one real axis: the work of square QAM per axis.

    Levels are the odd integers ``-(L-1), ..., -1, +1, ..., L-1`` (level
    index ``j`` from the most negative) in *unit-free* coordinates; the
    constellation's scale turns them into amplitudes.  Level ``j`` carries
    the ``nbits``-bit pattern ``_gray(j)``, most significant bit first.

    Max-log table
    -------------
    Split the axis at every integer ``-(L-1), ..., L-1`` into ``2L - 2``
    unit cells (the two outermost cells extend to infinity).  Every
    midpoint between two levels is an integer, so inside one cell the
    nearest level carrying bit value 0 (``a0``) and the nearest carrying
    value 1 (``a1``) do not change, and the max-log metric is affine::

        (u - a1)^2 - (u - a0)^2 = 2 (a0 - a1) u + (a1^2 - a0^2)

    ``slope[c, b]`` and ``offset[c, b]`` hold those two numbers for cell
    ``c`` and bit ``b``::

        cell c:    0        1        2    ...   2L-3
        u range: (-inf,  -(L-2)] ... [c-(L-1), c-(L-2)] ... [L-2, +inf)

    so one LLR costs two gathers, a multiply and an add.
    """

    def __init__(self, levels: int):
        self.levels = levels
        self.nbits = levels.bit_length() - 1
        j = np.arange(levels)
        self.values = (2 * j - (levels - 1)).astype(np.float64)
        self.gray = _gray(j)
        shifts = np.arange(self.nbits - 1, -1, -1)
        # bit_of_level[j, b]: bit b (b0 = most significant) of level j's label
        self.bit_of_level = (self.gray[:, None] >> shifts) & 1
        # Level indices carrying bit value v in position b, for the exact LLR.
        self.members = [[np.flatnonzero(self.bit_of_level[:, b] == v) for v in (0, 1)]
                        for b in range(self.nbits)]
        # run_is_one[b][t]: bit b of the t-th run of L / 2**(b+1) levels.
        self.run_is_one = []
        for b in range(self.nbits):
            t = np.arange(2 ** (b + 1))
            self.run_is_one.append(((t ^ (t >> 1)) & 1).astype(bool))
        n_cells = max(2 * levels - 2, 1)
        centres = np.arange(n_cells) - (levels - 1) + 0.5
        slope = np.empty((n_cells, self.nbits))
        offset = np.empty((n_cells, self.nbits))
        for b in range(self.nbits):
            nearest = []
            for v in (0, 1):
                candidates = self.values[self.members[b][v]]
                # Unique nearest (cell centres are half-integers, midpoints integers).
                pick = np.argmin(np.abs(centres[:, None] - candidates[None, :]), axis=1)
                nearest.append(candidates[pick])
            a0, a1 = nearest
            slope[:, b] = 2.0 * (a0 - a1)
            offset[:, b] = a1 * a1 - a0 * a0
        self.slope, self.offset = slope, offset

    def cells(self, u: np.ndarray) -> np.ndarray:
        """Max-log table cell of each unit-free coordinate in *u*."""
        top = self.levels - 2
        # Clip before the integer conversion so huge inputs cannot overflow.
        return (np.floor(np.clip(u, -(self.levels - 1), top)).astype(np.intp)
                + (self.levels - 1))

    def nearest_level(self, u: np.ndarray) -> np.ndarray:
        """Index of the level nearest to each coordinate in *u*."""
        half = (self.levels - 1) / 2
        return np.rint(np.clip(u / 2 + half, 0, self.levels - 1)).astype(np.intp)

    def maxlog(self, u: np.ndarray, weight, out: np.ndarray) -> None:
        """Write ``weight * min-distance difference`` for every bit into *out*."""
        c = self.cells(u)
        metric = self.slope[c]
        metric *= u[:, None]
        metric += self.offset[c]
        np.multiply(metric, weight, out=out, casting="unsafe")

    def exact(self, u: np.ndarray, weight, out: np.ndarray) -> None:
        """Write the exact (log-sum-exp) LLR of every bit into *out*.

        Each row is shifted by its largest exponent (that of the nearest
        level), so one ``exp`` per level serves every bit.  Level ``j``'s
        bit ``b`` is constant over runs of ``L / 2**(b+1)`` consecutive
        levels (run values 0, 1, 1, 0, 0, 1, 1, 0, ... in the reflected
        Gray code), so the sums over each bit value are sums of run sums,
        built by adding neighbouring columns pairwise: ``O(L)`` additions
        per row for all bits.  The set holding the nearest level sums to
        at least 1; where the other set's sum comes near underflow (an LLR
        beyond about 570 in magnitude) that entry is recomputed with a
        log-sum-exp of its own, so the result stays exact to rounding at
        any SNR.
        """
        metric = u[:, None] - self.values[None, :]
        np.square(metric, out=metric)
        np.negative(metric, out=metric)
        metric *= weight
        nearest = u - self.values[self.nearest_level(u)]
        top = -(nearest * nearest)[:, None] * weight
        runs = np.exp(metric - top)
        sums = np.empty((u.size, 2 * self.nbits))
        for b in range(self.nbits - 1, -1, -1):
            ones = self.run_is_one[b]
            sums[:, 2 * b] = runs[:, ~ones].sum(axis=1)
            sums[:, 2 * b + 1] = runs[:, ones].sum(axis=1)
            runs = runs[:, 0::2] + runs[:, 1::2]
        small = sums < _SMALLEST_SUM
        sums[small] = 1.0  # placeholder, replaced below (avoids log(0) warnings)
        logs = np.log(sums)
        if small.any():
            rows, cols = np.nonzero(small)
            for col in np.unique(cols):
                b, v = divmod(int(col), 2)
                r = rows[cols == col]
                logs[r, col] = (logsumexp(metric[np.ix_(r, self.members[b][v])], axis=1)
                                - top[r, 0])
        np.subtract(logs[:, 0::2], logs[:, 1::2], out=out, casting="unsafe")


class Constellation:
    """An immutable, labelled set of complex points for bit mapping.

    ``Constellation(points)`` wraps arbitrary labelled points; the
    classmethods :meth:`bpsk`, :meth:`qpsk`, :meth:`psk` and :meth:`qam`
    build the Gray-coded constellations of the trade, with the bit order
    of IEEE Std 802.11a-1999 clause 17.3.5.7 (described in the module
    :mod:`tonebank.constellation`).

    Parameters
    ----------
    points : array_like
        The ``M`` points, one-dimensional; ``points[i]`` carries label ``i``, whose ``k``-bit
        binary form (most significant bit first) is the bit pattern.
        ``M`` must be a power of two, at least 2; values must be finite
        and distinct.  Real input is taken as complex.  The points are
        used as given (no normalisation).
    name : str, optional
        A display name (default ``"M-point"``).

    Attributes
    ----------
    points : numpy.ndarray
        Read-only complex128 copy of the points, shape ``(M,)``, indexed
        by label.
    order : int
        ``M``, the number of points.
    bits_per_symbol : int
        ``k = log2(M)``.
    name : str
        Display name, e.g. ``"16-QAM"``.

    Raises
    ------
    TypeError
        If ``points`` is not numeric or ``name`` is not a string.
    ValueError
        If ``points`` is not one-dimensional, its length is not a power
        of two >= 2, or it holds non-finite or repeated values.

    See Also
    --------
    tonebank.theory.ber_qam_gray : the error rate these constellations
        reach in AWGN.

    Notes
    -----
    Square QAM (including BPSK and QPSK) is decided and soft-demapped one
    axis at a time, in ``O(k)`` operations per symbol.  PSK hard
    decisions use the phase; PSK soft decisions and everything for points
    given by the user use a full search over the ``M`` points, in
    ``O(M k)`` operations per symbol.  Work is done in blocks, so memory
    use stays bounded for any input size.

    Two constellations compare equal when their points (with labels) are
    identical; the name is ignored.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.constellation import Constellation
    >>> qam16 = Constellation.qam(16)
    >>> qam16.name, qam16.order, qam16.bits_per_symbol
    ('16-QAM', 16, 4)
    >>> complex(np.round(qam16.points[0b0010] * np.sqrt(10), 12))  # 00 -> -3, 10 -> +3
    (-3+3j)
    >>> custom = Constellation([1, 1j, -1, -1j], name="rotated pairs")
    >>> custom.demap(np.array([0.9 - 0.2j, -0.1 - 1.1j]))
    array([0, 0, 1, 1], dtype=uint8)
    """

    __slots__ = ("_points", "_points64", "_name", "_k", "_kind", "_axes", "_scale",
                 "_psk_offset", "_hash")

    def __init__(self, points, *, name=None):
        arr = _as_points(points)
        if name is None:
            name = f"{arr.size}-point"
        self._setup(arr, name, "generic")

    # -- construction ---------------------------------------------------------

    def _setup(self, points, name, kind, axes=(), scale=1.0, psk_offset=0.0):
        if not isinstance(name, str):
            raise TypeError(f"name must be a string; got {type(name).__name__}")
        points = np.array(points, dtype=np.complex128)
        points.flags.writeable = False
        points64 = points.astype(np.complex64)
        points64.flags.writeable = False
        setter = object.__setattr__
        setter(self, "_points", points)
        setter(self, "_points64", points64)
        setter(self, "_name", name)
        setter(self, "_k", points.size.bit_length() - 1)
        setter(self, "_kind", kind)
        setter(self, "_axes", tuple(axes))
        setter(self, "_scale", float(scale))
        setter(self, "_psk_offset", float(psk_offset))
        # + 0.0 turns -0.0 into 0.0, so equal points hash equally.
        setter(self, "_hash", hash((points + 0.0).tobytes()))

    @classmethod
    def _square(cls, levels_i: int, levels_q: int, name: str) -> Constellation:
        """Gray PAM on I (``levels_i``) and, when ``levels_q > 1``, on Q."""
        axis_i = _GrayAxis(levels_i)
        axes = [axis_i]
        label_i = np.arange(levels_i)
        if levels_q > 1:
            axis_q = _GrayAxis(levels_q)
            axes.append(axis_q)
            energy = (levels_i**2 - 1) / 3 + (levels_q**2 - 1) / 3
            scale = 1.0 / math.sqrt(energy)
            labels = (axis_i.gray[:, None] << axis_q.nbits) | axis_q.gray[None, :]
            values = axis_i.values[:, None] + 1j * axis_q.values[None, :]
        else:
            scale = 1.0 / math.sqrt((levels_i**2 - 1) / 3)
            labels = axis_i.gray[label_i]
            values = axis_i.values.astype(np.complex128)
        points = np.empty(levels_i * max(levels_q, 1), dtype=np.complex128)
        points[labels.ravel()] = scale * values.ravel()
        self = object.__new__(cls)
        self._setup(points, name, "square", axes, scale)
        return self

    @classmethod
    def bpsk(cls) -> Constellation:
        """BPSK of IEEE Std 802.11a-1999 clause 17.3.5.7: ``0 -> -1``, ``1 -> +1``.

        Returns
        -------
        Constellation
            Two real points, ``points = [-1, +1]``, named ``"BPSK"``.

        See Also
        --------
        psk : the same points as ``psk(2)``, with the PSK machinery.

        Examples
        --------
        >>> from tonebank.constellation import Constellation
        >>> Constellation.bpsk().points
        array([-1.+0.j,  1.+0.j])
        """
        return cls._square(2, 1, "BPSK")

    @classmethod
    def qpsk(cls) -> Constellation:
        """Gray QPSK of IEEE Std 802.11a-1999 clause 17.3.5.7 (``qam(4)``).

        ``b0`` selects the in-phase sign and ``b1`` the quadrature sign
        (0 -> negative, 1 -> positive), scaled by ``1/sqrt(2)``.

        Returns
        -------
        Constellation
            Four points named ``"QPSK"``.

        See Also
        --------
        qam, psk

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> np.round(Constellation.qpsk().points * np.sqrt(2), 12)
        array([-1.-1.j, -1.+1.j,  1.-1.j,  1.+1.j])
        """
        return cls._square(2, 2, "QPSK")

    @classmethod
    def qam(cls, m) -> Constellation:
        """Gray-coded square M-QAM with unit average energy.

        Parameters
        ----------
        m : int
            Number of points: 4, 16, 64, 256, 1024 or 4096.

        Returns
        -------
        Constellation
            Named ``"<m>-QAM"``.

        Raises
        ------
        TypeError
            If ``m`` is not an integer.
        ValueError
            If ``m`` is not one of the allowed orders.

        See Also
        --------
        tonebank.theory.ber_qam_gray, tonebank.theory.ser_qam

        Notes
        -----
        The first ``k/2`` bits (``b0`` first) select the in-phase level
        and the last ``k/2`` the quadrature level, each through the
        binary-reflected Gray code with the all-zero pattern on the most
        negative level, as IEEE Std 802.11a-1999 clause 17.3.5.7 defines
        for 16- and 64-QAM.  Levels are ``K (2j - (L - 1))`` for
        ``j = 0 .. L-1``, ``L = sqrt(M)``, with
        ``K = 1 / sqrt(2 (M - 1) / 3)`` for unit average energy.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> qam64 = Constellation.qam(64)
        >>> round(float(np.mean(abs(qam64.points) ** 2)), 12)
        1.0
        >>> qam64.map([1, 0, 0, 1, 0, 0]) * np.sqrt(42)   # 100 -> +7, 100 -> +7
        array([7.+7.j])
        """
        m = integer(m, "m")
        if m not in QAM_ORDERS:
            raise ValueError(f"m={m} is not a supported square QAM order; allowed: "
                             f"{', '.join(map(str, QAM_ORDERS))}")
        if m == 4:
            return cls._square(2, 2, "4-QAM")
        levels = math.isqrt(m)
        return cls._square(levels, levels, f"{m}-QAM")

    @classmethod
    def rectangular_qam(cls, levels_i, levels_q) -> Constellation:
        """Gray-coded QAM with ``levels_i`` in-phase and ``levels_q`` quadrature levels.

        The odd-bit orders (8, 32, 128 ... points) that square QAM cannot
        give, for bit loading, and square orders beyond :meth:`qam`'s.

        Parameters
        ----------
        levels_i, levels_q : int
            Levels per axis, each a power of two from 2 to 2**10.

        Returns
        -------
        Constellation
            Unit average energy, named ``"<M>-QAM (<levels_i>x<levels_q>)"``
            (``"<M>-QAM"`` when the axes are equal, the same points as
            ``qam(M)`` for its orders).

        Raises
        ------
        TypeError
            If a level count is not an integer.
        ValueError
            If a level count is not a power of two in the allowed range.

        See Also
        --------
        qam : the square orders.

        Notes
        -----
        The first ``log2(levels_i)`` bits select the in-phase level and the
        rest the quadrature level, each through the binary-reflected Gray
        code as in :meth:`qam`.  Levels are ``K (2j - (L - 1))`` on each axis
        with ``K = 1 / sqrt((levels_i**2 - 1) / 3 + (levels_q**2 - 1) / 3)``
        for unit average energy.  A rectangular grid has a little less
        minimum distance for its energy than a cross-shaped one of the same
        order; it keeps Gray labels on both axes and the per-axis LLRs.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> qam8 = Constellation.rectangular_qam(4, 2)
        >>> qam8.name, qam8.bits_per_symbol
        ('8-QAM (4x2)', 3)
        >>> round(float(np.mean(abs(qam8.points) ** 2)), 12)
        1.0
        """
        levels = []
        for name, value in (("levels_i", levels_i), ("levels_q", levels_q)):
            value = integer(value, name)
            if value < 2 or value > 2**10 or value & (value - 1):
                raise ValueError(f"{name}={value} must be a power of two from 2 to 1024")
            levels.append(value)
        levels_i, levels_q = levels
        m = levels_i * levels_q
        if levels_i == levels_q and m in QAM_ORDERS:
            return cls.qam(m)
        shape = "" if levels_i == levels_q else f" ({levels_i}x{levels_q})"
        return cls._square(levels_i, levels_q, f"{m}-QAM{shape}")

    @classmethod
    def psk(cls, m, *, phase_offset=None) -> Constellation:
        """Gray-coded M-PSK on the unit circle.

        Parameters
        ----------
        m : int
            Number of points, a power of two from 2 to 65536.
        phase_offset : float, optional
            Phase in radians of the point labelled 0.  Default: ``pi`` for
            ``m = 2`` and ``pi + pi/m`` otherwise, so that ``psk(2)`` and
            ``psk(4)`` have the points and labels of :meth:`bpsk` and
            :meth:`qpsk` (to rounding).

        Returns
        -------
        Constellation
            Named ``"<m>-PSK"``.

        Raises
        ------
        TypeError
            If ``m`` is not an integer or ``phase_offset`` not a real number.
        ValueError
            If ``m`` is not an allowed power of two or ``phase_offset`` is
            not finite.

        See Also
        --------
        tonebank.theory.ser_mpsk, tonebank.theory.ber_mpsk_gray

        Notes
        -----
        Point ``j`` (``j = 0 .. m-1``) sits at phase
        ``phase_offset - 2 pi j / m`` (labels advance clockwise, the
        direction in which 802.11a's QPSK labels 00, 01, 11, 10 follow
        each other) and carries label ``j XOR (j >> 1)``, the reflected
        Gray code, so neighbours on the circle differ in exactly one bit
        (the code is cyclic, so this holds across ``j = m-1 -> 0`` too).

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> psk8 = Constellation.psk(8)
        >>> psk8.decide(np.exp(1j * (np.pi + np.pi / 8)))   # phase of label 0
        0
        >>> bool(np.allclose(Constellation.psk(4).points, Constellation.qpsk().points))
        True
        """
        m = integer(m, "m")
        if m < 2 or m > MAX_PSK_ORDER or m & (m - 1):
            raise ValueError(f"m={m} is not allowed; PSK needs a power of two from 2 "
                             f"to {MAX_PSK_ORDER}")
        if phase_offset is None:
            offset = math.pi if m == 2 else math.pi + math.pi / m
        else:
            offset = _as_real(phase_offset, "phase_offset")
        j = np.arange(m)
        points = np.empty(m, dtype=np.complex128)
        points[_gray(j)] = np.exp(1j * (offset - 2 * np.pi * j / m))
        self = object.__new__(cls)
        self._setup(points, f"{m}-PSK", "psk", psk_offset=offset)
        return self

    # -- immutable value object -------------------------------------------------

    def __setattr__(self, key, value):
        raise AttributeError(f"Constellation is immutable; cannot set {key!r}")

    def __delattr__(self, key):
        raise AttributeError(f"Constellation is immutable; cannot delete {key!r}")

    def __eq__(self, other):
        if not isinstance(other, Constellation):
            return NotImplemented
        return np.array_equal(self._points, other._points)

    def __hash__(self):
        return self._hash

    def __repr__(self):
        return f"<Constellation {self._name}: {self.order} points, {self._k} bits/symbol>"

    def __reduce__(self):
        # Pickle through the public constructor: the fast paths are rebuilt
        # by name where a classmethod made them.
        levels = tuple(axis.levels for axis in self._axes)
        return (_rebuild, (self._kind, self._name, self._psk_offset,
                           np.array(self._points), levels))

    @property
    def points(self) -> np.ndarray:
        """The points, indexed by label (read-only complex128 array)."""
        return self._points

    @property
    def order(self) -> int:
        """Number of points ``M``."""
        return self._points.size

    @property
    def bits_per_symbol(self) -> int:
        """Bits carried per point, ``k = log2(M)``."""
        return self._k

    @property
    def name(self) -> str:
        """Display name, e.g. ``"16-QAM"``."""
        return self._name

    # -- bits and labels --------------------------------------------------------

    def bits_to_labels(self, bits) -> np.ndarray:
        """Group bits into labels, ``k`` bits per label, most significant first.

        Parameters
        ----------
        bits : array_like
            Bits of shape ``(..., n*k)``, of a boolean or integer dtype,
            values 0 and 1 only.

        Returns
        -------
        numpy.ndarray
            Labels of shape ``(..., n)``, dtype numpy.intp.

        Raises
        ------
        TypeError
            If ``bits`` is not of a boolean or integer dtype.
        ValueError
            If ``bits`` is 0-d, holds values other than 0 and 1, or its last
            axis is not a multiple of ``k`` (the message says how many
            padding bits would complete the last symbol).

        See Also
        --------
        labels_to_bits

        Examples
        --------
        >>> from tonebank.constellation import Constellation
        >>> Constellation.qam(16).bits_to_labels([0, 0, 1, 0, 1, 1, 1, 1])
        array([ 2, 15])
        """
        b = _as_bits(bits, self._k)
        if b.dtype == np.uint64:
            b = b.astype(np.intp)  # no bitwise ufunc mixes uint64 with intp
        k = self._k
        grouped = b.reshape(b.shape[:-1] + (b.shape[-1] // k, k))
        labels = grouped[..., 0].astype(np.intp)
        for i in range(1, k):
            labels <<= 1
            np.bitwise_or(labels, grouped[..., i], out=labels, casting="unsafe")
        return labels

    def labels_to_bits(self, labels) -> np.ndarray:
        """Expand labels into their ``k`` bits each, most significant first.

        Parameters
        ----------
        labels : array_like
            Labels of shape ``(..., n)``, of an integer dtype, values from 0
            to ``M - 1``.

        Returns
        -------
        numpy.ndarray
            Bits of shape ``(..., n*k)``, dtype numpy.uint8.

        Raises
        ------
        TypeError
            If ``labels`` is not of an integer dtype.
        ValueError
            If ``labels`` is 0-d or holds values outside ``0 .. M-1``.

        See Also
        --------
        bits_to_labels

        Examples
        --------
        >>> from tonebank.constellation import Constellation
        >>> Constellation.qam(16).labels_to_bits([2, 15])
        array([0, 0, 1, 0, 1, 1, 1, 1], dtype=uint8)
        """
        lab = np.asarray(labels)
        if lab.dtype.kind not in "iu":
            raise TypeError(f"labels must have an integer dtype; got {lab.dtype}")
        if lab.ndim == 0:
            raise ValueError("labels must have at least one dimension; got a 0-d array")
        if lab.size and (lab.min() < 0 or lab.max() >= self.order):
            bad = lab[(lab < 0) | (lab >= self.order)].flat[0]
            raise ValueError(f"labels holds {bad}; allowed are 0 to {self.order - 1} "
                             f"for {self._name}")
        return self._labels_to_bits(lab)

    def _labels_to_bits(self, lab: np.ndarray) -> np.ndarray:
        k = self._k
        shifts = np.arange(k - 1, -1, -1, dtype=np.intp)
        bits = ((lab[..., None] >> shifts) & 1).astype(np.uint8)
        return bits.reshape(lab.shape[:-1] + (lab.shape[-1] * k,))

    # -- mapping ----------------------------------------------------------------

    def map(self, bits, *, dtype=np.complex128) -> np.ndarray:
        """Map bits to symbols, ``k`` bits per symbol (module bit order).

        Parameters
        ----------
        bits : array_like
            Bits of shape ``(..., n*k)``, of a boolean or integer dtype,
            values 0 and 1 only; symbol ``i`` takes bits
            ``i*k .. i*k + k - 1`` of the last axis, the first of them
            being ``b0`` (most significant).
        dtype : {numpy.complex128, numpy.complex64}, optional
            Result dtype.

        Returns
        -------
        numpy.ndarray
            The symbols, shape ``(..., n)``, of the requested dtype.

        Raises
        ------
        TypeError
            If ``bits`` is not of a boolean or integer dtype, or ``dtype``
            is not complex64 or complex128.
        ValueError
            If ``bits`` is 0-d or holds values other than 0 and 1, or its
            last axis is not a multiple of ``k``: the data are never
            truncated; the message says how many padding bits would
            complete the last symbol.

        See Also
        --------
        demap, llr, bits_to_labels

        Notes
        -----
        One table look-up per symbol: ``points[label]``.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> rng = np.random.default_rng(1)
        >>> qam = Constellation.qam(16)
        >>> bits = rng.integers(0, 2, (2, 12))      # 2 rows of 3 symbols
        >>> symbols = qam.map(bits, dtype=np.complex64)
        >>> symbols.shape, symbols.dtype
        ((2, 3), dtype('complex64'))
        >>> bool(np.array_equal(qam.demap(symbols), bits))
        True
        """
        try:
            out_dtype = np.dtype(dtype)
        except TypeError:
            raise TypeError(f"dtype={dtype!r} is not a numpy dtype; allowed: "
                            "complex64, complex128") from None
        if out_dtype == np.complex128:
            table = self._points
        elif out_dtype == np.complex64:
            table = self._points64
        else:
            raise TypeError(f"dtype={out_dtype} is not allowed; use complex64 or complex128")
        return table[self.bits_to_labels(bits)]

    # -- hard decisions ---------------------------------------------------------

    def decide(self, symbols) -> np.ndarray:
        """Label of the nearest point (minimum Euclidean distance) per symbol.

        Parameters
        ----------
        symbols : array_like
            Received symbols of any shape, complex (real input is taken as
            complex).

        Returns
        -------
        numpy.ndarray or int
            Labels (dtype numpy.intp) in the shape of ``symbols``; a single
            (0-d) symbol gives a Python int.

        Raises
        ------
        TypeError
            If ``symbols`` has a dtype that is not allowed.
        ValueError
            If ``symbols`` holds NaN or infinite values.

        See Also
        --------
        demap, llr

        Notes
        -----
        Square QAM rounds each axis to the nearest level (``O(1)`` per
        symbol), PSK rounds the phase, other constellations search all
        ``M`` points (``O(M)`` per symbol).  Ties (points exactly half-way)
        go to either neighbour.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> Constellation.qpsk().decide(np.array([0.5 + 0.4j, -0.1 - 2j]))
        array([3, 0])
        """
        y = _as_symbols(symbols)
        labels = self._decide(y.reshape(-1))
        if y.ndim == 0:
            return int(labels[0])
        return labels.reshape(y.shape)

    def _decide(self, y: np.ndarray) -> np.ndarray:
        if self._kind == "square":
            inv = 1.0 / self._scale
            axis_i = self._axes[0]
            labels = axis_i.gray[axis_i.nearest_level(y.real * inv)]
            if len(self._axes) == 2:
                axis_q = self._axes[1]
                labels = labels << axis_q.nbits
                labels |= axis_q.gray[axis_q.nearest_level(y.imag * inv)]
            return labels
        if self._kind == "psk":
            m = self.order
            step = (self._psk_offset - np.angle(y)) * (m / (2 * np.pi))
            j = np.rint(step).astype(np.intp) % m
            return _gray(j)
        labels = np.empty(y.shape, dtype=np.intp)
        block = max(1, _FULL_SEARCH_ELEMENTS // self.order)
        for start in range(0, y.size, block):
            part = y[start:start + block]
            labels[start:start + block] = np.argmin(
                _squared_distances(part, self._points), axis=1)
        return labels

    def demap(self, symbols) -> np.ndarray:
        """Hard-decision bits (nearest point) of each symbol.

        Parameters
        ----------
        symbols : array_like
            Received symbols of shape ``(..., n)``, complex (real input is
            taken as complex).

        Returns
        -------
        numpy.ndarray
            Bits of shape ``(..., n*k)``, dtype numpy.uint8, in the order
            :meth:`map` takes them.

        Raises
        ------
        TypeError
            If ``symbols`` has a dtype that is not allowed.
        ValueError
            If ``symbols`` is 0-d or holds NaN or infinite values.

        See Also
        --------
        decide, llr, map

        Notes
        -----
        ``labels_to_bits(decide(symbols))``; the cost is that of
        :meth:`decide` plus ``k`` operations per symbol.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> Constellation.bpsk().demap(np.array([-0.3, 1.2, 0.1]))
        array([0, 1, 1], dtype=uint8)
        """
        y = _as_symbols(symbols)
        if y.ndim == 0:
            raise ValueError("symbols must have at least one dimension; got a 0-d array")
        labels = self._decide(y.reshape(-1)).reshape(y.shape)
        return self._labels_to_bits(labels)

    # -- soft decisions ---------------------------------------------------------

    def llr(self, symbols, noise_var, *, exact=False) -> np.ndarray:
        """Per-bit log-likelihood ratios ``ln P(b=0|y) / P(b=1|y)``.

        Parameters
        ----------
        symbols : array_like
            Received (equalised) symbols ``y``, shape ``(..., n)``.  complex128 and complex64
            are kept; real input is taken as complex (float32 and float16
            as complex64, other real and integer types as complex128).
        noise_var : float or array_like
            Total complex noise variance ``N0`` of each symbol (``N0 / 2``
            per real dimension), > 0 and finite.  Broadcast against the
            shape of ``symbols`` without changing it: a scalar, one value
            per symbol, one per subcarrier (shape ``(n,)`` against
            ``(..., n_symbols, n)``), one per row (shape ``(..., 1)``) ...
        exact : bool, optional
            ``False`` (default): max-log approximation.  ``True``: the exact
            log-sum-exp over all points (numerically stable).

        Returns
        -------
        numpy.ndarray
            LLRs of shape ``(..., n*k)`` in the bit order of :meth:`map`; positive values favour
            bit 0.  float64 for complex128 input, float32 for complex64.

        Raises
        ------
        TypeError
            If ``symbols`` or ``noise_var`` has a dtype that is not allowed.
        ValueError
            If ``symbols`` is 0-d or not finite, or ``noise_var`` is not
            finite and positive everywhere or does not broadcast to the
            shape of ``symbols``.

        See Also
        --------
        demap : the hard decisions; max-log LLRs agree with them in sign.

        Notes
        -----
        With ``y = s + n``, ``n`` circular complex Gaussian of variance
        :math:`N_0`, and equally likely points, the LLR of bit :math:`b` is

        .. math::

           L_b = \\ln \\frac{\\sum_{s \\in S_b^0} e^{-|y-s|^2/N_0}}
                         {\\sum_{s \\in S_b^1} e^{-|y-s|^2/N_0}}
           \\approx \\frac{\\min_{s \\in S_b^1} |y-s|^2
                          - \\min_{s \\in S_b^0} |y-s|^2}{N_0}

        where :math:`S_b^v` are the points whose label has bit :math:`b`
        equal to :math:`v`; the right-hand side is the max-log value.

        For Gray square QAM the bits of one axis depend only on that
        axis's coordinate, so both forms reduce to PAM problems on I and
        Q.  Max-log then uses a table: the axis is cut into unit cells at
        every midpoint between levels, where the nearest level with each
        bit value is fixed and the metric is affine in the coordinate,
        so each LLR costs two table gathers, a multiply and an add
        (``O(k)`` per symbol).  The exact form costs ``O(k sqrt(M))`` per
        symbol on square QAM and ``O(k M)`` on other constellations, as
        does max-log on them.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.constellation import Constellation
        >>> rng = np.random.default_rng(3)
        >>> qam = Constellation.qam(64)
        >>> bits = rng.integers(0, 2, 6 * 1000)
        >>> noise_var = 0.001                         # Es/N0 = 30 dB
        >>> noise = np.sqrt(noise_var / 2) * (rng.standard_normal(1000)
        ...                                   + 1j * rng.standard_normal(1000))
        >>> llr = qam.llr(qam.map(bits) + noise, noise_var)
        >>> llr.shape, llr.dtype
        ((6000,), dtype('float64'))
        >>> int(np.count_nonzero((llr < 0) != (bits == 1)))    # bit errors
        0
        """
        y = _as_symbols(symbols)
        if y.ndim == 0:
            raise ValueError("symbols must have at least one dimension; got a 0-d array")
        weight = _inverse_noise(noise_var, y.shape)
        out_dtype = _LLR_DTYPE[y.dtype]
        k = self._k
        flat = y.reshape(-1)
        out = np.empty((flat.size, k), dtype=out_dtype)
        for start in range(0, flat.size, _BLOCK_SYMBOLS):
            stop = min(start + _BLOCK_SYMBOLS, flat.size)
            part = flat[start:stop].astype(np.complex128, copy=False)
            w = weight if np.ndim(weight) == 0 else weight[start:stop, None]
            self._llr_block(part, w, bool(exact), out[start:stop])
        return out.reshape(y.shape[:-1] + (y.shape[-1] * k,))

    def _llr_block(self, y: np.ndarray, w, exact: bool, out: np.ndarray) -> None:
        if self._kind == "square":
            inv = 1.0 / self._scale
            # Unit-free coordinates: the metric scales by scale**2.
            w = w * (self._scale * self._scale)
            col = 0
            for axis, part in zip(self._axes, (y.real, y.imag)):
                target = out[:, col:col + axis.nbits]
                if exact:
                    axis.exact(part * inv, w, target)
                else:
                    axis.maxlog(part * inv, w, target)
                col += axis.nbits
            return
        # Full search over the M points, in sub-blocks of bounded size.
        k = self._k
        block = max(1, _FULL_SEARCH_ELEMENTS // self.order)
        members = _label_members(self.order, k)
        for start in range(0, y.size, block):
            sl = slice(start, start + block)
            d2 = _squared_distances(y[sl], self._points)
            ws = w if np.ndim(w) == 0 else w[sl]
            if exact:
                d2 *= -ws
                for b in range(k):
                    out[sl, b] = (logsumexp(d2[:, members[b][0]], axis=1)
                                  - logsumexp(d2[:, members[b][1]], axis=1))
            else:
                metric = np.empty((d2.shape[0], k))
                for b in range(k):
                    metric[:, b] = (d2[:, members[b][1]].min(axis=1)
                                    - d2[:, members[b][0]].min(axis=1))
                np.multiply(metric, ws, out=out[sl], casting="unsafe")


# -- helpers -------------------------------------------------------------------


_MEMBERS_CACHE: dict = {}


def _label_members(m: int, k: int):
    """``members[b][v]``: labels whose bit ``b`` (b0 = MSB) equals ``v``."""
    if m not in _MEMBERS_CACHE:
        labels = np.arange(m)
        _MEMBERS_CACHE[m] = [[np.flatnonzero(((labels >> (k - 1 - b)) & 1) == v)
                              for v in (0, 1)] for b in range(k)]
    return _MEMBERS_CACHE[m]


def _squared_distances(y: np.ndarray, points: np.ndarray) -> np.ndarray:
    """``|y[i] - points[j]|**2`` as a float64 (len(y), M) array."""
    dr = y.real[:, None] - points.real[None, :]
    di = y.imag[:, None] - points.imag[None, :]
    dr *= dr
    di *= di
    dr += di
    return dr


def _rebuild(kind, name, offset, points, levels=()):
    if kind == "square":
        if name == "BPSK":
            return Constellation.bpsk()
        if name == "QPSK":
            return Constellation.qpsk()
        if len(levels) == 2:
            return Constellation.rectangular_qam(*levels)
        return Constellation.qam(points.size)
    if kind == "psk":
        return Constellation.psk(points.size, phase_offset=offset)
    return Constellation(points, name=name)


def _as_real(value, argument: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{argument} must be a real number; got {value!r}")
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"{argument}={value} is not allowed; it must be finite")
    return value


def _as_points(points) -> np.ndarray:
    arr = np.asarray(points)
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"points must be numeric; got dtype {arr.dtype}")
    if arr.ndim != 1:
        raise ValueError(f"points must be one-dimensional; got shape {arr.shape}")
    m = arr.size
    if m < 2 or m & (m - 1):
        raise ValueError(f"points has {m} values; a constellation needs a power of "
                         "two, at least 2")
    arr = arr.astype(np.complex128)
    if not np.all(np.isfinite(arr)):
        raise ValueError("points holds NaN or infinite values; all must be finite")
    if np.unique(arr).size != m:
        raise ValueError("points holds repeated values; every point must be distinct")
    return arr


def _as_bits(bits, k: int) -> np.ndarray:
    b = np.asarray(bits)
    if b.dtype.kind not in "biu":
        raise TypeError(f"bits must have a boolean or integer dtype; got {b.dtype}")
    if b.ndim == 0:
        raise ValueError("bits must have at least one dimension; got a 0-d array")
    n_bits = b.shape[-1]
    if n_bits % k:
        pad = k - n_bits % k
        raise ValueError(
            f"bits has {n_bits} values on its last axis, not a multiple of the "
            f"{k} bits per symbol; append {pad} padding bit(s) to complete the last "
            "symbol (the data are never truncated)")
    if b.dtype.kind != "b" and b.size:
        if b.min() < 0 or b.max() > 1:
            bad = b[(b != 0) & (b != 1)].flat[0]
            raise ValueError(f"bits holds the value {bad}; only 0 and 1 are allowed")
    return b


def _as_symbols(symbols) -> np.ndarray:
    y = np.asarray(symbols)
    dtype = _COMPLEX_OF.get(y.dtype)
    if dtype is None:
        if y.dtype.kind in "biu":
            dtype = np.dtype(np.complex128)
        else:
            raise TypeError(
                f"symbols has dtype {y.dtype}, which is not allowed; use complex64, "
                "complex128, or a real float or integer dtype")
    if y.dtype != dtype:
        y = y.astype(dtype)
    if not np.all(np.isfinite(y)):
        raise ValueError("symbols holds NaN or infinite values; all must be finite")
    return y


def _inverse_noise(noise_var, shape: tuple):
    """``1 / noise_var`` as a float or a flat float64 array matching *shape*."""
    nv = np.asarray(noise_var)
    if nv.dtype.kind not in "biuf":
        raise TypeError(f"noise_var must be real; got dtype {nv.dtype}")
    nv = nv.astype(np.float64)
    if not (np.all(np.isfinite(nv)) and np.all(nv > 0)):
        raise ValueError(f"noise_var must be finite and > 0 everywhere; got "
                         f"{nv if nv.size <= 4 else 'an array with a bad value'}")
    try:
        broadcast = np.broadcast_shapes(nv.shape, shape)
    except ValueError:
        broadcast = None
    if broadcast != shape:
        raise ValueError(f"noise_var has shape {nv.shape}, which does not broadcast to "
                         f"the shape {shape} of symbols")
    if nv.size == 1:
        return 1.0 / float(nv.reshape(-1)[0])
    return np.broadcast_to(1.0 / nv, shape).reshape(-1)
