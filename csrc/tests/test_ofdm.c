/*
 * test_ofdm.c -- standalone test of the fused OFDM operations (no Python).
 *
 * Build and run:  make -C csrc test      (sanitizers on)
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Reference: the definition of OFDM symbol synthesis -- place the values
 * on their bins of an otherwise zero spectrum, inverse DFT, prepend the
 * last cp samples -- with the inverse DFT evaluated naively in long
 * double ("naive DFT in long double, definition of the DFT").  Bodies
 * are compared with the error bound of test_fft.c,
 *
 *     max |y - ref| <= C * eps * log2(n) * ||X||_2 * |scale|,  C = 4
 *
 * (see there for where the form comes from); prefixes must be exact
 * copies of the body's tail, output gaps between signals untouched, and
 * analysis must return the placed values within the same bound.  Groups
 * of eight symbols (the lane engine, n <= 64) must give bit-identical
 * results to one symbol at a time.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"
#define TB_TEST_SEED 0x2545F4914F6CDD1Du
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

static int synth(int prec, const tb_ofdm_plan *p, size_t batch, size_t ns, const size_t *cp,
                 const void *a, ptrdiff_t abs_, ptrdiff_t ass, const void *b, ptrdiff_t bbs,
                 ptrdiff_t bss, void *out, ptrdiff_t obs, double scale, void *work)
{
    if (prec == TB_FLOAT32)
        return tb_ofdm_synthesize_f32(p, batch, ns, cp, (const float *)a, abs_, ass,
                                      (const float *)b, bbs, bss, (float *)out, obs,
                                      (float)scale, work);
    return tb_ofdm_synthesize_f64(p, batch, ns, cp, (const double *)a, abs_, ass,
                                  (const double *)b, bbs, bss, (double *)out, obs, scale,
                                  work);
}

static int analyze(int prec, const tb_ofdm_plan *p, size_t batch, size_t ns, const size_t *cp,
                   const void *in, ptrdiff_t ibs, void *a, ptrdiff_t abs_, ptrdiff_t ass,
                   void *b, ptrdiff_t bbs, ptrdiff_t bss, double scale, void *work)
{
    if (prec == TB_FLOAT32)
        return tb_ofdm_analyze_f32(p, batch, ns, cp, (const float *)in, ibs, (float *)a, abs_,
                                   ass, (float *)b, bbs, bss, (float)scale, work);
    return tb_ofdm_analyze_f64(p, batch, ns, cp, (const double *)in, ibs, (double *)a, abs_,
                               ass, (double *)b, bbs, bss, scale, work);
}

/* n_a + n_b distinct positions in [0, n), pseudo-random order. */
static void pick_bins(size_t n, size_t n_a, size_t n_b, size_t *bins)
{
    size_t *perm = (size_t *)xmalloc(n * sizeof(size_t));
    size_t i;
    for (i = 0; i < n; i++)
        perm[i] = i;
    for (i = n; i > 1; i--) {
        size_t j = (size_t)((rnd() + 1.0) * 0.5 * (double)i);
        size_t t = perm[i - 1];
        if (j >= i)
            j = i - 1;
        perm[i - 1] = perm[j];
        perm[j] = t;
    }
    memcpy(bins, perm, (n_a + n_b) * sizeof(size_t));
    free(perm);
}

/*
 * One configuration: batch signals of ns symbols with the prefix pattern
 * cp; source a on n_a bins, source b (the same for every signal, symbol
 * stride given, batch stride 0) on n_b bins.
 */
static void check_config(size_t n, int prec, size_t batch, size_t ns, size_t n_a, size_t n_b)
{
    const double scale = 1.0 / sqrt((double)n);
    const double eps = prec == TB_FLOAT32 ? FLT_EPSILON : DBL_EPSILON;
    const double lg = n > 2 ? log2((double)n) : 1.0;
    const size_t rs = rsize(prec);
    size_t *bins = (size_t *)xmalloc((n_a + n_b + 1) * sizeof(size_t));
    size_t *cp = (size_t *)xmalloc((ns + 1) * sizeof(size_t));
    size_t len = 0, s, q, k, j;
    tb_ofdm_plan *p = NULL;
    void *a, *b, *out, *out1, *work, *ga, *gb, *ga1;
    long double *ref, *wt;
    ptrdiff_t obs;
    int ok_prefix = 1, ok_body = 1, ok_gap = 1, ok_back = 1, ok_bits = 1, st;
    double worst = 0.0;

    pick_bins(n, n_a, n_b, bins);
    for (s = 0; s < ns; s++) {
        /* A longer prefix every third symbol, as in patterned numerologies;
         * for small n the whole range up to cp == n is exercised. */
        cp[s] = (s % 3 == 0) ? n / 4 + 1 : n / 8;
        if (cp[s] > n)
            cp[s] = n;
        len += n + cp[s];
    }
    obs = (ptrdiff_t)len + 3; /* a gap of 3 samples between signals */
    st = tb_ofdm_plan_create(n, prec, n_a, bins, n_b, n_b ? bins + n_a : NULL, &p);
    check(st == TB_OK, "plan create", n, prec);
    if (st != TB_OK)
        return;

    a = xmalloc(2 * batch * ns * n_a * rs);
    b = xmalloc(2 * ns * n_b * rs);
    out = xmalloc(2 * batch * (size_t)obs * rs);
    out1 = xmalloc(2 * batch * (size_t)obs * rs);
    ga = xmalloc(2 * batch * ns * n_a * rs);
    ga1 = xmalloc(2 * batch * ns * n_a * rs);
    gb = xmalloc(2 * batch * ns * n_b * rs);
    work = xmalloc(tb_ofdm_workspace_size(p));
    ref = (long double *)xmalloc(2 * n * sizeof(long double));
    wt = (long double *)xmalloc(2 * n * sizeof(long double));
    for (k = 0; k < n; k++) { /* exp(+2 pi i k / n) from the full angle */
        const long double ang = 2.0L * 3.141592653589793238462643383279502884L *
                                (long double)k / (long double)n;
        wt[2 * k] = cosl(ang);
        wt[2 * k + 1] = sinl(ang);
    }
    for (k = 0; k < 2 * batch * ns * n_a; k++)
        put(prec, a, k, rnd());
    for (k = 0; k < 2 * ns * n_b; k++)
        put(prec, b, k, rnd());
    for (k = 0; k < 2 * batch * (size_t)obs; k++) {
        put(prec, out, k, 1234.5);
        put(prec, out1, k, 1234.5);
    }

    st = synth(prec, p, batch, ns, cp, a, (ptrdiff_t)(ns * n_a), (ptrdiff_t)n_a, b, 0,
               (ptrdiff_t)n_b, out, obs, scale, work);
    check(st == TB_OK, "synthesize status", n, prec);

    /* One symbol per call must give the same bits (lanes vs rows). */
    for (q = 0; q < batch; q++) {
        size_t off = 0;
        for (s = 0; s < ns; s++) {
            const size_t ai = 2 * (q * ns + s) * n_a, bi = 2 * s * n_b;
            const size_t oi = 2 * (q * (size_t)obs + off);
            st = synth(prec, p, 1, 1, cp + s, (const char *)a + ai * rs, 0, 0,
                       n_b ? (const char *)b + bi * rs : NULL, 0, 0, (char *)out1 + oi * rs,
                       0, scale, work);
            off += n + cp[s];
        }
    }
    for (k = 0; k < 2 * batch * (size_t)obs; k++)
        if (get(prec, out, k) != get(prec, out1, k))
            ok_bits = 0;

    for (q = 0; q < batch; q++) {
        size_t off = 0;
        for (s = 0; s < ns; s++) {
            const size_t base = 2 * (q * (size_t)obs + off);
            double norm2 = 0.0;
            /* Reference body: naive inverse DFT of the placed values. */
            for (j = 0; j < n; j++) {
                long double sr = 0, si = 0;
                for (k = 0; k < n_a + n_b; k++) {
                    const size_t pos = bins[k];
                    const size_t vi = k < n_a ? 2 * ((q * ns + s) * n_a + k)
                                              : 2 * (s * n_b + (k - n_a));
                    const void *src = k < n_a ? a : b;
                    const long double xr = get(prec, src, vi), xi = get(prec, src, vi + 1);
                    const size_t t = (pos * j) % n;
                    const long double c = wt[2 * t], sn = wt[2 * t + 1];
                    sr += xr * c - xi * sn;
                    si += xr * sn + xi * c;
                    if (j == 0)
                        norm2 += (double)(xr * xr + xi * xi);
                }
                ref[2 * j] = sr;
                ref[2 * j + 1] = si;
            }
            for (j = 0; j < n; j++) {
                const size_t bi = base + 2 * (cp[s] + j);
                const double er = get(prec, out, bi) - (double)(ref[2 * j] * scale);
                const double ei = get(prec, out, bi + 1) - (double)(ref[2 * j + 1] * scale);
                const double e = sqrt(er * er + ei * ei);
                const double bound = 4.0 * eps * lg * sqrt(norm2) * scale + 1e-300;
                if (e > bound)
                    ok_body = 0;
                if (e / bound > worst)
                    worst = e / bound;
            }
            for (j = 0; j < cp[s]; j++) {
                const size_t ci = base + 2 * j, ti = base + 2 * (n + j);
                if (get(prec, out, ci) != get(prec, out, ti) ||
                    get(prec, out, ci + 1) != get(prec, out, ti + 1))
                    ok_prefix = 0;
            }
            off += n + cp[s];
        }
        for (j = 2 * len; j < 2 * (size_t)obs; j++)
            if (get(prec, out, 2 * q * (size_t)obs + j) != 1234.5)
                ok_gap = 0;
    }
    check(ok_body, "body matches the naive inverse DFT", n, prec);
    check(ok_prefix, "prefix is the body's tail", n, prec);
    check(ok_gap, "nothing written between signals", n, prec);
    check(ok_bits, "groups of symbols equal one symbol at a time, bit for bit", n, prec);

    /* Analysis: back to the placed values (scale 1/sqrt(n) both ways). */
    st = analyze(prec, p, batch, ns, cp, out, obs, ga, (ptrdiff_t)(ns * n_a), (ptrdiff_t)n_a,
                 n_b ? gb : NULL, (ptrdiff_t)(ns * n_b), (ptrdiff_t)n_b, scale, work);
    check(st == TB_OK, "analyze status", n, prec);
    for (q = 0; q < batch; q++)
        for (s = 0; s < ns; s++) {
            double norm2 = 0.0, emax = 0.0;
            for (k = 0; k < n_a; k++) {
                const size_t i = 2 * ((q * ns + s) * n_a + k);
                const double dr = get(prec, ga, i) - get(prec, a, i);
                const double di = get(prec, ga, i + 1) - get(prec, a, i + 1);
                norm2 += get(prec, a, i) * get(prec, a, i) + get(prec, a, i + 1) * get(prec, a, i + 1);
                emax = fmax(emax, sqrt(dr * dr + di * di));
            }
            for (k = 0; k < n_b; k++) {
                const size_t i = 2 * ((q * ns + s) * n_b + k), bi = 2 * (s * n_b + k);
                const double dr = get(prec, gb, i) - get(prec, b, bi);
                const double di = get(prec, gb, i + 1) - get(prec, b, bi + 1);
                norm2 += get(prec, b, bi) * get(prec, b, bi) + get(prec, b, bi + 1) * get(prec, b, bi + 1);
                emax = fmax(emax, sqrt(dr * dr + di * di));
            }
            /* Two transforms: twice the single-transform bound. */
            if (emax > 8.0 * eps * lg * sqrt(norm2) + 1e-300)
                ok_back = 0;
        }
    check(ok_back, "analysis returns the synthesized values", n, prec);

    /* Analysis one symbol per call: bit-identical to the batch. */
    ok_bits = 1;
    for (q = 0; q < batch; q++) {
        size_t off = 0;
        for (s = 0; s < ns; s++) {
            const size_t oi = 2 * (q * (size_t)obs + off), ai = 2 * (q * ns + s) * n_a;
            analyze(prec, p, 1, 1, cp + s, (const char *)out + oi * rs, 0,
                    (char *)ga1 + ai * rs, 0, 0, NULL, 0, 0, scale, work);
            off += n + cp[s];
        }
    }
    for (k = 0; k < 2 * batch * ns * n_a; k++)
        if (get(prec, ga, k) != get(prec, ga1, k))
            ok_bits = 0;
    check(ok_bits, "analysis: groups equal one symbol at a time, bit for bit", n, prec);

    tb_ofdm_plan_destroy(p);
    free(bins);
    free(cp);
    free(a);
    free(b);
    free(out);
    free(out1);
    free(ga);
    free(ga1);
    free(gb);
    free(work);
    free(ref);
    free(wt);
}

static void check_errors(void)
{
    size_t bins[4] = {1, 2, 3, 3}, cp_ok[1] = {4}, cp_bad[1] = {17};
    tb_ofdm_plan *p = NULL;
    double a[8] = {0}, out[64], g[8];
    void *work;

    check(tb_ofdm_plan_create(16, TB_FLOAT64, 2, bins, 2, bins + 2, &p) == TB_ERR_ARG && !p,
          "repeated bin rejected", 16, TB_FLOAT64);
    bins[3] = 16;
    check(tb_ofdm_plan_create(16, TB_FLOAT64, 2, bins, 2, bins + 2, &p) == TB_ERR_ARG,
          "bin out of range rejected", 16, TB_FLOAT64);
    check(tb_ofdm_plan_create(7, TB_FLOAT64, 2, bins, 0, NULL, &p) == TB_ERR_SIZE,
          "unsupported size rejected", 7, TB_FLOAT64);
    check(tb_ofdm_plan_create(16, 9, 2, bins, 0, NULL, &p) == TB_ERR_PRECISION,
          "unknown precision rejected", 16, TB_FLOAT64);
    check(tb_ofdm_plan_create(16, TB_FLOAT64, 2, NULL, 0, NULL, &p) == TB_ERR_NULL,
          "NULL table rejected", 16, TB_FLOAT64);
    check(tb_ofdm_plan_create(16, TB_FLOAT64, 2, bins, 0, NULL, NULL) == TB_ERR_NULL,
          "NULL plan_out rejected", 16, TB_FLOAT64);
    check(tb_ofdm_plan_create(16, TB_FLOAT64, 2, bins, 0, NULL, &p) == TB_OK,
          "valid plan", 16, TB_FLOAT64);
    work = xmalloc(tb_ofdm_workspace_size(p));
    check(tb_ofdm_synthesize_f64(p, 1, 1, cp_bad, a, 0, 0, NULL, 0, 0, out, 0, 1.0, work) ==
              TB_ERR_ARG,
          "prefix longer than n rejected", 16, TB_FLOAT64);
    check(tb_ofdm_synthesize_f32(p, 1, 1, cp_ok, (const float *)a, 0, 0, NULL, 0, 0,
                                 (float *)out, 0, 1.0f, work) == TB_ERR_PRECISION,
          "precision mismatch rejected", 16, TB_FLOAT64);
    check(tb_ofdm_synthesize_f64(p, 1, 1, cp_ok, NULL, 0, 0, NULL, 0, 0, out, 0, 1.0, work) ==
              TB_ERR_NULL,
          "NULL input rejected", 16, TB_FLOAT64);
    check(tb_ofdm_analyze_f64(p, 2, 1, cp_ok, out, 20, g, 0, 2, NULL, 0, 0, 1.0, work) ==
              TB_ERR_ARG,
          "analysis output stride 0 rejected", 16, TB_FLOAT64);
    check(tb_ofdm_synthesize_f64(p, 0, 1, cp_ok, a, 0, 0, NULL, 0, 0, out, 0, 1.0, work) ==
              TB_OK,
          "empty batch is a no-op", 16, TB_FLOAT64);
    check(tb_ofdm_workspace_size(NULL) == 0, "workspace of NULL plan", 16, TB_FLOAT64);
    tb_ofdm_plan_destroy(p);
    tb_ofdm_plan_destroy(NULL);
    free(work);
}

int main(void)
{
    static const size_t sizes[] = {1, 2, 4, 8, 12, 16, 24, 40, 48, 64, 80, 96, 128, 1536, 2048};
    size_t i;
    int prec;
    for (prec = TB_FLOAT32; prec <= TB_FLOAT64; prec++)
        for (i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
            const size_t n = sizes[i];
            const size_t n_b = n >= 8 ? n / 8 : 0;
            const size_t n_a = n >= 8 ? n - n / 4 - n_b : n;
            check_config(n, prec, 1, 1, n_a, n_b);
            /* 33 symbols: lane groups and the rest; the naive reference costs
             * n * n_used per symbol, so the large sizes get fewer symbols. */
            check_config(n, prec, n <= 128 ? 3 : 1, n <= 128 ? 11 : 3, n_a, n_b);
            check_config(n, prec, 2, n <= 128 ? 8 : 1, n, 0); /* every bin, one source */
        }
    check_errors();
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed > 0;
}
