/*
 * test_fixed.c -- standalone test of the fixed-point FFT (no Python).
 *
 * Build and run:  make -C csrc build/test_fixed && ./csrc/build/test_fixed
 * The last line printed is "N passed, M failed"; the exit status is
 * non-zero when M > 0.
 *
 * Two references:
 *
 * 1. A plain scalar model written here from the arithmetic stated in
 *    tonebank.h (the same as the numpy integer model): every value in
 *    int64_t, the shifts as exact floor divisions with an explicit
 *    remainder (no shift operators on data), butterflies found by index
 *    (i & h) == 0 rather than by groups.  The kernel must match it bit for
 *    bit: values, exponents, saturation counts, for every size 2 ..
 *    65536, both formats, the schedules "halve" (1 per stage), "none",
 *    random per-stage shifts and block floating point, both roundings,
 *    on full-scale random inputs (which saturate), small inputs, the
 *    extreme code -2^f everywhere and an impulse.
 *
 * 2. The DFT X[k] = sum_j x[j] exp(-2 pi i j k / n) (the definition in
 *    tonebank.h) in long double, divided by 2^exponent, on inputs small
 *    enough not to saturate.  Error bound, derived here from the
 *    schedule (complex magnitudes, in output LSBs of each stage): with e
 *    the error carried into a stage, the product t = R(b w, f) adds at
 *    most |b| |w_q - w| / 2^f <= sqrt(2) (a twiddle code is within 1 LSB
 *    of the exact value, the largest error being the +1 clipped to 2^f -
 *    1) plus sqrt(2)/2 of rounding, and carries e (1 + 2^-f); the
 *    butterfly adds two such terms and the stage shift s divides by 2^s
 *    and adds sqrt(2)/2 of rounding when s > 0:
 *
 *        e' = (2 e (1 + 2^-f) + 3 sqrt(2) / 2) / 2^s + (s > 0) sqrt(2) / 2
 *
 *    (the standard worst-case propagation of rounding errors through the
 *    radix-2 flow graph, written out here; common practice, no source).
 *    With "halve" this grows by about 1.8 LSB per stage: a few LSBs
 *    times log2 n.  Checked on every bin for n <= 64 and on 12 bins
 *    (computed directly, O(n) each) above.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../tonebank.h"
#include "tb_test.h"

enum { SCHED_HALVE, SCHED_NONE, SCHED_RANDOM, SCHED_BLOCK, N_SCHED };
static const char *sched_name[] = {"halve", "none", "random", "block"};

static void check(int ok, const char *what, size_t n, int fmt, int sched, int rounding)
{
    if (ok) {
        n_passed++;
    } else {
        n_failed++;
        printf("FAIL: %s (n=%zu, %s, %s, %s)\n", what, n, fmt == TB_Q15 ? "q15" : "q31",
               sched >= 0 ? sched_name[sched] : "-",
               rounding == TB_ROUND_CONVERGENT ? "convergent" : "half_up");
    }
}

static unsigned fbits(int fmt)
{
    return fmt == TB_Q15 ? 15u : 31u;
}

/* floor(v / 2^k) rounded: exact division with an explicit remainder. */
static int64_t ref_round(int64_t v, unsigned k, int convergent)
{
    int64_t d, q, r;
    if (k == 0)
        return v;
    d = (int64_t)1 << k;
    q = v / d;                       /* C99 division truncates toward zero */
    r = v - q * d;
    if (r < 0) {                     /* to floor: remainder in [0, d) */
        q -= 1;
        r += d;
    }
    if (2 * r > d)
        return q + 1;
    if (2 * r == d)                  /* exactly half way */
        return convergent ? q + (q % 2 != 0) : q + 1;
    return q;
}

/* The reference transform of one row: x (2n values) in, y out. */
static void ref_fft(size_t n, int fmt, const int64_t *w, const unsigned char *shifts,
                    int convergent, const int64_t *x, int64_t *y, int64_t *exponent,
                    int64_t *saturations, unsigned char *used)
{
    const unsigned f = fbits(fmt);
    const int64_t lo = -((int64_t)1 << f), hi = ((int64_t)1 << f) - 1;
    int64_t *re = xmalloc(n * sizeof *re), *im = xmalloc(n * sizeof *im);
    size_t i, j, h, m = 0, stage;
    int64_t sat = 0, total = 0;

    while (((size_t)1 << m) < n)
        m++;
    for (i = 0; i < n; i++) {
        size_t r = 0;
        for (j = 0; j < m; j++)
            if (i & ((size_t)1 << j))
                r |= (size_t)1 << (m - 1 - j);
        re[r] = x[2 * i];
        im[r] = x[2 * i + 1];
    }
    for (stage = 0, h = 1; h < n; stage++, h *= 2) {
        unsigned s;
        if (shifts != NULL) {
            s = shifts[stage];
        } else {
            int64_t peak = 0;
            for (i = 0; i < n; i++) {
                int64_t a = re[i] < 0 ? -re[i] : re[i], b = im[i] < 0 ? -im[i] : im[i];
                if (a > peak)
                    peak = a;
                if (b > peak)
                    peak = b;
            }
            s = peak < ((int64_t)1 << (f - 2)) ? 0 : peak < ((int64_t)1 << (f - 1)) ? 1 : 2;
        }
        used[stage] = (unsigned char)s;
        total += s;
        for (i = 0; i < n; i++) {
            if ((i & h) == 0) {
                const size_t p = i + h, tw = (i % h) * (n / (2 * h));
                const int64_t wr = w[2 * tw], wi = w[2 * tw + 1];
                const int64_t tr = ref_round(re[p] * wr - im[p] * wi, f, convergent);
                const int64_t ti = ref_round(re[p] * wi + im[p] * wr, f, convergent);
                int64_t v[4];
                int c;
                v[0] = ref_round(re[i] + tr, s, convergent);
                v[1] = ref_round(im[i] + ti, s, convergent);
                v[2] = ref_round(re[i] - tr, s, convergent);
                v[3] = ref_round(im[i] - ti, s, convergent);
                for (c = 0; c < 4; c++) {
                    if (v[c] > hi) {
                        v[c] = hi;
                        sat++;
                    } else if (v[c] < lo) {
                        v[c] = lo;
                        sat++;
                    }
                }
                re[i] = v[0];
                im[i] = v[1];
                re[p] = v[2];
                im[p] = v[3];
            }
        }
    }
    for (i = 0; i < n; i++) {
        y[2 * i] = re[i];
        y[2 * i + 1] = im[i];
    }
    *exponent = total;
    *saturations = sat;
    free(re);
    free(im);
}

/* Forward twiddles computed here in long double (rounded to nearest,
 * +1 clipped to 2^f - 1). */
static void ref_twiddles(size_t n, int fmt, int64_t *w)
{
    const long double full = ldexpl(1.0L, (int)fbits(fmt));
    const long double pi = 3.141592653589793238462643383279502884L;
    size_t i;
    for (i = 0; i < n / 2; i++) {
        long double c = rintl(cosl(2.0L * pi * (long double)i / (long double)n) * full);
        long double s = rintl(-sinl(2.0L * pi * (long double)i / (long double)n) * full);
        w[2 * i] = (int64_t)(c > full - 1 ? full - 1 : c);
        w[2 * i + 1] = (int64_t)(s > full - 1 ? full - 1 : s);
    }
}

/* Run the kernel on `count` rows of int64 codes, through the format's type. */
static int run_kernel(const tb_fixed_plan *plan, int fmt, size_t n, size_t count,
                      const int64_t *x, int64_t *y, int64_t *exponent, int64_t *sat,
                      int in_place)
{
    size_t i, len = 2 * n * count;
    int status;
    if (fmt == TB_Q15) {
        int16_t *a = xcalloc(len, sizeof *a), *b = xcalloc(len, sizeof *b);
        for (i = 0; i < len; i++)
            a[i] = (int16_t)x[i];
        status = tb_fixed_fft_q15(plan, count, a, in_place ? a : b, exponent, sat);
        for (i = 0; i < len; i++)
            y[i] = in_place ? a[i] : b[i];
        free(a);
        free(b);
    } else {
        int32_t *a = xcalloc(len, sizeof *a), *b = xcalloc(len, sizeof *b);
        for (i = 0; i < len; i++)
            a[i] = (int32_t)x[i];
        status = tb_fixed_fft_q31(plan, count, a, in_place ? a : b, exponent, sat);
        for (i = 0; i < len; i++)
            y[i] = in_place ? a[i] : b[i];
        free(a);
        free(b);
    }
    return status;
}

static tb_fixed_plan *make_plan(size_t n, int fmt, const int64_t *w,
                                const unsigned char *shifts, int rounding)
{
    tb_fixed_plan *plan = NULL;
    size_t i;
    int status;
    if (fmt == TB_Q15) {
        int16_t *t = xmalloc(n * sizeof *t);
        for (i = 0; i < n; i++)
            t[i] = (int16_t)w[i];
        status = tb_fixed_plan_create(n, fmt, t, shifts, rounding, &plan);
        memset(t, 0x5A, n * sizeof *t);   /* the plan must hold its own copy */
        free(t);
    } else {
        int32_t *t = xmalloc(n * sizeof *t);
        for (i = 0; i < n; i++)
            t[i] = (int32_t)w[i];
        status = tb_fixed_plan_create(n, fmt, t, shifts, rounding, &plan);
        memset(t, 0x5A, n * sizeof *t);
        free(t);
    }
    return status == TB_OK ? plan : NULL;
}

/* Uniform integer in [-amp, amp] (amp <= 2^31). */
static int64_t rnd_code(int64_t amp)
{
    long double v = rintl((long double)rnd() * (long double)(amp + 1));
    return v > amp ? amp : v < -amp ? -amp : (int64_t)v;
}

static void check_config(size_t n, int fmt, int sched, int rounding)
{
    const unsigned f = fbits(fmt);
    const int64_t full = (int64_t)1 << f;
    const int convergent = rounding == TB_ROUND_CONVERGENT;
    const size_t rows = n >= 4096 ? 3 : 5;
    size_t m = 0, i, r, k;
    unsigned char shifts[16], used[16];
    int64_t *w = xmalloc(n * sizeof *w), *x, *y, *ref, *y2;
    int64_t exp_k[5], sat_k[5], exp_r, sat_r, exp2[5], sat2[5];
    tb_fixed_plan *plan, *plan_null = NULL;
    int status, same = 1, same_place = 1;

    while (((size_t)1 << m) < n)
        m++;
    for (i = 0; i < m; i++)
        shifts[i] = sched == SCHED_HALVE ? 1 : sched == SCHED_NONE ? 0
                  : (unsigned char)((rnd() + 1.0) * 1.5);
    ref_twiddles(n, fmt, w);
    plan = make_plan(n, fmt, w, sched == SCHED_BLOCK ? NULL : shifts, rounding);
    check(plan != NULL, "plan created", n, fmt, sched, rounding);
    if (plan == NULL) {
        free(w);
        return;
    }
    x = xmalloc(2 * n * rows * sizeof *x);
    y = xmalloc(2 * n * rows * sizeof *y);
    y2 = xmalloc(2 * n * rows * sizeof *y2);
    ref = xmalloc(2 * n * sizeof *ref);

    /* rows: full scale random, small random, all -2^f, impulse, quarter
     * scale random (the last two only when rows == 5: the impulse is
     * then row 3) */
    for (r = 0; r < rows; r++)
        for (i = 0; i < 2 * n; i++) {
            int64_t v;
            if (r == 0)
                v = rnd_code(full - 1) - (rnd() < -0.9 ? 1 : 0);
            else if (r == 1)
                v = rnd_code(full >> 10);
            else if (r == 2)
                v = -full;
            else if (r == 3)
                v = i == 2 ? full - 1 : 0;
            else
                v = rnd_code(full / 4);
            x[2 * n * r + i] = v;
        }

    /* 1. bit for bit against the plain reference, out of place and in place */
    status = run_kernel(plan, fmt, n, rows, x, y, exp_k, sat_k, 0);
    check(status == TB_OK, "execute status", n, fmt, sched, rounding);
    status = run_kernel(plan, fmt, n, rows, x, y2, exp2, sat2, 1);
    check(status == TB_OK, "in-place execute status", n, fmt, sched, rounding);
    for (r = 0; r < rows; r++) {
        ref_fft(n, fmt, w, sched == SCHED_BLOCK ? NULL : shifts, convergent, x + 2 * n * r,
                ref, &exp_r, &sat_r, used);
        if (exp_r != exp_k[r] || sat_r != sat_k[r] ||
            memcmp(ref, y + 2 * n * r, 2 * n * sizeof *ref) != 0)
            same = 0;
        if (exp2[r] != exp_k[r] || sat2[r] != sat_k[r])
            same_place = 0;
    }
    check(same, "bit-exact with the plain reference", n, fmt, sched, rounding);
    check(same_place && memcmp(y, y2, 2 * n * rows * sizeof *y) == 0,
          "in place == out of place", n, fmt, sched, rounding);
    if (sched == SCHED_BLOCK)
        for (r = 0; r < rows; r++)
            check(sat_k[r] == 0, "block floating point never saturates", n, fmt, sched,
                  rounding);

    /* the forward table computed by the plan itself (twiddles NULL) */
    if (tb_fixed_plan_create(n, fmt, NULL, sched == SCHED_BLOCK ? NULL : shifts, rounding,
                             &plan_null) == TB_OK) {
        status = run_kernel(plan_null, fmt, n, rows, x, y2, exp2, sat2, 0);
        check(status == TB_OK && memcmp(y, y2, 2 * n * rows * sizeof *y) == 0,
              "NULL twiddles == the long double forward table", n, fmt, sched, rounding);
        tb_fixed_plan_destroy(plan_null);
    } else {
        check(0, "plan with NULL twiddles", n, fmt, sched, rounding);
    }

    /* 2. against the long double DFT, on an input that cannot saturate */
    {
        long double *ctab = xmalloc(n * sizeof *ctab), *stab = xmalloc(n * sizeof *stab);
        double gain = 1.0, bound = 0.0, worst = 0.0;
        int64_t amp, total = 0;
        size_t stage;
        /* stage k's output components are at most sqrt(2) A 2^(k+1) / 2^(shifts
         * so far) plus the carried error: keep that below half scale */
        for (stage = 0; stage < m; stage++) {
            total += sched == SCHED_BLOCK ? 0 : shifts[stage];
            if (ldexp(1.0, (int)stage + 1 - (int)total) > gain)
                gain = ldexp(1.0, (int)stage + 1 - (int)total);
        }
        amp = sched == SCHED_BLOCK ? full / 2 : (int64_t)((double)full / (4.0 * gain));
        for (i = 0; i < 2 * n; i++)
            x[i] = rnd_code(amp);
        status = run_kernel(plan, fmt, n, 1, x, y, exp_k, sat_k, 0);
        ref_fft(n, fmt, w, sched == SCHED_BLOCK ? NULL : shifts, convergent, x, ref, &exp_r,
                &sat_r, used);
        check(status == TB_OK && sat_k[0] == 0, "no saturation on a small input", n, fmt,
              sched, rounding);
        for (stage = 0; stage < m; stage++)
            bound = (2.0 * bound * (1.0 + ldexp(1.0, -(int)f)) + 1.5 * sqrt(2.0))
                    / ldexp(1.0, used[stage]) + (used[stage] ? sqrt(2.0) / 2.0 : 0.0);
        /* exp(-2 pi i q / n), q < n, once per configuration */
        for (i = 0; i < n; i++) {
            const long double pi = 3.141592653589793238462643383279502884L;
            const long double a = -2.0L * pi * (long double)i / (long double)n;
            ctab[i] = cosl(a);
            stab[i] = sinl(a);
        }
        for (r = 0; r < (n <= 64 ? n : 12); r++) {
            long double sr = 0.0L, si = 0.0L, er, ei, scale = ldexpl(1.0L, -(int)exp_k[0]);
            size_t j;
            k = n <= 64 ? r : r < 4 ? (size_t[]){0, 1, n / 2, n - 1}[r]
                                    : (size_t)((rnd() + 1.0) * 0.5 * (double)n) % n;
            for (j = 0; j < n; j++) {
                const size_t q = (j * k) % n;
                sr += x[2 * j] * ctab[q] - x[2 * j + 1] * stab[q];
                si += x[2 * j] * stab[q] + x[2 * j + 1] * ctab[q];
            }
            er = (long double)y[2 * k] - sr * scale;
            ei = (long double)y[2 * k + 1] - si * scale;
            if ((double)sqrtl(er * er + ei * ei) > worst)
                worst = (double)sqrtl(er * er + ei * ei);
        }
        check(worst <= bound + 1e-6, "within the schedule's bound of the DFT", n, fmt, sched,
              rounding);
        free(ctab);
        free(stab);
    }
    tb_fixed_plan_destroy(plan);
    free(w);
    free(x);
    free(y);
    free(y2);
    free(ref);
}

static void check_errors(void)
{
    static const unsigned char halve[4] = {1, 1, 1, 1}, bad[4] = {1, 3, 1, 1};
    int16_t tw16[8] = {32767, 0, 23170, -23170, 0, -32768, -23170, -23170};
    int32_t tw32[8] = {0};
    int16_t x16[16] = {0}, y16[16];
    int32_t x32[16] = {0};
    int64_t e[2], s[2];
    tb_fixed_plan *plan = NULL, *p31 = NULL;
    const int Q = TB_Q15;

    check(tb_fixed_plan_create(8, Q, tw16, halve, 0, NULL) == TB_ERR_NULL, "NULL plan_out",
          8, Q, -1, 0);
    check(tb_fixed_plan_create(0, Q, NULL, NULL, 0, &plan) == TB_ERR_SIZE && plan == NULL,
          "n = 0", 0, Q, -1, 0);
    check(tb_fixed_plan_create(1, Q, NULL, NULL, 0, &plan) == TB_ERR_SIZE, "n = 1", 1, Q, -1,
          0);
    check(tb_fixed_plan_create(12, Q, NULL, NULL, 0, &plan) == TB_ERR_SIZE, "n = 12", 12, Q,
          -1, 0);
    check(tb_fixed_plan_create(131072, Q, NULL, NULL, 0, &plan) == TB_ERR_SIZE,
          "n = 131072", 131072, Q, -1, 0);
    check(tb_fixed_plan_create(8, TB_FLOAT32, NULL, NULL, 0, &plan) == TB_ERR_PRECISION,
          "format TB_FLOAT32", 8, Q, -1, 0);
    check(tb_fixed_plan_create(8, Q, tw16, bad, 0, &plan) == TB_ERR_ARG, "a shift of 3", 8,
          Q, -1, 0);
    check(tb_fixed_plan_create(8, Q, tw16, halve, 2, &plan) == TB_ERR_ARG, "rounding 2", 8,
          Q, -1, 0);
    tw16[2] = -32768;
    tw16[3] = -32768;   /* |re| + |im| = 2^16: the product sum could overflow */
    check(tb_fixed_plan_create(8, Q, tw16, halve, 0, &plan) == TB_ERR_ARG && plan == NULL,
          "twiddle pair out of bounds (q15)", 8, Q, -1, 0);
    tw32[2] = INT32_MIN;
    tw32[3] = INT32_MIN;
    check(tb_fixed_plan_create(8, TB_Q31, tw32, halve, 0, &plan) == TB_ERR_ARG,
          "twiddle pair out of bounds (q31)", 8, TB_Q31, -1, 0);
    tw32[3] = 0;
    check(tb_fixed_plan_create(8, TB_Q31, tw32, halve, 0, &p31) == TB_OK,
          "a table of -1 components is allowed", 8, TB_Q31, -1, 0);

    if (tb_fixed_plan_create(8, Q, NULL, halve, 0, &plan) != TB_OK || p31 == NULL) {
        check(0, "plans for the error checks", 8, Q, -1, 0);
        tb_fixed_plan_destroy(plan);
        tb_fixed_plan_destroy(p31);
        return;
    }
    check(tb_fixed_fft_q15(NULL, 1, x16, y16, e, s) == TB_ERR_NULL, "NULL plan", 8, Q, -1, 0);
    check(tb_fixed_fft_q15(plan, 1, NULL, y16, e, s) == TB_ERR_NULL, "NULL in", 8, Q, -1, 0);
    check(tb_fixed_fft_q15(plan, 1, x16, NULL, e, s) == TB_ERR_NULL, "NULL out", 8, Q, -1, 0);
    check(tb_fixed_fft_q15(plan, 1, x16, y16, NULL, s) == TB_ERR_NULL, "NULL exponent", 8, Q,
          -1, 0);
    check(tb_fixed_fft_q15(plan, 0, x16, y16, e, NULL) == TB_ERR_NULL,
          "NULL saturations (count 0)", 8, Q, -1, 0);
    check(tb_fixed_fft_q31(plan, 1, x32, x32, e, s) == TB_ERR_PRECISION,
          "q15 plan to the q31 function", 8, Q, -1, 0);
    check(tb_fixed_fft_q15(p31, 1, x16, y16, e, s) == TB_ERR_PRECISION,
          "q31 plan to the q15 function", 8, TB_Q31, -1, 0);
    check(tb_fixed_fft_q15(plan, 2, x16, x16 + 2, e, s) == TB_ERR_ARG, "partial overlap", 8,
          Q, -1, 0);
    check(tb_fixed_fft_q15(plan, 0, x16, y16, e, s) == TB_OK, "count 0", 8, Q, -1, 0);
    check(tb_fixed_fft_q15(plan, 1, x16, x16, e, s) == TB_OK, "in place", 8, Q, -1, 0);
    tb_fixed_plan_destroy(plan);
    tb_fixed_plan_destroy(p31);
    tb_fixed_plan_destroy(NULL);
}

int main(void)
{
    size_t n;
    int fmt, sched, rounding;
    for (n = 2; n <= TB_FIXED_MAX_SIZE; n *= 2)
        for (fmt = 0; fmt < 2; fmt++)
            for (sched = 0; sched < N_SCHED; sched++)
                for (rounding = 0; rounding < 2; rounding++)
                    check_config(n, fmt ? TB_Q31 : TB_Q15, sched,
                                 rounding ? TB_ROUND_CONVERGENT : TB_ROUND_HALF_UP);
    check_errors();
    printf("%ld passed, %ld failed\n", n_passed, n_failed);
    return n_failed ? 1 : 0;
}
