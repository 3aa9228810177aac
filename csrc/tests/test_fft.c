/*
 * test_fft.c -- standalone test of the tonebank C FFT (no Python).
 *
 * Build and run:  make -C csrc test      (sanitizers on)
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Kernel builds: the kernel is linked in twice (see kernel_api below):
 * as built for the machine (on x86-64 its plans use AVX2 copies of the
 * kernels when the CPU has AVX2) and the portable plain-C build.  Every
 * check runs on both, and their outputs must agree to the bit.
 *
 * Reference
 * ---------
 * Every transform is compared with the definition of the DFT,
 *
 *     X[k] = sum_{j=0}^{n-1} x[j] exp(-2 pi i j k / n)        (forward)
 *
 * evaluated naively in long double ("naive DFT in long double,
 * definition of the DFT").  The reference twiddles exp(-2 pi i t / n),
 * t = j*k mod n, come from cosl/sinl of the full angle, independently of
 * the kernel's octant reduction.  Sums are accumulated in blocks of 64
 * terms so the reference's own rounding error stays ~(64 + n/64) times
 * the long double epsilon, far below the float64 tolerance (on targets
 * whose long double is just double, the check is weaker but still
 * meaningful).  The inverse reference is X[(n - k) mod n] (the inverse
 * DFT is the forward DFT read backwards, same definition).
 *
 * Every supported size n <= 4096 is checked on every bin; every other
 * supported size in (4096, 65536] (and each power of two there) on 24
 * bins (0, 1, n-1, n/2 and pseudo-random ones), each bin an O(n) sum; the
 * largest sizes (2^20, 10^6, 3^12, 5^8, 3 * 2^18) on 6 bins.
 *
 * Error bound
 * -----------
 *     max_k |Y[k] - X[k]| <= C * eps * log2(n) * ||x||_2 * |scale|,  C = 4
 *
 * eps is FLT_EPSILON or DBL_EPSILON; log2(n) is taken as at least 1.
 * Where the form comes from: the standard round-off analysis of the
 * Cooley-Tukey FFT (Higham, "Accuracy and Stability of Numerical
 * Algorithms", 2nd ed., section 24.1, Theorem 24.2 -- from memory) bounds
 * the normwise error as ||Y - X||_2 <= log2(n) * eta / (1 - log2(n) eta)
 * * ||X||_2 with eta = mu + gamma_4 (sqrt 2 + mu), mu the twiddle error;
 * with twiddles correct to rounding eta is a few eps.  Since
 * ||X||_2 = sqrt(n) ||x||_2, that is a worst-case bound of a few
 * eps * log2(n) * sqrt(n) * ||x||_2 on the largest bin.  For inputs with
 * independent random entries, as here, the rounding errors of the
 * log2(n) stages add up like a random walk and the largest bin error is
 * of order eps * log2(n) * ||x||_2 without the sqrt(n) (common practice,
 * no source), so the test uses that tighter form with a safety factor.
 * C = 4 is about 7x the worst ratio measured over every size and both
 * precisions (about 0.55; the program prints the worst ratio it saw), yet
 * low enough that a twiddle rounded to float in a double plan (ratio
 * ~10^7), a wrong butterfly constant or a wrong twiddle fails.
 *
 * Threads: when built with TB_TEST_THREADS (the Makefile does this with
 * -pthread), two threads share one plan and must produce bit-identical
 * results to a single-threaded run.  Without it that check is skipped
 * and reported as skipped.
 */
#if defined(TB_TEST_THREADS)
#define _POSIX_C_SOURCE 200112L
#include <pthread.h>
#endif

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"

/* ---- the kernel builds under test ------------------------------------ */

/*
 * The kernel is linked into this test twice: the default build (on
 * x86-64 with GCC or clang its plans pick AVX2 kernels at run time when
 * the CPU has them) and, when TB_TEST_PORTABLE is defined, the portable
 * build from tests/tb_fft_portable.c (plain C kernels only, public names
 * prefixed tbport_).  Every check runs on each build; the results must
 * match the reference either way.
 */
typedef struct {
    const char *name;
    int (*size_supported)(size_t);
    int (*plan_create)(size_t, int, tb_fft_plan **);
    void (*plan_destroy)(tb_fft_plan *);
    size_t (*plan_size)(const tb_fft_plan *);
    int (*plan_precision)(const tb_fft_plan *);
    size_t (*workspace_size)(const tb_fft_plan *);
    int (*execute_f32)(const tb_fft_plan *, int, size_t, const float *, ptrdiff_t,
                       ptrdiff_t, float *, ptrdiff_t, ptrdiff_t, float, void *);
    int (*execute_f64)(const tb_fft_plan *, int, size_t, const double *, ptrdiff_t,
                       ptrdiff_t, double *, ptrdiff_t, ptrdiff_t, double, void *);
} kernel_api;

#if defined(TB_TEST_PORTABLE)
int tbport_fft_size_supported(size_t n);
int tbport_fft_plan_create(size_t n, int precision, tb_fft_plan **plan_out);
void tbport_fft_plan_destroy(tb_fft_plan *plan);
size_t tbport_fft_plan_size(const tb_fft_plan *plan);
int tbport_fft_plan_precision(const tb_fft_plan *plan);
size_t tbport_fft_workspace_size(const tb_fft_plan *plan);
const char *tbport_fft_plan_simd(const tb_fft_plan *plan);
int tbport_fft_execute_f32(const tb_fft_plan *plan, int direction, size_t batch,
                           const float *in, ptrdiff_t in_row_stride, ptrdiff_t in_stride,
                           float *out, ptrdiff_t out_row_stride, ptrdiff_t out_stride,
                           float scale, void *work);
int tbport_fft_execute_f64(const tb_fft_plan *plan, int direction, size_t batch,
                           const double *in, ptrdiff_t in_row_stride, ptrdiff_t in_stride,
                           double *out, ptrdiff_t out_row_stride, ptrdiff_t out_stride,
                           double scale, void *work);
#endif

static const kernel_api kernels[] = {
    {"default", tb_fft_size_supported, tb_fft_plan_create, tb_fft_plan_destroy,
     tb_fft_plan_size, tb_fft_plan_precision, tb_fft_workspace_size, tb_fft_execute_f32,
     tb_fft_execute_f64},
#if defined(TB_TEST_PORTABLE)
    {"portable", tbport_fft_size_supported, tbport_fft_plan_create, tbport_fft_plan_destroy,
     tbport_fft_plan_size, tbport_fft_plan_precision, tbport_fft_workspace_size,
     tbport_fft_execute_f32, tbport_fft_execute_f64},
#endif
};
#define N_KERNELS (sizeof kernels / sizeof kernels[0])

/* The build the current check runs on. */
static const kernel_api *K = &kernels[0];

/* ---- bookkeeping ---------------------------------------------------- */

static long n_passed = 0, n_failed = 0, n_skipped = 0;
static double worst_ratio[3] = {0.0, 0.0, 0.0}; /* indexed by precision */
static size_t worst_n[3] = {0, 0, 0};

static void check(int ok, const char *what, size_t n, int prec, int dir)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL [%s]: %s (n=%lu, precision=%d, direction=%d)\n", K->name, what,
               (unsigned long)n, prec, dir);
    }
}

#define CHECK_STATUS(got, want, what)                                          \
    do {                                                                       \
        int got_ = (got);                                                      \
        if (got_ == (want)) {                                                  \
            n_passed++;                                                        \
        } else {                                                               \
            n_failed++;                                                        \
            printf("FAIL [%s]: %s: got status %d (%s), want %d (line %d)\n",   \
                   K->name, what, got_, tb_strerror(got_), (want), __LINE__);  \
        }                                                                      \
    } while (0)

/* ---- deterministic input -------------------------------------------- */

static uint64_t rng_state = 0x9E3779B97F4A7C15u;

/* xorshift64*; returns a float-representable value in [-1, 1). */
static double rnd(void)
{
    uint64_t x = rng_state;
    x ^= x >> 12;
    x ^= x << 25;
    x ^= x >> 27;
    rng_state = x;
    x *= 0x2545F4914F6CDD1Du;
    return (double)(int32_t)((uint32_t)(x >> 40) - (1u << 23)) / (double)(1u << 23);
}

static void fill_random(double *x, size_t ncomplex)
{
    size_t i;
    for (i = 0; i < 2 * ncomplex; i++)
        x[i] = rnd();
}

/* ---- reference DFT in long double ------------------------------------ */

static const long double PI_L = 3.141592653589793238462643383279502884L;

/* wt[t] = exp(-2 pi i t / n), t = 0 .. n-1, from the full angle. */
static long double *ref_table(size_t n)
{
    long double *wt = (long double *)malloc(2 * n * sizeof(long double));
    size_t t;
    if (wt == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    for (t = 0; t < n; t++) {
        long double a = 2.0L * PI_L * (long double)t / (long double)n;
        wt[2 * t] = cosl(a);
        wt[2 * t + 1] = -sinl(a);
    }
    return wt;
}

/*
 * Forward DFT bin k of x (n complex doubles), summed in blocks of 64
 * terms (two interleaved partial sums, for speed).  This loop is most of
 * the test's run time, so it is left out of the address sanitizer's
 * instrumentation: it only reads x[0..n) and wt[0..n), sized by the
 * caller.
 */
#if defined(__GNUC__) || defined(__clang__)
__attribute__((no_sanitize_address))
#endif
static void ref_bin(size_t n, const double *x, const long double *wt, size_t k,
                    long double *re, long double *im)
{
    long double sr = 0, si = 0, br0 = 0, bi0 = 0, br1 = 0, bi1 = 0;
    size_t j, t = 0, cnt = 0;
    for (j = 0; j < n; j++) {
        const long double xr = x[2 * j], xi = x[2 * j + 1];
        const long double wr = wt[2 * t], wi = wt[2 * t + 1];
        if (j & 1) {
            br1 += xr * wr - xi * wi;
            bi1 += xr * wi + xi * wr;
        } else {
            br0 += xr * wr - xi * wi;
            bi0 += xr * wi + xi * wr;
        }
        if (++cnt == 64) {
            sr += br0 + br1;
            si += bi0 + bi1;
            br0 = bi0 = br1 = bi1 = 0;
            cnt = 0;
        }
        t += k;
        if (t >= n)
            t -= n;
    }
    *re = sr + (br0 + br1);
    *im = si + (bi0 + bi1);
}

/* ---- running the kernel on arbitrary layouts ------------------------- */

static double real_eps(int prec)
{
    return prec == TB_FLOAT32 ? (double)FLT_EPSILON : DBL_EPSILON;
}

static size_t real_size(int prec)
{
    return prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
}

#define SENTINEL 12345.0

/* Smallest and largest element index b*rs + j*s over the batch. */
static void extent(size_t n, size_t batch, ptrdiff_t rs, ptrdiff_t s, ptrdiff_t *lo,
                   ptrdiff_t *hi)
{
    ptrdiff_t a = 0, b = 0, last_j = (ptrdiff_t)n - 1, last_b = (ptrdiff_t)batch - 1;
    if (s * last_j < 0) a += s * last_j; else b += s * last_j;
    if (rs * last_b < 0) a += rs * last_b; else b += rs * last_b;
    *lo = a;
    *hi = b;
}

static void put(int prec, void *buf, ptrdiff_t i, double v)
{
    if (prec == TB_FLOAT32)
        ((float *)buf)[i] = (float)v;
    else
        ((double *)buf)[i] = v;
}

static double get(int prec, const void *buf, ptrdiff_t i)
{
    return prec == TB_FLOAT32 ? (double)((const float *)buf)[i] : ((const double *)buf)[i];
}

typedef struct {
    size_t batch;
    ptrdiff_t irs, is, ors, os; /* row and element strides, complex units */
    int inplace;                /* out = in, strides must match */
    double scale;
} layout;

/*
 * Run plan on x (batch rows of n complex, contiguous, as double) with the
 * given layout; y receives batch rows of n complex, contiguous.  Returns
 * the status; *guard_ok is cleared when an element outside the output
 * pattern was written or when an out-of-place input was modified.
 */
static int run_layout(const tb_fft_plan *plan, int prec, int dir, size_t n,
                      const layout *L, const double *x, double *y, int *guard_ok)
{
    ptrdiff_t ilo, ihi, olo, ohi;
    size_t isz, osz, i, b, j;
    if (L->inplace && (L->irs != L->ors || L->is != L->os)) {
        printf("test bug: in-place layout with different strides\n");
        exit(2);
    }
    unsigned char *ibuf, *obuf, *work;
    void *in, *out;
    size_t rs = real_size(prec);
    int st;

    extent(n, L->batch, L->irs, L->is, &ilo, &ihi);
    extent(n, L->batch, L->ors, L->os, &olo, &ohi);
    isz = (size_t)(ihi - ilo + 1);
    osz = (size_t)(ohi - olo + 1);
    ibuf = (unsigned char *)malloc(2 * isz * rs);
    obuf = (unsigned char *)malloc(2 * osz * rs);
    work = (unsigned char *)malloc(K->workspace_size(plan));
    if (ibuf == NULL || obuf == NULL || work == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    for (i = 0; i < 2 * isz; i++)
        put(prec, ibuf, (ptrdiff_t)i, SENTINEL);
    for (i = 0; i < 2 * osz; i++)
        put(prec, obuf, (ptrdiff_t)i, SENTINEL);
    in = ibuf + (size_t)(-ilo) * 2 * rs;
    out = L->inplace ? in : (void *)(obuf + (size_t)(-olo) * 2 * rs);
    for (b = 0; b < L->batch; b++)
        for (j = 0; j < n; j++) {
            ptrdiff_t e = (ptrdiff_t)b * L->irs + (ptrdiff_t)j * L->is;
            put(prec, in, 2 * e, x[2 * (b * n + j)]);
            put(prec, in, 2 * e + 1, x[2 * (b * n + j) + 1]);
        }
    if (prec == TB_FLOAT32)
        st = K->execute_f32(plan, dir, L->batch, (const float *)in, L->irs, L->is,
                                (float *)out, L->ors, L->os, (float)L->scale, work);
    else
        st = K->execute_f64(plan, dir, L->batch, (const double *)in, L->irs, L->is,
                                (double *)out, L->ors, L->os, L->scale, work);
    for (b = 0; b < L->batch; b++)
        for (j = 0; j < n; j++) {
            ptrdiff_t e = (ptrdiff_t)b * L->ors + (ptrdiff_t)j * L->os;
            y[2 * (b * n + j)] = get(prec, out, 2 * e);
            y[2 * (b * n + j) + 1] = get(prec, out, 2 * e + 1);
            if (!L->inplace) {
                /* mark visited so the guard scan below skips it */
                put(prec, out, 2 * e, SENTINEL);
                put(prec, out, 2 * e + 1, SENTINEL);
            }
        }
    if (!L->inplace) {
        for (i = 0; i < 2 * osz; i++)
            if (get(prec, obuf, (ptrdiff_t)i) != SENTINEL)
                *guard_ok = 0;
        /* the input must be unchanged */
        for (b = 0; b < L->batch; b++)
            for (j = 0; j < n; j++) {
                ptrdiff_t e = (ptrdiff_t)b * L->irs + (ptrdiff_t)j * L->is;
                if (get(prec, in, 2 * e) != x[2 * (b * n + j)] ||
                    get(prec, in, 2 * e + 1) != x[2 * (b * n + j) + 1])
                    *guard_ok = 0;
            }
    }
    free(ibuf);
    free(obuf);
    free(work);
    return st;
}

/*
 * Compare y (n complex) with the reference bins.  ref holds forward bins
 * for the listed bin indices (all n when bins == NULL).  Returns the
 * error ratio max|err| / (eps log2(n) ||x||_2 |scale|).
 */
static double error_ratio(int prec, int dir, size_t n, const double *x, const double *y,
                          const long double *ref, const size_t *bins, size_t nbins,
                          double scale)
{
    long double norm = 0, maxerr = 0;
    size_t i;
    double lg = n > 2 ? log2((double)n) : 1.0;
    for (i = 0; i < 2 * n; i++)
        norm += (long double)x[i] * x[i];
    norm = sqrtl(norm);
    for (i = 0; i < nbins; i++) {
        size_t k = bins ? bins[i] : i;
        /* inverse bin k = forward bin (n - k) mod n of the same input */
        size_t kr = (dir == TB_FORWARD) ? k : (n - k) % n;
        long double er = (long double)y[2 * k] - (long double)scale * ref[2 * (bins ? i : kr)];
        long double ei = (long double)y[2 * k + 1] - (long double)scale * ref[2 * (bins ? i : kr) + 1];
        long double e = sqrtl(er * er + ei * ei);
        if (!(e <= maxerr)) /* also catches NaN */
            maxerr = e;
    }
    if (norm == 0)
        return maxerr == 0 ? 0.0 : HUGE_VAL;
    return (double)(maxerr / ((long double)real_eps(prec) * lg * norm * fabsl((long double)scale)));
}

#define RATIO_BOUND 4.0

static void note_ratio(int prec, size_t n, double r)
{
    if (!(r <= worst_ratio[prec])) {
        worst_ratio[prec] = r;
        worst_n[prec] = n;
    }
}

static tb_fft_plan *make_plan(size_t n, int prec)
{
    tb_fft_plan *p = NULL;
    int st = K->plan_create(n, prec, &p);
    if (st != TB_OK || p == NULL) {
        printf("FAIL [%s]: plan_create(n=%lu, prec=%d) -> %s\n", K->name,
               (unsigned long)n, prec, tb_strerror(st));
        n_failed++;
        return NULL;
    }
    return p;
}

/* ---- accuracy over sizes -------------------------------------------- */

static int smooth235(size_t n)
{
    if (n == 0)
        return 0;
    while (n % 2 == 0) n /= 2;
    while (n % 3 == 0) n /= 3;
    while (n % 5 == 0) n /= 5;
    return n == 1;
}

/*
 * Check size n, both precisions and directions.  When nbins == 0 every
 * bin is checked; otherwise nbins bins (0, 1, n-1, n/2 and pseudo-random
 * ones) are computed in O(n) each.
 */
static void check_size(size_t n, size_t nbins)
{
    static const int precs[2] = {TB_FLOAT32, TB_FLOAT64};
    static const int dirs[2] = {TB_FORWARD, TB_INVERSE};
    double *x = (double *)malloc(2 * n * sizeof(double));
    double *y = (double *)malloc(2 * n * sizeof(double));
    long double *wt = ref_table(n);
    size_t full = (nbins == 0);
    size_t nb = full ? n : nbins;
    long double *ref = (long double *)malloc(2 * nb * sizeof(long double));
    size_t *bins = full ? NULL : (size_t *)malloc(nb * sizeof(size_t));
    size_t i, kv;
    int ip, id;
    /* results of the first kernel build, to compare the others bitwise */
    double *y0 = (double *)malloc(4 * 2 * n * sizeof(double));

    if (x == NULL || y == NULL || y0 == NULL || ref == NULL || (!full && bins == NULL)) {
        printf("out of memory in the test\n");
        exit(2);
    }
    fill_random(x, n);
    if (full) {
        for (i = 0; i < n; i++)
            ref_bin(n, x, wt, i, &ref[2 * i], &ref[2 * i + 1]);
    } else {
        for (i = 0; i < nb; i++) {
            size_t k;
            if (i == 0) k = 0;
            else if (i == 1) k = 1;
            else if (i == 2) k = n - 1;
            else if (i == 3) k = n / 2;
            else k = (size_t)((rnd() + 1.0) * 0.5 * (double)n) % n;
            bins[i] = k;
        }
    }
    for (kv = 0; kv < N_KERNELS; kv++)
    for (ip = 0; ip < 2; ip++) {
        tb_fft_plan *p;
        layout L = {1, 0, 1, 0, 1, 0, 1.0};
        K = &kernels[kv];
        p = make_plan(n, precs[ip]);
        L.irs = L.ors = (ptrdiff_t)n;
        if (p == NULL)
            continue;
        for (id = 0; id < 2; id++) {
            int ok = 1;
            double r;
            int st = run_layout(p, precs[ip], dirs[id], n, &L, x, y, &ok);
            check(st == TB_OK && ok, "execute status / guard", n, precs[ip], dirs[id]);
            /* The kernel builds do the same IEEE operations in the same
             * order (no FMA), so they must agree to the bit. */
            if (kv == 0)
                memcpy(y0 + (size_t)(2 * ip + id) * 2 * n, y, 2 * n * sizeof(double));
            else
                check(memcmp(y0 + (size_t)(2 * ip + id) * 2 * n, y, 2 * n * sizeof(double)) == 0,
                      "bit-identical to the first kernel build", n, precs[ip], dirs[id]);
            if (full) {
                r = error_ratio(precs[ip], dirs[id], n, x, y, ref, NULL, n, 1.0);
            } else {
                /* reference bins for this direction: forward bin k, or
                 * forward bin (n-k) mod n for the inverse */
                for (i = 0; i < nb; i++) {
                    size_t kr = dirs[id] == TB_FORWARD ? bins[i] : (n - bins[i]) % n;
                    ref_bin(n, x, wt, kr, &ref[2 * i], &ref[2 * i + 1]);
                }
                /* with a bin list, ref[i] is already the value of bin bins[i] */
                r = error_ratio(precs[ip], TB_FORWARD, n, x, y, ref, bins, nb, 1.0);
            }
            note_ratio(precs[ip], n, r);
            if (!(r <= RATIO_BOUND))
                printf("  error ratio %.3g > %.3g\n", r, RATIO_BOUND);
            check(r <= RATIO_BOUND, "accuracy vs naive long double DFT", n, precs[ip],
                  dirs[id]);
        }
        K->plan_destroy(p);
    }
    free(x);
    free(y);
    free(y0);
    free(wt);
    free(ref);
    free(bins);
}

/* ---- layouts: in place, strides, batch, scale ------------------------ */

/*
 * For each layout, run both precisions and directions on a batch of
 * random rows and compare every row with the full reference.
 */
static void check_layouts(size_t n)
{
    static const int precs[2] = {TB_FLOAT32, TB_FLOAT64};
    static const int dirs[2] = {TB_FORWARD, TB_INVERSE};
    const ptrdiff_t pn = (ptrdiff_t)n;
    layout Ls[] = {
        /* batch irs   is  ors  os inplace scale */
        {1, 0, 1, 0, 1, 1, 1.0},                  /* in place, contiguous */
        {1, 0, 3, 0, 1, 0, 1.0},                  /* strided input */
        {1, 0, 1, 0, 2, 0, 1.0},                  /* strided output */
        {1, 0, -1, 0, 1, 0, 1.0},                 /* reversed input */
        {1, 0, 2, 0, -3, 0, 1.0},                 /* strided in, reversed out */
        {1, 0, -2, 0, -2, 1, 1.0},                /* in place, negative stride */
        {3, 0, 1, 0, 1, 0, 0.5},                  /* batch, scale (rows set below) */
        {4, 0, 2, 0, 2, 1, 1.0},                  /* batch in place, stride 2 */
        {5, 0, 1, 0, 5, 0, 0.25},                 /* batch, interleaved rows out */
        {3, 0, -1, 0, 1, 0, -2.0},                /* batch, negative row stride */
        {2, 0, 1, 0, 1, 0, 1.0},                  /* input row stride 0 (broadcast) */
        /* batches of 8 or more rows: small n runs 8 rows at once */
        {11, 0, 1, 0, 1, 0, 0.5},                 /* contiguous rows, 8 + 3 */
        {17, 0, 2, 0, -1, 0, 1.0},                /* strided in, reversed out */
        {9, 0, 1, 0, 1, 1, 1.0},                  /* in place */
        {8, 0, -3, 0, -3, 1, -1.0},               /* in place, negative stride */
        {16, 0, 1, 0, 16, 0, 2.0},                /* rows interleaved in out */
        {10, 0, 1, 0, 1, 0, 1.0},                 /* rows in reverse order */
        {9, 0, 1, 0, 1, 0, 1.0},                  /* input row stride 0 (broadcast) */
    };
    size_t nl = sizeof Ls / sizeof Ls[0], il, b, k;
    long double *wt = ref_table(n);
    double *x, *y;
    long double *ref;

    /* row strides */
    Ls[0].irs = Ls[0].ors = pn;
    Ls[1].irs = 3 * pn; Ls[1].ors = pn;
    Ls[2].irs = pn; Ls[2].ors = 2 * pn;
    Ls[3].irs = pn; Ls[3].ors = pn;
    Ls[4].irs = 2 * pn; Ls[4].ors = 3 * pn;
    Ls[5].irs = Ls[5].ors = 2 * pn;
    Ls[6].irs = pn + 3; Ls[6].ors = pn + 1;         /* padded rows */
    Ls[7].irs = Ls[7].ors = 2 * pn + 1;
    Ls[8].irs = pn; Ls[8].ors = 1;                  /* rows interleaved in out */
    Ls[9].irs = -pn; Ls[9].ors = pn;                /* rows in reverse order */
    Ls[10].irs = 0; Ls[10].ors = pn;                /* same input row twice */
    Ls[11].irs = pn; Ls[11].ors = pn + 2;
    Ls[12].irs = 2 * pn + 5; Ls[12].ors = pn;
    Ls[13].irs = Ls[13].ors = pn;
    Ls[14].irs = Ls[14].ors = 3 * pn;
    Ls[15].irs = pn; Ls[15].ors = 1;
    Ls[16].irs = -pn - 1; Ls[16].ors = pn;
    Ls[17].irs = 0; Ls[17].ors = pn;

    x = (double *)malloc(2 * 17 * n * sizeof(double));
    y = (double *)malloc(2 * 17 * n * sizeof(double));
    ref = (long double *)malloc(2 * 17 * n * sizeof(long double));
    if (x == NULL || y == NULL || ref == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    for (il = 0; il < nl; il++) {
        const layout *L = &Ls[il];
        int ip, id;
        size_t kv;
        fill_random(x, L->batch * n);
        if (L->irs == 0) /* broadcast: every row sees row 0 */
            for (b = 1; b < L->batch; b++)
                memcpy(x + 2 * b * n, x, 2 * n * sizeof(double));
        for (b = 0; b < L->batch; b++)
            for (k = 0; k < n; k++)
                ref_bin(n, x + 2 * b * n, wt, k, &ref[2 * (b * n + k)],
                        &ref[2 * (b * n + k) + 1]);
        for (kv = 0; kv < N_KERNELS; kv++)
        for (ip = 0; ip < 2; ip++) {
            tb_fft_plan *p;
            K = &kernels[kv];
            p = make_plan(n, precs[ip]);
            if (p == NULL)
                continue;
            for (id = 0; id < 2; id++) {
                int ok = 1, st;
                double worst = 0;
                st = run_layout(p, precs[ip], dirs[id], n, L, x, y, &ok);
                for (b = 0; b < L->batch; b++) {
                    double r = error_ratio(precs[ip], dirs[id], n, x + 2 * b * n,
                                           y + 2 * b * n, ref + 2 * b * n, NULL, n,
                                           L->scale);
                    if (!(r <= worst))
                        worst = r;
                }
                if (st != TB_OK || !ok || !(worst <= RATIO_BOUND))
                    printf("  layout %lu: status %d guard %d ratio %.3g\n",
                           (unsigned long)il, st, ok, worst);
                check(st == TB_OK && ok && worst <= RATIO_BOUND, "layout", n, precs[ip],
                      dirs[id]);
            }
            K->plan_destroy(p);
        }
    }
    free(x);
    free(y);
    free(ref);
    free(wt);
}

/*
 * Rows of a batch give the same bits whether they run alone or in a
 * group of 8 (small n runs 8 rows at once; see "Lanes" in tb_fft_impl.h).
 * batch 19 = 8 + 8 + 3 single rows; batch 21 = 8 + 8 + a group of 5
 * rows with 3 spare lanes.
 */
static void check_batch_bitwise_n(size_t n, size_t batch)
{
    static const int precs[2] = {TB_FLOAT32, TB_FLOAT64};
    static const int dirs[2] = {TB_FORWARD, TB_INVERSE};
    double *x = (double *)malloc(2 * batch * n * sizeof(double));
    double *yb = (double *)malloc(2 * batch * n * sizeof(double));
    double *y1 = (double *)malloc(2 * n * sizeof(double));
    int ip, id;
    size_t b;
    if (x == NULL || yb == NULL || y1 == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    fill_random(x, batch * n);
    for (ip = 0; ip < 2; ip++) {
        tb_fft_plan *p = make_plan(n, precs[ip]);
        if (p == NULL)
            continue;
        for (id = 0; id < 2; id++) {
            layout L = {0, 0, 1, 0, 1, 0, 0.5};
            int ok = 1, st, same = 1;
            L.batch = batch;
            L.irs = L.ors = (ptrdiff_t)n;
            st = run_layout(p, precs[ip], dirs[id], n, &L, x, yb, &ok);
            L.batch = 1;
            for (b = 0; b < batch; b++) {
                st |= run_layout(p, precs[ip], dirs[id], n, &L, x + 2 * b * n, y1, &ok);
                if (memcmp(y1, yb + 2 * b * n, 2 * n * sizeof(double)) != 0)
                    same = 0;
            }
            check(st == TB_OK && ok && same, "batch rows bit-identical to single rows", n,
                  precs[ip], dirs[id]);
        }
        K->plan_destroy(p);
    }
    free(x);
    free(yb);
    free(y1);
}

static void check_batch_bitwise(size_t n)
{
    check_batch_bitwise_n(n, 19);
    check_batch_bitwise_n(n, 21);
}

/* Forward then inverse with scale 1/n returns the input. */
static void check_roundtrip(size_t n)
{
    static const int precs[2] = {TB_FLOAT32, TB_FLOAT64};
    double *x = (double *)malloc(2 * n * sizeof(double));
    double *y = (double *)malloc(2 * n * sizeof(double));
    double *z = (double *)malloc(2 * n * sizeof(double));
    int ip;
    if (x == NULL || y == NULL || z == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    fill_random(x, n);
    for (ip = 0; ip < 2; ip++) {
        tb_fft_plan *p = make_plan(n, precs[ip]);
        layout L = {1, 0, 1, 0, 1, 0, 1.0};
        int ok = 1, st1, st2;
        double maxerr = 0, norm = 0, lg = n > 2 ? log2((double)n) : 1.0;
        size_t i;
        if (p == NULL)
            continue;
        L.irs = L.ors = (ptrdiff_t)n;
        st1 = run_layout(p, precs[ip], TB_FORWARD, n, &L, x, y, &ok);
        if (precs[ip] == TB_FLOAT32) /* y is already float-representable */
            for (i = 0; i < 2 * n; i++)
                y[i] = (double)(float)y[i];
        L.scale = 1.0 / (double)n;
        st2 = run_layout(p, precs[ip], TB_INVERSE, n, &L, y, z, &ok);
        for (i = 0; i < 2 * n; i++) {
            double e = fabs(z[i] - x[i]);
            norm += x[i] * x[i];
            if (!(e <= maxerr))
                maxerr = e;
        }
        /* Two transforms, each within the bound on its own scale
         * (||y||_2 = sqrt(n) ||x||_2, divided back by n). */
        check(st1 == TB_OK && st2 == TB_OK && ok &&
                  maxerr <= 2 * RATIO_BOUND * real_eps(precs[ip]) * lg * sqrt(norm),
              "forward/inverse round trip with scale 1/n", n, precs[ip], 0);
        K->plan_destroy(p);
    }
    free(x);
    free(y);
    free(z);
}

/* n == 1: out = scale * in, both precisions and directions, in place too. */
static void check_n1(void)
{
    tb_fft_plan *pf = make_plan(1, TB_FLOAT32), *pd = make_plan(1, TB_FLOAT64);
    float fin[6] = {1.5f, -2.0f, 3.0f, 4.0f, 5.0f, 6.0f}, fout[6] = {0};
    double din[6] = {1.5, -2.0, 3.0, 4.0, 5.0, 6.0}, dout[6] = {0};
    double work[8]; /* n = 1 needs no workspace, but work must not be NULL */
    if (pf == NULL || pd == NULL)
        return;
    check(K->workspace_size(pf) <= sizeof work && K->workspace_size(pd) <= sizeof work,
          "n=1 workspace size is tiny", 1, 0, 0);
    /* batch of 3, stride 0 within a row is fine for n == 1 */
    CHECK_STATUS(K->execute_f32(pf, TB_FORWARD, 3, fin, 1, 0, fout, 1, 0, 2.0f, work),
                 TB_OK, "n=1 f32");
    check(fout[0] == 3.0f && fout[1] == -4.0f && fout[4] == 10.0f && fout[5] == 12.0f,
          "n=1 f32 output = scale * input", 1, TB_FLOAT32, TB_FORWARD);
    CHECK_STATUS(K->execute_f64(pd, TB_INVERSE, 3, din, 1, 1, dout, 1, 1, -1.0, work),
                 TB_OK, "n=1 f64");
    check(dout[0] == -1.5 && dout[1] == 2.0 && dout[4] == -5.0 && dout[5] == -6.0,
          "n=1 f64 output = scale * input", 1, TB_FLOAT64, TB_INVERSE);
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 3, din, 1, 1, din, 1, 1, 0.5, work),
                 TB_OK, "n=1 f64 in place");
    check(din[0] == 0.75 && din[1] == -1.0 && din[5] == 3.0, "n=1 in place", 1,
          TB_FLOAT64, TB_FORWARD);
    K->plan_destroy(pf);
    K->plan_destroy(pd);
}

/* ---- error paths ------------------------------------------------------ */

static void check_errors(void)
{
    tb_fft_plan *p = NULL, *pf = NULL, *pd = NULL;
    double buf[2 * 16 + 1], out[2 * 16 + 1];
    double *work = NULL;
    float fbuf[2 * 16], fout[2 * 16];
    static const size_t bad_sizes[] = {0, 7, 11, 13, 14, 49, 1001, 65537, 999999,
                                       (size_t)TB_FFT_MAX_SIZE + 1, 2 * (size_t)TB_FFT_MAX_SIZE,
                                       (size_t)-1};
    static const size_t good_sizes[] = {1, 2, 3, 4, 5, 6, 8, 9, 10, 12, 15, 16, 25, 27, 60,
                                        1000, 1000000, 531441, 390625,
                                        (size_t)TB_FFT_MAX_SIZE};
    size_t i;
    memset(buf, 0, sizeof buf);
    memset(out, 0, sizeof out);
    memset(fbuf, 0, sizeof fbuf);

    for (i = 0; i < sizeof bad_sizes / sizeof bad_sizes[0]; i++) {
        p = (tb_fft_plan *)buf; /* must be reset to NULL on failure */
        check(K->size_supported(bad_sizes[i]) == 0, "size_supported rejects", bad_sizes[i], 0, 0);
        CHECK_STATUS(K->plan_create(bad_sizes[i], TB_FLOAT64, &p), TB_ERR_SIZE,
                     "plan_create bad size");
        check(p == NULL, "plan_out set to NULL on failure", bad_sizes[i], 0, 0);
    }
    for (i = 0; i < sizeof good_sizes / sizeof good_sizes[0]; i++)
        check(K->size_supported(good_sizes[i]) == 1, "size_supported accepts",
              good_sizes[i], 0, 0);
    check(smooth235(1000000) && K->size_supported(1000000), "1000000 = 2^6 5^6", 0, 0, 0);

    CHECK_STATUS(K->plan_create(16, TB_FLOAT64, NULL), TB_ERR_NULL, "plan_out NULL");
    p = (tb_fft_plan *)buf;
    CHECK_STATUS(K->plan_create(16, 0, &p), TB_ERR_PRECISION, "precision 0");
    check(p == NULL, "plan_out NULL after bad precision", 16, 0, 0);
    CHECK_STATUS(K->plan_create(16, 3, &p), TB_ERR_PRECISION, "precision 3");
    CHECK_STATUS(K->plan_create(16, -1, &p), TB_ERR_PRECISION, "precision -1");

    /* NULL plan queries */
    check(K->plan_size(NULL) == 0 && K->plan_precision(NULL) == 0 &&
              K->workspace_size(NULL) == 0,
          "queries on a NULL plan", 0, 0, 0);
    K->plan_destroy(NULL); /* must be a no-op */

    pf = make_plan(16, TB_FLOAT32);
    pd = make_plan(16, TB_FLOAT64);
    if (pf == NULL || pd == NULL)
        return;
    check(K->plan_size(pd) == 16 && K->plan_precision(pd) == TB_FLOAT64 &&
              K->plan_precision(pf) == TB_FLOAT32,
          "plan queries", 16, 0, 0);
    check(K->workspace_size(pd) >= 2 * 16 * sizeof(double) &&
              K->workspace_size(pf) >= 2 * 16 * sizeof(float),
          "workspace size", 16, 0, 0);
    work = (double *)malloc(K->workspace_size(pd));
    if (work == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }

    /* NULL pointers */
    CHECK_STATUS(K->execute_f64(NULL, TB_FORWARD, 1, buf, 16, 1, out, 16, 1, 1.0, work),
                 TB_ERR_NULL, "NULL plan");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, NULL, 16, 1, out, 16, 1, 1.0, work),
                 TB_ERR_NULL, "NULL in");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 16, 1, NULL, 16, 1, 1.0, work),
                 TB_ERR_NULL, "NULL out");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 16, 1, out, 16, 1, 1.0, NULL),
                 TB_ERR_NULL, "NULL work");
    CHECK_STATUS(K->execute_f32(pf, TB_FORWARD, 1, NULL, 16, 1, fout, 16, 1, 1.0f, work),
                 TB_ERR_NULL, "NULL in f32");

    /* precision mismatch between plan and function */
    CHECK_STATUS(K->execute_f32(pd, TB_FORWARD, 1, fbuf, 16, 1, fout, 16, 1, 1.0f, work),
                 TB_ERR_PRECISION, "f64 plan to f32 execute");
    CHECK_STATUS(K->execute_f64(pf, TB_FORWARD, 1, buf, 16, 1, out, 16, 1, 1.0, work),
                 TB_ERR_PRECISION, "f32 plan to f64 execute");

    /* bad direction */
    CHECK_STATUS(K->execute_f64(pd, 0, 1, buf, 16, 1, out, 16, 1, 1.0, work),
                 TB_ERR_DIRECTION, "direction 0");
    CHECK_STATUS(K->execute_f64(pd, 2, 1, buf, 16, 1, out, 16, 1, 1.0, work),
                 TB_ERR_DIRECTION, "direction 2");
    CHECK_STATUS(K->execute_f32(pf, -2, 1, fbuf, 16, 1, fout, 16, 1, 1.0f, work),
                 TB_ERR_DIRECTION, "direction -2 f32");

    /* zero strides with n > 1, zero output row stride with batch > 1 */
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 16, 0, out, 16, 1, 1.0, work),
                 TB_ERR_ARG, "in_stride 0");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 16, 1, out, 16, 0, 1.0, work),
                 TB_ERR_ARG, "out_stride 0");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 2, buf, 0, 1, out, 0, 1, 1.0, work),
                 TB_ERR_ARG, "out_row_stride 0 with batch 2");
    /* misaligned buffers */
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1,
                                    (const double *)(const void *)((const char *)buf + 4), 16,
                                    1, out, 16, 1, 1.0, work),
                 TB_ERR_ARG, "misaligned in");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 16, 1,
                                    (double *)(void *)((char *)out + 4), 16, 1, 1.0, work),
                 TB_ERR_ARG, "misaligned out");
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 16, 1, out, 16, 1, 1.0,
                                    (void *)((char *)work + 4)),
                 TB_ERR_ARG, "misaligned work");

    /* batch 0: success, nothing written */
    out[0] = 7.0;
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 0, buf, 16, 1, out, 16, 1, 1.0, work),
                 TB_OK, "batch 0");
    check(out[0] == 7.0, "batch 0 writes nothing", 16, TB_FLOAT64, TB_FORWARD);
    /* batch 1 with out_row_stride 0 is fine */
    CHECK_STATUS(K->execute_f64(pd, TB_FORWARD, 1, buf, 0, 1, out, 0, 1, 1.0, work),
                 TB_OK, "batch 1, row strides 0");

    K->plan_destroy(pf);
    K->plan_destroy(pd);
    free(work);
}

/* tb_fft_plan_simd names one of the two kernel copies; the portable test
 * build (TB_NO_DISPATCH) always runs the plain C one. */
static void check_simd_name(void)
{
    tb_fft_plan *p = NULL;
    const char *name;
    check(strcmp(tb_fft_plan_simd(NULL), "") == 0, "tb_fft_plan_simd(NULL) is \"\"", 0, 0,
          0);
    if (tb_fft_plan_create(64, TB_FLOAT64, &p) != TB_OK) {
        check(0, "plan for tb_fft_plan_simd", 64, TB_FLOAT64, 0);
        return;
    }
    name = tb_fft_plan_simd(p);
    check(strcmp(name, "avx2") == 0 || strcmp(name, "portable") == 0,
          "tb_fft_plan_simd names avx2 or portable", 64, TB_FLOAT64, 0);
    printf("default build runs the %s kernels on this CPU\n", name);
    tb_fft_plan_destroy(p);
#if defined(TB_TEST_PORTABLE)
    if (tbport_fft_plan_create(64, TB_FLOAT64, &p) == TB_OK) {
        check(strcmp(tbport_fft_plan_simd(p), "portable") == 0,
              "portable build runs the portable kernels", 64, TB_FLOAT64, 0);
        tbport_fft_plan_destroy(p);
    } else {
        check(0, "portable plan for tb_fft_plan_simd", 64, TB_FLOAT64, 0);
    }
#endif
}

static void check_strerror(void)
{
    static const int codes[] = {TB_OK, TB_ERR_NULL, TB_ERR_SIZE, TB_ERR_PRECISION,
                                TB_ERR_DIRECTION, TB_ERR_NOMEM, TB_ERR_ARG};
    const char *unknown = tb_strerror(-12345);
    size_t i, j;
    check(unknown != NULL && unknown[0] != '\0', "tb_strerror(unknown)", 0, 0, 0);
    check(tb_strerror(999) == unknown || strcmp(tb_strerror(999), unknown) == 0,
          "tb_strerror(999) is the unknown text", 0, 0, 0);
    for (i = 0; i < sizeof codes / sizeof codes[0]; i++) {
        const char *s = tb_strerror(codes[i]);
        check(s != NULL && s[0] != '\0' && strcmp(s, unknown) != 0, "tb_strerror(code)",
              0, codes[i], 0);
        for (j = 0; j < i; j++)
            check(strcmp(s, tb_strerror(codes[j])) != 0, "tb_strerror texts differ", 0,
                  codes[i], codes[j]);
    }
    check(strcmp(tb_version(), "0.1.0") == 0, "tb_version", 0, 0, 0);
}

/* ---- non-finite input -------------------------------------------------- */

static void check_nonfinite(size_t n)
{
    static const int precs[2] = {TB_FLOAT32, TB_FLOAT64};
    static const int dirs[2] = {TB_FORWARD, TB_INVERSE};
    double *x = (double *)malloc(2 * n * sizeof(double));
    double *y = (double *)malloc(2 * n * sizeof(double));
    int ip, id, kind;
    size_t k;
    if (x == NULL || y == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    for (kind = 0; kind < 2; kind++) {
        for (ip = 0; ip < 2; ip++) {
            tb_fft_plan *p = make_plan(n, precs[ip]);
            layout L = {1, 0, 1, 0, 1, 0, 1.0};
            if (p == NULL)
                continue;
            L.irs = L.ors = (ptrdiff_t)n;
            for (id = 0; id < 2; id++) {
                int ok = 1, all = 1, st;
                fill_random(x, n);
                /* every bin depends on every input with a nonzero weight */
                x[2 * (n / 3) + 1] = kind == 0 ? NAN : INFINITY;
                st = run_layout(p, precs[ip], dirs[id], n, &L, x, y, &ok);
                for (k = 0; k < n; k++)
                    if (isfinite(y[2 * k]) && isfinite(y[2 * k + 1]))
                        all = 0;
                check(st == TB_OK && all,
                      kind == 0 ? "NaN input reaches every bin" : "inf input reaches every bin",
                      n, precs[ip], dirs[id]);
            }
            K->plan_destroy(p);
        }
    }
    free(x);
    free(y);
}

/* ---- threads sharing a plan --------------------------------------------- */

#if defined(TB_TEST_THREADS)
typedef struct {
    const tb_fft_plan *plan;
    const double *in;
    double *out;
    size_t n, batch;
    int status;
} thread_job;

static void *thread_main(void *arg)
{
    thread_job *t = (thread_job *)arg;
    void *work = malloc(K->workspace_size(t->plan));
    int rep;
    t->status = TB_ERR_NOMEM;
    if (work == NULL)
        return NULL;
    for (rep = 0; rep < 20 && (rep == 0 || t->status == TB_OK); rep++)
        t->status = K->execute_f64(t->plan, rep % 2 ? TB_INVERSE : TB_FORWARD, t->batch,
                                       t->in, (ptrdiff_t)t->n, 1, t->out, (ptrdiff_t)t->n, 1,
                                       1.0, work);
    free(work);
    return NULL;
}

static void check_threads(void)
{
    const size_t n = 1536, batch = 8;
    tb_fft_plan *p = make_plan(n, TB_FLOAT64);
    double *in = (double *)malloc(2 * n * batch * sizeof(double));
    double *o1 = (double *)malloc(2 * n * batch * sizeof(double));
    double *o2 = (double *)malloc(2 * n * batch * sizeof(double));
    double *o0 = (double *)malloc(2 * n * batch * sizeof(double));
    void *work = p ? malloc(K->workspace_size(p)) : NULL;
    thread_job j1, j2;
    pthread_t t1, t2;
    int c1, c2;
    if (p == NULL || in == NULL || o0 == NULL || o1 == NULL || o2 == NULL || work == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    fill_random(in, n * batch);
    /* single-threaded result of the last repetition (rep 19: inverse) */
    CHECK_STATUS(K->execute_f64(p, TB_INVERSE, batch, in, (ptrdiff_t)n, 1, o0,
                                    (ptrdiff_t)n, 1, 1.0, work),
                 TB_OK, "single-thread reference");
    j1.plan = j2.plan = p;
    j1.in = j2.in = in;
    j1.out = o1;
    j2.out = o2;
    j1.n = j2.n = n;
    j1.batch = j2.batch = batch;
    c1 = pthread_create(&t1, NULL, thread_main, &j1);
    c2 = pthread_create(&t2, NULL, thread_main, &j2);
    if (c1 == 0)
        pthread_join(t1, NULL);
    if (c2 == 0)
        pthread_join(t2, NULL);
    check(c1 == 0 && c2 == 0, "pthread_create", n, TB_FLOAT64, 0);
    check(c1 == 0 && c2 == 0 && j1.status == TB_OK && j2.status == TB_OK &&
              memcmp(o0, o1, 2 * n * batch * sizeof(double)) == 0 &&
              memcmp(o0, o2, 2 * n * batch * sizeof(double)) == 0,
          "two threads sharing a plan give bit-identical results", n, TB_FLOAT64, 0);
    free(in);
    free(o0);
    free(o1);
    free(o2);
    free(work);
    K->plan_destroy(p);
}
#endif

/* ---- main ----------------------------------------------------------- */

int main(void)
{
    size_t n, kv;
    static const size_t big_bins_sizes[] = {(size_t)TB_FFT_MAX_SIZE, 1000000, 531441,
                                            390625, 786432};
    /* Every size up to 64 (batches of those run 8 rows at once, see
     * "Lanes" in tb_fft_impl.h) and larger ones of each radix mix. */
    static const size_t lay[] = {1,  2,  3,  4,  5,  6,  8,  9,   10,  12,  15,  16,  18,
                                 20, 24, 25, 27, 30, 32, 36, 40,  45,  48,  50,  54,  60,
                                 64, 96, 120, 128, 250, 256, 360, 512, 1024};

    printf("kernel builds under test:");
    for (kv = 0; kv < N_KERNELS; kv++)
        printf(" %s", kernels[kv].name);
    printf("\n");

    check_strerror();
    check_simd_name();
    for (kv = 0; kv < N_KERNELS; kv++) {
        K = &kernels[kv];
        check_errors();
        check_n1();
        for (n = 0; n < sizeof lay / sizeof lay[0]; n++) {
            check_roundtrip(lay[n]);
            check_batch_bitwise(lay[n]);
        }
        check_nonfinite(1);
        check_nonfinite(2);
        check_nonfinite(48);
        check_nonfinite(1000);
#if defined(TB_TEST_THREADS)
        check_threads();
#endif
    }

    /* every supported size up to 4096, every bin, every kernel build */
    for (n = 1; n <= 4096; n++)
        if (smooth235(n))
            check_size(n, 0);
    /* every other supported size in (4096, 65536] and every power of two
     * there, a sample of 24 bins each */
    {
        size_t count = 0;
        for (n = 4097; n <= 65536; n++)
            if (smooth235(n) && (count++ % 2 == 0 || (n & (n - 1)) == 0))
                check_size(n, 24);
    }
    /* the largest sizes, a few bins */
    for (n = 0; n < sizeof big_bins_sizes / sizeof big_bins_sizes[0]; n++)
        check_size(big_bins_sizes[n], 6);

    for (n = 0; n < sizeof lay / sizeof lay[0]; n++)
        check_layouts(lay[n]);

#if !defined(TB_TEST_THREADS)
    n_skipped++;
    printf("skipped: threads sharing a plan (built without TB_TEST_THREADS)\n");
#endif

    printf("worst error ratio (bound %.1f): float32 %.3f at n=%lu, float64 %.3f at n=%lu\n",
           RATIO_BOUND, worst_ratio[TB_FLOAT32], (unsigned long)worst_n[TB_FLOAT32],
           worst_ratio[TB_FLOAT64], (unsigned long)worst_n[TB_FLOAT64]);
    if (n_skipped)
        printf("%ld passed, %ld failed, %ld skipped\n", n_passed, n_failed, n_skipped);
    else
        printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed == 0 ? 0 : 1;
}
