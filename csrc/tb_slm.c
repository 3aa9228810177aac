/*
 * tb_slm.c -- selective mapping (SLM) for peak reduction, fused.
 *
 * For each OFDM symbol, U candidate versions are formed by multiplying
 * its frequency grid bin by bin with U phase sequences; the candidate
 * whose oversampled time signal has the lowest peak power is sent.  A
 * numpy chain materialises all U candidates (S x U x m complex values)
 * before it can compare them.  Here one symbol at a time, candidate
 * after candidate, the candidate is built, transformed and measured, and
 * only two rows are kept: the best so far and the one being made (their
 * roles swap when the new one wins).  Memory is O(m), whatever U is.
 *
 * The oversampled transform, by polyphase branches
 * ------------------------------------------------
 * With m = L n and the grid's bin k at position pos(k) of the m-point
 * spectrum (k for k < h = n - n/2, k + m - n above: zero padding in the
 * middle, the bin order of tonebank.plan), sample j = L q + r of the
 * candidate is
 *
 *     c[L q + r] = scale * sum_k Y[k] w_r[k] exp(+2 pi i k q / n),
 *     Y = grid * phase_u,   w_r[k] = exp(+2 pi i pos(k) r / m),
 *
 * because pos(k) = k (mod n).  So the m samples are L inverse FFTs of n
 * points (branch r = 0 gives the Nyquist-rate samples, w_0 = 1), each
 * written straight into its place in the row (output stride L):
 *
 *   Y (split, n) --x w_r--> W0 --n-point IFFT--> row[r], row[r + L], ...
 *
 * A candidate can only win if its peak stays below best * (1 -
 * tie_margin), so a branch whose largest sample already reaches that
 * bound ends the candidate early; most losers are dropped after the
 * Nyquist branch, and only the winners so far are transformed in full.
 * The choice is exactly that of the full search (the early exit only
 * skips candidates that cannot win).
 *
 * The rule "a later candidate wins only when it is lower by more than
 * the relative margin" makes ties (and near-ties within rounding) go to
 * the lowest index, so two implementations whose transforms round
 * differently still pick the same candidate.
 *
 * Plan memory: one allocation
 *     +---------------------+-----------------------------------------+
 *     | struct tb_slm_plan  | w_r[k], r = 1 .. L-1, k < n (interleaved) |
 *     +---------------------+-----------------------------------------+
 * plus the n-point FFT plan it owns.
 *
 * Workspace (tb_slm_workspace_size): the FFT's workspace, Y in split
 * form (2 n reals), then two interleaved rows of m complex values.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"
#include "tb_internal.h"

struct tb_slm_plan {
    tb_fft_plan *fft;   /* size n, owned */
    size_t n;           /* grid bins per symbol */
    size_t m;           /* oversampled size, m = L n */
    size_t L;           /* oversampling factor */
    const void *tw;     /* (L - 1) x n branch twiddles, float or double, inside this block */
};

/* Offset of the twiddle table after the struct, aligned for double. */
static size_t tb_slm_table_offset(void)
{
    return (sizeof(struct tb_slm_plan) + sizeof(double) - 1) / sizeof(double) *
           sizeof(double);
}

int tb_slm_plan_create(size_t n, size_t m, int precision, tb_slm_plan **plan_out)
{
    const double two_pi = 6.283185307179586476925286766559;
    tb_slm_plan *p;
    size_t L, r, k, rs;
    int st;
    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if (precision != TB_FLOAT32 && precision != TB_FLOAT64)
        return TB_ERR_PRECISION;
    if (n == 0 || m < n || m % n != 0)
        return TB_ERR_ARG;
    if (!tb_fft_size_supported(n) || m > TB_FFT_MAX_SIZE)
        return TB_ERR_SIZE;
    L = m / n;
    rs = tb_real_size(precision);
    p = (tb_slm_plan *)malloc(tb_slm_table_offset() + 2 * (L - 1) * n * rs + 1);
    if (p == NULL)
        return TB_ERR_NOMEM;
    st = tb_fft_plan_create(n, precision, &p->fft);
    if (st != TB_OK) {
        free(p);
        return st;
    }
    p->n = n;
    p->m = m;
    p->L = L;
    p->tw = (const char *)p + tb_slm_table_offset();
    {
        void *tw = (char *)p + tb_slm_table_offset();
        const size_t h = n - n / 2;
        for (r = 1; r < L; r++)
            for (k = 0; k < n; k++) {
                /* exponent reduced mod m in integers, so the angle is exact
                 * to one rounding whatever the size */
                const size_t pos = k < h ? k : k + m - n;
                const double a = two_pi * (double)((pos * r) % m) / (double)m;
                const size_t i = 2 * ((r - 1) * n + k);
                if (precision == TB_FLOAT32) {
                    ((float *)tw)[i] = (float)cos(a);
                    ((float *)tw)[i + 1] = (float)sin(a);
                } else {
                    ((double *)tw)[i] = cos(a);
                    ((double *)tw)[i + 1] = sin(a);
                }
            }
    }
    *plan_out = p;
    return TB_OK;
}

void tb_slm_plan_destroy(tb_slm_plan *plan)
{
    if (plan == NULL)
        return;
    tb_fft_plan_destroy(plan->fft);
    free(plan);
}

size_t tb_slm_workspace_size(const tb_slm_plan *plan)
{
    if (plan == NULL)
        return 0;
    return tb_fft_workspace_size(plan->fft) +
           (2 * plan->n + 4 * plan->m) * tb_real_size(plan->fft->precision);
}

/* Checks shared by both precisions; TB_OK when the call may proceed. */
static int tb_slm_check(const tb_slm_plan *plan, int precision, size_t n_symbols,
                        size_t n_candidates, const void *grid, const void *phases,
                        const void *out, ptrdiff_t out_stride, const size_t *index,
                        const double *peak, double tie_margin, const void *work)
{
    const size_t rs = tb_real_size(precision);
    if (plan == NULL || grid == NULL || phases == NULL || out == NULL || index == NULL ||
        peak == NULL || work == NULL)
        return TB_ERR_NULL;
    if (plan->fft->precision != precision)
        return TB_ERR_PRECISION;
    if (n_candidates == 0 || (n_symbols > 1 && out_stride == 0))
        return TB_ERR_ARG;
    /* NaN fails both comparisons, so it is refused too. */
    if (!(tie_margin >= 0.0 && tie_margin < 1.0))
        return TB_ERR_ARG;
    if (((uintptr_t)grid % rs) != 0 || ((uintptr_t)phases % rs) != 0 ||
        ((uintptr_t)out % rs) != 0 || ((uintptr_t)work % sizeof(double)) != 0)
        return TB_ERR_ARG;
    return TB_OK;
}

/* ---- the operation, once per precision ----------------------------------- */

#define REAL float
#define PREC TB_FLOAT32
#define SFX(name) name##_f32
#include "tb_slm_impl.h"
#undef REAL
#undef PREC
#undef SFX

#define REAL double
#define PREC TB_FLOAT64
#define SFX(name) name##_f64
#include "tb_slm_impl.h"
#undef REAL
#undef PREC
#undef SFX
