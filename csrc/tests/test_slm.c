/*
 * test_slm.c -- standalone test of the fused selective mapping (no Python).
 *
 * Build and run:  make -C csrc test      (sanitizers on)
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Reference: the definition of the operation -- multiply the grid by
 * each phase sequence, place bin k at position k (k < n - n/2) or
 * k + m - n (above), inverse DFT of m points evaluated naively in long
 * double ("naive DFT in long double, definition of the DFT"), peak power
 * max |c|^2, lowest peak wins.  Samples are compared with the bound of
 * test_fft.c,
 *
 *     max |y - ref| <= C * eps * log2(m) * ||X||_2 * |scale|,  C = 4
 *
 * (see there for where the form comes from).  Candidates are random, so
 * their peaks differ by far more than rounding except where a test
 * builds exact ties on purpose (equal or negated phase sequences), where
 * the lowest index must win.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"
#include "tb_test.h"

static void check(int ok, const char *what, size_t n, size_t m, int prec)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL: %s (n=%zu, m=%zu, %s)\n", what, n, m,
               prec == TB_FLOAT32 ? "f32" : "f64");
    }
}

static int run(int prec, const tb_slm_plan *p, size_t ns, size_t nc, const void *g,
               ptrdiff_t gs, const void *ph, ptrdiff_t ps, void *out, ptrdiff_t os,
               size_t *index, double *peak, double scale, double margin, void *work)
{
    if (prec == TB_FLOAT32)
        return tb_slm_select_f32(p, ns, nc, (const float *)g, gs, (const float *)ph, ps,
                                 (float *)out, os, index, peak, (float)scale, margin, work);
    return tb_slm_select_f64(p, ns, nc, (const double *)g, gs, (const double *)ph, ps,
                             (double *)out, os, index, peak, scale, margin, work);
}

/* Naive candidate u of symbol s into ref (2 m long doubles); returns its peak. */
static long double reference(int prec, size_t n, size_t m, const void *g, const void *ph,
                             long double scale, long double *ref)
{
    const long double two_pi = 6.283185307179586476925286766559L;
    const size_t h = n - n / 2;
    long double pk = 0;
    size_t j, k;
    for (j = 0; j < m; j++) {
        long double re = 0, im = 0;
        for (k = 0; k < n; k++) {
            const size_t pos = k < h ? k : k + m - n;
            const long double gr = get(prec, g, 2 * k), gi = get(prec, g, 2 * k + 1);
            const long double pr = get(prec, ph, 2 * k), pi = get(prec, ph, 2 * k + 1);
            const long double xr = gr * pr - gi * pi, xi = gr * pi + gi * pr;
            const long double a = two_pi * (long double)((j * pos) % m) / (long double)m;
            re += xr * cosl(a) - xi * sinl(a);
            im += xr * sinl(a) + xi * cosl(a);
        }
        ref[2 * j] = scale * re;
        ref[2 * j + 1] = scale * im;
        if (ref[2 * j] * ref[2 * j] + ref[2 * j + 1] * ref[2 * j + 1] > pk)
            pk = ref[2 * j] * ref[2 * j] + ref[2 * j + 1] * ref[2 * j + 1];
    }
    return pk;
}

/* Random grids and unit-modulus phases; candidate 0 is all ones.  With
 * `ties`, candidate 2 repeats candidate 0 and candidate 3 is its
 * negative (exactly equal peaks). */
static void check_config(size_t n, size_t m, int prec, size_t ns, size_t nc, int ties)
{
    const size_t rs = rsize(prec);
    const double eps = prec == TB_FLOAT32 ? FLT_EPSILON : DBL_EPSILON;
    const double scale = 1.0 / sqrt((double)m);
    /* the margin the Python layer uses: well above rounding of each precision */
    const double margin = prec == TB_FLOAT32 ? 1e-5 : 1e-9;
    tb_slm_plan *p = NULL;
    void *g = xmalloc(2 * n * ns * rs), *ph = xmalloc(2 * n * nc * rs);
    void *out = xmalloc(2 * m * ns * rs), *work;
    size_t *index = (size_t *)xmalloc(ns * sizeof(size_t));
    double *peak = (double *)xmalloc(ns * sizeof(double));
    long double *ref = (long double *)xmalloc(2 * m * sizeof(long double));
    long double *bestref = (long double *)xmalloc(2 * m * sizeof(long double));
    size_t s, u, i, k;
    int st = tb_slm_plan_create(n, m, prec, &p);
    check(st == TB_OK, "plan create", n, m, prec);
    if (st != TB_OK)
        return;
    work = xmalloc(tb_slm_workspace_size(p));
    for (i = 0; i < 2 * n * ns; i++)
        put(prec, g, i, rnd());
    for (u = 0; u < nc; u++)
        for (k = 0; k < n; k++) {
            const double a = 3.141592653589793 * rnd();
            double re = u == 0 ? 1.0 : cos(a), im = u == 0 ? 0.0 : sin(a);
            if (ties && (u == 2 || u == 3)) {
                re = u == 2 ? 1.0 : -1.0;
                im = 0.0;
            }
            put(prec, ph, 2 * (u * n + k), re);
            put(prec, ph, 2 * (u * n + k) + 1, im);
        }
    st = run(prec, p, ns, nc, g, (ptrdiff_t)n, ph, (ptrdiff_t)n, out, (ptrdiff_t)m, index,
             peak, scale, margin, work);
    check(st == TB_OK, "select status", n, m, prec);
    for (s = 0; s < ns && st == TB_OK; s++) {
        const void *gs = (const char *)g + 2 * s * n * rs;
        long double best = -1, norm = 0;
        size_t win = 0;
        double err = 0;
        for (u = 0; u < nc; u++) {
            const long double pk = reference(prec, n, m, gs, (const char *)ph + 2 * u * n * rs,
                                             scale, ref);
            /* strictly lower wins: the reference's ties go to the lowest index */
            if (u == 0 || pk < best * (1 - (long double)margin)) {
                best = pk;
                win = u;
                memcpy(bestref, ref, 2 * m * sizeof(long double));
            }
        }
        for (k = 0; k < 2 * n; k++) {
            const long double v = get(prec, gs, k);
            norm += v * v;
        }
        for (i = 0; i < 2 * m; i++) {
            const double d = fabs((double)(get(prec, out, 2 * s * m + i) - bestref[i]));
            if (d > err)
                err = d;
        }
        check(index[s] == win, "winner is the lowest peak (lowest index on ties)", n, m,
              prec);
        check(err <= 4 * eps * (log2((double)m) + 1) * sqrt((double)norm) * scale,
              "winner samples within the FFT bound", n, m, prec);
        check(fabs(peak[s] - (double)best) <= 16 * eps * (log2((double)m) + 1) * (double)best
                  + 1e-300,
              "peak power", n, m, prec);
    }
    free(g);
    free(ph);
    free(out);
    free(work);
    free(index);
    free(peak);
    free(ref);
    free(bestref);
    tb_slm_plan_destroy(p);
}

static void check_errors(void)
{
    tb_slm_plan *p = NULL, *p32 = NULL;
    double g[16] = {0}, ph[16] = {0}, out[64], peak[2];
    size_t index[2];
    void *work;
    check(tb_slm_plan_create(4, 16, TB_FLOAT64, NULL) == TB_ERR_NULL, "NULL plan_out", 4, 16,
          TB_FLOAT64);
    check(tb_slm_plan_create(4, 16, 7, &p) == TB_ERR_PRECISION && p == NULL, "precision", 4,
          16, TB_FLOAT64);
    check(tb_slm_plan_create(4, 14, TB_FLOAT64, &p) == TB_ERR_ARG, "m not a multiple of n",
          4, 14, TB_FLOAT64);
    check(tb_slm_plan_create(7, 14, TB_FLOAT64, &p) == TB_ERR_SIZE, "n = 7 unsupported", 7,
          14, TB_FLOAT64);
    check(tb_slm_plan_create(1024, 2 * TB_FFT_MAX_SIZE, TB_FLOAT64, &p) == TB_ERR_SIZE,
          "m too large", 1024, 2 * TB_FFT_MAX_SIZE, TB_FLOAT64);
    check(tb_slm_plan_create(0, 16, TB_FLOAT64, &p) == TB_ERR_ARG, "n = 0", 0, 16,
          TB_FLOAT64);
    check(tb_slm_plan_create(32, 16, TB_FLOAT64, &p) == TB_ERR_ARG, "n > m", 32, 16,
          TB_FLOAT64);
    check(tb_slm_workspace_size(NULL) == 0, "workspace of NULL", 0, 0, TB_FLOAT64);
    tb_slm_plan_destroy(NULL);
    if (tb_slm_plan_create(4, 16, TB_FLOAT64, &p) != TB_OK ||
        tb_slm_plan_create(4, 16, TB_FLOAT32, &p32) != TB_OK) {
        check(0, "plan for error checks", 4, 16, TB_FLOAT64);
        return;
    }
    work = xmalloc(tb_slm_workspace_size(p));
    out[0] = 123.0;
    check(tb_slm_select_f64(NULL, 1, 1, g, 4, ph, 4, out, 16, index, peak, 1, 0, work) ==
              TB_ERR_NULL, "NULL plan", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 1, 1, g, 4, ph, 4, out, 16, index, NULL, 1, 0, work) ==
              TB_ERR_NULL, "NULL peak", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 1, 1, g, 4, ph, 4, out, 16, index, peak, 1, 0, NULL) ==
              TB_ERR_NULL, "NULL work", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p32, 1, 1, g, 4, ph, 4, out, 16, index, peak, 1, 0, work) ==
              TB_ERR_PRECISION, "precision mismatch", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 1, 0, g, 4, ph, 4, out, 16, index, peak, 1, 0, work) ==
              TB_ERR_ARG, "no candidates", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 2, 1, g, 4, ph, 4, out, 0, index, peak, 1, 0, work) ==
              TB_ERR_ARG, "zero out stride", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 1, 1, g, 4, ph, 4, out, 16, index, peak, 1, 1.0, work) ==
              TB_ERR_ARG, "margin 1", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 1, 1, g, 4, ph, 4, out, 16, index, peak, 1, NAN, work) ==
              TB_ERR_ARG, "margin NaN", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 1, 1, (const double *)((const char *)g + 1), 4, ph, 4, out,
                            16, index, peak, 1, 0, work) == TB_ERR_ARG,
          "misaligned grid", 4, 16, TB_FLOAT64);
    check(out[0] == 123.0, "nothing written on error", 4, 16, TB_FLOAT64);
    check(tb_slm_select_f64(p, 0, 1, g, 4, ph, 4, out, 16, index, peak, 1, 0, work) == TB_OK,
          "zero symbols", 4, 16, TB_FLOAT64);
    /* Shared rows (strides 0): every symbol the same grid, every candidate
     * the same phases: all peaks tie, candidate 0 wins. */
    g[0] = 1.0;
    g[3] = -0.5;
    ph[0] = ph[2] = ph[4] = ph[6] = 1.0;
    check(tb_slm_select_f64(p, 2, 3, g, 0, ph, 0, out, 16, index, peak, 1, 0, work) ==
              TB_OK && index[0] == 0 && index[1] == 0,
          "strides 0, ties to index 0", 4, 16, TB_FLOAT64);
    free(work);
    tb_slm_plan_destroy(p);
    tb_slm_plan_destroy(p32);
}

int main(void)
{
    static const size_t cfg[][2] = {{1, 1},   {1, 4},    {4, 4},    {5, 20},   {8, 32},
                                    {12, 48}, {16, 64},  {50, 100}, {60, 240}, {64, 256},
                                    {15, 105}, {128, 512}};
    size_t i;
    int prec;
    for (prec = TB_FLOAT32; prec <= TB_FLOAT64; prec++)
        for (i = 0; i < sizeof cfg / sizeof cfg[0]; i++) {
            check_config(cfg[i][0], cfg[i][1], prec, 3, 6, 0);
            if (cfg[i][0] >= 4)
                check_config(cfg[i][0], cfg[i][1], prec, 2, 5, 1);
        }
    check_errors();
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed > 0;
}
