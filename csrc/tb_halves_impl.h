/*
 * tb_halves_impl.h -- one precision of the sliding correlation (see
 * tb_halves.c).  Included twice with REAL = float / double and SFX()
 * appending _f32 / _f64; the sums are double in both.
 */

/* One signal of n complex samples (interleaved re, im) into n - period -
 * window + 1 outputs: p as complex pairs, r as reals. */
static void SFX(tb_halves_row)(size_t n, size_t period, size_t window, const REAL *x,
                               REAL *p, REAL *r)
{
    const size_t n_out = n - period - window + 1;
    size_t start;
    for (start = 0; start < n_out; start += TB_HALVES_BLOCK) {
        const size_t stop = start + TB_HALVES_BLOCK < n_out ? start + TB_HALVES_BLOCK : n_out;
        double pr = 0.0, pi = 0.0, e = 0.0;
        size_t m, d;
        /* direct sum at the block start */
        for (m = start; m < start + window; m++) {
            const double ar = x[2 * m], ai = x[2 * m + 1];
            const double br = x[2 * (m + period)], bi = x[2 * (m + period) + 1];
            pr += ar * br + ai * bi;
            pi += ar * bi - ai * br;
            e += br * br + bi * bi;
        }
        for (d = start;; d++) {
            const size_t in = d + window; /* pair (in, in + period) enters */
            double ar, ai, br, bi, cr, ci, fr, fi;
            p[2 * d] = (REAL)pr;
            p[2 * d + 1] = (REAL)pi;
            r[d] = (REAL)e;
            if (d + 1 == stop)
                break;
            ar = x[2 * in], ai = x[2 * in + 1];
            br = x[2 * (in + period)], bi = x[2 * (in + period) + 1];
            cr = x[2 * d], ci = x[2 * d + 1]; /* pair (d, d + period) leaves */
            fr = x[2 * (d + period)], fi = x[2 * (d + period) + 1];
            /* the difference first: one dependent addition per output */
            pr += (ar * br + ai * bi) - (cr * fr + ci * fi);
            pi += (ar * bi - ai * br) - (cr * fi - ci * fr);
            e += (br * br + bi * bi) - (fr * fr + fi * fi);
        }
    }
}
