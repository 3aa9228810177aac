/*
 * tb_ofdm_impl.h -- precision template of the fused OFDM operations
 * (internal).  tb_ofdm.c includes it once per precision after defining
 * REAL (float or double), PREC (TB_FLOAT32 or TB_FLOAT64) and SFX(name)
 * (name##_f32 or name##_f64).  The layouts are pictured at the top of
 * tb_ofdm.c.
 */

/* Copy interleaved values src[k] to (re, im) at the positions of the
 * runs, element stride `step` in REALs: 1 for a split row in W0, 2 for
 * an interleaved row (im = re + 1: each run is one block copy). */
static void SFX(put_runs)(const tb_run *run, size_t nrun, const REAL *src, REAL *re,
                          REAL *im, size_t step)
{
    size_t r, i;
    if (step == 2 && im == re + 1) {
        /* runs are short (between pilots): an inline copy, not a call */
        for (r = 0; r < nrun; r++) {
            const REAL *s = src + 2 * run[r].k;
            REAL *d = re + 2 * run[r].pos;
            for (i = 0; i < run[r].len; i++) {
                const REAL a = s[2 * i], b = s[2 * i + 1];
                d[2 * i] = a;
                d[2 * i + 1] = b;
            }
        }
        return;
    }
    for (r = 0; r < nrun; r++) {
        const REAL *s = src + 2 * run[r].k;
        REAL *dr = re + run[r].pos * step, *di = im + run[r].pos * step;
        for (i = 0; i < run[r].len; i++) {
            dr[i * step] = s[2 * i];
            di[i * step] = s[2 * i + 1];
        }
    }
}

/* The reverse of put_runs, times scale. */
static void SFX(get_runs)(const tb_run *run, size_t nrun, const REAL *re, const REAL *im,
                          size_t step, REAL scale, REAL *dst)
{
    size_t r, i;
    if (step == 2 && im == re + 1) {
        /* interleaved row: one contiguous loop over 2 len REALs per run */
        for (r = 0; r < nrun; r++) {
            const REAL *s = re + 2 * run[r].pos;
            REAL *d = dst + 2 * run[r].k;
            for (i = 0; i < 2 * run[r].len; i++)
                d[i] = scale * s[i];
        }
        return;
    }
    for (r = 0; r < nrun; r++) {
        const REAL *sr = re + run[r].pos * step, *si = im + run[r].pos * step;
        REAL *d = dst + 2 * run[r].k;
        for (i = 0; i < run[r].len; i++) {
            d[2 * i] = scale * sr[i * step];
            d[2 * i + 1] = scale * si[i * step];
        }
    }
}

/* Scatter one symbol's a and b values into (re, im) at element stride
 * `step` (see put_runs) and zero the null bins: afterwards every one of
 * the n bins has been written. */
static void SFX(scatter)(const tb_ofdm_plan *p, const REAL *a, const REAL *b, REAL *re,
                         REAL *im, size_t step)
{
    size_t r, i;
    SFX(put_runs)(p->run_a, p->nrun_a, a, re, im, step);
    if (b != NULL)
        SFX(put_runs)(p->run_b, p->nrun_b, b, re, im, step);
    if (step == 2 && im == re + 1) {
        for (r = 0; r < p->nrun_null; r++) {
            REAL *d = re + 2 * p->run_null[r].pos;
            for (i = 0; i < 2 * p->run_null[r].len; i++)
                d[i] = 0;
        }
        return;
    }
    for (r = 0; r < p->nrun_null; r++) {
        REAL *dr = re + p->run_null[r].pos * step, *di = im + p->run_null[r].pos * step;
        for (i = 0; i < p->run_null[r].len; i++) {
            dr[i * step] = 0;
            di[i * step] = 0;
        }
    }
}

/* Gather one symbol's a and b values from (re, im) at element stride
 * `step` (see put_runs), times scale. */
static void SFX(gather)(const tb_ofdm_plan *p, const REAL *re, const REAL *im,
                        size_t step, REAL scale, REAL *a, REAL *b)
{
    SFX(get_runs)(p->run_a, p->nrun_a, re, im, step, scale, a);
    if (b != NULL)
        SFX(get_runs)(p->run_b, p->nrun_b, re, im, step, scale, b);
}

/* The runs of one table from the lane layout res (as returned by
 * tb_fft_core_lanes_*) to eight outputs, times scale: run values k ..
 * k+len-1 of lane r go to out[r] + 2k. */
static void SFX(gather_lanes)(const tb_fft_plan *f, const tb_run *run, size_t nrun,
                              const REAL *res, REAL scale, REAL *const *out)
{
    REAL *dst[TB_FFT_LANES];
    size_t i, r;
    for (i = 0; i < nrun; i++) {
        for (r = 0; r < TB_FFT_LANES; r++)
            dst[r] = out[r] + 2 * run[i].k;
        SFX(tb_fft_core_lanes_store_range)(f, res, run[i].pos, run[i].len, scale, dst);
    }
}

int SFX(tb_ofdm_synthesize)(const tb_ofdm_plan *plan, size_t batch, size_t n_symbols,
                            const size_t *cp, const REAL *a, ptrdiff_t a_batch_stride,
                            ptrdiff_t a_symbol_stride, const REAL *b,
                            ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride, REAL *out,
                            ptrdiff_t out_batch_stride, REAL scale, void *work)
{
    const tb_fft_plan *f;
    const size_t n = plan ? plan->n : 0, total = batch * n_symbols;
    const size_t L = TB_FFT_LANES;
    REAL *w = (REAL *)work;
    tb_ofdm_cursor c = {0, 0, 0};
    size_t done = 0;
    int st = tb_ofdm_check(plan, PREC, n_symbols,
                           cp, a, b, plan && plan->n_b > 0, out, work);
    if (st != TB_OK)
        return st;
    f = plan->fft;
    if (plan->n_b == 0)
        b = NULL;

    while (done < total) {
        if (f->lanes && total - done >= L) {
            /* Eight symbols through the lane engine: each is scattered
             * into an interleaved row of W1 (block copies of the runs),
             * the rows are transposed into the lanes of W0. */
            tb_ofdm_cursor at[TB_FFT_LANES];
            REAL *re, *body[TB_FFT_LANES];
            const REAL *grid[TB_FFT_LANES];
            size_t r;
            for (r = 0; r < L; r++) {
                const ptrdiff_t q = (ptrdiff_t)c.q, s = (ptrdiff_t)c.s;
                REAL *row = w + 2 * f->half + 2 * n * r;
                at[r] = c;
                SFX(scatter)(plan, a + 2 * (q * a_batch_stride + s * a_symbol_stride),
                             b ? b + 2 * (q * b_batch_stride + s * b_symbol_stride) : NULL,
                             row, row + 1, 2);
                grid[r] = row;
                tb_ofdm_next(&c, n, n_symbols, cp);
            }
            SFX(tb_fft_core_lanes_load)(f, grid, w);
            re = SFX(tb_fft_core_lanes)(f, 1, w);
            for (r = 0; r < L; r++)
                body[r] = out + 2 * ((ptrdiff_t)at[r].q * out_batch_stride +
                                     (ptrdiff_t)(at[r].offset + cp[at[r].s]));
            SFX(tb_fft_core_lanes_store)(f, re, scale, body);
            for (r = 0; r < L; r++) {
                const size_t ncp = cp[at[r].s];
                if (ncp > 0)
                    memcpy(body[r] - 2 * ncp, body[r] + 2 * (n - ncp),
                           2 * ncp * sizeof(REAL));
            }
            done += L;
        } else {
            /* One symbol: scatter into W0, the FFT's last pass writes the
             * body in place, then the prefix is copied from its tail. */
            const ptrdiff_t q = (ptrdiff_t)c.q, s = (ptrdiff_t)c.s;
            const size_t ncp = cp[c.s];
            REAL *sym = out + 2 * (q * out_batch_stride + (ptrdiff_t)c.offset);
            REAL *body = sym + 2 * ncp;
            const REAL *sa = a + 2 * (q * a_batch_stride + s * a_symbol_stride);
            const REAL *sb = b ? b + 2 * (q * b_batch_stride + s * b_symbol_stride) : NULL;
            SFX(scatter)(plan, sa, sb, w, w + f->half, 1);
            SFX(tb_fft_core_row)(f, 1, w, w + f->half, 1, body, 1, scale, w);
            if (ncp > 0)
                memcpy(sym, body + 2 * (n - ncp), 2 * ncp * sizeof(REAL));
            tb_ofdm_next(&c, n, n_symbols, cp);
            done++;
        }
    }
    return TB_OK;
}

int SFX(tb_ofdm_analyze)(const tb_ofdm_plan *plan, size_t batch, size_t n_symbols,
                         const size_t *cp, const REAL *in, ptrdiff_t in_batch_stride,
                         REAL *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                         REAL *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                         REAL scale, void *work)
{
    const tb_fft_plan *f;
    const size_t n = plan ? plan->n : 0, total = batch * n_symbols;
    const size_t L = TB_FFT_LANES;
    REAL *w = (REAL *)work, *row;
    tb_ofdm_cursor c = {0, 0, 0};
    size_t done = 0;
    int st = tb_ofdm_check(plan, PREC, n_symbols,
                           cp, a, b, 0, in, work);
    if (st != TB_OK)
        return st;
    /* Two symbols must never write the same output. */
    if ((batch > 1 && a_batch_stride == 0) || (n_symbols > 1 && a_symbol_stride == 0) ||
        (b != NULL && ((batch > 1 && b_batch_stride == 0) ||
                       (n_symbols > 1 && b_symbol_stride == 0))))
        return TB_ERR_ARG;
    f = plan->fft;
    if (plan->n_b == 0)
        b = NULL;
    row = w + 4 * f->half; /* the row after the FFT workspace */

    while (done < total) {
        if (f->lanes && total - done >= L) {
            tb_ofdm_cursor at[TB_FFT_LANES];
            const REAL *body[TB_FFT_LANES];
            REAL *re, *out_a[TB_FFT_LANES], *out_b[TB_FFT_LANES];
            size_t r;
            for (r = 0; r < L; r++) {
                body[r] = in + 2 * ((ptrdiff_t)c.q * in_batch_stride +
                                    (ptrdiff_t)(c.offset + cp[c.s]));
                at[r] = c;
                tb_ofdm_next(&c, n, n_symbols, cp);
            }
            SFX(tb_fft_core_lanes_load)(f, body, w);
            re = SFX(tb_fft_core_lanes)(f, 0, w);
            /* each run of wanted bins goes from the lane layout straight
             * into the eight symbols' outputs (one transpose, no spectrum
             * rows in between) */
            for (r = 0; r < L; r++) {
                const ptrdiff_t q = (ptrdiff_t)at[r].q, s = (ptrdiff_t)at[r].s;
                out_a[r] = a + 2 * (q * a_batch_stride + s * a_symbol_stride);
                out_b[r] = b ? b + 2 * (q * b_batch_stride + s * b_symbol_stride) : NULL;
            }
            SFX(gather_lanes)(f, plan->run_a, plan->nrun_a, re, scale, out_a);
            if (b != NULL)
                SFX(gather_lanes)(f, plan->run_b, plan->nrun_b, re, scale, out_b);
            done += L;
        } else {
            /* One symbol: the FFT reads the body where it lies (the prefix is
             * skipped), writes the spectrum to `row`, the bins are gathered. */
            const ptrdiff_t q = (ptrdiff_t)c.q, s = (ptrdiff_t)c.s;
            const REAL *body = in + 2 * (q * in_batch_stride + (ptrdiff_t)(c.offset + cp[c.s]));
            SFX(tb_fft_core_row)(f, 0, body, body + 1, 2, row, 1, (REAL)1, w);
            SFX(gather)(plan, row, row + 1, 2, scale,
                        a + 2 * (q * a_batch_stride + s * a_symbol_stride),
                        b ? b + 2 * (q * b_batch_stride + s * b_symbol_stride) : NULL);
            tb_ofdm_next(&c, n, n_symbols, cp);
            done++;
        }
    }
    return TB_OK;
}
