/*
 * tb_fofdm.c -- fused filtered-OFDM symbols (subband filtering).
 *
 * Transmit, one pass per symbol, all in the workspace while it is hot:
 *
 *   a, b --scatter--> W (split) --IFFT n--> body --prefix + zero pad--> frame (m)
 *   frame --FFT m--> * H --IFFT m--> symbol convolved with h
 *   (n + cp + taps - 1 samples) --added into out at o_s
 *
 * so a symbol's filter ringing overlaps the next symbols (overlap-add),
 * and a signal of S symbols has sum(n + cp) + taps - 1 samples.
 *
 * Receive, one pass per symbol: the n + taps - 1 samples from the start
 * of the symbol's FFT window are convolved with the matched filter g
 * (FFT m, * G, IFFT m); the n outputs taps-1 .. taps-2+n, the window
 * delayed by both filters, go through the forward n-point FFT and the
 * wanted bins are gathered with a per-bin gain (the caller's correction
 * of the filter pair's response).
 *
 *   in:  | cp | window (n) ........ | taps-1 |     (the taps-1 after the window
 *             |<------- n + taps - 1 ------>|      belong to the next symbol too)
 *
 * The circular convolution of m points equals the linear one because
 * n + cp + taps - 1 <= m (checked).
 *
 * Plan memory: one allocation
 *   | struct | H (2m) | G (2m) | gain (n) | pos_a (n_a) | pos_b (n_b) |
 * (doubles first, then sizes) plus two FFT plans (n and m).  Workspace:
 * the larger of the two FFT workspaces, then a body row (2n REALs) and a
 * spectrum row (2m REALs).
 */
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"
#include "tb_internal.h"

struct tb_fofdm_plan {
    tb_fft_plan *fft_n, *fft_m;
    size_t n, m, taps, n_a, n_b;
    const double *H, *G;  /* DFT_m of h and of the matched filter, interleaved */
    const double *gain;   /* receive gain per FFT position, n values */
    const size_t *pos_a, *pos_b;
};

/* H = DFT_m(h), G = DFT_m(g) with g[t] = conj(h[taps-1-t]), in double. */
static int tb_fofdm_responses(size_t m, size_t taps, const double *h, double *H, double *G)
{
    tb_fft_plan *p = NULL;
    void *work;
    double *buf;
    size_t t;
    int st = tb_fft_plan_create(m, TB_FLOAT64, &p);
    if (st != TB_OK)
        return st;
    work = malloc(tb_fft_workspace_size(p) + 2 * m * sizeof(double));
    if (work == NULL) {
        tb_fft_plan_destroy(p);
        return TB_ERR_NOMEM;
    }
    buf = (double *)((char *)work + tb_fft_workspace_size(p));
    memset(buf, 0, 2 * m * sizeof(double));
    memcpy(buf, h, 2 * taps * sizeof(double));
    st = tb_fft_execute_f64(p, TB_FORWARD, 1, buf, 0, 1, H, 0, 1, 1.0, work);
    if (st == TB_OK) {
        memset(buf, 0, 2 * m * sizeof(double));
        for (t = 0; t < taps; t++) {
            buf[2 * t] = h[2 * (taps - 1 - t)];
            buf[2 * t + 1] = -h[2 * (taps - 1 - t) + 1];
        }
        st = tb_fft_execute_f64(p, TB_FORWARD, 1, buf, 0, 1, G, 0, 1, 1.0, work);
    }
    free(work);
    tb_fft_plan_destroy(p);
    return st;
}

int tb_fofdm_plan_create(size_t n, size_t m, int precision, size_t n_a,
                         const size_t *bins_a, size_t n_b, const size_t *bins_b,
                         size_t taps, const double *h, const double *gain,
                         tb_fofdm_plan **plan_out)
{
    tb_fofdm_plan *p;
    int st = TB_OK;

    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if ((n_a > 0 && bins_a == NULL) || (n_b > 0 && bins_b == NULL) || h == NULL ||
        gain == NULL)
        return TB_ERR_NULL;
    if (precision != TB_FLOAT32 && precision != TB_FLOAT64)
        return TB_ERR_PRECISION;
    if (!tb_fft_size_supported(n) || !tb_fft_size_supported(m))
        return TB_ERR_SIZE;
    if (n_a > n || n_b > n - n_a || taps == 0 || taps > m || n > m - (taps - 1))
        return TB_ERR_ARG;
    st = tb_check_bin_tables(n, n_a, bins_a, n_b, bins_b);
    if (st != TB_OK)
        return st;

    p = (tb_fofdm_plan *)malloc(sizeof(tb_fofdm_plan) + (4 * m + n) * sizeof(double) +
                                (n_a + n_b) * sizeof(size_t));
    if (p == NULL)
        return TB_ERR_NOMEM;
    p->fft_n = p->fft_m = NULL;
    st = tb_fft_plan_create(n, precision, &p->fft_n);
    if (st == TB_OK)
        st = tb_fft_plan_create(m, precision, &p->fft_m);
    if (st == TB_OK) {
        double *H = (double *)(p + 1), *G = H + 2 * m, *gn = G + 2 * m;
        size_t *pa = (size_t *)(gn + n), *pb = pa + n_a;
        st = tb_fofdm_responses(m, taps, h, H, G);
        memcpy(gn, gain, n * sizeof(double));
        if (n_a)
            memcpy(pa, bins_a, n_a * sizeof(size_t));
        if (n_b)
            memcpy(pb, bins_b, n_b * sizeof(size_t));
        p->H = H;
        p->G = G;
        p->gain = gn;
        p->pos_a = pa;
        p->pos_b = pb;
    }
    if (st != TB_OK) {
        tb_fft_plan_destroy(p->fft_n);
        tb_fft_plan_destroy(p->fft_m);
        free(p);
        return st;
    }
    p->n = n;
    p->m = m;
    p->taps = taps;
    p->n_a = n_a;
    p->n_b = n_b;
    *plan_out = p;
    return TB_OK;
}

void tb_fofdm_plan_destroy(tb_fofdm_plan *plan)
{
    if (plan == NULL)
        return;
    tb_fft_plan_destroy(plan->fft_n);
    tb_fft_plan_destroy(plan->fft_m);
    free(plan);
}

/* REALs of the FFT part of the workspace (the larger plan's). */
static size_t tb_fofdm_fft_reals(const tb_fofdm_plan *plan)
{
    const size_t a = 4 * plan->fft_n->half, b = 4 * plan->fft_m->half;
    return a > b ? a : b;
}

size_t tb_fofdm_workspace_size(const tb_fofdm_plan *plan)
{
    size_t ws_n, ws_m, ws;
    if (plan == NULL)
        return 0;
    ws_n = tb_fft_workspace_size(plan->fft_n);
    ws_m = tb_fft_workspace_size(plan->fft_m);
    ws = ws_n > ws_m ? ws_n : ws_m;
    {
        const size_t rs = tb_real_size(plan->fft_n->precision);
        const size_t reals = tb_fofdm_fft_reals(plan);
        if (ws < reals * rs)
            ws = reals * rs;
        return ws + 2 * (plan->n + plan->m) * rs;
    }
}

static int tb_fofdm_check(const tb_fofdm_plan *plan, int precision, size_t n_symbols,
                          const size_t *cp, const void *a, const void *b, int need_b,
                          const void *samples, const void *work)
{
    size_t used, cp_max;
    if (plan == NULL)
        return TB_ERR_NULL;
    /* A symbol, its prefix and the filter's tail must fit the convolution. */
    used = plan->n + plan->taps - 1;
    if (plan->m < used)
        return TB_ERR_ARG;
    cp_max = plan->m - used < plan->n ? plan->m - used : plan->n;
    return tb_check_symbol_call(plan->fft_n->precision, precision, n_symbols, cp, 0, cp_max,
                                a, b, need_b, samples, work);
}

#define REAL float
#define PREC TB_FLOAT32
#define SFX(name) name##_f32
#include "tb_fofdm_impl.h"
#undef REAL
#undef PREC
#undef SFX

#define REAL double
#define PREC TB_FLOAT64
#define SFX(name) name##_f64
#include "tb_fofdm_impl.h"
#undef REAL
#undef PREC
#undef SFX
