/*
 * tb_slm_impl.h -- precision template of the fused selective mapping
 * (internal).  tb_slm.c includes it once per precision after defining
 * REAL, PREC and SFX(name); the layout and the polyphase branches are
 * described at the top of tb_slm.c.
 */

/* Y = grid * phase (n values) into split storage (re, im). */
static void SFX(slm_product)(size_t n, const REAL *g, const REAL *ph, REAL *re, REAL *im)
{
    size_t k;
    for (k = 0; k < n; k++) {
        const REAL gr = g[2 * k], gi = g[2 * k + 1], pr = ph[2 * k], pi = ph[2 * k + 1];
        re[k] = gr * pr - gi * pi;
        im[k] = gr * pi + gi * pr;
    }
}

/* Branch input Y * w_r into split storage (W0). */
static void SFX(slm_twiddle)(size_t n, const REAL *yr, const REAL *yi, const REAL *w,
                             REAL *re, REAL *im)
{
    size_t k;
    for (k = 0; k < n; k++) {
        const REAL wr = w[2 * k], wi = w[2 * k + 1];
        re[k] = yr[k] * wr - yi[k] * wi;
        im[k] = yr[k] * wi + yi[k] * wr;
    }
}

/* Largest |x|^2 of n interleaved values at element stride L.  NaN never
 * compares larger; callers check their input for finiteness first. */
static REAL SFX(slm_peak)(const REAL *x, size_t n, size_t L)
{
    REAL best = 0;
    size_t q;
    for (q = 0; q < n; q++) {
        const REAL *v = x + 2 * q * L;
        const REAL p = v[0] * v[0] + v[1] * v[1];
        if (p > best)
            best = p;
    }
    return best;
}

int SFX(tb_slm_select)(const tb_slm_plan *plan, size_t n_symbols, size_t n_candidates,
                       const REAL *grid, ptrdiff_t grid_stride, const REAL *phases,
                       ptrdiff_t phase_stride, REAL *out, ptrdiff_t out_stride,
                       size_t *index, double *peak, REAL scale, double tie_margin,
                       void *work)
{
    const tb_fft_plan *f;
    const REAL *tw;
    size_t s, u, r, n, m, L;
    REAL *w = (REAL *)work, *yr, *yi, *best, *cur;
    int st = tb_slm_check(plan, PREC, n_symbols, n_candidates, grid, phases, out,
                          out_stride, index, peak, tie_margin, work);
    if (st != TB_OK)
        return st;
    f = plan->fft;
    n = plan->n;
    m = plan->m;
    L = plan->L;
    tw = (const REAL *)plan->tw;
    yr = w + 4 * f->half; /* after the FFT workspace: Y, then the two rows */
    yi = yr + n;
    best = yi + n;
    cur = best + 2 * m;

    for (s = 0; s < n_symbols; s++) {
        const REAL *g = grid + 2 * (ptrdiff_t)s * grid_stride;
        double best_peak = 0.0;
        size_t winner = 0;
        for (u = 0; u < n_candidates; u++) {
            /* A candidate must end below this to win (the first always does). */
            const double bound = best_peak * (1.0 - tie_margin);
            double pk = 0.0;
            int alive = 1;
            SFX(slm_product)(n, g, phases + 2 * (ptrdiff_t)u * phase_stride, yr, yi);
            for (r = 0; r < L && alive; r++) {
                double bp;
                if (r == 0) {
                    /* w_0 = 1: the FFT reads Y where it is (pass 0 only reads) */
                    SFX(tb_fft_core_row)(f, 1, yr, yi, 1, cur, (ptrdiff_t)L, scale, w);
                } else {
                    SFX(slm_twiddle)(n, yr, yi, tw + 2 * (r - 1) * n, w, w + f->half);
                    SFX(tb_fft_core_row)(f, 1, w, w + f->half, 1, cur + 2 * r, (ptrdiff_t)L,
                                         scale, w);
                }
                bp = (double)SFX(slm_peak)(cur + 2 * r, n, L);
                if (bp > pk)
                    pk = bp;
                if (u > 0 && !(pk < bound))
                    alive = 0; /* cannot win any more: stop building it */
            }
            if (alive) {
                REAL *t = best;
                best = cur;
                cur = t;
                best_peak = pk;
                winner = u;
            }
        }
        memcpy(out + 2 * (ptrdiff_t)s * out_stride, best, 2 * m * sizeof(REAL));
        index[s] = winner;
        peak[s] = best_peak;
    }
    return TB_OK;
}
