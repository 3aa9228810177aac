/*
 * test_fbmc.c -- standalone test of the FBMC/OQAM operations (no Python).
 *
 * Build and run:  make -C csrc test      (sanitizers on)
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Reference: the signal model written out term by term in long double
 * (the definition in tonebank.h, i.e. the OQAM modulation of Siohan,
 * Siclet and Lacaille, "Analysis and design of OFDM/OQAM systems based on
 * filterbank theory", IEEE Trans. Signal Processing 50(5), 2002, with the
 * phase pattern j^(k+n)):
 *
 *     x[t] = sum_n sum_k a[k,n] j^(k+n) h[t - n m/2]
 *                      exp(2 pi i k (t - n m/2 - K m/2) / m)
 *
 * and its matched filter, with no FFT and no folding.  The prototype is
 * the PHYDYAS filter (Bellanger, "FBMC physical layer: a primer",
 * PHYDYAS project, 2010; coefficients from memory), though any real taps
 * would do for this test.  Tolerance: the FFT bound of test_fft.c
 * (4 eps log2(m) ||X||_2) widened for the 2K-term filter sums, i.e.
 * 4 eps (log2 m + 4K) times the largest row norm times 2K max|h| --
 * common practice, no source.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"
#include "tb_test.h"

static void check(int ok, const char *what, size_t m, size_t k, int prec)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL: %s (m=%zu, K=%zu, %s)\n", what, m, k, prec == TB_FLOAT32 ? "f32" : "f64");
    }
}

/* PHYDYAS taps, unit energy (from the formula, in long double), for
 * K <= 4; for larger K a sine window (the kernel does not depend on the
 * prototype's design: any real taps would do). */
static void prototype(size_t m, size_t kk, double *h)
{
    static const long double c3[3] = {1.0L, 0.91143783L, 0.41143783L};
    static const long double c4[4] = {1.0L, 0.97195983L, 0.70710678118654752L, 0.23514695L};
    const long double *c = kk == 3 ? c3 : c4;
    const long double pi = 3.14159265358979323846264338327950288L;
    long double energy = 0, *t = (long double *)xmalloc(kk * m * sizeof(long double));
    size_t l, k;
    for (l = 0; l < kk * m; l++) {
        long double v = c[0];
        if (kk > 4)
            v = sinl(pi * ((long double)l + 0.5L) / (long double)(kk * m));
        else
            for (k = 1; k < kk; k++)
                v += 2 * ((k & 1) ? -1 : 1) * c[k] * cosl(2 * pi * (long double)(k * l) /
                                                         (long double)(kk * m));
        t[l] = v;
        energy += v * v;
    }
    for (l = 0; l < kk * m; l++)
        h[l] = (double)(t[l] / sqrtl(energy));
    free(t);
}

/* j^e as (re, im) for e mod 4. */
static void jpow(size_t e, long double *re, long double *im)
{
    static const int r4[4] = {1, 0, -1, 0}, i4[4] = {0, 1, 0, -1};
    *re = r4[e & 3];
    *im = i4[e & 3];
}

static void check_config(size_t m, size_t kk, int prec, size_t batch, size_t ns, size_t start)
{
    const size_t rs = prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
    const size_t taps = kk * m, tail = taps - m / 2, len = ns * m + tail;
    const long double pi = 3.14159265358979323846264338327950288L;
    const double eps = prec == TB_FLOAT32 ? FLT_EPSILON : DBL_EPSILON;
    double *h = (double *)xmalloc(taps * sizeof(double)), hmax = 0, rowmax = 0, tol;
    long double *er = (long double *)xmalloc(m * sizeof(long double));
    long double *ei = (long double *)xmalloc(m * sizeof(long double));
    long double *xr = (long double *)xmalloc(batch * len * sizeof(long double));
    long double *xi = (long double *)xmalloc(batch * len * sizeof(long double));
    void *grid = xmalloc(2 * batch * ns * m * rs), *out, *dec, *sep, *work;
    tb_fbmc_plan *plan = NULL;
    size_t q, s, k, l, n, i;
    int st, ok;
    double err;

    prototype(m, kk, h);
    for (l = 0; l < taps; l++)
        hmax = fabs(h[l]) > hmax ? fabs(h[l]) : hmax;
    for (i = 0; i < m; i++) {
        er[i] = cosl(2 * pi * (long double)i / (long double)m);
        ei[i] = sinl(2 * pi * (long double)i / (long double)m);
    }
    for (i = 0; i < 2 * batch * ns * m; i++)
        put(prec, grid, i, rnd());
    for (q = 0; q < batch * ns; q++) {
        double norm = 0;
        for (k = 0; k < 2 * m; k++)
            norm += get(prec, grid, 2 * q * m + k) * get(prec, grid, 2 * q * m + k);
        rowmax = sqrt(norm) > rowmax ? sqrt(norm) : rowmax;
    }
    tol = 4 * eps * (log2((double)m) + 4.0 * (double)kk) * rowmax * 2.0 * (double)kk * hmax;

    st = tb_fbmc_plan_create(m, kk, prec, h, &plan);
    check(st == TB_OK, "plan create", m, kk, prec);
    if (st != TB_OK)
        return;
    check(tb_fbmc_tail(plan) == tail, "tail", m, kk, prec);
    work = xmalloc(tb_fbmc_workspace_size(plan));
    out = xmalloc(2 * batch * (len + 3) * rs);  /* 3 spare samples per signal */
    dec = xmalloc(2 * batch * ns * m * rs);
    sep = xmalloc(2 * batch * ns * 2 * m * rs);
    for (i = 0; i < 2 * batch * (len + 3); i++)
        put(prec, out, i, 12345.0);

    /* Reference synthesis, term by term. */
    memset(xr, 0, batch * len * sizeof(long double));
    memset(xi, 0, batch * len * sizeof(long double));
    for (q = 0; q < batch; q++)
        for (s = 0; s < ns; s++)
            for (i = 0; i < 2; i++) {
                n = 2 * (start + s) + i;
                for (k = 0; k < m; k++) {
                    const long double a = get(prec, grid, 2 * ((q * ns + s) * m + k) + i);
                    long double tr, ti;
                    jpow(k + n, &tr, &ti);
                    for (l = 0; l < taps; l++) {
                        /* phase index k (l - K m/2) mod m, kept non-negative */
                        const size_t ph = (k * ((l + m * kk) - (kk * m) / 2)) % m;
                        const long double pr = tr * er[ph] - ti * ei[ph];
                        const long double pim = tr * ei[ph] + ti * er[ph];
                        const size_t t = (2 * s + i) * (m / 2) + l;
                        xr[q * len + t] += a * h[l] * pr;
                        xi[q * len + t] += a * h[l] * pim;
                    }
                }
            }
    if (prec == TB_FLOAT32)
        st = tb_fbmc_synthesize_f32(plan, batch, ns, start, (const float *)grid,
                                    (ptrdiff_t)(ns * m), (float *)out, (ptrdiff_t)(len + 3),
                                    work);
    else
        st = tb_fbmc_synthesize_f64(plan, batch, ns, start, (const double *)grid,
                                    (ptrdiff_t)(ns * m), (double *)out, (ptrdiff_t)(len + 3),
                                    work);
    check(st == TB_OK, "synthesize status", m, kk, prec);
    err = 0;
    ok = 1;
    for (q = 0; q < batch; q++) {
        for (l = 0; l < len; l++) {
            const double dr = get(prec, out, 2 * (q * (len + 3) + l)) - (double)xr[q * len + l];
            const double di = get(prec, out, 2 * (q * (len + 3) + l) + 1) -
                              (double)xi[q * len + l];
            const double e = sqrt(dr * dr + di * di);
            err = e > err ? e : err;
        }
        for (l = len; l < len + 3; l++)
            ok &= get(prec, out, 2 * (q * (len + 3) + l)) == 12345.0;
    }
    check(err <= tol, "synthesis against the term-by-term model", m, kk, prec);
    check(ok, "synthesis writes nothing past the tail", m, kk, prec);

    /* Reference analysis of the kernel's own output (separate mode gives
     * the complex matched-filter outputs, the packed mode their real parts). */
    if (prec == TB_FLOAT32) {
        st = tb_fbmc_analyze_f32(plan, batch, ns, start, (const float *)out,
                                 (ptrdiff_t)(len + 3), 0, (float *)dec, (ptrdiff_t)(ns * m),
                                 work);
        st |= tb_fbmc_analyze_f32(plan, batch, ns, start, (const float *)out,
                                  (ptrdiff_t)(len + 3), 1, (float *)sep,
                                  (ptrdiff_t)(2 * ns * m), work);
    } else {
        st = tb_fbmc_analyze_f64(plan, batch, ns, start, (const double *)out,
                                 (ptrdiff_t)(len + 3), 0, (double *)dec, (ptrdiff_t)(ns * m),
                                 work);
        st |= tb_fbmc_analyze_f64(plan, batch, ns, start, (const double *)out,
                                  (ptrdiff_t)(len + 3), 1, (double *)sep,
                                  (ptrdiff_t)(2 * ns * m), work);
    }
    check(st == TB_OK, "analyze status", m, kk, prec);
    err = 0;
    for (q = 0; q < batch; q++)
        for (s = 0; s < ns; s++)
            for (i = 0; i < 2; i++) {
                n = 2 * (start + s) + i;
                for (k = 0; k < m; k++) {
                    long double dr = 0, di = 0, tr, ti, ur, ui;
                    for (l = 0; l < taps; l++) {
                        const size_t t = (2 * s + i) * (m / 2) + l;
                        const size_t ph = (k * ((l + m * kk) - (kk * m) / 2)) % m;
                        const long double yr = get(prec, out, 2 * (q * (len + 3) + t));
                        const long double yi = get(prec, out, 2 * (q * (len + 3) + t) + 1);
                        /* y h exp(-i phase) */
                        dr += h[l] * (yr * er[ph] + yi * ei[ph]);
                        di += h[l] * (yi * er[ph] - yr * ei[ph]);
                    }
                    jpow(k + n, &tr, &ti); /* times conj(j^(k+n)) */
                    ur = dr * tr + di * ti;
                    ui = di * tr - dr * ti;
                    {
                        const size_t o = 2 * ((q * ns + s) * 2 * m + i * m + k);
                        const double e1 = fabs(get(prec, sep, o) - (double)ur) +
                                          fabs(get(prec, sep, o + 1) - (double)ui);
                        const double e2 = fabs(get(prec, dec, 2 * ((q * ns + s) * m + k) + i) -
                                               (double)ur);
                        err = e1 > err ? e1 : err;
                        err = e2 > err ? e2 : err;
                    }
                }
            }
    check(err <= 2 * tol, "analysis against the term-by-term matched filter", m, kk, prec);

    tb_fbmc_plan_destroy(plan);
    free(h);
    free(er);
    free(ei);
    free(xr);
    free(xi);
    free(grid);
    free(out);
    free(dec);
    free(sep);
    free(work);
}

static void check_errors(void)
{
    double h[64 * 4], buf[2 * 1024], work_d[4096];
    float fbuf[2 * 1024];
    tb_fbmc_plan *p = NULL, *bad = (tb_fbmc_plan *)&work_d[0];
    size_t i;
    for (i = 0; i < 64 * 4; i++)
        h[i] = 0.01;
    (void)bad;
    check(tb_fbmc_plan_create(16, 4, TB_FLOAT64, h, NULL) == TB_ERR_NULL, "NULL plan_out", 16,
          4, TB_FLOAT64);
    check(tb_fbmc_plan_create(16, 4, TB_FLOAT64, NULL, &p) == TB_ERR_NULL && p == NULL,
          "NULL prototype", 16, 4, TB_FLOAT64);
    check(tb_fbmc_plan_create(15, 4, TB_FLOAT64, h, &p) == TB_ERR_SIZE, "odd m", 15, 4,
          TB_FLOAT64);
    check(tb_fbmc_plan_create(14, 4, TB_FLOAT64, h, &p) == TB_ERR_SIZE, "m = 2 * 7", 14, 4,
          TB_FLOAT64);
    check(tb_fbmc_plan_create(0, 4, TB_FLOAT64, h, &p) == TB_ERR_SIZE, "m = 0", 0, 4,
          TB_FLOAT64);
    check(tb_fbmc_plan_create(16, 0, TB_FLOAT64, h, &p) == TB_ERR_ARG, "overlap 0", 16, 0,
          TB_FLOAT64);
    check(tb_fbmc_plan_create(16, 4, 7, h, &p) == TB_ERR_PRECISION, "precision code", 16, 4,
          TB_FLOAT64);
    check(tb_fbmc_workspace_size(NULL) == 0 && tb_fbmc_tail(NULL) == 0, "NULL queries", 0, 0,
          TB_FLOAT64);
    tb_fbmc_plan_destroy(NULL);
    if (tb_fbmc_plan_create(16, 4, TB_FLOAT64, h, &p) != TB_OK) {
        check(0, "plan for the error checks", 16, 4, TB_FLOAT64);
        return;
    }
    check(tb_fbmc_workspace_size(p) <= sizeof(work_d), "workspace fits the test", 16, 4,
          TB_FLOAT64);
    check(tb_fbmc_synthesize_f32(p, 1, 1, 0, fbuf, 0, fbuf, 0, work_d) == TB_ERR_PRECISION,
          "f32 call on an f64 plan", 16, 4, TB_FLOAT64);
    check(tb_fbmc_analyze_f32(p, 1, 1, 0, fbuf, 0, 0, fbuf, 0, work_d) == TB_ERR_PRECISION,
          "f32 analyze on an f64 plan", 16, 4, TB_FLOAT64);
    check(tb_fbmc_synthesize_f64(NULL, 1, 1, 0, buf, 0, buf + 64, 0, work_d) == TB_ERR_NULL,
          "NULL plan", 16, 4, TB_FLOAT64);
    check(tb_fbmc_synthesize_f64(p, 1, 1, 0, buf, 0, buf + 64, 0, NULL) == TB_ERR_NULL,
          "NULL work", 16, 4, TB_FLOAT64);
    check(tb_fbmc_analyze_f64(p, 1, 1, 0, NULL, 0, 0, buf, 0, work_d) == TB_ERR_NULL,
          "NULL input", 16, 4, TB_FLOAT64);
    check(tb_fbmc_analyze_f64(p, 1, 1, 0, buf, 0, 2, buf + 512, 0, work_d) == TB_ERR_ARG,
          "separate = 2", 16, 4, TB_FLOAT64);
    check(tb_fbmc_synthesize_f64(p, 2, 1, 0, buf, 16, buf + 64, 0, work_d) == TB_ERR_ARG,
          "output batch stride 0", 16, 4, TB_FLOAT64);
    check(tb_fbmc_synthesize_f64(p, 1, 1, 0, buf, 0, (double *)((char *)buf + 4), 0,
                                 work_d) == TB_ERR_ARG,
          "misaligned output", 16, 4, TB_FLOAT64);
    check(tb_fbmc_synthesize_f64(p, 0, 1, 0, buf, 0, buf + 64, 0, work_d) == TB_OK,
          "batch 0 is a no-op", 16, 4, TB_FLOAT64);
    /* Zero symbols: the output is the tail, all zeros. */
    for (i = 0; i < 2 * 56; i++)
        buf[64 + i] = 1.0;
    check(tb_fbmc_synthesize_f64(p, 1, 0, 0, buf, 0, buf + 64, 0, work_d) == TB_OK,
          "zero symbols", 16, 4, TB_FLOAT64);
    {
        int zero = 1;
        for (i = 0; i < 2 * 56; i++)
            zero &= buf[64 + i] == 0.0;
        check(zero, "zero symbols write the tail as zeros", 16, 4, TB_FLOAT64);
    }
    tb_fbmc_plan_destroy(p);
}

/* Synthesis is linear and each symbol's pulses depend only on its index
 * (the signal model in tonebank.h), so a burst of ns symbols equals the
 * sum of the ns one-symbol bursts of its symbols, symbol s sent alone
 * with start_symbol = start + s and placed s*m samples in.  One-symbol
 * bursts never reach the kernel's chunked path (every output half period
 * of them lacks some tap), so this checks the chunking -- bursts shorter
 * and longer than a chunk, chunk boundaries, batch rows, both start
 * parities -- at sizes where the term-by-term model of check_config would
 * be slow.  Tolerance: check_config's, doubled (two computations). */
static void check_superposition(size_t m, size_t kk, int prec, size_t batch, size_t ns,
                                size_t start)
{
    const size_t rs = prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
    const size_t taps = kk * m, tail = taps - m / 2, len = ns * m + tail, one = m + tail;
    const double eps = prec == TB_FLOAT32 ? FLT_EPSILON : DBL_EPSILON;
    double *h = (double *)xmalloc(taps * sizeof(double)), hmax = 0, rowmax = 0, tol, err = 0;
    long double *sum = (long double *)xmalloc(2 * len * sizeof(long double));
    void *grid = xmalloc(2 * batch * ns * m * rs), *out = xmalloc(2 * batch * len * rs);
    void *part = xmalloc(2 * one * rs), *work;
    tb_fbmc_plan *plan = NULL;
    size_t q, s, l, i;
    int st = TB_OK;

    prototype(m, kk, h);
    for (l = 0; l < taps; l++)
        hmax = fabs(h[l]) > hmax ? fabs(h[l]) : hmax;
    for (i = 0; i < 2 * batch * ns * m; i++)
        put(prec, grid, i, rnd());
    for (q = 0; q < batch * ns; q++) {
        double norm = 0;
        for (i = 0; i < 2 * m; i++)
            norm += get(prec, grid, 2 * q * m + i) * get(prec, grid, 2 * q * m + i);
        rowmax = sqrt(norm) > rowmax ? sqrt(norm) : rowmax;
    }
    tol = 8 * eps * (log2((double)m) + 4.0 * (double)kk) * rowmax * 2.0 * (double)kk * hmax;
    if (tb_fbmc_plan_create(m, kk, prec, h, &plan) != TB_OK) {
        check(0, "plan for the superposition check", m, kk, prec);
        return;
    }
    work = xmalloc(tb_fbmc_workspace_size(plan));
    if (prec == TB_FLOAT32)
        st |= tb_fbmc_synthesize_f32(plan, batch, ns, start, (const float *)grid,
                                     (ptrdiff_t)(ns * m), (float *)out, (ptrdiff_t)len, work);
    else
        st |= tb_fbmc_synthesize_f64(plan, batch, ns, start, (const double *)grid,
                                     (ptrdiff_t)(ns * m), (double *)out, (ptrdiff_t)len, work);
    for (q = 0; q < batch; q++) {
        memset(sum, 0, 2 * len * sizeof(long double));
        for (s = 0; s < ns; s++) {
            const size_t row = 2 * (q * ns + s) * m;
            if (prec == TB_FLOAT32)
                st |= tb_fbmc_synthesize_f32(plan, 1, 1, start + s, (const float *)grid + row,
                                             0, (float *)part, 0, work);
            else
                st |= tb_fbmc_synthesize_f64(plan, 1, 1, start + s,
                                             (const double *)grid + row, 0, (double *)part, 0,
                                             work);
            for (i = 0; i < 2 * one; i++)
                sum[2 * s * m + i] += get(prec, part, i);
        }
        for (l = 0; l < len; l++) {
            const double dr = get(prec, out, 2 * (q * len + l)) - (double)sum[2 * l];
            const double di = get(prec, out, 2 * (q * len + l) + 1) - (double)sum[2 * l + 1];
            const double e = sqrt(dr * dr + di * di);
            err = e > err ? e : err;
        }
    }
    check(st == TB_OK, "synthesize status (superposition)", m, kk, prec);
    if (err > tol)
        printf("  ns=%zu batch=%zu start=%zu: error %.3g > %.3g\n", ns, batch, start, err, tol);
    check(err <= tol, "a burst is the sum of its one-symbol bursts", m, kk, prec);
    tb_fbmc_plan_destroy(plan);
    free(h);
    free(sum);
    free(grid);
    free(out);
    free(part);
    free(work);
}

int main(void)
{
    static const size_t sizes[] = {8, 12, 16, 64, 256};
    size_t i, k;
    int prec;
    for (prec = TB_FLOAT32; prec <= TB_FLOAT64; prec++)
        for (i = 0; i < sizeof(sizes) / sizeof(sizes[0]); i++)
            for (k = 1; k <= 4; k++) { /* K = 1, 2: the first-reach stores at both ends */
                check_config(sizes[i], k, prec, 2, sizes[i] > 64 ? 3 : 5, k == 3 ? 1 : 0);
                check_config(sizes[i], k, prec, 1, 1, 2);
            }
    /* The chunked synthesis (tb_fbmc.c: 4 to 32 symbols per chunk, about
     * 256 KiB of rows): against the model across chunk boundaries at small
     * m (32 symbols per chunk) and for K = 5, 6 (tap groups) and 25 (more
     * taps than the kernels' row table: the slow path throughout) ... */
    for (prec = TB_FLOAT32; prec <= TB_FLOAT64; prec++) {
        check_config(16, 4, prec, 1, 70, 1);
        check_config(12, 3, prec, 2, 33, 0);
        check_config(16, 5, prec, 2, 9, 1);
        check_config(16, 6, prec, 1, 9, 0);
        check_config(8, 25, prec, 1, 3, 1);
    }
    /* ... and by superposition where the model is slow: 1024 subcarriers
     * (chunks of 4 symbols in float64, 12 in float32) and 4096 (4). */
    for (prec = TB_FLOAT32; prec <= TB_FLOAT64; prec++) {
        static const size_t counts[] = {1, 3, 4, 5, 9, 12, 13, 25};
        for (i = 0; i < sizeof(counts) / sizeof(counts[0]); i++)
            check_superposition(1024, 4, prec, 2, counts[i], i & 1);
        for (k = 1; k <= 5; k++)
            check_superposition(1024, k, prec, 1, 9, k & 1);
        check_superposition(4096, 4, prec, 1, 9, 1);
        check_superposition(64, 4, prec, 2, 65, 0);
    }
    check_errors();
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed > 0;
}
