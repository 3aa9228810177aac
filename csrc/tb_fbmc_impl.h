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

/* d[j] = h[j] * a[j], j < n: the first tap of a slowly gathered output. */
static void SFX(fbmc_set)(REAL *restrict d, const REAL *restrict h, const REAL *restrict a,
                          size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] = h[j] * a[j];
}

/* The synthesis network gathers: every output half period is the sum of
 * its 2K contributions and is stored once.  In REALs a half period is
 * m = M (M/2 complex samples), and output half period j is
 *
 *     out_j[t] = sum_i hh[i m + t] x_{j-i}[(i & 1) m + t],   t < m,
 *
 * x_n the row of half-symbol n (A or B, 2m REALs), i over the taps whose
 * half-symbol exists (0 <= j - i < 2S).  The rows sit in a ring of
 * `slots` rows (row n in slot n mod slots), FBMC_ROW(m) REALs apart. */
#define FBMC_BLOCK (TB_FBMC_BLOCK_BYTES / sizeof(REAL)) /* REALs per block */
/* REALs from one row to the next: 2m and a cache line, so that the rows'
 * blocks at one position do not all fall into one L1 set when 2m REALs
 * is a multiple of 4 KiB (see TB_FBMC_PAD in tb_fbmc.c). */
#define FBMC_ROW(m) (2 * (m) + TB_FBMC_PAD / sizeof(REAL))
/* Output half periods per run of the block kernels (their outputs stay in
 * L1 from one tap group to the next), and the most rows a run reads
 * (2K - 1 + FBMC_RUN: K up to 24; larger K take fbmc_gather_slow). */
#define FBMC_RUN 16
#define FBMC_TABLE 64

/* Taps i0 .. i0 + 3 (i0 even) of one block of len <= FBMC_BLOCK REALs, for
 * the nj output half periods of a run: d[jj m + t] = (or +=) sum_i
 * h[i FBMC_BLOCK + t] row[jj - i][(i & 1) m + t], t < len, with h the
 * block's taps (plan->hb), row[] the run's row table (row[jj] = row of the
 * run's half period jj) and d and the rows read at the block's offset
 * `off`. */
static void SFX(fbmc_net4)(REAL *restrict d, const REAL *const *row, size_t off,
                           const REAL *restrict h, size_t m, size_t i0, size_t nj,
                           size_t len, int add)
{
    const REAL *restrict h0 = h + i0 * FBMC_BLOCK;
    size_t jj, t;
    for (jj = 0; jj < nj; jj++) {
        const REAL *const *r = row + jj - i0; /* r[-k]: row of tap i0 + k */
        const REAL *restrict xa = r[0] + off, *restrict xb = r[-1] + m + off;
        const REAL *restrict xc = r[-2] + off, *restrict xd = r[-3] + m + off;
        REAL *restrict dj = d + jj * m;
        if (add)
            for (t = 0; t < len; t++)
                dj[t] += (h0[t] * xa[t] + h0[FBMC_BLOCK + t] * xb[t]) +
                         (h0[2 * FBMC_BLOCK + t] * xc[t] + h0[3 * FBMC_BLOCK + t] * xd[t]);
        else
            for (t = 0; t < len; t++)
                dj[t] = (h0[t] * xa[t] + h0[FBMC_BLOCK + t] * xb[t]) +
                        (h0[2 * FBMC_BLOCK + t] * xc[t] + h0[3 * FBMC_BLOCK + t] * xd[t]);
    }
}

/* The same with taps 0 .. 7 in one pass (K = 4, the common overlap). */
static void SFX(fbmc_net8)(REAL *restrict d, const REAL *const *row, size_t off,
                           const REAL *restrict h, size_t m, size_t nj, size_t len)
{
    size_t jj, t;
    for (jj = 0; jj < nj; jj++) {
        const REAL *const *r = row + jj; /* r[-i]: row of tap i */
        const REAL *restrict x0 = r[0] + off, *restrict x1 = r[-1] + m + off;
        const REAL *restrict x2 = r[-2] + off, *restrict x3 = r[-3] + m + off;
        const REAL *restrict x4 = r[-4] + off, *restrict x5 = r[-5] + m + off;
        const REAL *restrict x6 = r[-6] + off, *restrict x7 = r[-7] + m + off;
        REAL *restrict dj = d + jj * m;
        for (t = 0; t < len; t++)
            dj[t] = ((h[t] * x0[t] + h[FBMC_BLOCK + t] * x1[t]) +
                     (h[2 * FBMC_BLOCK + t] * x2[t] + h[3 * FBMC_BLOCK + t] * x3[t])) +
                    ((h[4 * FBMC_BLOCK + t] * x4[t] + h[5 * FBMC_BLOCK + t] * x5[t]) +
                     (h[6 * FBMC_BLOCK + t] * x6[t] + h[7 * FBMC_BLOCK + t] * x7[t]));
    }
}

/* The same with taps 0 and 1 only (the first pair when K is odd). */
static void SFX(fbmc_net2)(REAL *restrict d, const REAL *const *row, size_t off,
                           const REAL *restrict h, size_t m, size_t nj, size_t len)
{
    size_t jj, t;
    for (jj = 0; jj < nj; jj++) {
        const REAL *const *r = row + jj; /* r[-i]: row of tap i */
        const REAL *restrict xa = r[0] + off, *restrict xb = r[-1] + m + off;
        REAL *restrict dj = d + jj * m;
        for (t = 0; t < len; t++)
            dj[t] = h[t] * xa[t] + h[FBMC_BLOCK + t] * xb[t];
    }
}

/* d[j] (=, +=) h1[j] * a[j] + h2[j] * b[j], j < n: two taps per pass of
 * the slow path below. */
static void SFX(fbmc_set2)(REAL *restrict d, const REAL *restrict h1,
                           const REAL *restrict a, const REAL *restrict h2,
                           const REAL *restrict b, size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] = h1[j] * a[j] + h2[j] * b[j];
}

static void SFX(fbmc_axpy2)(REAL *restrict d, const REAL *restrict h1,
                            const REAL *restrict a, const REAL *restrict h2,
                            const REAL *restrict b, size_t n)
{
    size_t j;
    for (j = 0; j < n; j++)
        d[j] += h1[j] * a[j] + h2[j] * b[j];
}

/* One output half period j the slow way, for the REALs off .. off + len:
 * its taps ilo .. ihi, two per pass (the first 2K - 1 and last 2K - 1 half
 * periods of a burst, which fewer than 2K half-symbols reach; every half
 * period when 2K - 1 + FBMC_RUN > FBMC_TABLE). */
static void SFX(fbmc_gather_slow)(REAL *d, const REAL *ring, size_t slots, const REAL *hh,
                                  size_t m, size_t j, size_t ilo, size_t ihi, size_t off,
                                  size_t len)
{
    size_t i;
    for (i = ilo; i <= ihi; i += 2) {
        const REAL *x = ring + (j - i) % slots * FBMC_ROW(m) + (i & 1) * m + off;
        const REAL *h = hh + i * m + off;
        if (i == ihi) { /* an odd number of taps: the last one alone */
            if (i == ilo)
                SFX(fbmc_set)(d + off, h, x, len);
            else
                SFX(fbmc_axpy)(d + off, h, x, len);
        } else {
            const REAL *y = ring + (j - i - 1) % slots * FBMC_ROW(m) + ((i + 1) & 1) * m + off;
            if (i == ilo)
                SFX(fbmc_set2)(d + off, h, x, h + m, y, len);
            else
                SFX(fbmc_axpy2)(d + off, h, x, h + m, y, len);
        }
    }
}

/* Output half periods j0 <= j < j1 of a burst of n_half = 2S half-symbols
 * into o, from the rows j0 - 2K + 1 .. min(j1, n_half) - 1 in the ring.
 * The half periods every tap reaches go in runs of FBMC_RUN through the
 * block kernels, block by block and tap group after tap group (the
 * first group stores, the others add while the run's block is still in
 * L1); the rest through fbmc_gather_slow. */
static void SFX(fbmc_network)(REAL *o, const REAL *ring, size_t slots, const REAL *hh,
                              const REAL *hb, size_t m, size_t overlap, size_t n_half,
                              size_t j0, size_t j1)
{
    const size_t last = 2 * overlap - 1;
    /* ja <= j < jb: the half periods all 2K taps reach (none when the
     * row table would not hold a run's rows) */
    const size_t ja = j0 > last ? j0 : last, jend = j1 < n_half ? j1 : n_half;
    const size_t jb = jend > ja && last + FBMC_RUN <= FBMC_TABLE ? jend : ja;
    const REAL *row[FBMC_TABLE];
    size_t j, k, off, i0;
    for (j = j0; j < j1; j++) {
        const size_t ilo = j >= n_half ? j - n_half + 1 : 0, ihi = j < last ? j : last;
        if (j < ja || j >= jb)
            SFX(fbmc_gather_slow)(o + j * m, ring, slots, hh, m, j, ilo, ihi, 0, m);
    }
    for (j = ja; j < jb; j += FBMC_RUN) {
        const size_t nj = jb - j < FBMC_RUN ? jb - j : FBMC_RUN;
        for (k = 0; k < last + nj; k++) /* row[k]: row j - last + k */
            row[k] = ring + (j - last + k) % slots * FBMC_ROW(m);
        for (off = 0; off < m; off += FBMC_BLOCK) {
            const size_t len = m - off < FBMC_BLOCK ? m - off : FBMC_BLOCK;
            const REAL *h = hb + off / FBMC_BLOCK * (last + 1) * FBMC_BLOCK;
            REAL *d = o + j * m + off;
            /* (a literal block length where it applies, so that the
             * compiler can lay the block out as straight vector code) */
            if (overlap == 4) {
                if (len == FBMC_BLOCK)
                    SFX(fbmc_net8)(d, row + last, off, h, m, nj, FBMC_BLOCK);
                else
                    SFX(fbmc_net8)(d, row + last, off, h, m, nj, len);
                continue;
            }
            i0 = 0;
            if (overlap & 1) {
                SFX(fbmc_net2)(d, row + last, off, h, m, nj, len);
                i0 = 2;
            }
            for (; i0 < 2 * overlap; i0 += 4)
                if (len == FBMC_BLOCK)
                    SFX(fbmc_net4)(d, row + last, off, h, m, i0, nj, FBMC_BLOCK, i0 > 0);
                else
                    SFX(fbmc_net4)(d, row + last, off, h, m, i0, nj, len, i0 > 0);
        }
    }
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

/* Split z into the half-symbols of one symbol:
 *   A[l] = z[a] + conj(z[b]),  B[l] = z[a] - conj(z[b]),
 *   a = (l + sh) mod m,  b = (m/2 + sh - l) mod m,
 * piece by piece so that the inner loop has no index arithmetic (the
 * sign and the 1/2 are in z already: the FFT's scale). */
static void SFX(fbmc_split)(const REAL *restrict z, size_t m, size_t sh, REAL *restrict A,
                            REAL *restrict B)
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
            a[2 * j] = zr + wr;
            a[2 * j + 1] = zi - wi;
            b[2 * j] = zr - wr;
            b[2 * j + 1] = zi + wi;
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

/* FFT and split of one symbol (grid row `row`, sign sg) into the rows A,
 * B; sg (+-1/2, exact) is the FFT's scale. */
static void SFX(fbmc_symbol)(const tb_fbmc_plan *plan, const REAL *row, REAL sg, REAL *w,
                             REAL *z, REAL *A, REAL *B)
{
    const tb_fft_plan *f = plan->fft;
    const REAL *c = (const REAL *)plan->c;
    const size_t m = plan->m;
    size_t k;
    if (plan->shift) {
        /* c is a circular shift by plan->shift samples (M % 4 == 0): the
         * IFFT reads the grid row where it lies and z is read shifted
         * while it is split. */
        FFTROW(f, 1, row, row + 1, 2, z, 1, sg, w);
        SFX(fbmc_split)(z, m, plan->shift, A, B);
    } else {
        /* X = q c, split, into W0; the IFFT writes z interleaved. */
        for (k = 0; k < m; k++) {
            const REAL qr = row[2 * k], qi = row[2 * k + 1];
            w[k] = qr * c[2 * k] - qi * c[2 * k + 1];
            w[f->half + k] = qr * c[2 * k + 1] + qi * c[2 * k];
        }
        FFTROW(f, 1, w, w + f->half, 1, z, 1, sg, w);
        SFX(fbmc_split)(z, m, 0, A, B);
    }
}

/* Synthesis after the argument checks (tb_fbmc_synthesize_*): chunk by
 * chunk of plan->chunk symbols, the FFT and split of each symbol into two
 * rows of the ring, then the output half periods the chunk completes
 * (with the last chunk, the tail too). */
static void SFX(fbmc_synthesize)(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                                 size_t start_symbol, const REAL *grid,
                                 ptrdiff_t grid_batch_stride, REAL *out,
                                 ptrdiff_t out_batch_stride, void *work)
{
    REAL *w = (REAL *)work, *z, *ring;
    const size_t m = plan->m, last = 2 * plan->overlap - 1, slots = tb_fbmc_slots(plan);
    const size_t tail = plan->overlap * m - m / 2, n_half = 2 * n_symbols;
    size_t q, s, s0, s1;
    z = w + 4 * plan->fft->half; /* the rows after the FFT workspace */
    ring = z + 2 * m;

    for (q = 0; q < batch; q++) {
        REAL *o = out + 2 * (ptrdiff_t)q * out_batch_stride;
        const REAL *g = grid + 2 * (ptrdiff_t)q * grid_batch_stride;
        if (n_symbols == 0) {
            memset(o, 0, 2 * tail * sizeof(REAL));
            continue;
        }
        for (s0 = 0; s0 < n_symbols; s0 = s1) {
            s1 = n_symbols - s0 > plan->chunk ? s0 + plan->chunk : n_symbols;
            for (s = s0; s < s1; s++) {
                const REAL sg = ((start_symbol + s) & 1) ? (REAL)-0.5 : (REAL)0.5;
                SFX(fbmc_symbol)(plan, g + 2 * s * m, sg, w, z,
                                 ring + 2 * s % slots * FBMC_ROW(m),
                                 ring + (2 * s + 1) % slots * FBMC_ROW(m));
            }
            /* Half period j is final once row j exists, and the last
             * 2K - 1 need no further row. */
            SFX(fbmc_network)(o, ring, slots, (const REAL *)plan->hh, (const REAL *)plan->hb,
                              m, plan->overlap, n_half, 2 * s0, s1 < n_symbols ? 2 * s1 : n_half + last);
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
