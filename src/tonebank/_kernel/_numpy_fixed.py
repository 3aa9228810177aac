"""The fixed-point FFT as an integer model in numpy: the reference the C kernel matches bit for bit.

The arithmetic, for a format with ``f`` fraction bits (Q15: ``f = 15``,
data int16, products and sums in 32 bits; Q31: ``f = 31``, data int32,
products and sums in 64 bits), a size ``n = 2**m`` and per-stage shifts
``s_0 .. s_{m-1}``:

1. the input is put in bit-reversed order;
2. stage ``k`` (``h = 2**k``, span ``2h``) combines, in every group of
   ``2h`` values, ``a = x[g + j]`` and ``b = x[g + j + h]`` with the
   twiddle ``w = W[j n / (2h)]`` (``W[i]`` = exp(-+2 pi i / n) quantised)::

       t_re = R(b_re w_re - b_im w_im, f)      t_im = R(b_re w_im + b_im w_re, f)
       y0 = S(R(a + t, s_k))                   y1 = S(R(a - t, s_k))

   where ``R(v, k)`` is the shift right by ``k`` bits with rounding
   (``k = 0``: no change) and ``S`` saturates to ``[-2**f, 2**f - 1]``,
   each clipped component counting one saturation;
3. with block floating point the shift of stage ``k`` is chosen per
   transform from the largest component magnitude ``M`` of the stage's
   input: 0 if ``M < 2**(f-2)``, 1 if ``M < 2**(f-1)``, else 2.  A
   butterfly output is at most ``(1 + sqrt 2) M`` (plus rounding), so this
   never saturates; the exponent is the sum of the shifts.

Rounding ``R``: ``"half_up"`` adds ``2**(k-1)`` and shifts arithmetically
(floor); ``"convergent"`` rounds halves to the even neighbour.

No intermediate value overflows its accumulator: ``|b_re w_re - b_im
w_im| <= max|b| (|w_re| + |w_im|) <= 2**f * sqrt(2) * 2**f < 2**(2f+1)``,
inside 32 bits for Q15 and 64 bits for Q31, and int64 holds every value
of both here, so this model computes in int64 and gets what the C
kernel's 32/64-bit arithmetic gets.
"""

from __future__ import annotations

import numpy as np

#: Fraction bits per precision name.
FRACTION_BITS = {"q15": 15, "q31": 31}
#: Storage dtype per precision name.
STORAGE = {"q15": np.dtype(np.int16), "q31": np.dtype(np.int32)}


def shift_round(v: np.ndarray, k, convergent: bool) -> np.ndarray:
    """``R(v, k)``: shift right by ``k`` bits (scalar or array, >= 0) with rounding."""
    k = np.asarray(k, dtype=np.int64)
    if not np.any(k):
        return v
    half = np.where(k > 0, np.left_shift(np.int64(1), np.maximum(k - 1, 0)), 0)
    q = np.right_shift(v + half, k)
    if convergent:
        # Exactly half way: v + half is a multiple of 2**k; round to even.
        tie = (k > 0) & (np.bitwise_and(v + half, np.left_shift(np.int64(1), k) - 1) == 0) \
            & (np.bitwise_and(q, 1) == 1)
        q = q - tie
    return q


def bit_reversal(n: int) -> np.ndarray:
    """Index ``i`` -> ``i`` with its ``log2 n`` bits reversed."""
    m = n.bit_length() - 1
    idx = np.arange(n)
    rev = np.zeros(n, dtype=np.int64)
    for b in range(m):
        rev |= ((idx >> b) & 1) << (m - 1 - b)
    return rev


def block_shift(values: np.ndarray, f: int) -> np.ndarray:
    """Block floating point: the shift of a stage per transform, from its input ``(B, ...)``."""
    peak = np.max(np.abs(values.reshape(values.shape[0], -1)), axis=1)
    return np.where(peak < (1 << (f - 2)), 0, np.where(peak < (1 << (f - 1)), 1, 2))


def fixed_fft(x: np.ndarray, twiddles: np.ndarray, f: int, shifts, convergent: bool,
              trace: bool = False):
    """Run the integer model.

    Parameters
    ----------
    x : numpy.ndarray
        ``(B, n, 2)`` integers (re, im), any integer dtype.
    twiddles : numpy.ndarray
        ``(n // 2, 2)`` integers: ``W[i]`` for ``i < n/2``.
    f : int
        Fraction bits.
    shifts : sequence of int or None
        Shift of every stage, or None for block floating point.
    convergent : bool
        Round halves to even (else half up).
    trace : bool
        Also return every stage's output.

    Returns
    -------
    out, exponent, saturations, stages
        ``(B, n, 2)`` int64; ``(B,)`` int64 total shifts; ``(B,)`` int64
        count of saturated components; list of ``(B, n, 2)`` stage outputs
        (empty unless ``trace``).
    """
    b_count, n = x.shape[0], x.shape[1]
    if b_count == 0:
        # nothing to transform (the reshapes below cannot infer -1 from 0 values)
        empty = np.zeros(0, dtype=np.int64)
        stages = [np.zeros((0, n, 2), dtype=np.int64) for _ in range(n.bit_length() - 1)]
        return (np.zeros((0, n, 2), dtype=np.int64), empty, empty.copy(),
                stages if trace else [])
    m = n.bit_length() - 1
    lo, hi = -(1 << f), (1 << f) - 1
    data = x.astype(np.int64)[:, bit_reversal(n), :]
    re, im = data[..., 0], data[..., 1]
    wr_all = twiddles[:, 0].astype(np.int64)
    wi_all = twiddles[:, 1].astype(np.int64)
    exponent = np.zeros(b_count, dtype=np.int64)
    saturations = np.zeros(b_count, dtype=np.int64)
    stages = []
    for k in range(m):
        h = 1 << k
        groups = n // (2 * h)
        if shifts is None:
            s = block_shift(np.stack((re, im), axis=-1), f)[:, None, None]
        else:
            s = np.full((b_count, 1, 1), int(shifts[k]), dtype=np.int64)
        exponent += s[:, 0, 0]
        r = re.reshape(b_count, groups, 2, h)
        i = im.reshape(b_count, groups, 2, h)
        ar, ai, br, bi = r[:, :, 0], i[:, :, 0], r[:, :, 1], i[:, :, 1]
        step = n // (2 * h)
        wr = wr_all[np.arange(h) * step]
        wi = wi_all[np.arange(h) * step]
        tr = shift_round(br * wr - bi * wi, f, convergent)
        ti = shift_round(br * wi + bi * wr, f, convergent)
        out_r = np.empty_like(r)
        out_i = np.empty_like(i)
        out_r[:, :, 0] = shift_round(ar + tr, s, convergent)
        out_i[:, :, 0] = shift_round(ai + ti, s, convergent)
        out_r[:, :, 1] = shift_round(ar - tr, s, convergent)
        out_i[:, :, 1] = shift_round(ai - ti, s, convergent)
        clipped = (out_r < lo) | (out_r > hi)
        saturations += np.count_nonzero(clipped.reshape(b_count, -1), axis=1)
        clipped = (out_i < lo) | (out_i > hi)
        saturations += np.count_nonzero(clipped.reshape(b_count, -1), axis=1)
        re = np.clip(out_r, lo, hi).reshape(b_count, n)
        im = np.clip(out_i, lo, hi).reshape(b_count, n)
        if trace:
            stages.append(np.stack((re, im), axis=-1))
    return np.stack((re, im), axis=-1), exponent, saturations, stages


class FixedFftRunner:
    """The kernel interface's fixed-point FFT for one configuration (numpy model).

    ``run(x)`` takes ``(B, n, 2)`` int16 (Q15) or int32 (Q31) and returns
    ``(out, exponent, saturations)``: ``out`` of the same dtype and shape,
    ``exponent`` and ``saturations`` int64 of shape ``(B,)``.
    """

    def __init__(self, n: int, precision: str, twiddles: np.ndarray, shifts, convergent: bool):
        self.n = n
        self.precision = precision
        self.f = FRACTION_BITS[precision]
        self.twiddles = twiddles
        self.shifts = None if shifts is None else tuple(int(s) for s in shifts)
        self.convergent = convergent

    def run(self, x: np.ndarray):
        out, exponent, saturations, _ = fixed_fft(x, self.twiddles, self.f, self.shifts,
                                                  self.convergent)
        return out.astype(STORAGE[self.precision]), exponent, saturations

    def trace(self, x: np.ndarray) -> list:
        """Every stage's output, ``(B, n, 2)`` of the storage dtype each (numpy model only)."""
        _, _, _, stages = fixed_fft(x, self.twiddles, self.f, self.shifts, self.convergent,
                                    trace=True)
        return [s.astype(STORAGE[self.precision]) for s in stages]


def fixed_fft_runner(n: int, precision: str, twiddles: np.ndarray, shifts,
                     convergent: bool) -> FixedFftRunner:
    """Return the runner of one fixed-point FFT configuration (see :class:`FixedFftRunner`)."""
    return FixedFftRunner(n, precision, twiddles, shifts, convergent)
