/*
 * tb_fbmc_impl.h -- precision template of the FBMC/OQAM operations
 * (internal).  tb_fbmc.c includes it once per precision after defining
 * REAL (float or double), FFTROW (tb_fft_core_row_f32 or _f64) and SFX(name)
 * (name##_f32 or name##_f64, with _avx2 appended for the copy compiled
 * for AVX2).  The algorithm and layouts are pictured at the top of
 * tb_fbmc.c.  Arguments are trusted: the public entry points check them.
 */

/* d[j] += h[j] * a[j], j < n: part of the polyphase network over
 * interleaved complex data (h holds each tap twice, so this is a plain
 * REAL loop that compilers vectorise). */
static void SFX(fbmc_axpy)(REAL *restrict d, const REAL *restrict h, const REAL *restrict a,
                           size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] += h[j] * a[j];
}

/* d[j] += h1[j] * a[j] + h2[j] * b[j]: both half-symbols of a symbol
 * added in one read-modify-write of the output. */
static void SFX(fbmc_axpy2)(REAL *restrict d, const REAL *restrict h1,
                            const REAL *restrict a, const REAL *restrict h2,
                            const REAL *restrict b, size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] += h1[j] * a[j] + h2[j] * b[j];
}
/* d[j] = h[j] * a[j] and d[j] = h1[j] * a[j] + h2[j] * b[j]: the two
 * half periods a symbol reaches first (no earlier symbol wrote there), so
 * they are stored instead of zeroed and added to. */
static void SFX(fbmc_set)(REAL *restrict d, const REAL *restrict h, const REAL *restrict a,
                          size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] = h[j] * a[j];
}

static void SFX(fbmc_set2)(REAL *restrict d, const REAL *restrict h1,
                           const REAL *restrict a, const REAL *restrict h2,
                           const REAL *restrict b, size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] = h1[j] * a[j] + h2[j] * b[j];
}


/* a[j] += h1[j] * y[j], b[j] += h2[j] * y[j]: one read of the input
 * feeds the folds of both half-symbols. */
static void SFX(fbmc_fold2)(REAL *restrict a, const REAL *restrict h1, REAL *restrict b,
                            const REAL *restrict h2, const REAL *restrict y, size_t n)
{
    size_t j;
    for (j = 0; j < n; j++) {
        a[j] += h1[j] * y[j];
        b[j] += h2[j] * y[j];
    }
}

/* Where the index pair (a, b) = ((l + sh) mod m, (c - l) mod m) wraps:
 * cut points 0 = cut[0] < ... < cut[n-1] = m such that inside each
 * piece a runs up and b runs down by one without wrapping.  Returns n. */
static size_t SFX(fbmc_cuts)(size_t m, size_t sh, size_t c, size_t cut[4])
{
    size_t n = 0, x, y, t;
    x = sh ? m - sh : m; /* a wraps here */
    y = c + 1;           /* b wraps here (c < m) */
    if (x > y) {
        t = x;
        x = y;
        y = t;
    }
    cut[n++] = 0;
    if (x > 0 && x < m)
        cut[n++] = x;
    if (y > 0 && y < m && y != x)
        cut[n++] = y;
    cut[n++] = m;
    return n;
}

/* Split z into the half-symbols of one symbol (times sg):
 *   A[l] = sg (z[a] + conj(z[b])),  B[l] = sg (z[a] - conj(z[b])),
 *   a = (l + sh) mod m,  b = (m/2 + sh - l) mod m,
 * piece by piece so that the inner loop has no index arithmetic. */
static void SFX(fbmc_split)(const REAL *z, size_t m, size_t sh, REAL sg, REAL *A, REAL *B)
{
    size_t cut[4], n, i, j;
    const size_t c = (m / 2 + sh) % m;
    n = SFX(fbmc_cuts)(m, sh, c, cut);
    for (i = 0; i + 1 < n; i++) {
        const size_t lo = cut[i], len = cut[i + 1] - lo;
        const REAL *za = z + 2 * ((lo + sh) % m);
        const REAL *zb = z + 2 * ((c + m - lo) % m);
        REAL *a = A + 2 * lo, *b = B + 2 * lo;
        for (j = 0; j < len; j++) {
            const REAL zr = za[2 * j], zi = za[2 * j + 1];
            const REAL wr = zb[-2 * (ptrdiff_t)j], wi = zb[1 - 2 * (ptrdiff_t)j];
            a[2 * j] = sg * (zr + wr);
            a[2 * j + 1] = sg * (zi - wi);
            b[2 * j] = sg * (zr - wr);
            b[2 * j + 1] = sg * (zi + wi);
        }
    }
}

/* The analysis side: for p < m, with r = (m/2 - p) mod m,
 *   t[p] = (A[p] + conj(A[r]) + B[p] - conj(B[r])) / 2
 * written split to (tr, ti) at position (p + sh) mod m; piece by piece. */
static void SFX(fbmc_unsplit)(const REAL *A, const REAL *B, size_t m, size_t sh, REAL *tr,
                              REAL *ti)
{
    size_t cut[4], n, i, j;
    const size_t c = m / 2;
    n = SFX(fbmc_cuts)(m, sh, c, cut);
    for (i = 0; i + 1 < n; i++) {
        const size_t lo = cut[i], len = cut[i + 1] - lo, r0 = (c + m - lo) % m;
        const REAL *ap = A + 2 * lo, *bp = B + 2 * lo, *ar = A + 2 * r0, *br = B + 2 * r0;
        REAL *dr = tr + (lo + sh) % m, *di = ti + (lo + sh) % m;
        for (j = 0; j < len; j++) {
            const ptrdiff_t q = -2 * (ptrdiff_t)j;
            dr[j] = (REAL)0.5 * (ap[2 * j] + ar[q] + bp[2 * j] - br[q]);
            di[j] = (REAL)0.5 * (ap[2 * j + 1] - ar[q + 1] + bp[2 * j + 1] + br[q + 1]);
        }
    }
}

/* row[k] *= g * conj(c[k]) (g = +-1), or, with rot set, *= -j g conj(c[k]). */
static void SFX(fbmc_derotate)(REAL *row, const REAL *c, size_t m, REAL g, int rot)
{
    size_t k;
    for (k = 0; k < m; k++) {
        const REAL xr = row[2 * k], xi = row[2 * k + 1];
        const REAL yr = g * (xr * c[2 * k] + xi * c[2 * k + 1]);
        const REAL yi = g * (xi * c[2 * k] - xr * c[2 * k + 1]);
        if (rot) {
            row[2 * k] = yi;
            row[2 * k + 1] = -yr;
        } else {
            row[2 * k] = yr;
            row[2 * k + 1] = yi;
        }
    }
}

/* Synthesis after the argument checks (tb_fbmc_synthesize_*). */
static void SFX(fbmc_synthesize)(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                                 size_t start_symbol, const REAL *grid,
                                 ptrdiff_t grid_batch_stride, REAL *out,
                                 ptrdiff_t out_batch_stride, void *work)
{
    const tb_fft_plan *f;
    const REAL *hh, *c;
    REAL *w = (REAL *)work, *z, *A, *B;
    size_t m, half, taps, tail, q, s, k, i;
    f = plan->fft;
    m = plan->m;
    half = m / 2;
    taps = plan->overlap * m;
    tail = taps - half;
    hh = (const REAL *)plan->hh;
    c = (const REAL *)plan->c;
    z = w + 4 * f->half; /* the rows after the FFT workspace */
    A = z + 2 * m;
    B = A + 2 * m;

    for (q = 0; q < batch; q++) {
        REAL *o = out + 2 * (ptrdiff_t)q * out_batch_stride;
        const REAL *g = grid + 2 * (ptrdiff_t)q * grid_batch_stride;
        if (n_symbols == 0) {
            memset(o, 0, 2 * tail * sizeof(REAL));
            continue;
        }
        /* Symbol 0 covers [0, KM + M/2) and starts from zeros; every later
         * symbol reaches M samples further, and stores (instead of adds)
         * its last two half periods, which no earlier symbol touched. */
        memset(o, 0, 2 * (taps + half) * sizeof(REAL));
        for (s = 0; s < n_symbols; s++) {
            const REAL *row = g + 2 * s * m;
            const REAL sg = ((start_symbol + s) & 1) ? (REAL)-0.5 : (REAL)0.5;
            REAL *oa = o + 2 * s * m;
            if (plan->shift) {
                /* c is a circular shift by plan->shift samples (M % 4 == 0):
                 * the IFFT reads the grid row where it lies and z is read
                 * shifted while it is split. */
                FFTROW(f, 1, row, row + 1, 2, z, 1, (REAL)1, w);
                SFX(fbmc_split)(z, m, plan->shift, sg, A, B);
            } else {
                /* X = q c, split, into W0; the IFFT writes z interleaved. */
                for (k = 0; k < m; k++) {
                    const REAL qr = row[2 * k], qi = row[2 * k + 1];
                    w[k] = qr * c[2 * k] - qi * c[2 * k + 1];
                    w[f->half + k] = qr * c[2 * k + 1] + qi * c[2 * k];
                }
                FFTROW(f, 1, w, w + f->half, 1, z, 1, (REAL)1, w);
                SFX(fbmc_split)(z, m, 0, sg, A, B);
            }
            /* The polyphase network.  In REALs, a period is 2M and a half
             * period M; A starts at oa, B half a period later, so each
             * half period of the output takes one A half and one B half:
             *   out [iM, iM+M/2)      += h[iM+p] A[p]     + h[iM-M/2+p] B[M/2+p]
             *   out [iM+M/2, iM+M)    += h[iM+M/2+p] A[M/2+p] + h[iM+p] B[p]
             * (no B term before M/2, no A term from KM on). */
            SFX(fbmc_axpy)(oa, hh, A, m);
            if (plan->overlap == 1)
                SFX(fbmc_set2)(oa + m, hh + m, A + m, hh, B, m);
            else
                SFX(fbmc_axpy2)(oa + m, hh + m, A + m, hh, B, m);
            for (i = 1; i < plan->overlap; i++) {
                REAL *d = oa + 2 * i * m;
                const REAL *h = hh + 2 * i * m;
                SFX(fbmc_axpy2)(d, h, A, h - m, B + m, m);
                if (i + 1 < plan->overlap)
                    SFX(fbmc_axpy2)(d + m, h + m, A + m, h, B, m);
                else /* half period 2K - 1: first reached by this symbol */
                    SFX(fbmc_set2)(d + m, h + m, A + m, h, B, m);
            }
            SFX(fbmc_set)(oa + 2 * taps, hh + 2 * taps - m, B + m, m); /* half period 2K */
        }
    }
}

/* Analysis after the argument checks (tb_fbmc_analyze_*). */
static void SFX(fbmc_analyze)(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                              size_t start_symbol, const REAL *in, ptrdiff_t in_batch_stride,
                              int separate, REAL *out, ptrdiff_t out_batch_stride, void *work)
{
    const tb_fft_plan *f;
    const REAL *hh, *c;
    REAL *w = (REAL *)work, *A, *B;
    size_t m, q, s, b, rows;
    f = plan->fft;
    m = plan->m;
    hh = (const REAL *)plan->hh;
    c = (const REAL *)plan->c;
    A = w + 4 * f->half + 2 * m; /* Z (unused here), then A and B */
    B = A + 2 * m;
    rows = separate ? 2 : 1;

    for (q = 0; q < batch; q++) {
        for (s = 0; s < n_symbols; s++) {
            const REAL *y0 = in + 2 * ((ptrdiff_t)q * in_batch_stride + (ptrdiff_t)(s * m));
            const REAL sg = ((start_symbol + s) & 1) ? (REAL)-1 : (REAL)1;
            REAL *o = out + 2 * ((ptrdiff_t)q * out_batch_stride + (ptrdiff_t)(s * m * rows));
            /* Fold each half-symbol's K M samples into M, reading the
             * input once: half period b of the input (M REALs) belongs to
             * the first half-symbol's fold with taps b (b < 2K) and to the
             * second's with taps b - 1 (b >= 1). */
            memset(A, 0, 4 * m * sizeof(REAL)); /* A and B */
            SFX(fbmc_axpy)(A, hh, y0, m);
            for (b = 1; b < 2 * plan->overlap; b++)
                SFX(fbmc_fold2)(A + (b & 1) * m, hh + b * m, B + ((b - 1) & 1) * m,
                                hh + (b - 1) * m, y0 + b * m, m);
            SFX(fbmc_axpy)(B + m, hh + (2 * plan->overlap - 1) * m, y0 + 2 * plan->overlap * m, m);
            if (separate) {
                FFTROW(f, 0, A, A + 1, 2, o, 1, (REAL)1, w);
                SFX(fbmc_derotate)(o, c, m, sg, 0);
                FFTROW(f, 0, B, B + 1, 2, o + 2 * m, 1, (REAL)1, w);
                SFX(fbmc_derotate)(o + 2 * m, c, m, sg, 1);
            } else {
                /* Both real decisions from one FFT (see tb_fbmc.c); with
                 * plan->shift, conj(c) is applied as a circular shift of t
                 * and the sign as the FFT's scale. */
                const size_t sh = plan->shift;
                SFX(fbmc_unsplit)(A, B, m, sh, w, w + f->half);
                if (sh) {
                    FFTROW(f, 0, w, w + f->half, 1, o, 1, sg, w);
                } else {
                    FFTROW(f, 0, w, w + f->half, 1, o, 1, (REAL)1, w);
                    SFX(fbmc_derotate)(o, c, m, sg, 0);
                }
            }
        }
    }
}
