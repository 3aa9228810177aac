/*
 * test_halves.c -- standalone test of the sliding correlation (no Python).
 *
 * Build and run:  make -C csrc build/test_halves && ./csrc/build/test_halves
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Reference: the definition in tonebank.h -- p[d] = sum_m conj(x[d+m])
 * x[d+m+period], r[d] = sum_m |x[d+m+period]|^2 -- summed directly in
 * long double for every d.  Error bound: the kernel restarts its running
 * sum every 4096 outputs, so each output is the result of at most
 * window + 2 * 4096 double additions of terms of magnitude <= 2 (|x| <=
 * sqrt 2), and
 *
 *     |p - ref| <= C * eps_double * (window + 2 * 4096) * 2,   C = 4
 *
 * (the forward error bound of a recursive sum, Higham, Accuracy and
 * Stability of Numerical Algorithms, 2nd ed., section 4.2, from memory;
 * C covers the complex product).  float outputs add one rounding,
 * eps_float * |value|.  Streams of 3 blocks and more show that the error
 * does not grow with the stream length.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include "../tonebank.h"
#include "tb_test.h"

static void check(int ok, const char *what, size_t n, size_t period, size_t window,
                  int prec)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL: %s (n=%zu, period=%zu, window=%zu, %s)\n", what, n, period, window,
               prec == TB_FLOAT32 ? "f32" : "f64");
    }
}

/* `batch` signals of n samples, rows `stride` complex elements apart;
 * a repeated half is planted in the middle of each so that |p| reaches
 * r there (a plateau), as a preamble would. */
static void check_config(int prec, size_t batch, size_t n, size_t period, size_t window)
{
    const size_t stride = n + 3, n_out = n + 1 - period - window;
    const size_t esize = prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
    void *x = xmalloc(2 * batch * stride * esize);
    void *p = xmalloc(2 * batch * (n_out + 1) * esize);
    void *r = xmalloc(batch * (n_out + 2) * esize);
    const double bound = 4.0 * DBL_EPSILON * (double)(window + 2 * 4096) * 2.0;
    const double eps_out = prec == TB_FLOAT32 ? FLT_EPSILON : 0.0;
    double worst = 0.0;
    size_t q, i, d;
    int status;

    for (q = 0; q < batch; q++)
        for (i = 0; i < n; i++) {
            size_t at = 2 * (q * stride + i);
            double re = rnd(), im = rnd();
            if (i >= n / 2 && i < n / 2 + period && i + period < n) {
                /* copy this sample `period` later: a repeated half */
                size_t later = 2 * (q * stride + i + period);
                if (prec == TB_FLOAT32) {
                    ((float *)x)[later] = (float)re;
                    ((float *)x)[later + 1] = (float)im;
                } else {
                    ((double *)x)[later] = re;
                    ((double *)x)[later + 1] = im;
                }
            }
            if (i >= n / 2 + period && i < n / 2 + 2 * period)
                continue; /* already written as the copy */
            if (prec == TB_FLOAT32) {
                ((float *)x)[at] = (float)re;
                ((float *)x)[at + 1] = (float)im;
            } else {
                ((double *)x)[at] = re;
                ((double *)x)[at + 1] = im;
            }
        }
    status = prec == TB_FLOAT32
                 ? tb_halves_correlation_f32(batch, n, period, window, (const float *)x,
                                             (ptrdiff_t)stride, (float *)p,
                                             (ptrdiff_t)n_out + 1, (float *)r,
                                             (ptrdiff_t)n_out + 2)
                 : tb_halves_correlation_f64(batch, n, period, window, (const double *)x,
                                             (ptrdiff_t)stride, (double *)p,
                                             (ptrdiff_t)n_out + 1, (double *)r,
                                             (ptrdiff_t)n_out + 2);
    check(status == TB_OK, "status", n, period, window, prec);
    for (q = 0; q < batch && status == TB_OK; q++)
        for (d = 0; d < n_out; d++) {
            long double sr = 0.0L, si = 0.0L, se = 0.0L;
            double er, ei, ee;
            size_t m;
            for (m = 0; m < window; m++) {
                size_t a = 2 * (q * stride + d + m), b = 2 * (q * stride + d + m + period);
                long double ar = get(prec, x, a), ai = get(prec, x, a + 1);
                long double br = get(prec, x, b), bi = get(prec, x, b + 1);
                sr += ar * br + ai * bi;
                si += ar * bi - ai * br;
                se += br * br + bi * bi;
            }
            er = fabs(get(prec, p, 2 * (q * (n_out + 1) + d)) - (double)sr);
            ei = fabs(get(prec, p, 2 * (q * (n_out + 1) + d) + 1) - (double)si);
            ee = fabs(get(prec, r, q * (n_out + 2) + d) - (double)se);
            er -= eps_out * fabs((double)sr);
            ei -= eps_out * fabs((double)si);
            ee -= eps_out * fabs((double)se);
            if (er > worst) worst = er;
            if (ei > worst) worst = ei;
            if (ee > worst) worst = ee;
        }
    check(worst <= bound, "error within the recursive-sum bound", n, period, window, prec);
    free(x);
    free(p);
    free(r);
}

static void check_errors(void)
{
    double x[8] = {0}, p[8], r[8];
    float xf[8] = {0}, pf[8], rf[8];
    check(tb_halves_correlation_f64(1, 4, 0, 1, x, 4, p, 4, r, 4) == TB_ERR_ARG,
          "period 0", 4, 0, 1, TB_FLOAT64);
    check(tb_halves_correlation_f64(1, 4, 1, 0, x, 4, p, 4, r, 4) == TB_ERR_ARG,
          "window 0", 4, 1, 0, TB_FLOAT64);
    check(tb_halves_correlation_f64(1, 4, 3, 3, x, 4, p, 4, r, 4) == TB_ERR_ARG,
          "signal shorter than period + window - 1", 4, 3, 3, TB_FLOAT64);
    check(tb_halves_correlation_f64(1, 4, 2, 3, x, 4, p, 4, r, 4) == TB_OK,
          "no outputs is fine", 4, 2, 3, TB_FLOAT64);
    check(tb_halves_correlation_f32(1, 4, 1, 1, NULL, 4, pf, 4, rf, 4) == TB_ERR_NULL,
          "NULL x", 4, 1, 1, TB_FLOAT32);
    check(tb_halves_correlation_f32(1, 4, 1, 1, xf, 4, NULL, 4, rf, 4) == TB_ERR_NULL,
          "NULL p", 4, 1, 1, TB_FLOAT32);
    check(tb_halves_correlation_f32(1, 4, 1, 1, xf, 4, pf, 4, NULL, 4) == TB_ERR_NULL,
          "NULL r", 4, 1, 1, TB_FLOAT32);
    check(tb_halves_correlation_f64(0, 4, 1, 1, x, 4, p, 4, r, 4) == TB_OK,
          "empty batch", 4, 1, 1, TB_FLOAT64);
}

int main(void)
{
    static const size_t periods[] = {1, 8, 32, 160};
    static const size_t windows[] = {1, 16, 160};
    static const size_t lens[] = {400, 1000};
    int k;
    size_t a, b, c;
    for (k = 0; k < 2; k++) {
        int prec = k ? TB_FLOAT64 : TB_FLOAT32;
        for (a = 0; a < sizeof periods / sizeof periods[0]; a++)
            for (b = 0; b < sizeof windows / sizeof windows[0]; b++)
                for (c = 0; c < sizeof lens / sizeof lens[0]; c++)
                    check_config(prec, 2, lens[c], periods[a], windows[b]);
        /* just one output, and a stream of several restart blocks */
        check_config(prec, 1, 64, 32, 33);
        check_config(prec, 1, 3 * 4096 + 777, 64, 64);
    }
    check_errors();
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed ? 1 : 0;
}
