/*
 * tb_fft.c -- mixed-radix (2, 3, 4, 5, 8) complex FFT of the tonebank kernel.
 *
 * Portable C99 plus libm.  No global mutable state: a plan is built once,
 * never changes, and may be used by any number of threads at the same
 * time (each with its own workspace).
 *
 * Algorithm: Stockham autosort, decimation in time
 * -------------------------------------------------
 * n is factored into radices (see tb_factor: one 2 or 8, 5s, 3s, 4s):
 *
 *     n = r_0 * r_1 * ... * r_{P-1}          e.g. 1536 = 8 * 3 * 4 * 4 * 4
 *
 * Pass p combines r = r_p sub-transforms of length l = r_0 * ... * r_{p-1}
 * into transforms of length l * r; m = n / (l * r) such problems are
 * interleaved in memory.  With x the input and y the output of the pass
 * (logical indices, complex elements):
 *
 *     for j in [0, l), g in [0, m):
 *         c_q                = x[g + m*(q + r*j)] * w_{l r}^(q j)   q = 0 .. r-1
 *         y[g + m*(j + l*b)] = sum_q c_q * w_r^(q b)                b = 0 .. r-1
 *
 *     where w_N = exp(-2 pi i / N) (forward direction).
 *
 * Pass 0 has l = 1 (no twiddles) and reads x[g + m*q]: the caller's input
 * at its stride.  The last pass has m = 1 and writes y[j + l*b], the
 * natural-order result: no bit reversal, no final permutation.  For
 * n = 32 = 8 * 4:
 *
 *     pass 0 (r=8, l=1, m=4):  y[g + 4b]  = DFT8 over q of x[g + 4q]
 *     pass 1 (r=4, l=8, m=1):  y[j + 8b]  = DFT4 over q of x[q + 4j] w_32^(qj)
 *
 * Workspace
 * ---------
 * Inside, data are kept split (all real parts, then all imaginary parts),
 * so every inner loop is a plain loop over contiguous REALs that the
 * compiler vectorises without shuffles.  The caller's buffers stay
 * interleaved; the first pass reads them and the last pass writes them.
 * The passes ping-pong between two halves of the workspace:
 *
 *     work: | W0 re | W0 im | W1 re | W1 im |   each part: half REALs
 *           half = n + (8 - 1) * pad,  pad = TB_PAD REALs when the row
 *           is at least 4 KiB (n * sizeof(REAL) >= 4096), else 0
 *           (8 n for small n, see "Batches of small transforms")
 *
 *     in --pass 0--> W1 --pass 1--> W0 --pass 2--> W1 ... --pass P-1--> out
 *
 * Within a part, the r output slots of a pass (y[m*l*b .. m*l*(b+1)))
 * are separated by `pad` unused REALs.  Without that gap the r slots sit
 * exactly n/r elements apart, for a power-of-two n a multiple of 4 KiB:
 * all 2r streams (re and im) fall in the same L1 cache sets and evict
 * each other (measured at n = 4096: passes about 2.5x slower).
 *
 * tb_fft_workspace_size(plan) = 4 * half * sizeof(REAL) bytes, for any
 * batch and strides.  A size with a single pass (2, 3, 4, 5, 8) copies
 * its input to W0 first, so in-place always works.
 *
 * Twiddle table
 * -------------
 * Every pass with l > 1 owns one block of (r - 1) rows of l complex
 * values; the blocks follow each other in pass order (pass 0 has none).
 * Each row is stored split, l real parts then l imaginary parts, so a
 * column over j reads both contiguously.  Block of a pass, N = l * r:
 *
 *               j = 0    j = 1     ...  j = l-1           j = 0 .. l-1
 *     q = 1   | re w_N^0 re w_N^1   ... re w_N^(l-1)      | im ...       |
 *     q = 2   | re w_N^0 re w_N^2   ... re w_N^(2(l-1))   | im ...       |
 *     ...
 *     q = r-1 | re w_N^0 re w_N^(r-1) . re w_N^((r-1)(l-1)) | im ...     |
 *
 * i.e. entry (q, j) has its real part at REAL index
 * 2*tw_offset + 2*(q-1)*l + j and its imaginary part l REALs later.  The
 * total is sum_p (r_p - 1) * l_p complex values, a little over n.  Each
 * entry is exp(-2 pi i q j / N) computed in long double after reducing
 * the angle to the first octant with exact integer arithmetic, then
 * rounded once to the plan's precision.  The inverse direction uses the
 * same table conjugated on the fly.
 *
 * Plan memory: one allocation
 * ---------------------------
 *     +--------------------+---------+-----------------------------------+
 *     | struct tb_fft_plan | padding | twiddles: sum (r_p-1) l_p complex |
 *     +--------------------+---------+-----------------------------------+
 *     the twiddles start on a TB_ALIGN-byte boundary.
 *
 * The 64-point transform
 * ----------------------
 * n = 64 does not run the passes at all: an 8 x 8 form on groups of
 * complex values (SFX(dft64_pairs) in tb_fft_impl.h, twiddles after the
 * passes' table, scratch in W1) transforms each row where it lies, so it
 * needs no lanes and batches are rows one after the other.  It is the
 * commonest small symbol, and the lanes' transposes cost as much there
 * as the butterflies.
 *
 * Batches of small transforms
 * ---------------------------
 * For n <= TB_LANE_NMAX the per-pass set-up costs as much as the
 * arithmetic, so batches run 8 rows at once: the rows are transposed
 * into the workspace with the row as the innermost ("lane") index, the
 * same passes run with 8-wide inner loops, and the result is transposed
 * back (see "Lanes" in tb_fft_impl.h).  The workspace then needs 8 n
 * REALs per part (half = max(half, 8 n)).  Each row sees exactly the
 * operations of the single-row code: the results are bit-identical.
 *
 * SIMD
 * ----
 * The kernels are plain C; the compiler vectorises them with whatever the
 * build targets (SSE2 on any x86-64, NEON on AArch64, ...).  On x86-64
 * with GCC or clang, the kernels are compiled a second time for AVX2 and
 * a plan picks that copy at creation when the CPU and OS support AVX2.
 * The AVX2 copy also uses a few hand-written intrinsics routines
 * (tb_fft_avx2.h): shuffle-based transposes between rows and lanes, and
 * SFX(vpass4) in tb_fft_impl.h, the radix-4 passes on whole vectors laid
 * out per kind of pass.  They move data differently but perform exactly
 * the butterflies of the plain code.  FMA is not enabled, so both copies
 * perform the same IEEE operations in the same order and give
 * bit-identical results (tests/test_fft.c checks this).  Define
 * TB_NO_DISPATCH to build the portable kernels only; the plain C code is
 * the reference every other copy must match.
 *
 * Build flags: any optimisation level works; -O3 (or -O2 with
 * -ftree-vectorize) is what makes the loops SIMD.  Keep -ffp-contract=off
 * where the target has FMA (AArch64, x86-64 built with -mfma) if results
 * must not depend on the compiler's choice to fuse; never -ffast-math,
 * which would break NaN/inf propagation.
 *
 * Porting notes: define TB_TWIDDLE_DOUBLE to compute twiddles in double
 * instead of long double (for targets where long double is slow software
 * emulation); the octant reduction keeps them within about one ulp.
 */
#include <math.h>
#include <stdlib.h>

#include "tonebank.h"
#include "tb_internal.h"

#if defined(__GNUC__) || defined(__clang__)
#define TB_INLINE static inline __attribute__((always_inline))
#else
#define TB_INLINE static inline
#endif
#if defined(_MSC_VER) && !defined(__clang__)
#define TB_RESTRICT __restrict /* MSVC's C mode may lack the C99 keyword */
#else
#define TB_RESTRICT restrict
#endif

/* Alignment of the twiddle table inside the plan block, bytes. */
#define TB_ALIGN 64
/* Largest radix. */
#define TB_MAX_RADIX 8
/* REALs between the output slots of a pass in the workspace. */
#define TB_PAD 16
/* Columns over g (contiguous) are used when at least this long. */
#define TB_COL_MIN 4
/* Largest n whose batches run 8 rows at once ("lanes"). */
#ifndef TB_LANE_NMAX
#define TB_LANE_NMAX 64
#endif

#if !defined(TB_NO_DISPATCH) && (defined(__x86_64__) || defined(_M_X64)) &&            \
    (defined(__GNUC__) || defined(__clang__))
#define TB_DISPATCH_AVX2 1
#else
#define TB_DISPATCH_AVX2 0
#endif

#if TB_DISPATCH_AVX2
#include <immintrin.h>
#endif
/* SSE2 is part of every x86-64 target: the portable copy's 64-point form
 * uses it for its pairs of complex doubles (see tb_fft_impl.h). */
#if defined(__SSE2__) && !defined(TB_NO_SSE2)
#include <emmintrin.h>
#define TB_PAIRS_SSE2 1
#else
#define TB_PAIRS_SSE2 0
#endif

#ifdef TB_TWIDDLE_DOUBLE
typedef double tb_twiddle_real;
#define TB_TW_PI_4 0.78539816339744830961566084581987572
#define TB_TW_COS cos
#define TB_TW_SIN sin
#else
typedef long double tb_twiddle_real;
#define TB_TW_PI_4 0.78539816339744830961566084581987572L
#define TB_TW_COS cosl
#define TB_TW_SIN sinl
#endif

/*
 * cos and sin of 2 pi k / N for 0 <= k < N, accurate to the working
 * precision.  8k/N is split exactly into an octant o and a remainder
 * t/N in [0, 1); the reduced angle (pi/4) * t/N (or its complement to
 * pi/4 in the odd octants) is at most pi/4, where cosl/sinl are most
 * accurate, and the octant symmetries are exact.
 */
static void tb_unit_root(size_t k, size_t N, tb_twiddle_real *c, tb_twiddle_real *s)
{
    const size_t u = 8 * k;
    const unsigned o = (unsigned)(u / N);
    const size_t t = u - (size_t)o * N;
    const size_t num = (o & 1u) ? N - t : t;
    const tb_twiddle_real phi = (tb_twiddle_real)num * TB_TW_PI_4 / (tb_twiddle_real)N;
    const tb_twiddle_real cp = TB_TW_COS(phi), sp = TB_TW_SIN(phi);
    switch (o) {
    case 0: *c = cp;  *s = sp;  break; /* theta = phi               */
    case 1: *c = sp;  *s = cp;  break; /* theta = pi/2 - phi        */
    case 2: *c = -sp; *s = cp;  break; /* theta = pi/2 + phi        */
    case 3: *c = -cp; *s = sp;  break; /* theta = pi - phi          */
    case 4: *c = -cp; *s = -sp; break; /* theta = pi + phi          */
    case 5: *c = -sp; *s = -cp; break; /* theta = 3 pi/2 - phi      */
    case 6: *c = sp;  *s = -cp; break; /* theta = 3 pi/2 + phi      */
    default: *c = cp; *s = -sp; break; /* theta = 2 pi - phi        */
    }
}

/* 1 if p is a multiple of a (a power of two), 0 otherwise. */
static int tb_aligned(const void *p, size_t a)
{
    return ((uintptr_t)p & (uintptr_t)(a - 1)) == 0;
}

/* ---- the kernels, once per precision (and per ISA) -------------------- */

#define REAL float
#define SFX(name) name##_f32
#include "tb_fft_impl.h"
#undef REAL
#undef SFX

#define REAL double
#define SFX(name) name##_f64
#define TB_REAL_F64 1 /* the template's REAL is double */
#include "tb_fft_impl.h"
#undef REAL
#undef SFX
#undef TB_REAL_F64

#if TB_DISPATCH_AVX2
#if defined(__clang__)
#pragma clang attribute push(__attribute__((target("avx2"))), apply_to = function)
#else
#pragma GCC push_options
#pragma GCC target("avx2")
#endif

/* Hand-written shuffles the AVX2 copies use (tb_fft_avx2.h). */
#include "tb_fft_avx2.h"
#define TB_AVX2_KERNELS 1

/* TB_AVX2_HALVES: the precision has the 128-bit-half loads of
 * tb_fft_avx2.h (float only; see SFX(vpass4)). */
#define REAL float
#define SFX(name) name##_f32_avx2
#define TB_AVX2_HALVES 1
#include "tb_fft_impl.h"
#undef REAL
#undef SFX
#undef TB_AVX2_HALVES

#define REAL double
#define SFX(name) name##_f64_avx2
#define TB_AVX2_HALVES 0
#define TB_REAL_F64 1
#include "tb_fft_impl.h"
#undef REAL
#undef SFX
#undef TB_AVX2_HALVES
#undef TB_REAL_F64

#undef TB_AVX2_KERNELS

#if defined(__clang__)
#pragma clang attribute pop
#else
#pragma GCC pop_options
#endif

/* 1 when the CPU and the OS support AVX2 (the compiler's runtime check
 * includes the OS's saving of the YMM registers). */
static int tb_cpu_has_avx2(void)
{
    __builtin_cpu_init();
    return __builtin_cpu_supports("avx2") ? 1 : 0;
}
#endif

/* ---- plans -------------------------------------------------------------- */

int tb_fft_size_supported(size_t n)
{
    if (n < 1 || n > (size_t)TB_FFT_MAX_SIZE)
        return 0;
    while (n % 2 == 0)
        n /= 2;
    while (n % 3 == 0)
        n /= 3;
    while (n % 5 == 0)
        n /= 5;
    return n == 1;
}

/*
 * Radices in pass order: the odd factor 2 of the power of two 2^a as one
 * 8 in front of everything (a odd, a >= 3) or as a single 2 (a == 1),
 * then the 5s, the 3s, and the rest of 2^a as 4s.  Reasons, measured
 * with tests/bench_fft.c:
 *  - radix 4 is the sweet spot for split-format SIMD code: its 8 input
 *    and 8 output streams and 3 twiddles fit the 16 vector registers of
 *    x86-64 and AArch64 (radix 8 spills once it has twiddles);
 *  - the first pass has no twiddles, so an 8 costs least there (and the
 *    pass code relies on it: a radix-8 pass is always pass 0);
 *  - the last pass gathers its inputs with stride r; r = 4 keeps that
 *    cheap.
 */
static int tb_factor(size_t n, int *radix)
{
    int np = 0, a = 0, i;
    size_t odd = n;
    while (odd % 2 == 0) {
        a++;
        odd /= 2;
    }
    if (a == 1) {
        radix[np++] = 2;
        a = 0;
    } else if (a % 2 == 1) {
        radix[np++] = 8;
        a -= 3;
    }
    while (odd % 5 == 0) {
        radix[np++] = 5;
        odd /= 5;
    }
    while (odd % 3 == 0) {
        radix[np++] = 3;
        odd /= 3;
    }
    for (i = 0; i < a / 2; i++)
        radix[np++] = 4;
    return np;
}

/* Fill the twiddle table (see the picture at the top). */
static void tb_fill_twiddles(tb_fft_plan *p)
{
    int ip;
    if (p->codelet) {
        /* the 8 x 8 form: for column group g (W = 2 columns j2 = 2g, 2g + 1
         * in double, W = 4 columns j2 = 4g .. 4g + 3 in float) and k1 =
         * 1..7, 4 W REALs: the cosines of w64^(j2 k1) twice each, then the
         * sines (see tb_fft_impl.h) */
        const size_t W = p->precision == TB_FLOAT32 ? 4 : 2;
        size_t g, k1, c;
        for (g = 0; g < 8 / W; g++)
            for (k1 = 1; k1 < 8; k1++)
                for (c = 0; c < W; c++) {
                    const size_t e = 2 * p->ntwiddle + (g * 7 + k1 - 1) * 4 * W + 2 * c;
                    tb_twiddle_real cs, sn;
                    tb_unit_root((W * g + c) * k1, 64, &cs, &sn);
                    if (p->precision == TB_FLOAT32) {
                        float *t = (float *)p->twiddles;
                        t[e] = t[e + 1] = (float)cs;
                        t[e + 2 * W] = t[e + 2 * W + 1] = (float)-sn;
                    } else {
                        double *t = (double *)p->twiddles;
                        t[e] = t[e + 1] = (double)cs;
                        t[e + 2 * W] = t[e + 2 * W + 1] = (double)-sn;
                    }
                }
    }
    for (ip = 0; ip < p->npass; ip++) {
        const tb_fft_pass *ps = &p->pass[ip];
        const size_t r = (size_t)ps->radix, l = ps->l;
        size_t q, j;
        if (l == 1)
            continue;
        for (q = 1; q < r; q++) {
            const size_t row = 2 * (ps->tw_offset + (q - 1) * l);
            for (j = 0; j < l; j++) {
                tb_twiddle_real c, s;
                tb_unit_root(q * j, l * r, &c, &s);
                if (p->precision == TB_FLOAT32) {
                    float *t = (float *)p->twiddles + row;
                    t[j] = (float)c;
                    t[l + j] = (float)-s;
                } else {
                    double *t = (double *)p->twiddles + row;
                    t[j] = (double)c;
                    t[l + j] = (double)-s;
                }
            }
        }
    }
}

int tb_fft_plan_create(size_t n, int precision, tb_fft_plan **plan_out)
{
    int radix[TB_MAX_PASSES];
    int np, ip, codelet;
    size_t l, ntw, head, bytes;
    tb_fft_plan *p;

    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if (precision != TB_FLOAT32 && precision != TB_FLOAT64)
        return TB_ERR_PRECISION;
    if (!tb_fft_size_supported(n))
        return TB_ERR_SIZE;

    np = (n > 1) ? tb_factor(n, radix) : 0;
    ntw = 0;
    l = 1;
    for (ip = 0; ip < np; ip++) {
        ntw += (l > 1) ? (size_t)(radix[ip] - 1) * l : 0;
        l *= (size_t)radix[ip];
    }

    head = (sizeof(tb_fft_plan) + TB_ALIGN - 1) / TB_ALIGN * TB_ALIGN;
    /* n = 64 also holds the TB_CODELET_REALS twiddles of its 8 x 8 form
     * (tb_fft_impl.h) after the passes' table */
    codelet = (n == 64);
    bytes = head + (2 * ntw + (codelet ? TB_CODELET_REALS : 0)) * tb_real_size(precision) +
            TB_ALIGN;
    p = (tb_fft_plan *)malloc(bytes);
    if (p == NULL)
        return TB_ERR_NOMEM;

    p->n = n;
    p->precision = precision;
    p->npass = np;
    /* Slot gaps only where the slots are far enough apart to collide in
     * the cache (>= 4 KiB between the first and last slot); small
     * transforms keep contiguous slots and longer loops. */
    p->pad = (np >= 2 && n * tb_real_size(precision) >= 4096) ? TB_PAD : 0;
    p->half = n + (TB_MAX_RADIX - 1) * (size_t)p->pad;
    /* Small sizes: batches run 8 rows at once (see "Lanes" in
     * tb_fft_impl.h), which needs 8 n REALs per part of the workspace. */
    p->codelet = codelet;
    /* ... except where the 8 x 8 form runs rows where they lie */
    p->lanes = (np >= 2 && n <= TB_LANE_NMAX && !codelet);
    if (p->lanes && p->half < 8 * n)
        p->half = 8 * n;
    p->ntwiddle = ntw;
#if TB_DISPATCH_AVX2
    p->avx2 = tb_cpu_has_avx2();
#else
    p->avx2 = 0;
#endif
    {
        /* First TB_ALIGN boundary at or after head; malloc's alignment is
         * at least that of a pointer, so TB_ALIGN spare bytes suffice. */
        char *base = (char *)p + head;
        size_t mis = (size_t)((uintptr_t)base & (uintptr_t)(TB_ALIGN - 1));
        p->twiddles = base + (mis ? TB_ALIGN - mis : 0);
    }
    ntw = 0;
    l = 1;
    for (ip = 0; ip < np; ip++) {
        tb_fft_pass *ps = &p->pass[ip];
        ps->radix = radix[ip];
        ps->lp = (ip > 0) ? p->pass[ip - 1].l : 1;
        ps->l = l;
        ps->m = n / (l * (size_t)radix[ip]);
        ps->tw_offset = ntw;
        ntw += (l > 1) ? (size_t)(radix[ip] - 1) * l : 0;
        l *= (size_t)radix[ip];
    }
    tb_fill_twiddles(p);
    *plan_out = p;
    return TB_OK;
}

void tb_fft_plan_destroy(tb_fft_plan *plan)
{
    free(plan);
}

size_t tb_fft_plan_size(const tb_fft_plan *plan)
{
    return plan ? plan->n : 0;
}

int tb_fft_plan_precision(const tb_fft_plan *plan)
{
    return plan ? plan->precision : 0;
}

const char *tb_fft_plan_simd(const tb_fft_plan *plan)
{
    if (plan == NULL)
        return "";
    return plan->avx2 ? "avx2" : "portable";
}

size_t tb_fft_workspace_size(const tb_fft_plan *plan)
{
    if (plan == NULL)
        return 0;
    return 4 * plan->half * tb_real_size(plan->precision);
}

/* ---- execute ------------------------------------------------------------ */

/* Checks shared by both precisions; TB_OK when the call may proceed. */
static int tb_check_execute(const tb_fft_plan *plan, int precision, int direction,
                            size_t batch, const void *in, ptrdiff_t in_stride,
                            const void *out, ptrdiff_t out_row_stride,
                            ptrdiff_t out_stride, const void *work)
{
    const size_t rs = tb_real_size(precision);
    if (plan == NULL || in == NULL || out == NULL || work == NULL)
        return TB_ERR_NULL;
    if (plan->precision != precision)
        return TB_ERR_PRECISION;
    if (direction != TB_FORWARD && direction != TB_INVERSE)
        return TB_ERR_DIRECTION;
    if (plan->n > 1 && (in_stride == 0 || out_stride == 0))
        return TB_ERR_ARG;
    if (batch > 1 && out_row_stride == 0)
        return TB_ERR_ARG;
    if (!tb_aligned(in, rs) || !tb_aligned(out, rs) || !tb_aligned(work, sizeof(double)))
        return TB_ERR_ARG;
    return TB_OK;
}

int tb_fft_execute_f32(const tb_fft_plan *plan, int direction, size_t batch,
                       const float *in, ptrdiff_t in_row_stride, ptrdiff_t in_stride,
                       float *out, ptrdiff_t out_row_stride, ptrdiff_t out_stride,
                       float scale, void *work)
{
    const int st = tb_check_execute(plan, TB_FLOAT32, direction, batch, in, in_stride, out,
                                    out_row_stride, out_stride, work);
    const int inv = (direction == TB_INVERSE);
    if (st != TB_OK)
        return st;
#if TB_DISPATCH_AVX2
    if (plan->avx2) {
        rows_f32_avx2(plan, inv, batch, in, in_row_stride, in_stride, out, out_row_stride,
                      out_stride, scale, (float *)work);
        return TB_OK;
    }
#endif
    rows_f32(plan, inv, batch, in, in_row_stride, in_stride, out, out_row_stride,
             out_stride, scale, (float *)work);
    return TB_OK;
}

int tb_fft_execute_f64(const tb_fft_plan *plan, int direction, size_t batch,
                       const double *in, ptrdiff_t in_row_stride, ptrdiff_t in_stride,
                       double *out, ptrdiff_t out_row_stride, ptrdiff_t out_stride,
                       double scale, void *work)
{
    const int st = tb_check_execute(plan, TB_FLOAT64, direction, batch, in, in_stride, out,
                                    out_row_stride, out_stride, work);
    const int inv = (direction == TB_INVERSE);
    if (st != TB_OK)
        return st;
#if TB_DISPATCH_AVX2
    if (plan->avx2) {
        rows_f64_avx2(plan, inv, batch, in, in_row_stride, in_stride, out, out_row_stride,
                      out_stride, scale, (double *)work);
        return TB_OK;
    }
#endif
    rows_f64(plan, inv, batch, in, in_row_stride, in_stride, out, out_row_stride,
             out_stride, scale, (double *)work);
    return TB_OK;
}

/* ---- engines for fused operations (declared in tb_internal.h) ---------- */

#if TB_DISPATCH_AVX2
#define TB_PICK(plan, name, args) ((plan)->avx2 ? name##_avx2 args : name args)
#else
#define TB_PICK(plan, name, args) (name args)
#endif

void tb_fft_core_row_f32(const tb_fft_plan *p, int inv, const float *xr, const float *xi,
                         ptrdiff_t xs, float *out, ptrdiff_t os, float scale, float *work)
{
    if (p->npass == 0) { /* n == 1 */
        out[0] = scale * xr[0];
        out[1] = scale * xi[0];
        return;
    }
    TB_PICK(p, run_passes_f32, (p, inv, xr, xi, xs, out, os, scale, work));
}

void tb_fft_core_row_f64(const tb_fft_plan *p, int inv, const double *xr,
                         const double *xi, ptrdiff_t xs, double *out, ptrdiff_t os,
                         double scale, double *work)
{
    if (p->npass == 0) { /* n == 1 */
        out[0] = scale * xr[0];
        out[1] = scale * xi[0];
        return;
    }
    TB_PICK(p, run_passes_f64, (p, inv, xr, xi, xs, out, os, scale, work));
}

float *tb_fft_core_lanes_f32(const tb_fft_plan *p, int inv, float *work)
{
    return TB_PICK(p, lane_passes_f32, (p, inv, work));
}

double *tb_fft_core_lanes_f64(const tb_fft_plan *p, int inv, double *work)
{
    return TB_PICK(p, lane_passes_f64, (p, inv, work));
}

void tb_fft_core_lanes_load_f32(const tb_fft_plan *p, const float *const *rows, float *work)
{
    TB_PICK(p, lanes_in_f32, (p->n, rows, 1, work, work + p->half));
}

void tb_fft_core_lanes_load_f64(const tb_fft_plan *p, const double *const *rows,
                                double *work)
{
    TB_PICK(p, lanes_in_f64, (p->n, rows, 1, work, work + p->half));
}

void tb_fft_core_lanes_store_f32(const tb_fft_plan *p, const float *res, float scale,
                                 float *const *rows)
{
    TB_PICK(p, lanes_out_f32, (p->n, res, res + p->half, scale, rows, 1));
}

void tb_fft_core_lanes_store_f64(const tb_fft_plan *p, const double *res, double scale,
                                 double *const *rows)
{
    TB_PICK(p, lanes_out_f64, (p->n, res, res + p->half, scale, rows, 1));
}

void tb_fft_core_lanes_store_range_f32(const tb_fft_plan *p, const float *res, size_t first,
                                       size_t count, float scale, float *const *rows)
{
    const float *xr = res + TB_FFT_LANES * first;
    TB_PICK(p, lanes_out_f32, (count, xr, xr + p->half, scale, rows, 1));
}

void tb_fft_core_lanes_store_range_f64(const tb_fft_plan *p, const double *res,
                                       size_t first, size_t count, double scale,
                                       double *const *rows)
{
    const double *xr = res + TB_FFT_LANES * first;
    TB_PICK(p, lanes_out_f64, (count, xr, xr + p->half, scale, rows, 1));
}
