/*
 * tb_wola.c -- fused windowed-overlap-add (WOLA) OFDM symbols.
 *
 * Transmit, one pass per symbol: the symbol's values are scattered into
 * the FFT's split workspace, the inverse FFT writes the body to a row
 * buffer, and the windowed, cyclically extended symbol goes straight to
 * the output, its ramp-up added onto the previous symbol's suffix:
 *
 *           o_s                 o_s+cp         o_s+cp+n     +tx
 *   out:    |/ramp up/ prefix   | body (n)      |\ suffix \|
 *           |<-- tx -->|                        |<-- tx -->|
 *                                               |/ramp up/ prefix ... (symbol s+1, added)
 *
 * Receive, one pass per symbol: the n + rx samples that end with the
 * FFT window are read in place, the first rx (inside the prefix,
 * after the transmit ramp) are weighted with the rising receive ramp
 * and added onto the last rx, weighted with the falling one; the row is
 * transformed and the wanted bins gathered:
 *
 *   in:     | prefix .. |/rx/| body ......................|\rx\|
 *                        \_________________ fold ________/
 *
 * With complementary ramps (up[i] + up[len-1-i] == 1) the fold of a
 * cyclic symbol returns its body exactly, which is why the ramps must
 * fit the prefix: tx + rx <= cp.
 *
 * Plan memory: one allocation
 *   | struct tb_wola_plan | pos_a (n_a) | pos_b (n_b) | tx_up (tx) | rx_up (rx) |
 * plus the FFT plan it owns.  Workspace: the FFT's workspace followed by
 * two interleaved rows of n complex values.
 */
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"
#include "tb_internal.h"

struct tb_wola_plan {
    tb_fft_plan *fft;
    size_t n, n_a, n_b, tx, rx;
    const size_t *pos_a; /* FFT position of each value of table a */
    const size_t *pos_b;
    const double *tx_up; /* rising transmit ramp, tx values */
    const double *rx_up; /* rising receive ramp, rx values */
};

int tb_wola_plan_create(size_t n, int precision, size_t n_a, const size_t *bins_a,
                        size_t n_b, const size_t *bins_b, size_t tx, const double *tx_up,
                        size_t rx, const double *rx_up, tb_wola_plan **plan_out)
{
    tb_wola_plan *p;
    int st = TB_OK;
    char *mem;

    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if ((n_a > 0 && bins_a == NULL) || (n_b > 0 && bins_b == NULL) ||
        (tx > 0 && tx_up == NULL) || (rx > 0 && rx_up == NULL))
        return TB_ERR_NULL;
    if (precision != TB_FLOAT32 && precision != TB_FLOAT64)
        return TB_ERR_PRECISION;
    if (!tb_fft_size_supported(n))
        return TB_ERR_SIZE;
    if (n_a > n || n_b > n - n_a || tx > n || rx > n)
        return TB_ERR_ARG;
    st = tb_check_bin_tables(n, n_a, bins_a, n_b, bins_b);
    if (st != TB_OK)
        return st;

    /* doubles first after the struct keeps them aligned; sizes after */
    p = (tb_wola_plan *)malloc(sizeof(tb_wola_plan) + (tx + rx) * sizeof(double) +
                               (n_a + n_b) * sizeof(size_t));
    if (p == NULL)
        return TB_ERR_NOMEM;
    st = tb_fft_plan_create(n, precision, &p->fft);
    if (st != TB_OK) {
        free(p);
        return st;
    }
    mem = (char *)(p + 1);
    {
        double *up_tx = (double *)mem, *up_rx = up_tx + tx;
        size_t *pa = (size_t *)(up_rx + rx), *pb = pa + n_a;
        if (tx)
            memcpy(up_tx, tx_up, tx * sizeof(double));
        if (rx)
            memcpy(up_rx, rx_up, rx * sizeof(double));
        if (n_a)
            memcpy(pa, bins_a, n_a * sizeof(size_t));
        if (n_b)
            memcpy(pb, bins_b, n_b * sizeof(size_t));
        p->tx_up = up_tx;
        p->rx_up = up_rx;
        p->pos_a = pa;
        p->pos_b = pb;
    }
    p->n = n;
    p->n_a = n_a;
    p->n_b = n_b;
    p->tx = tx;
    p->rx = rx;
    *plan_out = p;
    return TB_OK;
}

void tb_wola_plan_destroy(tb_wola_plan *plan)
{
    if (plan == NULL)
        return;
    tb_fft_plan_destroy(plan->fft);
    free(plan);
}

size_t tb_wola_workspace_size(const tb_wola_plan *plan)
{
    if (plan == NULL)
        return 0;
    return tb_fft_workspace_size(plan->fft) +
           4 * plan->n * tb_real_size(plan->fft->precision);
}

/* Checks shared by the execute calls; TB_OK when it may proceed. */
static int tb_wola_check(const tb_wola_plan *plan, int precision, size_t n_symbols,
                         const size_t *cp, const void *a, const void *b, int need_b,
                         const void *samples, const void *work)
{
    if (plan == NULL)
        return TB_ERR_NULL;
    /* The ramps live inside the prefix. */
    return tb_check_symbol_call(plan->fft->precision, precision, n_symbols, cp,
                                plan->tx + plan->rx, plan->n, a, b, need_b, samples, work);
}

#define REAL float
#define PREC TB_FLOAT32
#define SFX(name) name##_f32
#include "tb_wola_impl.h"
#undef REAL
#undef PREC
#undef SFX

#define REAL double
#define PREC TB_FLOAT64
#define SFX(name) name##_f64
#include "tb_wola_impl.h"
#undef REAL
#undef PREC
#undef SFX
