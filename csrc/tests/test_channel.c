/*
 * test_channel.c -- standalone test of the time-varying FIR (no Python).
 *
 * Build and run:  make -C csrc build/test_channel && ./csrc/build/test_channel
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Reference: the definition in tonebank.h -- y[i] = sum_m c_m(i) x[i-m]
 * with taps linear between knots -- evaluated naively in long double
 * (direct convolution sum, the definition of an FIR filter).  Error
 * bound: each output is a sum of n_lags products of values of magnitude
 * <= 1 (|c| <= 1 by construction, |x| <= sqrt 2), so
 *
 *     |y - ref| <= C * eps * n_lags * max|c| * max|x|,   C = 8
 *
 * (the standard forward error bound of a recursive sum, n * eps per
 * term, Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed.,
 * section 4.2, from memory; C covers the complex product and the tap
 * interpolation).  Chunked runs must be bit-identical to one call, and
 * the portable build of the op (TB_NO_DISPATCH) to the dispatched one.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"
#include "tb_test.h"

/* A second, portable-only copy of the kernel op (no AVX2 dispatch) under
 * other names: the build's copy (which picks AVX2 at run time where the
 * CPU has it) must give bit-identical results, since neither uses FMA. */
#define TB_NO_DISPATCH
#define tb_channel_fir_f32 portable_channel_fir_f32
#define tb_channel_fir_f64 portable_channel_fir_f64
#include "../tb_channel.c"
#undef tb_channel_fir_f32
#undef tb_channel_fir_f64

static void check(int ok, const char *what, size_t n, size_t lags, int prec)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL: %s (n=%zu, lags=%zu, %s)\n", what, n, lags,
               prec == TB_FLOAT32 ? "f32" : "f64");
    }
}

/* Fill count complex values (as doubles) with random numbers of modulus <= scale. */
static void fill(double *v, size_t count, double scale)
{
    size_t i;
    for (i = 0; i < 2 * count; i++)
        v[i] = scale * rnd() * 0.7071;
}

static void to_prec(int prec, const double *src, void *dst, size_t nreal)
{
    size_t i;
    if (prec == TB_FLOAT32)
        for (i = 0; i < nreal; i++)
            ((float *)dst)[i] = (float)src[i];
    else
        memcpy(dst, src, nreal * sizeof(double));
}

static int run(int prec, size_t batch, size_t n, size_t lags, const void *x, ptrdiff_t xbs,
               const void *hist, ptrdiff_t hbs, const void *taps, size_t sets, size_t knots,
               size_t interval, size_t offset, void *y, ptrdiff_t ybs)
{
    if (prec == TB_FLOAT32)
        return tb_channel_fir_f32(batch, n, lags, (const float *)x, xbs, (const float *)hist,
                                  hbs, (const float *)taps, sets, knots, interval, offset,
                                  (float *)y, ybs);
    return tb_channel_fir_f64(batch, n, lags, (const double *)x, xbs, (const double *)hist,
                              hbs, (const double *)taps, sets, knots, interval, offset,
                              (double *)y, ybs);
}

/* One configuration: batch signals, n samples, lags, sets, knots. */
static void check_config(int prec, size_t batch, size_t n, size_t lags, size_t sets,
                         size_t interval, size_t offset, int moving)
{
    const size_t rs = prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
    const double eps = prec == TB_FLOAT32 ? FLT_EPSILON : DBL_EPSILON;
    const size_t knots = moving ? (offset + (n ? n - 1 : 0)) / interval + 2 : 1;
    const size_t h = lags - 1;
    double *xd = (double *)xmalloc(2 * batch * n * sizeof(double));
    double *hd = (double *)xmalloc(2 * batch * (h + 1) * sizeof(double));
    double *td = (double *)xmalloc(2 * sets * knots * lags * sizeof(double));
    void *x = xmalloc(2 * batch * n * rs), *hist = xmalloc(2 * batch * (h + 1) * rs);
    void *taps = xmalloc(2 * sets * knots * lags * rs);
    void *y = xmalloc(2 * batch * n * rs), *y2 = xmalloc(2 * batch * n * rs);
    void *h2 = xmalloc(2 * batch * (h + 1) * rs);
    size_t q, i, m;
    double worst = 0.0, bound = 8.0 * eps * (double)lags * 1.0 * 1.5;
    int st, same = 1;

    fill(xd, batch * n, 1.4142);
    fill(hd, batch * (h + 1), 1.4142);
    fill(td, sets * knots * lags, 1.0);
    to_prec(prec, xd, x, 2 * batch * n);
    to_prec(prec, hd, hist, 2 * batch * (h + 1));
    to_prec(prec, td, taps, 2 * sets * knots * lags);
    st = run(prec, batch, n, lags, x, (ptrdiff_t)n, hist, (ptrdiff_t)(h + 1), taps, sets,
             knots, interval, offset, y, (ptrdiff_t)n);
    check(st == TB_OK, "status of a valid call", n, lags, prec);
    for (q = 0; q < batch; q++) {
        const size_t set = q % sets;
        for (i = 0; i < n; i++) {
            long double re = 0.0L, im = 0.0L;
            size_t k = moving ? (offset + i) / interval : 0;
            long double t = moving ? (long double)((offset + i) % interval) / interval : 0.0L;
            for (m = 0; m < lags; m++) {
                size_t ia = 2 * ((set * knots + k) * lags + m);
                long double ar = get(prec, taps, ia), ai = get(prec, taps, ia + 1);
                long double cr = ar, ci = ai, xr, xi;
                if (moving) {
                    size_t ib = ia + 2 * lags;
                    cr = ar + t * (get(prec, taps, ib) - ar);
                    ci = ai + t * (get(prec, taps, ib + 1) - ai);
                }
                if (i >= m) {
                    xr = get(prec, x, 2 * (q * n + i - m));
                    xi = get(prec, x, 2 * (q * n + i - m) + 1);
                } else {
                    xr = get(prec, hist, 2 * (q * (h + 1) + h + i - m));
                    xi = get(prec, hist, 2 * (q * (h + 1) + h + i - m) + 1);
                }
                re += cr * xr - ci * xi;
                im += cr * xi + ci * xr;
            }
            {
                double er = fabs((double)(re - get(prec, y, 2 * (q * n + i))));
                double ei = fabs((double)(im - get(prec, y, 2 * (q * n + i) + 1)));
                if (er > worst) worst = er;
                if (ei > worst) worst = ei;
            }
        }
    }
    check(worst <= bound, "against the long-double reference", n, lags, prec);

    /* the portable copy: bit-identical */
    if (prec == TB_FLOAT32)
        st = portable_channel_fir_f32(batch, n, lags, (const float *)x, (ptrdiff_t)n,
                                      (const float *)hist, (ptrdiff_t)(h + 1),
                                      (const float *)taps, sets, knots, interval, offset,
                                      (float *)y2, (ptrdiff_t)n);
    else
        st = portable_channel_fir_f64(batch, n, lags, (const double *)x, (ptrdiff_t)n,
                                      (const double *)hist, (ptrdiff_t)(h + 1),
                                      (const double *)taps, sets, knots, interval, offset,
                                      (double *)y2, (ptrdiff_t)n);
    check(st == TB_OK && memcmp(y, y2, 2 * batch * n * rs) == 0,
          "portable copy bit-identical to the dispatched one", n, lags, prec);

    /* chunked: pieces of pseudo-random length, history carried on */
    {
        size_t done = 0;
        memcpy(h2, hist, 2 * batch * (h + 1) * rs);
        while (done < n) {
            size_t len = 1 + (size_t)((rnd() + 1.0) * 0.5 * 300.0);
            if (len > n - done) len = n - done;
            st = run(prec, batch, len, lags, (const char *)x + 2 * done * rs, (ptrdiff_t)n,
                     h2, (ptrdiff_t)(h + 1), taps, sets, knots, interval, offset + done,
                     (char *)y2 + 2 * done * rs, (ptrdiff_t)n);
            if (st != TB_OK) same = 0;
            /* new history: last h samples of (old history, chunk) */
            for (q = 0; q < batch && h > 0; q++) {
                char *hq = (char *)h2 + 2 * q * (h + 1) * rs;
                const char *xq = (const char *)x + 2 * q * n * rs;
                size_t keep_old = h > len ? h - len : 0, j;
                memmove(hq, hq + 2 * (h - keep_old) * rs, 2 * keep_old * rs);
                for (j = keep_old; j < h; j++)
                    memcpy(hq + 2 * j * rs, xq + 2 * (done + len - (h - j)) * rs, 2 * rs);
            }
            done += len;
        }
        if (memcmp(y, y2, 2 * batch * n * rs) != 0) same = 0;
        check(same, "chunked run bit-identical to one call", n, lags, prec);
    }
    free(xd); free(hd); free(td); free(x); free(hist); free(taps); free(y); free(y2); free(h2);
    (void)worst;
}

static void check_errors(void)
{
    double x[8] = {0}, h[8] = {0}, t[16] = {0}, y[8] = {0};
    check(tb_channel_fir_f64(1, 4, 2, NULL, 4, h, 1, t, 1, 1, 0, 0, y, 4) == TB_ERR_NULL,
          "NULL x", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 2, x, 4, NULL, 1, t, 1, 1, 0, 0, y, 4) == TB_ERR_NULL,
          "NULL hist with lags > 1", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 1, x, 4, NULL, 0, t, 1, 1, 0, 0, y, 4) == TB_OK,
          "NULL hist with one lag", 4, 1, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 2, x, 4, h, 1, NULL, 1, 1, 0, 0, y, 4) == TB_ERR_NULL,
          "NULL taps", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 2, x, 4, h, 1, t, 1, 1, 0, 0, NULL, 4) == TB_ERR_NULL,
          "NULL y", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 0, x, 4, h, 1, t, 1, 1, 0, 0, y, 4) == TB_ERR_ARG,
          "zero lags", 4, 0, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 2, x, 4, h, 1, t, 0, 1, 0, 0, y, 4) == TB_ERR_ARG,
          "zero tap sets", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 2, x, 4, h, 1, t, 1, 2, 0, 0, y, 4) == TB_ERR_ARG,
          "zero interval", 4, 2, TB_FLOAT64);
    /* 4 samples from offset 0 at interval 2 sit in knot intervals 0 and 1,
     * so they need knots 0, 1 and 2 */
    check(tb_channel_fir_f64(1, 4, 2, x, 4, h, 1, t, 1, 2, 2, 0, y, 4) == TB_ERR_ARG,
          "too few knots", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f64(1, 4, 2, x, 4, h, 1, t, 1, 3, 2, 0, y, 4) == TB_OK,
          "just enough knots", 4, 2, TB_FLOAT64);
    check(tb_channel_fir_f32(1, 4, 2, NULL, 4, (float *)h, 1, (float *)t, 1, 1, 0, 0,
                             (float *)y, 4) == TB_ERR_NULL, "NULL x", 4, 2, TB_FLOAT32);
}

int main(void)
{
    static const size_t lags[] = {1, 2, 5, 24, 40, 300};
    static const size_t lens[] = {0, 1, 7, 255, 256, 257, 1000};
    int p;
    size_t a, b;
    for (p = 0; p < 2; p++) {
        int prec = p ? TB_FLOAT64 : TB_FLOAT32;
        for (a = 0; a < sizeof lags / sizeof lags[0]; a++)
            for (b = 0; b < sizeof lens / sizeof lens[0]; b++) {
                check_config(prec, 3, lens[b], lags[a], 2, 1, 0, 0);   /* static */
                check_config(prec, 3, lens[b], lags[a], 2, 64, 5, 1);  /* moving */
                check_config(prec, 2, lens[b], lags[a], 1, 1, 3, 1);   /* knot per sample */
                check_config(prec, 1, lens[b], lags[a], 1, 1000, 999, 1);
            }
    }
    check_errors();
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed ? 1 : 0;
}
