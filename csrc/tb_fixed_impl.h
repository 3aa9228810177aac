/*
 * tb_fixed_impl.h -- format template of the fixed-point FFT (internal).
 * tb_fixed.c includes it once per format after defining DATA (the
 * storage type), ACC (products and sums), FBITS (fraction bits), FMT
 * (TB_Q15 or TB_Q31) and SFX(name).  The arithmetic is stated in
 * tonebank.h and at the top of tb_fixed.c.
 */

/* floor(v / 2^k) without shifting a negative value: for v < 0, ~v =
 * -v - 1 >= 0 and floor(v / 2^k) = ~(~v >> k) (exact-width types are
 * two's complement in C99, 7.18.1.1). */
static ACC SFX(floor_shift)(ACC v, unsigned k)
{
    return v >= 0 ? (ACC)(v >> k) : (ACC)~((~v) >> k);
}

/* R(v, k): right shift by k >= 1 bits with rounding. */
static ACC SFX(round_shift)(ACC v, unsigned k, int convergent)
{
    const ACC u = v + ((ACC)1 << (k - 1));
    ACC q = SFX(floor_shift)(u, k);
    /* an exact half: u is a multiple of 2^k; round to even.  The low bits
     * and the parity are read through the unsigned type (well defined). */
    if (convergent && ((UACC)u & (((UACC)1 << k) - 1u)) == 0 && ((UACC)q & 1u))
        q -= 1;
    return q;
}

/* Saturate to the format, counting a clipped component. */
static DATA SFX(saturate)(ACC v, int64_t *count)
{
    const ACC hi = ((ACC)1 << FBITS) - 1, lo = -hi - 1;
    if (v > hi) {
        ++*count;
        return (DATA)hi;
    }
    if (v < lo) {
        ++*count;
        return (DATA)lo;
    }
    return (DATA)v;
}

/* Largest component magnitude of n complex values. */
static ACC SFX(peak)(const DATA *x, size_t n)
{
    ACC m = 0;
    size_t i;
    for (i = 0; i < 2 * n; i++) {
        const ACC v = x[i] < 0 ? -(ACC)x[i] : (ACC)x[i];
        if (v > m)
            m = v;
    }
    return m;
}

/* Block floating point: the shift of a stage from its input's peak. */
static unsigned SFX(block_shift)(ACC peak)
{
    if (peak < ((ACC)1 << (FBITS - 2)))
        return 0;
    if (peak < ((ACC)1 << (FBITS - 1)))
        return 1;
    return 2;
}

/* One stage (h = 2^k, twiddle stride `step` = n / 2h, output shift s)
 * over the n points of x.  Called with constant s, convergent and track
 * from SFX(transform) so that the compiler makes a copy of the loop per
 * combination, without the tests inside.  Returns the peak of the stored
 * outputs when `track` (block floating point), else 0. */
static ACC SFX(stage)(DATA *x, size_t n, size_t h, const ACC *w, size_t step, unsigned s,
                      int convergent, int track, int64_t *sat)
{
    ACC peak = 0;
    int64_t clipped = 0;        /* a local count: stays in a register in the loop */
    size_t g, j;
    for (g = 0; g < n; g += 2 * h) {
        DATA *a = x + 2 * g, *b = x + 2 * (g + h);
        for (j = 0; j < h; j++) {
            const ACC wr = w[2 * j * step], wi = w[2 * j * step + 1];
            const ACC ar = a[2 * j], ai = a[2 * j + 1];
            const ACC br = b[2 * j], bi = b[2 * j + 1];
            const ACC tr = SFX(round_shift)(br * wr - bi * wi, FBITS, convergent);
            const ACC ti = SFX(round_shift)(br * wi + bi * wr, FBITS, convergent);
            ACC y0r = ar + tr, y0i = ai + ti, y1r = ar - tr, y1i = ai - ti;
            if (s) {
                y0r = SFX(round_shift)(y0r, s, convergent);
                y0i = SFX(round_shift)(y0i, s, convergent);
                y1r = SFX(round_shift)(y1r, s, convergent);
                y1i = SFX(round_shift)(y1i, s, convergent);
            }
            a[2 * j] = SFX(saturate)(y0r, &clipped);
            a[2 * j + 1] = SFX(saturate)(y0i, &clipped);
            b[2 * j] = SFX(saturate)(y1r, &clipped);
            b[2 * j + 1] = SFX(saturate)(y1i, &clipped);
            if (track) {
                /* the next stage's input peak, from the stored values */
                const ACC m0r = a[2 * j] < 0 ? -(ACC)a[2 * j] : a[2 * j];
                const ACC m0i = a[2 * j + 1] < 0 ? -(ACC)a[2 * j + 1] : a[2 * j + 1];
                const ACC m1r = b[2 * j] < 0 ? -(ACC)b[2 * j] : b[2 * j];
                const ACC m1i = b[2 * j + 1] < 0 ? -(ACC)b[2 * j + 1] : b[2 * j + 1];
                ACC mm = m0r > m0i ? m0r : m0i;
                if (m1r > mm)
                    mm = m1r;
                if (m1i > mm)
                    mm = m1i;
                if (mm > peak)
                    peak = mm;
            }
        }
    }
    *sat += clipped;
    return peak;
}

/* SFX(stage) with every flag a constant (one specialised copy each). */
#define TB_FIXED_STAGE(S, C, T) SFX(stage)(x, n, h, w, step, S, C, T, &sat)

/* One transform, in place in x (already in bit-reversed order). */
static void SFX(transform)(const tb_fixed_plan *p, DATA *x, int64_t *exponent,
                           int64_t *saturations)
{
    const ACC *w = (const ACC *)p->twiddles;
    const int convergent = p->rounding == TB_ROUND_CONVERGENT;
    const size_t n = p->n;
    int64_t sat = 0, total = 0;
    ACC peak = p->block ? SFX(peak)(x, n) : 0;
    unsigned k;

    for (k = 0; k < p->m; k++) {
        const unsigned s = p->block ? SFX(block_shift)(peak) : p->shifts[k];
        const size_t step = n >> (k + 1), h = (size_t)1 << k;
        total += s;
        if (p->block) {
            if (convergent)
                peak = s == 0 ? TB_FIXED_STAGE(0, 1, 1)
                     : s == 1 ? TB_FIXED_STAGE(1, 1, 1) : TB_FIXED_STAGE(2, 1, 1);
            else
                peak = s == 0 ? TB_FIXED_STAGE(0, 0, 1)
                     : s == 1 ? TB_FIXED_STAGE(1, 0, 1) : TB_FIXED_STAGE(2, 0, 1);
        } else if (convergent) {
            (void)(s == 0 ? TB_FIXED_STAGE(0, 1, 0)
                 : s == 1 ? TB_FIXED_STAGE(1, 1, 0) : TB_FIXED_STAGE(2, 1, 0));
        } else {
            (void)(s == 0 ? TB_FIXED_STAGE(0, 0, 0)
                 : s == 1 ? TB_FIXED_STAGE(1, 0, 0) : TB_FIXED_STAGE(2, 0, 0));
        }
    }
    *exponent = total;
    *saturations = sat;
}

#undef TB_FIXED_STAGE

/* The twiddle table (or, with NULL, the forward one) into the plan. */
static int SFX(load_twiddles)(tb_fixed_plan *p, const void *twiddles)
{
    const ACC full = (ACC)1 << FBITS;
    ACC *w = (ACC *)p->twiddles;
    size_t i, half = p->n / 2;
    for (i = 0; i < half; i++) {
        ACC re, im, mre, mim;
        if (twiddles != NULL) {
            DATA pair[2];
            memcpy(pair, (const unsigned char *)twiddles + 2 * i * sizeof(DATA), sizeof pair);
            re = pair[0];
            im = pair[1];
        } else {
            const double angle = 2.0 * TB_FIXED_PI * (double)i / (double)p->n;
            double c = rint(cos(angle) * (double)full), sn = rint(-sin(angle) * (double)full);
            c = c > (double)(full - 1) ? (double)(full - 1) : c;
            sn = sn > (double)(full - 1) ? (double)(full - 1) : sn;
            re = (ACC)c;
            im = (ACC)sn;
        }
        /* |re| + |im| <= 2^(f+1) - 1 keeps |b_re w_re - b_im w_im| + 2^(f-1)
         * below 2^(2f+1): inside ACC (see tb_fixed.c). */
        mre = re < 0 ? -re : re;
        mim = im < 0 ? -im : im;
        if (mre + mim > 2 * full - 1)
            return TB_ERR_ARG;
        w[2 * i] = re;
        w[2 * i + 1] = im;
    }
    return TB_OK;
}

/* Check, copy in bit-reversed order, transform. */
static int SFX(run)(const tb_fixed_plan *plan, size_t count, const DATA *in, DATA *out,
                    int64_t *exponent, int64_t *saturations)
{
    size_t t, i, n;
    if (plan == NULL || in == NULL || out == NULL || exponent == NULL || saturations == NULL)
        return TB_ERR_NULL;
    if (plan->format != FMT)
        return TB_ERR_PRECISION;
    n = plan->n;
    if (count > SIZE_MAX / (2 * n * sizeof(DATA)))
        return TB_ERR_ARG;
    if (in != out && tb_fixed_overlap(in, out, count * 2 * n * sizeof(DATA)))
        return TB_ERR_ARG;
    for (t = 0; t < count; t++) {
        const DATA *src = in + 2 * n * t;
        DATA *dst = out + 2 * n * t;
        if (src == dst) {
            for (i = 0; i < n; i++) {
                const size_t r = plan->rev[i];
                if (r > i) {
                    const DATA re = dst[2 * i], im = dst[2 * i + 1];
                    dst[2 * i] = dst[2 * r];
                    dst[2 * i + 1] = dst[2 * r + 1];
                    dst[2 * r] = re;
                    dst[2 * r + 1] = im;
                }
            }
        } else {
            for (i = 0; i < n; i++) {
                const size_t r = plan->rev[i];
                dst[2 * i] = src[2 * r];
                dst[2 * i + 1] = src[2 * r + 1];
            }
        }
        SFX(transform)(plan, dst, exponent + t, saturations + t);
    }
    return TB_OK;
}
