/*
 * tb_fixed.c -- the fixed-point FFT in Q15 and Q31, bit-exact with the
 * integer model in numpy (src/tonebank/_kernel/_numpy_fixed.py).
 *
 * Radix 2, decimation in time: the input is copied into the output
 * buffer in bit-reversed order, then m = log2 n stages of butterflies
 * run in place there, so no workspace is needed:
 *
 *     stage k, h = 2^k:   x[g + j] = a ----+---- a + t ---> R(., s_k), saturate
 *                                           \ /
 *                                            X        t = R(b W[j n / 2h], f)
 *                                           / \
 *     x[g + j + h] = b --- * W -------------+---- a - t ---> R(., s_k), saturate
 *
 * Why radix 2: every stage has the same butterfly, so a per-stage shift
 * is one number per stage and a firmware port reproduces the schedule
 * exactly; higher radices would merge stages and change the rounding.
 *
 * Accumulator range.  With |b components| <= 2^f and a twiddle pair
 * with |w_re| + |w_im| <= 2^(f+1) - 1 (the plan checks it; any rounded
 * point of the unit circle has |w_re| + |w_im| <= sqrt(2) 2^f + 1),
 *
 *     |b_re w_re - b_im w_im| + 2^(f-1) <= 2^f (2^(f+1) - 1) + 2^(f-1) < 2^(2f+1),
 *
 * inside int32_t for Q15 (2f + 1 = 31) and int64_t for Q31 (63); then
 * |t| <= 2^(f+1), and a +- t plus a rounding half stays far inside the
 * accumulator.  So no signed overflow anywhere.
 *
 * Portable shifts.  C99 leaves the right shift of a negative signed
 * value implementation-defined; the floor shift here shifts only
 * non-negative values (v >= 0 ? v >> k : ~(~v >> k)), and reads low bits
 * through the unsigned type.
 */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"

/* pi to double precision (M_PI is not C99). */
#define TB_FIXED_PI 3.14159265358979323846

struct tb_fixed_plan {
    size_t n;
    unsigned m;                 /* log2 n */
    int format;                 /* TB_Q15 or TB_Q31 */
    int rounding;               /* TB_ROUND_* */
    int block;                  /* 1: block floating point, shifts unused */
    unsigned char shifts[16];   /* per stage, 0..2 */
    uint32_t *rev;              /* n entries: bit reversal of the index */
    void *twiddles;             /* n/2 pairs of int32_t (Q15) or int64_t (Q31) */
};

/* 1 when the byte ranges [a, a + bytes) and [b, b + bytes) overlap.
 * Compared as integers: relational operators on pointers into different
 * objects are undefined. */
static int tb_fixed_overlap(const void *a, const void *b, size_t bytes)
{
    const uintptr_t x = (uintptr_t)a, y = (uintptr_t)b;
    if (bytes == 0)
        return 0;
    return x < y ? y - x < bytes : x - y < bytes;
}

#define DATA int16_t
#define ACC int32_t
#define UACC uint32_t
#define FBITS 15
#define FMT TB_Q15
#define SFX(f) f##_q15
#include "tb_fixed_impl.h"
#undef DATA
#undef ACC
#undef UACC
#undef FBITS
#undef FMT
#undef SFX

#define DATA int32_t
#define ACC int64_t
#define UACC uint64_t
#define FBITS 31
#define FMT TB_Q31
#define SFX(f) f##_q31
#include "tb_fixed_impl.h"
#undef DATA
#undef ACC
#undef UACC
#undef FBITS
#undef FMT
#undef SFX

int tb_fixed_plan_create(size_t n, int format, const void *twiddles,
                         const unsigned char *shifts, int rounding,
                         tb_fixed_plan **plan_out)
{
    tb_fixed_plan *p;
    size_t i, acc_size, rev_offset, bytes;
    unsigned m = 0, b;
    int status;

    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if (n < 2 || n > TB_FIXED_MAX_SIZE || (n & (n - 1)) != 0)
        return TB_ERR_SIZE;
    if (format != TB_Q15 && format != TB_Q31)
        return TB_ERR_PRECISION;
    if (rounding != TB_ROUND_HALF_UP && rounding != TB_ROUND_CONVERGENT)
        return TB_ERR_ARG;
    while (((size_t)1 << m) < n)
        m++;
    if (shifts != NULL)
        for (i = 0; i < m; i++)
            if (shifts[i] > 2)
                return TB_ERR_ARG;

    /* one allocation: the struct, the twiddles (8-byte aligned after a
     * struct rounded up to 16 bytes), the bit-reversal table */
    acc_size = format == TB_Q15 ? sizeof(int32_t) : sizeof(int64_t);
    rev_offset = (sizeof(tb_fixed_plan) + 15) / 16 * 16 + n * acc_size;
    bytes = rev_offset + n * sizeof(uint32_t);
    p = (tb_fixed_plan *)malloc(bytes);
    if (p == NULL)
        return TB_ERR_NOMEM;
    p->n = n;
    p->m = m;
    p->format = format;
    p->rounding = rounding;
    p->block = shifts == NULL;
    memset(p->shifts, 0, sizeof p->shifts);
    if (shifts != NULL)
        memcpy(p->shifts, shifts, m);
    p->twiddles = (unsigned char *)p + (sizeof(tb_fixed_plan) + 15) / 16 * 16;
    p->rev = (uint32_t *)((unsigned char *)p + rev_offset);
    for (i = 0; i < n; i++) {
        uint32_t r = 0;
        for (b = 0; b < m; b++)
            r |= (uint32_t)((i >> b) & 1u) << (m - 1 - b);
        p->rev[i] = r;
    }
    status = format == TB_Q15 ? load_twiddles_q15(p, twiddles)
                              : load_twiddles_q31(p, twiddles);
    if (status != TB_OK) {
        free(p);
        return status;
    }
    *plan_out = p;
    return TB_OK;
}

void tb_fixed_plan_destroy(tb_fixed_plan *plan)
{
    free(plan);
}

int tb_fixed_fft_q15(const tb_fixed_plan *plan, size_t count, const int16_t *in,
                     int16_t *out, int64_t *exponent, int64_t *saturations)
{
    return run_q15(plan, count, in, out, exponent, saturations);
}

int tb_fixed_fft_q31(const tb_fixed_plan *plan, size_t count, const int32_t *in,
                     int32_t *out, int64_t *exponent, int64_t *saturations)
{
    return run_q31(plan, count, in, out, exponent, saturations);
}
