/*
 * tb_fofdm_impl.h -- precision template of the fused filtered-OFDM
 * operations (internal).  tb_fofdm.c includes it once per precision after
 * defining REAL, PREC and SFX(name); the layouts are pictured there.
 */

/* spec (interleaved, m values) times the response R (double pairs),
 * written split into re / im. */
static void SFX(fofdm_product)(const REAL *spec, const double *R, size_t m, REAL *re,
                               REAL *im)
{
    size_t k;
    for (k = 0; k < m; k++) {
        const REAL xr = spec[2 * k], xi = spec[2 * k + 1];
        const REAL hr = (REAL)R[2 * k], hi = (REAL)R[2 * k + 1];
        re[k] = xr * hr - xi * hi;
        im[k] = xr * hi + xi * hr;
    }
}

/* dst[k] = scale (w[k] Y[pos[k]] + g[k] C[pos[k]]), k < count: the receive
 * gather with w = gain * A and g = gain per value (C NULL: no edge term). */
static void SFX(fofdm_gather)(size_t count, const size_t *pos, const double *w,
                              const double *g, const REAL *Y, const REAL *C, REAL scale,
                              REAL *dst)
{
    size_t k;
    for (k = 0; k < count; k++) {
        const size_t p = pos[k];
        const REAL wr = (REAL)w[2 * k], wi = (REAL)w[2 * k + 1];
        const REAL yr = Y[2 * p], yi = Y[2 * p + 1];
        REAL xr = wr * yr - wi * yi, xi = wr * yi + wi * yr;
        if (C != NULL) {
            const REAL gk = (REAL)g[k];
            xr += gk * C[2 * p];
            xi += gk * C[2 * p + 1];
        }
        dst[2 * k] = scale * xr;
        dst[2 * k + 1] = scale * xi;
    }
}

int SFX(tb_fofdm_synthesize)(const tb_fofdm_plan *plan, size_t batch, size_t n_symbols,
                             const size_t *cp, const REAL *a, ptrdiff_t a_batch_stride,
                             ptrdiff_t a_symbol_stride, const REAL *b,
                             ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                             REAL *out, ptrdiff_t out_batch_stride, REAL scale, void *work)
{
    const tb_fft_plan *fn, *fm;
    size_t n, m, taps, q, s, i, k;
    REAL *w = (REAL *)work, *body, *spec;
    const REAL inv_m = (REAL)(1.0 / (double)(plan ? plan->m : 1));
    int st = tb_fofdm_check(plan, PREC, n_symbols, cp, a, b, plan && plan->n_b > 0, out,
                            work);
    if (st != TB_OK)
        return st;
    fn = plan->fft_n;
    fm = plan->fft_m;
    n = plan->n;
    m = plan->m;
    taps = plan->taps;
    if (plan->n_b == 0)
        b = NULL;
    body = w + tb_fofdm_fft_reals(plan);
    spec = body + 2 * n;

    for (q = 0; q < batch; q++) {
        size_t o = 0, total = taps - 1;
        REAL *sig = out + 2 * (ptrdiff_t)q * out_batch_stride;
        for (s = 0; s < n_symbols; s++)
            total += n + cp[s];
        memset(sig, 0, 2 * total * sizeof(REAL));
        for (s = 0; s < n_symbols; s++) {
            const size_t c = cp[s], len = n + c + taps - 1;
            const REAL *va = a + 2 * ((ptrdiff_t)q * a_batch_stride +
                                      (ptrdiff_t)s * a_symbol_stride);
            REAL *re = w, *im = w + fn->half, *dst = sig + 2 * o;
            /* scatter + inverse n-point FFT -> body */
            memset(re, 0, n * sizeof(REAL));
            memset(im, 0, n * sizeof(REAL));
            for (k = 0; k < plan->n_a; k++) {
                re[plan->pos_a[k]] = va[2 * k];
                im[plan->pos_a[k]] = va[2 * k + 1];
            }
            if (b != NULL) {
                const REAL *vb = b + 2 * ((ptrdiff_t)q * b_batch_stride +
                                          (ptrdiff_t)s * b_symbol_stride);
                for (k = 0; k < plan->n_b; k++) {
                    re[plan->pos_b[k]] = vb[2 * k];
                    im[plan->pos_b[k]] = vb[2 * k + 1];
                }
            }
            SFX(tb_fft_core_row)(fn, 1, re, im, 1, body, 1, scale, w);
            /* prefix + body, zero padded to m, split into the m-plan's W0 */
            re = w;
            im = w + fm->half;
            for (i = 0; i < c; i++) {
                re[i] = body[2 * (n - c + i)];
                im[i] = body[2 * (n - c + i) + 1];
            }
            for (i = 0; i < n; i++) {
                re[c + i] = body[2 * i];
                im[c + i] = body[2 * i + 1];
            }
            memset(re + c + n, 0, (m - c - n) * sizeof(REAL));
            memset(im + c + n, 0, (m - c - n) * sizeof(REAL));
            /* fast convolution with h */
            SFX(tb_fft_core_row)(fm, 0, re, im, 1, spec, 1, (REAL)1, w);
            SFX(fofdm_product)(spec, plan->H, m, re, im);
            SFX(tb_fft_core_row)(fm, 1, re, im, 1, spec, 1, inv_m, w);
            /* overlap-add */
            for (i = 0; i < 2 * len; i++)
                dst[i] += spec[i];
            o += n + c;
        }
    }
    return TB_OK;
}

int SFX(tb_fofdm_analyze)(const tb_fofdm_plan *plan, size_t batch, size_t n_symbols,
                          const size_t *cp, const REAL *in, ptrdiff_t in_batch_stride,
                          REAL *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                          REAL *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                          REAL scale, void *work)
{
    const tb_fft_plan *fn, *fc;
    size_t n, nc, edge, q, s, i;
    REAL *w = (REAL *)work, *body, *spec, *corr;
    int st = tb_fofdm_check(plan, PREC, n_symbols, cp, a, b, 0, in, work);
    if (st != TB_OK)
        return st;
    if ((batch > 1 && a_batch_stride == 0) || (n_symbols > 1 && a_symbol_stride == 0) ||
        (b != NULL && ((batch > 1 && b_batch_stride == 0) ||
                       (n_symbols > 1 && b_symbol_stride == 0))))
        return TB_ERR_ARG;
    fn = plan->fft_n;
    fc = tb_fofdm_corr_plan(plan);
    n = plan->n;
    nc = plan->nc;
    edge = plan->taps - 1; /* L - 1 edge samples */
    if (plan->n_b == 0)
        b = NULL;
    body = w + tb_fofdm_fft_reals(plan);
    spec = body + 2 * n;
    corr = spec + tb_fofdm_spec_reals(plan);

    for (q = 0; q < batch; q++) {
        size_t o = 0;
        for (s = 0; s < n_symbols; s++) {
            const REAL *seg = in + 2 * ((ptrdiff_t)q * in_batch_stride +
                                        (ptrdiff_t)(o + cp[s]));
            REAL *da = a + 2 * ((ptrdiff_t)q * a_batch_stride + (ptrdiff_t)s * a_symbol_stride);
            REAL *db = b == NULL ? NULL
                                 : b + 2 * ((ptrdiff_t)q * b_batch_stride +
                                            (ptrdiff_t)s * b_symbol_stride);
            /* Y = FFT_n of the window, read in place */
            SFX(tb_fft_core_row)(fn, 0, seg, seg + 1, 2, body, 1, (REAL)1, w);
            if (edge > 0) {
                /* c = correlation of the edge difference e with a, by nc-point
                 * FFTs: sum_s e[s] W^{-fs} (an unscaled inverse FFT), times
                 * DFT(a) / nc, inverse FFT again. */
                REAL *re = w, *im = w + fc->half;
                for (i = 0; i < edge; i++) {
                    re[i] = seg[2 * (n + i)] - seg[2 * i];
                    im[i] = seg[2 * (n + i) + 1] - seg[2 * i + 1];
                }
                memset(re + edge, 0, (nc - edge) * sizeof(REAL));
                memset(im + edge, 0, (nc - edge) * sizeof(REAL));
                SFX(tb_fft_core_row)(fc, 1, re, im, 1, spec, 1, (REAL)1, w);
                SFX(fofdm_product)(spec, plan->Ac, nc, re, im);
                SFX(tb_fft_core_row)(fc, 1, re, im, 1, spec, 1, (REAL)1, w);
                /* keep lags 1 .. L-1 and take sum_q W^{-kq} c[q] (unscaled
                 * inverse n-point FFT) */
                re = w;
                im = w + fn->half;
                re[0] = im[0] = 0;
                for (i = 1; i <= edge; i++) {
                    re[i] = spec[2 * i];
                    im[i] = spec[2 * i + 1];
                }
                memset(re + edge + 1, 0, (n - edge - 1) * sizeof(REAL));
                memset(im + edge + 1, 0, (n - edge - 1) * sizeof(REAL));
                SFX(tb_fft_core_row)(fn, 1, re, im, 1, corr, 1, (REAL)1, w);
            }
            /* X_k = A_k Y_k + edge term, gathered with the gain */
            SFX(fofdm_gather)(plan->n_a, plan->pos_a, plan->wa, plan->ga, body,
                              edge > 0 ? corr : NULL, scale, da);
            if (db != NULL)
                SFX(fofdm_gather)(plan->n_b, plan->pos_b, plan->wb, plan->gb, body,
                                  edge > 0 ? corr : NULL, scale, db);
            o += n + cp[s];
        }
    }
    return TB_OK;
}
