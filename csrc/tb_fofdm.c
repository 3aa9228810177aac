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
 * Receive, one pass per symbol: the wanted output is the n-point FFT X of
 * the window z[t] = sum_{j<L} a[j] seg[t+j], t < n, of the matched filter
 * a = conj(h) (L = taps) run over seg, the n + L - 1 samples from the
 * start of the symbol's FFT window, gathered with a per-bin gain (the
 * caller's correction of the filter pair's response):
 *
 *   in:  | cp | window (n) ........ | L-1 |     (the L-1 after the window
 *             |<------- n + L - 1 ------>|     belong to the next symbol too)
 *
 * Instead of convolving (two m-point FFTs) and then transforming, the
 * kernel uses the identity (W = exp(-2 pi i / n))
 *
 *   X_k = A_k Y_k + sum_{q=1}^{L-1} W^{-kq} c[q],
 *   Y = FFT_n(seg[0 .. n)),  A_k = sum_j a[j] W^{-kj},
 *   c[q] = sum_s e[s] a[s+q],  e[s] = seg[n+s] - seg[s],  s < L - 1:
 *
 * filtering is a product per bin, except at the window's two edges, whose
 * difference e (L - 1 samples) is correlated with a (nc-point FFTs, nc >=
 * 2L - 2 so nothing wraps; nc = n when the filter is at most half a
 * symbol long, as by default).  Per symbol that is four n-point FFTs
 * instead of two m-point and one n-point (m >= n + cp + L - 1): about a
 * third less work.  Derivation: substitute z into X, split the sum over
 * seg indices into the middle (full filter response, A_k) and the edges,
 * and fold the last L - 1 indices onto the first ones with W^n = 1.
 *
 * The circular convolution of the transmitter equals the linear one
 * because n + cp + taps - 1 <= m (checked).
 *
 * Plan memory: one allocation
 *   | struct | H (2m) | A (2n) | Ac (2nc) | gain (n) | wa (2 n_a) | wb (2 n_b) |
 *   | ga (n_a) | gb (n_b) | pos_a (n_a) | pos_b (n_b) |
 * (doubles first, then sizes) plus FFT plans of n, m and, when it differs
 * from n, nc.  Ac = DFT_nc(a) / nc.  Workspace: the largest FFT
 * workspace, then a body row (2n REALs), a spectrum row (2 max(m, nc)
 * REALs) and an edge row (2n REALs).
 */
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"
#include "tb_internal.h"

struct tb_fofdm_plan {
    tb_fft_plan *fft_n, *fft_m, *fft_c; /* fft_c: NULL when nc == n or taps == 1 */
    size_t n, m, nc, taps, n_a, n_b;
    const double *H;      /* DFT_m(h), interleaved */
    const double *A;      /* A_k = sum_j conj(h_j) W^{-kj}, n values, interleaved */
    const double *Ac;     /* DFT_nc(conj(h)) / nc, interleaved */
    const double *gain;   /* receive gain per FFT position, n values */
    /* per gathered value of tables a / b: gain * A at its position
     * (interleaved) and the gain alone, so the receive gather is one
     * product and one multiply-add per value */
    const double *wa, *wb, *ga, *gb;
    const size_t *pos_a, *pos_b;
};

/* The correlation size: the smallest FFT size >= 2 taps - 2, n when that
 * fits, else a power of two unless a 2^a 3^b 5^c size is 25 % smaller
 * (the radix-2/4/8 passes are the fastest per point).  0 when the size
 * would pass TB_FFT_MAX_SIZE. */
static size_t tb_fofdm_corr_size(size_t n, size_t taps)
{
    size_t need = taps > 1 ? 2 * taps - 2 : 1, pow2 = 1, smooth;
    if (need <= n)
        return n;
    while (pow2 < need)
        pow2 *= 2;
    for (smooth = need; smooth < pow2 && !tb_fft_size_supported(smooth); smooth++)
        ;
    if (4 * pow2 <= 5 * smooth && tb_fft_size_supported(pow2))
        return pow2;
    return tb_fft_size_supported(smooth) ? smooth : 0;
}

/* One double-precision FFT of size n of `len` values of src (conjugated
 * when conj), zero padded, into dst (interleaved, times scale). */
static int tb_fofdm_dft(size_t n, int direction, const double *src, size_t len, int conj,
                        double scale, double *dst)
{
    tb_fft_plan *p = NULL;
    void *work;
    double *buf;
    size_t t;
    int st = tb_fft_plan_create(n, TB_FLOAT64, &p);
    if (st != TB_OK)
        return st;
    work = malloc(tb_fft_workspace_size(p) + 2 * n * sizeof(double));
    if (work == NULL) {
        tb_fft_plan_destroy(p);
        return TB_ERR_NOMEM;
    }
    buf = (double *)((char *)work + tb_fft_workspace_size(p));
    memset(buf, 0, 2 * n * sizeof(double));
    for (t = 0; t < len; t++) {
        buf[2 * t] = src[2 * t];
        buf[2 * t + 1] = conj ? -src[2 * t + 1] : src[2 * t + 1];
    }
    st = tb_fft_execute_f64(p, direction, 1, buf, 0, 1, dst, 0, 1, scale, work);
    free(work);
    tb_fft_plan_destroy(p);
    return st;
}

/* H = DFT_m(h), A = n * IDFT_n(conj h), Ac = DFT_nc(conj h) / nc. */
static int tb_fofdm_responses(size_t n, size_t m, size_t nc, size_t taps, const double *h,
                              double *H, double *A, double *Ac)
{
    int st = tb_fofdm_dft(m, TB_FORWARD, h, taps, 0, 1.0, H);
    if (st == TB_OK)
        st = tb_fofdm_dft(n, TB_INVERSE, h, taps, 1, 1.0, A);
    if (st == TB_OK)
        st = tb_fofdm_dft(nc, TB_FORWARD, h, taps, 1, 1.0 / (double)nc, Ac);
    return st;
}

int tb_fofdm_plan_create(size_t n, size_t m, int precision, size_t n_a,
                         const size_t *bins_a, size_t n_b, const size_t *bins_b,
                         size_t taps, const double *h, const double *gain,
                         tb_fofdm_plan **plan_out)
{
    tb_fofdm_plan *p;
    size_t nc;
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
    nc = tb_fofdm_corr_size(n, taps);
    if (nc == 0)
        return TB_ERR_SIZE;
    st = tb_check_bin_tables(n, n_a, bins_a, n_b, bins_b);
    if (st != TB_OK)
        return st;

    p = (tb_fofdm_plan *)malloc(sizeof(tb_fofdm_plan) +
                                (2 * m + 3 * n + 2 * nc + 3 * (n_a + n_b)) * sizeof(double) +
                                (n_a + n_b) * sizeof(size_t));
    if (p == NULL)
        return TB_ERR_NOMEM;
    p->fft_n = p->fft_m = p->fft_c = NULL;
    st = tb_fft_plan_create(n, precision, &p->fft_n);
    if (st == TB_OK)
        st = tb_fft_plan_create(m, precision, &p->fft_m);
    if (st == TB_OK && taps > 1 && nc != n)
        st = tb_fft_plan_create(nc, precision, &p->fft_c);
    if (st == TB_OK) {
        double *H = (double *)(p + 1), *A = H + 2 * m, *Ac = A + 2 * n, *gn = Ac + 2 * nc;
        double *wa = gn + n, *wb = wa + 2 * n_a, *ga = wb + 2 * n_b, *gb = ga + n_a;
        size_t *pa = (size_t *)(gb + n_b), *pb = pa + n_a, k;
        st = tb_fofdm_responses(n, m, nc, taps, h, H, A, Ac);
        memcpy(gn, gain, n * sizeof(double));
        if (n_a)
            memcpy(pa, bins_a, n_a * sizeof(size_t));
        if (n_b)
            memcpy(pb, bins_b, n_b * sizeof(size_t));
        for (k = 0; k < n_a + n_b; k++) {
            const size_t pos = k < n_a ? pa[k] : pb[k - n_a];
            double *w = k < n_a ? wa + 2 * k : wb + 2 * (k - n_a);
            ga[k] = gain[pos]; /* ga and gb are adjacent: gb = ga + n_a */
            w[0] = gain[pos] * A[2 * pos];
            w[1] = gain[pos] * A[2 * pos + 1];
        }
        p->wa = wa;
        p->wb = wb;
        p->ga = ga;
        p->gb = gb;
        p->H = H;
        p->A = A;
        p->Ac = Ac;
        p->gain = gn;
        p->pos_a = pa;
        p->pos_b = pb;
    }
    if (st != TB_OK) {
        tb_fft_plan_destroy(p->fft_n);
        tb_fft_plan_destroy(p->fft_m);
        tb_fft_plan_destroy(p->fft_c);
        free(p);
        return st;
    }
    p->n = n;
    p->m = m;
    p->nc = nc;
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
    tb_fft_plan_destroy(plan->fft_c);
    free(plan);
}

/* The correlation plan: its own, or the n-point one when nc == n. */
static const tb_fft_plan *tb_fofdm_corr_plan(const tb_fofdm_plan *plan)
{
    return plan->fft_c != NULL ? plan->fft_c : plan->fft_n;
}

/* REALs of the FFT part of the workspace (the largest plan's). */
static size_t tb_fofdm_fft_reals(const tb_fofdm_plan *plan)
{
    const size_t a = 4 * plan->fft_n->half, b = 4 * plan->fft_m->half;
    const size_t c = 4 * tb_fofdm_corr_plan(plan)->half;
    const size_t ab = a > b ? a : b;
    return ab > c ? ab : c;
}

/* REALs of the spectrum row: m values, or nc for the receive correlation. */
static size_t tb_fofdm_spec_reals(const tb_fofdm_plan *plan)
{
    return 2 * (plan->m > plan->nc ? plan->m : plan->nc);
}

size_t tb_fofdm_workspace_size(const tb_fofdm_plan *plan)
{
    size_t ws, wc;
    if (plan == NULL)
        return 0;
    ws = tb_fft_workspace_size(plan->fft_n);
    wc = tb_fft_workspace_size(plan->fft_m);
    ws = ws > wc ? ws : wc;
    wc = tb_fft_workspace_size(tb_fofdm_corr_plan(plan));
    ws = ws > wc ? ws : wc;
    {
        const size_t rs = tb_real_size(plan->fft_n->precision);
        const size_t reals = tb_fofdm_fft_reals(plan);
        if (ws < reals * rs)
            ws = reals * rs;
        /* body (2n), spectrum, edge row (2n) */
        return ws + (4 * plan->n + tb_fofdm_spec_reals(plan)) * rs;
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
