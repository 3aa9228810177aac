/*
 * tb_wola_impl.h -- precision template of the fused WOLA operations
 * (internal).  tb_wola.c includes it once per precision after defining
 * REAL, PREC and SFX(name); the layouts are pictured there.
 */

/* Zero the split row and place one symbol's a and b values. */
static void SFX(wola_scatter)(const tb_wola_plan *p, const REAL *a, const REAL *b,
                              REAL *re, REAL *im)
{
    size_t k;
    memset(re, 0, p->n * sizeof(REAL));
    memset(im, 0, p->n * sizeof(REAL));
    for (k = 0; k < p->n_a; k++) {
        re[p->pos_a[k]] = a[2 * k];
        im[p->pos_a[k]] = a[2 * k + 1];
    }
    if (b != NULL)
        for (k = 0; k < p->n_b; k++) {
            re[p->pos_b[k]] = b[2 * k];
            im[p->pos_b[k]] = b[2 * k + 1];
        }
}

int SFX(tb_wola_synthesize)(const tb_wola_plan *plan, size_t batch, size_t n_symbols,
                            const size_t *cp, const REAL *a, ptrdiff_t a_batch_stride,
                            ptrdiff_t a_symbol_stride, const REAL *b,
                            ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride, REAL *out,
                            ptrdiff_t out_batch_stride, REAL scale, void *work)
{
    const tb_fft_plan *f;
    size_t n, tx, q, s, i;
    REAL *w = (REAL *)work, *body;
    int st = tb_wola_check(plan, PREC, n_symbols, cp, a, b, plan && plan->n_b > 0, out,
                           work);
    if (st != TB_OK)
        return st;
    f = plan->fft;
    n = plan->n;
    tx = plan->tx;
    if (plan->n_b == 0)
        b = NULL;
    body = w + 4 * f->half;

    for (q = 0; q < batch; q++) {
        size_t o = 0;
        for (s = 0; s < n_symbols; s++) {
            const size_t c = cp[s];
            REAL *sym = out + 2 * ((ptrdiff_t)q * out_batch_stride + (ptrdiff_t)o);
            const REAL *pre = body + 2 * (n - c); /* prefix source: the body's tail */
            SFX(wola_scatter)(plan,
                              a + 2 * ((ptrdiff_t)q * a_batch_stride +
                                       (ptrdiff_t)s * a_symbol_stride),
                              b ? b + 2 * ((ptrdiff_t)q * b_batch_stride +
                                           (ptrdiff_t)s * b_symbol_stride)
                                : NULL,
                              w, w + f->half);
            SFX(tb_fft_core_row)(f, 1, w, w + f->half, 1, body, 1, scale, w);
            /* ramp up, added onto the previous symbol's suffix */
            for (i = 0; i < tx; i++) {
                const REAL g = (REAL)plan->tx_up[i];
                if (s == 0) {
                    sym[2 * i] = g * pre[2 * i];
                    sym[2 * i + 1] = g * pre[2 * i + 1];
                } else {
                    sym[2 * i] += g * pre[2 * i];
                    sym[2 * i + 1] += g * pre[2 * i + 1];
                }
            }
            /* rest of the prefix and the body, unweighted */
            memcpy(sym + 2 * tx, pre + 2 * tx, 2 * (c - tx) * sizeof(REAL));
            memcpy(sym + 2 * c, body, 2 * n * sizeof(REAL));
            /* cyclic suffix with the falling ramp */
            for (i = 0; i < tx; i++) {
                const REAL g = (REAL)plan->tx_up[tx - 1 - i];
                sym[2 * (c + n + i)] = g * body[2 * i];
                sym[2 * (c + n + i) + 1] = g * body[2 * i + 1];
            }
            o += n + c;
        }
    }
    return TB_OK;
}

int SFX(tb_wola_analyze)(const tb_wola_plan *plan, size_t batch, size_t n_symbols,
                         const size_t *cp, const REAL *in, ptrdiff_t in_batch_stride,
                         REAL *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                         REAL *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                         REAL scale, void *work)
{
    const tb_fft_plan *f;
    size_t n, rx, q, s, i, k;
    REAL *w = (REAL *)work, *row, *spec;
    int st = tb_wola_check(plan, PREC, n_symbols, cp, a, b, 0, in, work);
    if (st != TB_OK)
        return st;
    if ((batch > 1 && a_batch_stride == 0) || (n_symbols > 1 && a_symbol_stride == 0) ||
        (b != NULL && ((batch > 1 && b_batch_stride == 0) ||
                       (n_symbols > 1 && b_symbol_stride == 0))))
        return TB_ERR_ARG;
    f = plan->fft;
    n = plan->n;
    rx = plan->rx;
    if (plan->n_b == 0)
        b = NULL;
    row = w + 4 * f->half;
    spec = row + 2 * n;

    for (q = 0; q < batch; q++) {
        size_t o = 0;
        for (s = 0; s < n_symbols; s++) {
            const REAL *win = in + 2 * ((ptrdiff_t)q * in_batch_stride +
                                        (ptrdiff_t)(o + cp[s]));
            const REAL *x = win;
            REAL *da = a + 2 * ((ptrdiff_t)q * a_batch_stride + (ptrdiff_t)s * a_symbol_stride);
            if (rx > 0) {
                /* fold the rx samples before the window onto its end */
                const REAL *early = win - 2 * rx, *late = win + 2 * (n - rx);
                memcpy(row, win, 2 * (n - rx) * sizeof(REAL));
                for (i = 0; i < rx; i++) {
                    const REAL up = (REAL)plan->rx_up[i], down = (REAL)plan->rx_up[rx - 1 - i];
                    row[2 * (n - rx + i)] = down * late[2 * i] + up * early[2 * i];
                    row[2 * (n - rx + i) + 1] = down * late[2 * i + 1] + up * early[2 * i + 1];
                }
                x = row;
            }
            SFX(tb_fft_core_row)(f, 0, x, x + 1, 2, spec, 1, (REAL)1, w);
            for (k = 0; k < plan->n_a; k++) {
                da[2 * k] = scale * spec[2 * plan->pos_a[k]];
                da[2 * k + 1] = scale * spec[2 * plan->pos_a[k] + 1];
            }
            if (b != NULL) {
                REAL *db = b + 2 * ((ptrdiff_t)q * b_batch_stride +
                                    (ptrdiff_t)s * b_symbol_stride);
                for (k = 0; k < plan->n_b; k++) {
                    db[2 * k] = scale * spec[2 * plan->pos_b[k]];
                    db[2 * k + 1] = scale * spec[2 * plan->pos_b[k] + 1];
                }
            }
            o += n + cp[s];
        }
    }
    return TB_OK;
}
