/*
 * test_filterbank.c -- standalone test of the windowed (WOLA) and filtered
 * OFDM operations, tb_wola_* and tb_fofdm_* (no Python).
 *
 * Build and run:  make -C csrc test      (sanitizers on)
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Reference: the definitions in csrc/tonebank.h evaluated naively in long
 * double -- the DFT from its sum ("naive DFT in long double, definition of
 * the DFT"), the FIR filters as direct linear convolution sums, the ramps,
 * overlap-add and fold-back sample by sample.  Results must agree within
 *
 *     max |y - ref| <= 64 * eps * log2(m) * max |ref|
 *
 * (a loose form of the FFT error bound used in test_fft.c, applied to the
 * largest transform of the chain; the fast convolutions run three
 * transforms in a row).  Every error status of the new calls is checked.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"
#include "tb_test.h"

static void check(int ok, const char *what, size_t n, int prec)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL: %s (n=%zu, %s)\n", what, n, prec == TB_FLOAT32 ? "f32" : "f64");
    }
}

static const long double PI_L = 3.141592653589793238462643383279502884L;

/* Naive inverse (sign +1) or forward (-1) DFT of n points, times scale. */
static void naive_dft(size_t n, int sign, const long double *x, long double *y,
                      long double scale)
{
    size_t j, k;
    for (j = 0; j < n; j++) {
        long double re = 0, im = 0;
        for (k = 0; k < n; k++) {
            const long double ph = sign * 2 * PI_L * (long double)((j * k) % n) / n;
            re += x[2 * k] * cosl(ph) - x[2 * k + 1] * sinl(ph);
            im += x[2 * k] * sinl(ph) + x[2 * k + 1] * cosl(ph);
        }
        y[2 * j] = scale * re;
        y[2 * j + 1] = scale * im;
    }
}

/* The scaled inverse DFT of symbol values placed on bins. */
static void naive_body(size_t n, size_t n_a, const size_t *bins, int prec, const void *a,
                       long double scale, long double *body)
{
    long double *X = (long double *)xcalloc(2 * n, sizeof(long double));
    size_t k;
    for (k = 0; k < n_a; k++) {
        X[2 * bins[k]] = get(prec, a, 2 * k);
        X[2 * bins[k] + 1] = get(prec, a, 2 * k + 1);
    }
    naive_dft(n, 1, X, body, scale);
    free(X);
}

static double tol(int prec, size_t m, long double maxref)
{
    const double eps = prec == TB_FLOAT32 ? FLT_EPSILON : DBL_EPSILON;
    return 64 * eps * log2((double)(m > 2 ? m : 2)) * (double)maxref + 1e-300;
}

/* ---- WOLA ------------------------------------------------------------------ */

static void test_wola(size_t n, int prec, size_t ns, size_t tx, size_t rx)
{
    const size_t n_a = n / 2 + 1;
    size_t *bins = (size_t *)xcalloc(n_a, sizeof(size_t));
    size_t *cp = (size_t *)xcalloc(ns, sizeof(size_t));
    double *up_tx = (double *)xcalloc(tx + 1, sizeof(double));
    double *up_rx = (double *)xcalloc(rx + 1, sizeof(double));
    size_t total = tx, s, i, k, o;
    tb_wola_plan *p = NULL;
    void *a, *out, *work, *ga;
    long double *ref, *body, maxref = 0, err = 0;
    const long double scale = 1.0L / sqrtl((long double)n);
    int st;

    for (k = 0; k < n_a; k++)
        bins[k] = (3 * k + 1) % n; /* distinct when gcd(3, n) == 1 */
    for (s = 0; s < ns; s++) {
        cp[s] = tx + rx + s % 3;
        total += n + cp[s];
    }
    for (i = 0; i < tx; i++)
        up_tx[i] = 0.5 - 0.5 * cos(3.14159265358979323846 * (i + 0.5) / tx);
    for (i = 0; i < rx; i++)
        up_rx[i] = 0.5 - 0.5 * cos(3.14159265358979323846 * (i + 0.5) / rx);
    st = tb_wola_plan_create(n, prec, n_a, bins, 0, NULL, tx, up_tx, rx, up_rx, &p);
    check(st == TB_OK, "wola plan", n, prec);
    if (st != TB_OK)
        return;
    a = xcalloc(2 * n_a * ns, rsize(prec));
    ga = xcalloc(2 * n_a * ns, rsize(prec));
    out = xcalloc(2 * total, rsize(prec));
    work = xcalloc(tb_wola_workspace_size(p) / sizeof(double) + 1, sizeof(double));
    ref = (long double *)xcalloc(2 * total, sizeof(long double));
    body = (long double *)xcalloc(2 * n, sizeof(long double));
    for (i = 0; i < 2 * n_a * ns; i++)
        put(prec, a, i, rnd());

    st = prec == TB_FLOAT32
             ? tb_wola_synthesize_f32(p, 1, ns, cp, (float *)a, 0, (ptrdiff_t)n_a, NULL, 0,
                                      0, (float *)out, 0, (float)scale, work)
             : tb_wola_synthesize_f64(p, 1, ns, cp, (double *)a, 0, (ptrdiff_t)n_a, NULL, 0,
                                      0, (double *)out, 0, (double)scale, work);
    check(st == TB_OK, "wola synthesize status", n, prec);
    /* reference: extend, weight, add */
    for (s = 0, o = 0; s < ns; s++) {
        const size_t c = cp[s];
        naive_body(n, n_a, bins, prec, (char *)a + 2 * n_a * s * rsize(prec), scale, body);
        for (i = 0; i < c + n + tx; i++) {
            const size_t j = (i + n - c) % n;
            long double g = 1;
            if (i < tx)
                g = up_tx[i];
            else if (i >= c + n)
                g = up_tx[tx - 1 - (i - c - n)];
            ref[2 * (o + i)] += g * body[2 * j];
            ref[2 * (o + i) + 1] += g * body[2 * j + 1];
        }
        o += n + c;
    }
    for (i = 0; i < 2 * total; i++) {
        const long double d = fabsl(ref[i] - get(prec, out, i));
        maxref = fabsl(ref[i]) > maxref ? fabsl(ref[i]) : maxref;
        err = d > err ? d : err;
    }
    check(err <= tol(prec, n, maxref), "wola synthesis vs naive reference", n, prec);

    /* analysis of noise: fold-back and DFT from the definition */
    for (i = 0; i < 2 * total; i++)
        put(prec, out, i, rnd());
    st = prec == TB_FLOAT32
             ? tb_wola_analyze_f32(p, 1, ns, cp, (float *)out, 0, (float *)ga, 0,
                                   (ptrdiff_t)n_a, NULL, 0, 0, (float)scale, work)
             : tb_wola_analyze_f64(p, 1, ns, cp, (double *)out, 0, (double *)ga, 0,
                                   (ptrdiff_t)n_a, NULL, 0, 0, (double)scale, work);
    check(st == TB_OK, "wola analyze status", n, prec);
    err = maxref = 0;
    for (s = 0, o = 0; s < ns; s++) {
        long double *z = (long double *)xcalloc(2 * n, sizeof(long double));
        const size_t w0 = o + cp[s];
        for (i = 0; i < n; i++) {
            z[2 * i] = get(prec, out, 2 * (w0 + i));
            z[2 * i + 1] = get(prec, out, 2 * (w0 + i) + 1);
        }
        for (i = 0; i < rx; i++) {
            const size_t j = n - rx + i, e = w0 - rx + i;
            z[2 * j] = up_rx[rx - 1 - i] * z[2 * j] + up_rx[i] * get(prec, out, 2 * e);
            z[2 * j + 1] =
                up_rx[rx - 1 - i] * z[2 * j + 1] + up_rx[i] * get(prec, out, 2 * e + 1);
        }
        naive_dft(n, -1, z, body, scale);
        for (k = 0; k < n_a; k++) {
            const long double dr = body[2 * bins[k]] - get(prec, ga, 2 * (s * n_a + k));
            const long double di = body[2 * bins[k] + 1] - get(prec, ga, 2 * (s * n_a + k) + 1);
            const long double mag = fabsl(body[2 * bins[k]]) + fabsl(body[2 * bins[k] + 1]);
            maxref = mag > maxref ? mag : maxref;
            err = fabsl(dr) > err ? fabsl(dr) : err;
            err = fabsl(di) > err ? fabsl(di) : err;
        }
        free(z);
        o += n + cp[s];
    }
    check(err <= tol(prec, n, maxref), "wola analysis vs naive reference", n, prec);

    /* a prefix too short for the ramps is refused */
    if (tx + rx > 0) {
        cp[0] = tx + rx - 1;
        st = prec == TB_FLOAT32
                 ? tb_wola_synthesize_f32(p, 1, ns, cp, (float *)a, 0, (ptrdiff_t)n_a, NULL,
                                          0, 0, (float *)out, 0, 1.0f, work)
                 : tb_wola_synthesize_f64(p, 1, ns, cp, (double *)a, 0, (ptrdiff_t)n_a, NULL,
                                          0, 0, (double *)out, 0, 1.0, work);
        check(st == TB_ERR_ARG, "wola: cp shorter than the ramps -> TB_ERR_ARG", n, prec);
    }
    st = prec == TB_FLOAT32 ? tb_wola_synthesize_f64(p, 1, ns, cp, (double *)a, 0, 1, NULL,
                                                     0, 0, (double *)out, 0, 1.0, work)
                            : tb_wola_synthesize_f32(p, 1, ns, cp, (float *)a, 0, 1, NULL, 0,
                                                     0, (float *)out, 0, 1.0f, work);
    check(st == TB_ERR_PRECISION, "wola: precision mismatch", n, prec);
    st = tb_wola_analyze_f64(NULL, 1, ns, cp, (double *)out, 0, (double *)ga, 0, 1, NULL, 0,
                             0, 1.0, work);
    check(st == TB_ERR_NULL, "wola: NULL plan", n, prec);

    tb_wola_plan_destroy(p);
    free(bins); free(cp); free(up_tx); free(up_rx); free(a); free(ga); free(out);
    free(work); free(ref); free(body);
}

/* ---- filtered OFDM --------------------------------------------------------- */

static void test_fofdm(size_t n, size_t m, size_t taps, int prec, size_t ns)
{
    const size_t n_a = n / 2;
    size_t *bins = (size_t *)xcalloc(n_a, sizeof(size_t));
    size_t *cp = (size_t *)xcalloc(ns, sizeof(size_t));
    double *h = (double *)xcalloc(2 * taps, sizeof(double));
    double *gain = (double *)xcalloc(n, sizeof(double));
    size_t total = taps - 1, s, i, k, o, t;
    tb_fofdm_plan *p = NULL;
    void *a, *out, *work, *ga;
    long double *ref, *body, *sym, maxref = 0, err = 0;
    const long double scale = 1.0L / sqrtl((long double)n);
    int st;

    for (k = 0; k < n_a; k++)
        bins[k] = (k + n - n_a / 2) % n;
    for (s = 0; s < ns; s++) {
        cp[s] = (s % 2) ? n / 8 : n / 8 + 1;
        total += n + cp[s];
    }
    for (t = 0; t < 2 * taps; t++)
        h[t] = rnd();
    for (k = 0; k < n; k++)
        gain[k] = 1.0 + 0.5 * rnd();
    st = tb_fofdm_plan_create(n, m, prec, n_a, bins, 0, NULL, taps, h, gain, &p);
    check(st == TB_OK, "fofdm plan", n, prec);
    if (st != TB_OK)
        return;
    a = xcalloc(2 * n_a * ns, rsize(prec));
    ga = xcalloc(2 * n_a * ns, rsize(prec));
    out = xcalloc(2 * total, rsize(prec));
    work = xcalloc(tb_fofdm_workspace_size(p) / sizeof(double) + 1, sizeof(double));
    ref = (long double *)xcalloc(2 * total, sizeof(long double));
    body = (long double *)xcalloc(2 * n, sizeof(long double));
    sym = (long double *)xcalloc(2 * (2 * n + taps), sizeof(long double));
    for (i = 0; i < 2 * n_a * ns; i++)
        put(prec, a, i, rnd());
    for (i = 0; i < 2 * total; i++)
        put(prec, out, i, 1e30); /* must be overwritten */

    st = prec == TB_FLOAT32
             ? tb_fofdm_synthesize_f32(p, 1, ns, cp, (float *)a, 0, (ptrdiff_t)n_a, NULL, 0,
                                       0, (float *)out, 0, (float)scale, work)
             : tb_fofdm_synthesize_f64(p, 1, ns, cp, (double *)a, 0, (ptrdiff_t)n_a, NULL, 0,
                                       0, (double *)out, 0, (double)scale, work);
    check(st == TB_OK, "fofdm synthesize status", n, prec);
    for (s = 0, o = 0; s < ns; s++) {
        const size_t c = cp[s];
        naive_body(n, n_a, bins, prec, (char *)a + 2 * n_a * s * rsize(prec), scale, body);
        for (i = 0; i < c + n; i++) {
            const size_t j = (i + n - c) % n;
            sym[2 * i] = body[2 * j];
            sym[2 * i + 1] = body[2 * j + 1];
        }
        /* direct linear convolution with h */
        for (i = 0; i < c + n + taps - 1; i++) {
            long double re = 0, im = 0;
            for (t = 0; t < taps; t++) {
                if (i < t || i - t >= c + n)
                    continue;
                re += h[2 * t] * sym[2 * (i - t)] - h[2 * t + 1] * sym[2 * (i - t) + 1];
                im += h[2 * t] * sym[2 * (i - t) + 1] + h[2 * t + 1] * sym[2 * (i - t)];
            }
            ref[2 * (o + i)] += re;
            ref[2 * (o + i) + 1] += im;
        }
        o += n + c;
    }
    for (i = 0; i < 2 * total; i++) {
        const long double d = fabsl(ref[i] - get(prec, out, i));
        maxref = fabsl(ref[i]) > maxref ? fabsl(ref[i]) : maxref;
        err = d > err ? d : err;
    }
    check(err <= tol(prec, m, maxref), "fofdm synthesis vs naive reference", n, prec);

    /* analysis of noise: matched filter, delayed window, DFT, gain */
    for (i = 0; i < 2 * total; i++)
        put(prec, out, i, rnd());
    st = prec == TB_FLOAT32
             ? tb_fofdm_analyze_f32(p, 1, ns, cp, (float *)out, 0, (float *)ga, 0,
                                    (ptrdiff_t)n_a, NULL, 0, 0, (float)scale, work)
             : tb_fofdm_analyze_f64(p, 1, ns, cp, (double *)out, 0, (double *)ga, 0,
                                    (ptrdiff_t)n_a, NULL, 0, 0, (double)scale, work);
    check(st == TB_OK, "fofdm analyze status", n, prec);
    err = maxref = 0;
    for (s = 0, o = 0; s < ns; s++) {
        const size_t w0 = o + cp[s];
        long double *z = (long double *)xcalloc(2 * n, sizeof(long double));
        for (i = 0; i < n; i++) {
            /* y[taps-1+i] = sum_t g[t] x[w0 + taps-1+i-t], g[t] = conj(h[taps-1-t]) */
            long double re = 0, im = 0;
            for (t = 0; t < taps; t++) {
                const size_t e = w0 + taps - 1 + i - t;
                const long double gr = h[2 * (taps - 1 - t)], gi = -h[2 * (taps - 1 - t) + 1];
                const long double xr = get(prec, out, 2 * e), xi = get(prec, out, 2 * e + 1);
                re += gr * xr - gi * xi;
                im += gr * xi + gi * xr;
            }
            z[2 * i] = re;
            z[2 * i + 1] = im;
        }
        naive_dft(n, -1, z, body, scale);
        for (k = 0; k < n_a; k++) {
            const long double g = gain[bins[k]];
            const long double rr = g * body[2 * bins[k]], ri = g * body[2 * bins[k] + 1];
            const long double dr = rr - get(prec, ga, 2 * (s * n_a + k));
            const long double di = ri - get(prec, ga, 2 * (s * n_a + k) + 1);
            maxref = fabsl(rr) > maxref ? fabsl(rr) : maxref;
            maxref = fabsl(ri) > maxref ? fabsl(ri) : maxref;
            err = fabsl(dr) > err ? fabsl(dr) : err;
            err = fabsl(di) > err ? fabsl(di) : err;
        }
        free(z);
        o += n + cp[s];
    }
    check(err <= tol(prec, m, maxref), "fofdm analysis vs naive reference", n, prec);

    /* error statuses */
    {
        tb_fofdm_plan *q = NULL;
        check(tb_fofdm_plan_create(n, 7 * m, prec, n_a, bins, 0, NULL, taps, h, gain, &q) ==
                  TB_ERR_SIZE && q == NULL, "fofdm: unsupported m -> TB_ERR_SIZE", n, prec);
        check(tb_fofdm_plan_create(n, m, prec, n_a, bins, 0, NULL, m, h, gain, &q) ==
                  TB_ERR_ARG, "fofdm: n + taps - 1 > m -> TB_ERR_ARG", n, prec);
        check(tb_fofdm_plan_create(n, m, prec, n_a, bins, 0, NULL, taps, NULL, gain, &q) ==
                  TB_ERR_NULL, "fofdm: NULL taps -> TB_ERR_NULL", n, prec);
        check(tb_fofdm_plan_create(n, m, 9, n_a, bins, 0, NULL, taps, h, gain, &q) ==
                  TB_ERR_PRECISION, "fofdm: bad precision", n, prec);
        bins[1] = bins[0];
        check(tb_fofdm_plan_create(n, m, prec, n_a, bins, 0, NULL, taps, h, gain, &q) ==
                  TB_ERR_ARG, "fofdm: repeated bin -> TB_ERR_ARG", n, prec);
        cp[0] = m; /* n + cp + taps - 1 > m */
        st = tb_fofdm_synthesize_f64(p, 1, ns, cp, (double *)a, 0, 1, NULL, 0, 0,
                                     (double *)out, 0, 1.0, work);
        check(st == (prec == TB_FLOAT64 ? TB_ERR_ARG : TB_ERR_PRECISION),
              "fofdm: long prefix -> TB_ERR_ARG", n, prec);
    }

    tb_fofdm_plan_destroy(p);
    free(bins); free(cp); free(h); free(gain); free(a); free(ga); free(out);
    free(work); free(ref); free(body); free(sym);
}

int main(void)
{
    static const int precs[2] = {TB_FLOAT64, TB_FLOAT32};
    int pi;
    for (pi = 0; pi < 2; pi++) {
        const int prec = precs[pi];
        test_wola(8, prec, 5, 0, 0);
        test_wola(16, prec, 9, 3, 2);    /* lane-sized n */
        test_wola(64, prec, 4, 8, 4);
        test_wola(100, prec, 3, 5, 0);   /* 2^2 5^2 */
        test_fofdm(16, 32, 9, prec, 5);
        test_fofdm(64, 100, 17, prec, 4);
        test_fofdm(128, 256, 65, prec, 3);
        test_fofdm(16, 32, 1, prec, 3);    /* no filter edges */
        test_fofdm(16, 64, 15, prec, 3);   /* longer than half a symbol: nc = 32 */
        test_fofdm(60, 160, 50, prec, 3);  /* nc = 100, a 2^a 3^b 5^c size */
    }
    {
        tb_wola_plan *p = NULL;
        size_t bins[2] = {1, 1};
        double up[2] = {0.25, 0.75};
        check(tb_wola_plan_create(16, TB_FLOAT64, 2, bins, 0, NULL, 2, up, 0, NULL, &p) ==
                  TB_ERR_ARG && p == NULL, "wola: repeated bin -> TB_ERR_ARG", 16, TB_FLOAT64);
        bins[1] = 2;
        check(tb_wola_plan_create(16, TB_FLOAT64, 2, bins, 0, NULL, 2, NULL, 0, NULL, &p) ==
                  TB_ERR_NULL, "wola: NULL ramp -> TB_ERR_NULL", 16, TB_FLOAT64);
        check(tb_wola_plan_create(14, TB_FLOAT64, 2, bins, 0, NULL, 2, up, 0, NULL, &p) ==
                  TB_ERR_SIZE, "wola: unsupported n -> TB_ERR_SIZE", 14, TB_FLOAT64);
        check(tb_wola_plan_create(16, TB_FLOAT64, 2, bins, 0, NULL, 17, up, 0, NULL, &p) ==
                  TB_ERR_ARG, "wola: ramp longer than n -> TB_ERR_ARG", 16, TB_FLOAT64);
        tb_wola_plan_destroy(NULL);
        tb_fofdm_plan_destroy(NULL);
        check(tb_wola_workspace_size(NULL) == 0 && tb_fofdm_workspace_size(NULL) == 0,
              "workspace size of NULL plans", 0, TB_FLOAT64);
    }
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed > 0;
}
