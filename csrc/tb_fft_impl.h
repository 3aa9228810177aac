/*
 * tb_fft_impl.h -- precision template of the FFT passes (internal).
 *
 * Not a public header.  tb_fft.c includes this file once per precision
 * (and, on x86-64 with GCC or clang, once more per precision compiled for
 * AVX2) after defining
 *
 *     REAL       float or double
 *     SFX(name)  a suffix for the instantiated functions, e.g. name##_f32
 *
 * so that the float and double kernels are written once.  Everything here
 * is static.  The plan layout, the pass structure and the pictures are in
 * tb_fft.c; what each routine needs is repeated beside it.
 *
 * Two complex formats meet here:
 *
 *   interleaved  (the caller's buffers)   re0 im0 re1 im1 re2 im2 ...
 *                element i at p[2 i s], p[2 i s + 1] for element stride s
 *   split        (the workspace)          re0 re1 re2 ... | im0 im1 im2 ...
 *                element i at r[i], m[i] with m = r + half
 *
 * Every routine addresses data through a (re pointer, im pointer, stride
 * in REALs) triple, so one routine serves both: interleaved with stride s
 * is (p, p + 1, 2 s), split is (r, r + half, 1).  Working split inside keeps
 * every inner loop a plain element-by-element loop over contiguous REALs,
 * which a compiler vectorises for any SIMD width without shuffles.
 *
 * Direction.  Every butterfly computes the forward DFT of its r inputs.
 * The inverse transform uses the same kernels:
 *   - twiddles are conjugated (imaginary part times sg = -1, exact), and
 *   - output b of each butterfly is stored in slot (r - b) mod r, because
 *     the inverse r-point DFT equals the forward one read backwards.
 */

/* a <- a * (wr + i wi); a is held in two REAL lvalues. */
#define TB_CMUL(ar, ai, wr, wi)                                                \
    do {                                                                       \
        const REAL tb_wr_ = (wr), tb_wi_ = (wi);                               \
        const REAL tb_tr_ = (ar) * tb_wr_ - (ai) * tb_wi_;                     \
        (ai) = (ar) * tb_wi_ + (ai) * tb_wr_;                                  \
        (ar) = tb_tr_;                                                         \
    } while (0)

/* Read element at REAL offset i of (xr, xi); write sc * value to (yr, yi). */
#define TB_LD(i, re, im)                                                       \
    do {                                                                       \
        (re) = xr[i];                                                          \
        (im) = xi[i];                                                          \
    } while (0)
#define TB_ST(b, at, re, im)                                                   \
    do {                                                                       \
        y##b##r[at] = sc * (re);                                               \
        y##b##i[at] = sc * (im);                                               \
    } while (0)
/* Output pointers of a radix-R column: one restrict pair per output slot,
 * so the compiler knows the R output streams never overlap. */
#define TB_Y(b) REAL *TB_RESTRICT y##b##r, REAL *TB_RESTRICT y##b##i
#define TB_YARGS2 TB_Y(0), TB_Y(1)
#define TB_YARGS3 TB_Y(0), TB_Y(1), TB_Y(2)
#define TB_YARGS4 TB_Y(0), TB_Y(1), TB_Y(2), TB_Y(3)
#define TB_YARGS5 TB_Y(0), TB_Y(1), TB_Y(2), TB_Y(3), TB_Y(4)
#define TB_YARGS8                                                              \
    TB_Y(0), TB_Y(1), TB_Y(2), TB_Y(3), TB_Y(4), TB_Y(5), TB_Y(6), TB_Y(7)
/* Multiply a_q by twiddle q of butterfly k (q >= 1). */
#define TB_TW(q, ar, ai)                                                       \
    TB_CMUL(ar, ai, wr[jo * tso + k * ts + ((q) - 1) * tq],                    \
            sg * wi[jo * tso + k * ts + ((q) - 1) * tq])

/*
 * Columns of butterflies.
 *
 * SFX(colR) performs co * cnt radix-R butterflies: co columns of cnt.
 * All offsets and strides are in REALs.  Butterfly (jo, k), jo < co,
 * k < cnt:
 *
 *     a_q = (xr, xi)[jo*xso + k*xs + q*xq]                q = 0 .. R-1
 *     a_q *= (wr, wi)[jo*tso + k*ts + (q-1)*tq], conjugated when sg < 0,
 *            for q >= 1 and only when has_tw
 *     (ybr, ybi)[jo*yso + k*ys] = sc * sum_q a_q exp(-2 pi i q b / R)
 *
 * with one output pointer pair per slot b (the caller's pointers carry
 * the slot permutation of the inverse direction).  ts == 0 means one
 * twiddle set per column.  Keeping the column loop (jo) inside the
 * routine lets the compiler set up the many pointers once, which matters
 * for short columns.
 *
 * These are forced inline: the pass routines call them with literal
 * strides in the common cases, which is what lets the compiler turn the
 * loop into straight SIMD code.
 */

TB_INLINE void SFX(col2)(size_t co, ptrdiff_t xso, ptrdiff_t yso, ptrdiff_t tso,
                         size_t cnt, const REAL *TB_RESTRICT xr,
                         const REAL *TB_RESTRICT xi, ptrdiff_t xs, ptrdiff_t xq,
                         TB_YARGS2, ptrdiff_t ys, const REAL *TB_RESTRICT wr,
                         const REAL *TB_RESTRICT wi, int has_tw, ptrdiff_t ts, ptrdiff_t tq,
                         REAL sg, REAL sc)
{
    const ptrdiff_t c = (ptrdiff_t)cnt;
    ptrdiff_t jo, k;
    (void)tq;
    for (jo = 0; jo < (ptrdiff_t)co; jo++)
    for (k = 0; k < c; k++) {
        const ptrdiff_t i = jo * xso + k * xs, o = jo * yso + k * ys;
        REAL a0r, a0i, a1r, a1i;
        TB_LD(i, a0r, a0i);
        TB_LD(i + xq, a1r, a1i);
        if (has_tw)
            TB_TW(1, a1r, a1i);
        TB_ST(0, o, a0r + a1r, a0i + a1i);
        TB_ST(1, o, a0r - a1r, a0i - a1i);
    }
}

TB_INLINE void SFX(col3)(size_t co, ptrdiff_t xso, ptrdiff_t yso, ptrdiff_t tso,
                         size_t cnt, const REAL *TB_RESTRICT xr,
                         const REAL *TB_RESTRICT xi, ptrdiff_t xs, ptrdiff_t xq,
                         TB_YARGS3, ptrdiff_t ys, const REAL *TB_RESTRICT wr,
                         const REAL *TB_RESTRICT wi, int has_tw, ptrdiff_t ts, ptrdiff_t tq,
                         REAL sg, REAL sc)
{
    /* sin(2 pi / 3) = sqrt(3) / 2 */
    const REAL s = (REAL)0.86602540378443864676372317075293618L;
    const ptrdiff_t c = (ptrdiff_t)cnt;
    ptrdiff_t jo, k;
    for (jo = 0; jo < (ptrdiff_t)co; jo++)
    for (k = 0; k < c; k++) {
        const ptrdiff_t i = jo * xso + k * xs, o = jo * yso + k * ys;
        REAL a0r, a0i, a1r, a1i, a2r, a2i;
        REAL t1r, t1i, t2r, t2i, mr, mi;
        TB_LD(i, a0r, a0i);
        TB_LD(i + xq, a1r, a1i);
        TB_LD(i + 2 * xq, a2r, a2i);
        if (has_tw) {
            TB_TW(1, a1r, a1i);
            TB_TW(2, a2r, a2i);
        }
        /* y0 = a0 + t1,  y1 = a0 - t1/2 - i s t2,  y2 = a0 - t1/2 + i s t2 */
        t1r = a1r + a2r;
        t1i = a1i + a2i;
        t2r = s * (a1r - a2r);
        t2i = s * (a1i - a2i);
        mr = a0r - (REAL)0.5 * t1r;
        mi = a0i - (REAL)0.5 * t1i;
        TB_ST(0, o, a0r + t1r, a0i + t1i);
        TB_ST(1, o, mr + t2i, mi - t2r);
        TB_ST(2, o, mr - t2i, mi + t2r);
    }
}

TB_INLINE void SFX(col4)(size_t co, ptrdiff_t xso, ptrdiff_t yso, ptrdiff_t tso,
                         size_t cnt, const REAL *TB_RESTRICT xr,
                         const REAL *TB_RESTRICT xi, ptrdiff_t xs, ptrdiff_t xq,
                         TB_YARGS4, ptrdiff_t ys, const REAL *TB_RESTRICT wr,
                         const REAL *TB_RESTRICT wi, int has_tw, ptrdiff_t ts, ptrdiff_t tq,
                         REAL sg, REAL sc)
{
    const ptrdiff_t c = (ptrdiff_t)cnt;
    ptrdiff_t jo, k;
    for (jo = 0; jo < (ptrdiff_t)co; jo++)
    for (k = 0; k < c; k++) {
        const ptrdiff_t i = jo * xso + k * xs, o = jo * yso + k * ys;
        REAL a0r, a0i, a1r, a1i, a2r, a2i, a3r, a3i;
        REAL t0r, t0i, t1r, t1i, t2r, t2i, t3r, t3i;
        TB_LD(i, a0r, a0i);
        TB_LD(i + xq, a1r, a1i);
        TB_LD(i + 2 * xq, a2r, a2i);
        TB_LD(i + 3 * xq, a3r, a3i);
        if (has_tw) {
            TB_TW(1, a1r, a1i);
            TB_TW(2, a2r, a2i);
            TB_TW(3, a3r, a3i);
        }
        /* y0 = t0 + t2, y2 = t0 - t2, y1 = t1 - i t3, y3 = t1 + i t3 */
        t0r = a0r + a2r;
        t0i = a0i + a2i;
        t1r = a0r - a2r;
        t1i = a0i - a2i;
        t2r = a1r + a3r;
        t2i = a1i + a3i;
        t3r = a1r - a3r;
        t3i = a1i - a3i;
        TB_ST(0, o, t0r + t2r, t0i + t2i);
        TB_ST(1, o, t1r + t3i, t1i - t3r);
        TB_ST(2, o, t0r - t2r, t0i - t2i);
        TB_ST(3, o, t1r - t3i, t1i + t3r);
    }
}

TB_INLINE void SFX(col5)(size_t co, ptrdiff_t xso, ptrdiff_t yso, ptrdiff_t tso,
                         size_t cnt, const REAL *TB_RESTRICT xr,
                         const REAL *TB_RESTRICT xi, ptrdiff_t xs, ptrdiff_t xq,
                         TB_YARGS5, ptrdiff_t ys, const REAL *TB_RESTRICT wr,
                         const REAL *TB_RESTRICT wi, int has_tw, ptrdiff_t ts, ptrdiff_t tq,
                         REAL sg, REAL sc)
{
    /* cos and sin of 2 pi / 5 and 4 pi / 5 */
    const REAL c1 = (REAL)0.30901699437494742410229341718281906L;
    const REAL c2 = (REAL)-0.80901699437494742410229341718281906L;
    const REAL s1 = (REAL)0.95105651629515357211643933337938214L;
    const REAL s2 = (REAL)0.58778525229247312916870595463907277L;
    const ptrdiff_t c = (ptrdiff_t)cnt;
    ptrdiff_t jo, k;
    for (jo = 0; jo < (ptrdiff_t)co; jo++)
    for (k = 0; k < c; k++) {
        const ptrdiff_t i = jo * xso + k * xs, o = jo * yso + k * ys;
        REAL a0r, a0i, a1r, a1i, a2r, a2i, a3r, a3i, a4r, a4i;
        REAL t1r, t1i, t2r, t2i, t3r, t3i, t4r, t4i;
        REAL b1r, b1i, b2r, b2i, d1r, d1i, d2r, d2i;
        TB_LD(i, a0r, a0i);
        TB_LD(i + xq, a1r, a1i);
        TB_LD(i + 2 * xq, a2r, a2i);
        TB_LD(i + 3 * xq, a3r, a3i);
        TB_LD(i + 4 * xq, a4r, a4i);
        if (has_tw) {
            TB_TW(1, a1r, a1i);
            TB_TW(2, a2r, a2i);
            TB_TW(3, a3r, a3i);
            TB_TW(4, a4r, a4i);
        }
        /*
         * t1 = a1 + a4, t2 = a2 + a3, t3 = a1 - a4, t4 = a2 - a3
         * b1 = a0 + c1 t1 + c2 t2      d1 = s1 t3 + s2 t4
         * b2 = a0 + c2 t1 + c1 t2      d2 = s2 t3 - s1 t4
         * y0 = a0 + t1 + t2
         * y1 = b1 - i d1,  y4 = b1 + i d1,  y2 = b2 - i d2,  y3 = b2 + i d2
         */
        t1r = a1r + a4r;
        t1i = a1i + a4i;
        t2r = a2r + a3r;
        t2i = a2i + a3i;
        t3r = a1r - a4r;
        t3i = a1i - a4i;
        t4r = a2r - a3r;
        t4i = a2i - a3i;
        b1r = a0r + c1 * t1r + c2 * t2r;
        b1i = a0i + c1 * t1i + c2 * t2i;
        b2r = a0r + c2 * t1r + c1 * t2r;
        b2i = a0i + c2 * t1i + c1 * t2i;
        d1r = s1 * t3r + s2 * t4r;
        d1i = s1 * t3i + s2 * t4i;
        d2r = s2 * t3r - s1 * t4r;
        d2i = s2 * t3i - s1 * t4i;
        TB_ST(0, o, a0r + t1r + t2r, a0i + t1i + t2i);
        TB_ST(1, o, b1r + d1i, b1i - d1r);
        TB_ST(2, o, b2r + d2i, b2i - d2r);
        TB_ST(3, o, b2r - d2i, b2i + d2r);
        TB_ST(4, o, b1r - d1i, b1i + d1r);
    }
}

TB_INLINE void SFX(col8)(size_t co, ptrdiff_t xso, ptrdiff_t yso, ptrdiff_t tso,
                         size_t cnt, const REAL *TB_RESTRICT xr,
                         const REAL *TB_RESTRICT xi, ptrdiff_t xs, ptrdiff_t xq,
                         TB_YARGS8, ptrdiff_t ys, const REAL *TB_RESTRICT wr,
                         const REAL *TB_RESTRICT wi, int has_tw, ptrdiff_t ts, ptrdiff_t tq,
                         REAL sg, REAL sc)
{
    /* sqrt(1/2) = cos(pi/4) */
    const REAL h = (REAL)0.70710678118654752440084436210484904L;
    const ptrdiff_t c = (ptrdiff_t)cnt;
    ptrdiff_t jo, k;
    for (jo = 0; jo < (ptrdiff_t)co; jo++)
    for (k = 0; k < c; k++) {
        const ptrdiff_t i = jo * xso + k * xs, o = jo * yso + k * ys;
        REAL a0r, a0i, a1r, a1i, a2r, a2i, a3r, a3i, a4r, a4i, a5r, a5i, a6r, a6i, a7r,
            a7i;
        REAL b0r, b0i, b1r, b1i, b2r, b2i, b3r, b3i, c0r, c0i, c1r, c1i, c2r, c2i, c3r,
            c3i, ur, ui, vr, vi;
        TB_LD(i, a0r, a0i);
        TB_LD(i + xq, a1r, a1i);
        TB_LD(i + 2 * xq, a2r, a2i);
        TB_LD(i + 3 * xq, a3r, a3i);
        TB_LD(i + 4 * xq, a4r, a4i);
        TB_LD(i + 5 * xq, a5r, a5i);
        TB_LD(i + 6 * xq, a6r, a6i);
        TB_LD(i + 7 * xq, a7r, a7i);
        if (has_tw) {
            TB_TW(1, a1r, a1i);
            TB_TW(2, a2r, a2i);
            TB_TW(3, a3r, a3i);
            TB_TW(4, a4r, a4i);
            TB_TW(5, a5r, a5i);
            TB_TW(6, a6r, a6i);
            TB_TW(7, a7r, a7i);
        }
        /*
         * b_k = a_k + a_{k+4},  c_k = (a_k - a_{k+4}) w_8^k   (k = 0..3)
         * even outputs y_{2p} = DFT4(b)_p, odd outputs y_{2p+1} = DFT4(c)_p
         * w_8 = (1 - i)/sqrt 2, w_8^2 = -i, w_8^3 = -(1 + i)/sqrt 2
         */
        b0r = a0r + a4r;
        b0i = a0i + a4i;
        b1r = a1r + a5r;
        b1i = a1i + a5i;
        b2r = a2r + a6r;
        b2i = a2i + a6i;
        b3r = a3r + a7r;
        b3i = a3i + a7i;
        c0r = a0r - a4r;
        c0i = a0i - a4i;
        ur = a1r - a5r;
        ui = a1i - a5i;
        c1r = h * (ur + ui);
        c1i = h * (ui - ur);
        c2r = a2i - a6i;
        c2i = a6r - a2r;
        ur = a3r - a7r;
        ui = a3i - a7i;
        c3r = h * (ui - ur);
        c3i = -h * (ur + ui);
        /* DFT4(b): (b0 + b2) +- (b1 + b3), (b0 - b2) -+ i (b1 - b3) */
        ur = b0r + b2r;
        ui = b0i + b2i;
        vr = b1r + b3r;
        vi = b1i + b3i;
        TB_ST(0, o, ur + vr, ui + vi);
        TB_ST(4, o, ur - vr, ui - vi);
        ur = b0r - b2r;
        ui = b0i - b2i;
        vr = b1r - b3r;
        vi = b1i - b3i;
        TB_ST(2, o, ur + vi, ui - vr);
        TB_ST(6, o, ur - vi, ui + vr);
        /* DFT4(c) */
        ur = c0r + c2r;
        ui = c0i + c2i;
        vr = c1r + c3r;
        vi = c1i + c3i;
        TB_ST(1, o, ur + vr, ui + vi);
        TB_ST(5, o, ur - vr, ui - vi);
        ur = c0r - c2r;
        ui = c0i - c2i;
        vr = c1r - c3r;
        vi = c1i - c3i;
        TB_ST(3, o, ur + vi, ui - vr);
        TB_ST(7, o, ur - vi, ui + vr);
    }
}

/*
 * The last pass when it is radix 4 (m = 1) and writes the caller's
 * contiguous interleaved output: 8 columns j0 .. j0+7 at a time.  A loop
 * over j would read x[q + 4j] with stride 4, which compilers turn into
 * slow gathers; instead the 8 x 4 block of inputs (contiguous) is
 * transposed into a small local array so that j becomes the vector lane:
 *
 *     x[q + 4*(j0 + jj)]   ->  t[q*8 + jj]                   (jj < 8)
 *     col4 on t, twiddles w[(q-1)*tq + j0 + jj]  ->  u[b*8 + jj]
 *     u[b*8 + jj]          ->  y[yo[b] + 2*jj] (re), y[yo[b] + 2*jj + 1] (im)
 *
 * All sizes are compile-time constants, so each loop nest becomes a few
 * SIMD loads, shuffles and stores.  xr, xi point at x[4*j0], y at the
 * output element j0; yo holds the slot offsets in REALs (slot
 * permutation included).
 */
#define TB_LANES TB_FFT_LANES
TB_INLINE void SFX(last4)(const REAL *TB_RESTRICT xr, const REAL *TB_RESTRICT xi,
                          REAL *y, const ptrdiff_t *yo, const REAL *TB_RESTRICT wr,
                          const REAL *TB_RESTRICT wi, ptrdiff_t tq, REAL sg, REAL sc)
{
    REAL tr[4 * TB_LANES], ti[4 * TB_LANES], ur[4 * TB_LANES], ui[4 * TB_LANES];
    const ptrdiff_t L = TB_LANES;
    ptrdiff_t jj, q, b;
    for (jj = 0; jj < L; jj++)
        for (q = 0; q < 4; q++) {
            tr[q * L + jj] = xr[q + 4 * jj];
            ti[q * L + jj] = xi[q + 4 * jj];
        }
    SFX(col4)(1, 0, 0, 0, (size_t)L, tr, ti, 1, L, ur, ui, ur + L, ui + L, ur + 2 * L,
              ui + 2 * L, ur + 3 * L, ui + 3 * L, 1, wr, wi, 1, 1, tq, sg, sc);
    for (b = 0; b < 4; b++) {
        REAL *yb = y + yo[b];
        for (jj = 0; jj < L; jj++) {
            yb[2 * jj] = ur[b * L + jj];
            yb[2 * jj + 1] = ui[b * L + jj];
        }
    }
}

/*
 * One Stockham pass of radix R (see the picture in tb_fft.c), in logical
 * element indices:
 *
 *     for j in [0, l), g in [0, m):
 *         c_q = x[g + m*(q + R*j)] * w_{l R}^(q j)           q < R
 *         y[g + m*(j + l*b)] = sc * sum_q c_q w_R^(q b)       b < R
 *
 * Physical addresses.  x = (xr, xi, xs) and y = (yr, yi, ys) are distinct
 * buffers, strides in REALs: 2 * stride for the caller's interleaved
 * buffers, 1 for the split workspace.  In the workspace, the R output
 * slots of a pass (the blocks y[m*l*b ...]) are separated by ypad extra
 * REALs, so the R streams of a pass do not all map to the same cache
 * sets when n is a power of two:
 *
 *     slot 0: m*l values | pad | slot 1: m*l values | pad | ... slot R-1
 *
 * The next pass reads that layout: its columns j in
 * [c*lp, (c+1)*lp) (lp = l / R_prev, the previous pass's l) lie in
 * block c, shifted by c * xpad.  xpad = 0 and ypad = 0 for the caller's
 * buffers (first pass input, last pass output).
 *
 * tw points at this pass's block of the twiddle table: row q-1 holds l
 * real parts then l imaginary parts.  Loop order:
 *   l == 1       first pass: one column of m butterflies, no twiddles;
 *   radix 4, m == 1, contiguous interleaved output
 *                the usual last pass: SFX(last4), 8 columns j at a time;
 *   m >= l or m >= TB_COL_MIN
 *                a column over g (contiguous) for each j, twiddles fixed
 *                per column (m == 4 gets a copy with the length known);
 *   otherwise    columns over j (other last passes, m == 1, land here),
 *                twiddles read along the table rows.
 * The branches with literal strides are the ones the compiler vectorises
 * well; the general branches (SFX(colgR), one out-of-line copy per radix)
 * serve unusual caller strides.
 */

/* The output pointer arguments of a radix-R column whose slot b starts
 * at REAL offset yo[b] + off from (yr, yi). */
#define TB_YP(b, off) yr + yo[b] + (off), yi + yo[b] + (off)
#define TB_YPASS2(off) TB_YP(0, off), TB_YP(1, off)
#define TB_YPASS3(off) TB_YP(0, off), TB_YP(1, off), TB_YP(2, off)
#define TB_YPASS4(off) TB_YP(0, off), TB_YP(1, off), TB_YP(2, off), TB_YP(3, off)
#define TB_YPASS5(off)                                                         \
    TB_YP(0, off), TB_YP(1, off), TB_YP(2, off), TB_YP(3, off), TB_YP(4, off)
#define TB_YPASS8(off)                                                         \
    TB_YP(0, off), TB_YP(1, off), TB_YP(2, off), TB_YP(3, off), TB_YP(4, off),  \
        TB_YP(5, off), TB_YP(6, off), TB_YP(7, off)

#define TB_DEFINE_PASS(R)                                                      \
    /* Any strides: one shared, out-of-line copy for the rare layouts. */    \
    static void SFX(colg##R)(size_t co, ptrdiff_t xso, ptrdiff_t yso,          \
                             ptrdiff_t tso, size_t cnt, const REAL *xr,        \
                             const REAL *xi, ptrdiff_t xs, ptrdiff_t xq,       \
                             REAL *yr, REAL *yi, const ptrdiff_t *yo,          \
                             ptrdiff_t ys, const REAL *wr, const REAL *wi,     \
                             int has_tw, ptrdiff_t ts, ptrdiff_t tq, REAL sg,  \
                             REAL sc)                                          \
    {                                                                          \
        SFX(col##R)(co, xso, yso, tso, cnt, xr, xi, xs, xq, TB_YPASS##R(0),    \
                    ys, wr, wi, has_tw, ts, tq, sg, sc);                       \
    }                                                                          \
                                                                               \
    static void SFX(pass##R)(const tb_fft_pass *ps, const REAL *xr,            \
                             const REAL *xi, ptrdiff_t xs, ptrdiff_t xpad,     \
                             REAL *yr, REAL *yi, ptrdiff_t ys, ptrdiff_t ypad, \
                             const REAL *tw, int inv, REAL sc)                 \
    {                                                                          \
        const REAL sg = inv ? (REAL)-1 : (REAL)1;                              \
        const size_t m = ps->m, l = ps->l;                                     \
        const ptrdiff_t pm = (ptrdiff_t)m, pl = (ptrdiff_t)l;                  \
        /* columns j in [c*lp, (c+1)*lp) share one input shift c * xpad;    \
         * without padding all l columns form one block */                    \
        const size_t lp = xpad ? ps->lp : l;                                   \
        const ptrdiff_t plp = (ptrdiff_t)lp, nblk = pl / plp;                  \
        ptrdiff_t yo[8], b, c;                                                 \
        for (b = 0; b < R; b++)                                                \
            yo[b] = (inv ? (R - b) % R : b) * (pm * pl * ys + ypad);           \
        if (l == 1) {                                                          \
            /* y[g + m*b] <- x[g + m*q], no twiddles */                        \
            if (xs == 2 && ys == 1 && sc == (REAL)1)                           \
                SFX(col##R)(1, 0, 0, 0, m, xr, xi, 2, 2 * pm, TB_YPASS##R(0),  \
                            1, NULL, NULL, 0, 0, 0, sg, (REAL)1);              \
            else                                                               \
                SFX(colg##R)(1, 0, 0, 0, m, xr, xi, xs, pm * xs, yr, yi, yo,   \
                             ys, NULL, NULL, 0, 0, 0, sg, sc);                 \
            return;                                                            \
        }                                                                      \
        for (c = 0; c < nblk; c++) {                                           \
            const ptrdiff_t j0 = c * plp;                                      \
            const ptrdiff_t xo = pm * R * j0 * xs + c * xpad;                  \
            const REAL *wr = tw + j0, *wi = tw + pl + j0;                      \
            if (R == 4 && m == 1 && xs == 1 && ys == 2 &&                      \
                plp % TB_LANES == 0) {                                         \
                /* last pass: 8 columns j at a time, see SFX(last4) */         \
                ptrdiff_t jb;                                                  \
                for (jb = 0; jb < plp; jb += TB_LANES)                         \
                    SFX(last4)(xr + xo + R * jb, xi + xo + R * jb,             \
                               yr + 2 * (j0 + jb), yo, wr + jb, wi + jb,       \
                               2 * pl, sg, sc);                                \
            } else if (m >= l || m >= TB_COL_MIN) {                            \
                /* outer j (lp columns), inner g: twiddles fixed per column; \
                 * short columns of 4 (radix 4 before a last radix 4) get a  \
                 * copy with the length known to the compiler.  Radix 8 is  \
                 * only ever the first pass (tb_factor), so its other cases  \
                 * take the generic copy and keep the code small. */         \
                if (R == 4 && m == 4 && xs == 1 && ys == 1 && sc == (REAL)1)   \
                    SFX(col##R)(lp, 4 * R, 4, 1, 4, xr + xo, xi + xo, 1, 4,    \
                                TB_YPASS##R(4 * j0), 1, wr, wi, 1, 0, 2 * pl,  \
                                sg, (REAL)1);                                  \
                else if (R != 8 && xs == 1 && ys == 1 && sc == (REAL)1)        \
                    SFX(col##R)(lp, pm * R, pm, 1, m, xr + xo, xi + xo, 1, pm, \
                                TB_YPASS##R(pm * j0), 1, wr, wi, 1, 0, 2 * pl, \
                                sg, (REAL)1);                                  \
                else                                                           \
                    SFX(colg##R)(lp, pm * R * xs, pm * ys, 1, m, xr + xo,      \
                                 xi + xo, xs, pm * xs, yr + pm * j0 * ys,      \
                                 yi + pm * j0 * ys, yo, ys, wr, wi, 1, 0,      \
                                 2 * pl, sg, sc);                              \
            } else if (R != 8 && m == 1 && xs == 1 && ys == 2) {               \
                /* last pass into contiguous interleaved output */             \
                SFX(col##R)(1, 0, 0, 0, lp, xr + xo, xi + xo, R, 1,            \
                            TB_YPASS##R(2 * j0), 2, wr, wi, 1, 1, 2 * pl, sg,  \
                            sc);                                               \
            } else {                                                           \
                /* outer g, inner j: twiddles read along the rows */           \
                SFX(colg##R)(m, xs, ys, 0, lp, xr + xo, xi + xo, pm * R * xs,  \
                             pm * xs, yr + pm * j0 * ys, yi + pm * j0 * ys, yo, \
                             pm * ys, wr, wi, 1, 1, 2 * pl, sg, sc);           \
            }                                                                  \
        }                                                                      \
    }

TB_DEFINE_PASS(2)
TB_DEFINE_PASS(3)
TB_DEFINE_PASS(4)
TB_DEFINE_PASS(5)
TB_DEFINE_PASS(8)

/*
 * Lanes: TB_LANES rows at once (small n, batch >= TB_LANES).
 *
 * For small transforms the per-pass set-up costs as much as the
 * arithmetic.  With a batch, TB_LANES rows are transformed together:
 * they are first transposed into the workspace so that element e of row
 * r sits at
 *
 *     re: W[e*TB_LANES + r]      im: W[half + e*TB_LANES + r]
 *
 * ("lane" r), then every pass runs the same radix columns as a single
 * row, with the TB_LANES lanes as the innermost, always contiguous, loop
 * (the twiddle is the same for all lanes), and the result is transposed
 * back into the rows.  Each lane sees exactly the operations of the
 * single-row code, so results are bit-identical to it.
 */
#define TB_DEFINE_LANE_PASS(R)                                                 \
    static void SFX(lpass##R)(const tb_fft_pass *ps, const REAL *xr,           \
                              const REAL *xi, REAL *yr, REAL *yi,              \
                              const REAL *tw, int inv)                         \
    {                                                                          \
        const REAL sg = inv ? (REAL)-1 : (REAL)1;                              \
        const ptrdiff_t L = TB_LANES;                                          \
        const ptrdiff_t pm = (ptrdiff_t)ps->m, pl = (ptrdiff_t)ps->l;          \
        ptrdiff_t yo[8], b, j, g;                                              \
        for (b = 0; b < R; b++)                                                \
            yo[b] = (inv ? (R - b) % R : b) * pm * pl * L;                     \
        if (pl == 1)                                                           \
            SFX(col##R)(ps->m, L, L, 0, TB_LANES, xr, xi, 1, pm * L,           \
                        TB_YPASS##R(0), 1, NULL, NULL, 0, 0, 0, sg, (REAL)1);  \
        else if (R != 8 && pm >= pl)                                           \
            for (j = 0; j < pl; j++)                                           \
                SFX(col##R)(ps->m, L, L, 0, TB_LANES, xr + L * pm * R * j,     \
                            xi + L * pm * R * j, 1, pm * L,                    \
                            TB_YPASS##R(L * pm * j), 1, tw + j, tw + pl + j,   \
                            1, 0, 2 * pl, sg, (REAL)1);                        \
        else if (R != 8)                                                       \
            for (g = 0; g < pm; g++)                                           \
                SFX(col##R)(ps->l, L * pm * R, L * pm, 1, TB_LANES, xr + L * g, \
                            xi + L * g, 1, pm * L, TB_YPASS##R(L * g), 1, tw,  \
                            tw + pl, 1, 0, 2 * pl, sg, (REAL)1);               \
    }

TB_DEFINE_LANE_PASS(2)
TB_DEFINE_LANE_PASS(3)
TB_DEFINE_LANE_PASS(4)
TB_DEFINE_LANE_PASS(5)
TB_DEFINE_LANE_PASS(8)

/*
 * The passes of plan p on TB_LANES rows already in lane layout in W0
 * (element e of lane r at work[e*TB_LANES + r], imaginary part half
 * REALs later).  Returns the part holding the result, in the same
 * layout: W0 or W1 depending on the number of passes.  Fused operations
 * (tb_ofdm.c) fill W0 and read the result themselves.
 */
static REAL *SFX(lane_passes)(const tb_fft_plan *p, int inv, REAL *work)
{
    const size_t half = p->half;
    const REAL *tw = (const REAL *)p->twiddles;
    REAL *xr = work, *xi = work + half;
    int ip;
    for (ip = 0; ip < p->npass; ip++) {
        const tb_fft_pass *ps = &p->pass[ip];
        REAL *yr = work + 2 * half * (size_t)((ip + 1) % 2), *yi = yr + half;
        const REAL *t = tw + 2 * ps->tw_offset;
        switch (ps->radix) {
        case 2:
            SFX(lpass2)(ps, xr, xi, yr, yi, t, inv);
            break;
        case 3:
            SFX(lpass3)(ps, xr, xi, yr, yi, t, inv);
            break;
        case 4:
            SFX(lpass4)(ps, xr, xi, yr, yi, t, inv);
            break;
        case 5:
            SFX(lpass5)(ps, xr, xi, yr, yi, t, inv);
            break;
        default:
            SFX(lpass8)(ps, xr, xi, yr, yi, t, inv);
            break;
        }
        xr = yr;
        xi = yi;
    }
    return xr;
}

/* TB_LANES rows: row r at in + 2*r*irs (element stride is), out likewise. */
static void SFX(lanes)(const tb_fft_plan *p, int inv, const REAL *in, ptrdiff_t irs,
                       ptrdiff_t is, REAL *out, ptrdiff_t ors, ptrdiff_t os, REAL scale,
                       REAL *work)
{
    const size_t half = p->half;
    const ptrdiff_t L = TB_LANES, n = (ptrdiff_t)p->n;
    REAL *xr = work, *xi = work + half;
    ptrdiff_t r, e;
    /* rows -> lanes (all input read before any output is written) */
    for (r = 0; r < L; r++) {
        const REAL *src = in + 2 * r * irs;
        if (is == 1)
            for (e = 0; e < n; e++) {
                xr[e * L + r] = src[2 * e];
                xi[e * L + r] = src[2 * e + 1];
            }
        else
            for (e = 0; e < n; e++) {
                xr[e * L + r] = src[2 * e * is];
                xi[e * L + r] = src[2 * e * is + 1];
            }
    }
    xr = SFX(lane_passes)(p, inv, work);
    xi = xr + half;
    /* lanes -> rows, scaled */
    for (r = 0; r < L; r++) {
        REAL *dst = out + 2 * r * ors;
        if (os == 1)
            for (e = 0; e < n; e++) {
                dst[2 * e] = scale * xr[e * L + r];
                dst[2 * e + 1] = scale * xi[e * L + r];
            }
        else
            for (e = 0; e < n; e++) {
                dst[2 * e * os] = scale * xr[e * L + r];
                dst[2 * e * os + 1] = scale * xi[e * L + r];
            }
    }
}

/*
 * Run all passes of plan p on one row.
 *
 * x = (xr, xi, xs) is the input (the caller's interleaved buffer, or a
 * plain split array in W0, see below), out the interleaved output at
 * element stride os.  The passes ping-pong through the split, padded
 * workspace (half = p->half REALs per part):
 *
 *   work: | W0 re | W0 im | W1 re | W1 im |       each part `half` REALs
 *   pass 0     x      -> W1
 *   pass p     W(p%2) -> W((p+1)%2)
 *   pass P-1   ...    -> out  (interleaved, stride os, times scale)
 *
 * All of x is read by the first pass, so out may be the same elements as
 * x (in place).  A fused operation can prepare its input in W0 as a plain
 * split array (re at work[0..n), im at work[half..half+n)) and call this
 * with (work, work + half, 1).
 */
static void SFX(run_passes)(const tb_fft_plan *p, int inv, const REAL *xr,
                            const REAL *xi, ptrdiff_t xs, REAL *out, ptrdiff_t os,
                            REAL scale, REAL *work)
{
    const size_t half = p->half;
    const REAL *tw = (const REAL *)p->twiddles;
    ptrdiff_t xpad = 0;
    int ip;
    for (ip = 0; ip < p->npass; ip++) {
        const tb_fft_pass *ps = &p->pass[ip];
        const int last = (ip == p->npass - 1);
        REAL *w = work + 2 * half * (size_t)((ip + 1) % 2);
        REAL *yr = last ? out : w, *yi = last ? out + 1 : w + half;
        const ptrdiff_t ys = last ? 2 * os : 1;
        const ptrdiff_t ypad = last ? 0 : p->pad;
        const REAL sc = last ? scale : (REAL)1;
        const REAL *t = tw + 2 * ps->tw_offset;
        switch (ps->radix) {
        case 2:
            SFX(pass2)(ps, xr, xi, xs, xpad, yr, yi, ys, ypad, t, inv, sc);
            break;
        case 3:
            SFX(pass3)(ps, xr, xi, xs, xpad, yr, yi, ys, ypad, t, inv, sc);
            break;
        case 4:
            SFX(pass4)(ps, xr, xi, xs, xpad, yr, yi, ys, ypad, t, inv, sc);
            break;
        case 5:
            SFX(pass5)(ps, xr, xi, xs, xpad, yr, yi, ys, ypad, t, inv, sc);
            break;
        default:
            SFX(pass8)(ps, xr, xi, xs, xpad, yr, yi, ys, ypad, t, inv, sc);
            break;
        }
        xr = yr;
        xi = yi;
        xs = 1;
        xpad = ypad;
    }
}

/*
 * Transform one row: out[k] = scale * sum_j in[j] w^(-+jk), elements of
 * in and out at the given element strides (interleaved complex).  in and
 * out may be the same elements.
 */
static void SFX(row)(const tb_fft_plan *p, int inv, const REAL *in, ptrdiff_t is,
                     REAL *out, ptrdiff_t os, REAL scale, REAL *work)
{
    const size_t n = p->n;
    if (n == 1) {
        /* Read both parts before writing: in and out may coincide. */
        const REAL re = in[0], im = in[1];
        out[0] = scale * re;
        out[1] = scale * im;
        return;
    }
    if (p->npass == 1) {
        /* A single butterfly (n <= 5, or 8): copy the input to W0 first,
         * so that the one pass never reads the buffer it writes. */
        size_t k;
        for (k = 0; k < n; k++) {
            const ptrdiff_t i = 2 * (ptrdiff_t)k * is;
            work[k] = in[i];
            work[p->half + k] = in[i + 1];
        }
        SFX(run_passes)(p, inv, work, work + p->half, 1, out, os, scale, work);
        return;
    }
    SFX(run_passes)(p, inv, in, in + 1, 2 * is, out, os, scale, work);
}

/* The batch, arguments already checked: groups of TB_LANES rows where
 * the plan allows, then one row at a time. */
static void SFX(rows)(const tb_fft_plan *p, int inv, size_t batch, const REAL *in,
                      ptrdiff_t in_row_stride, ptrdiff_t in_stride, REAL *out,
                      ptrdiff_t out_row_stride, ptrdiff_t out_stride, REAL scale,
                      REAL *work)
{
    size_t b = 0;
    if (p->lanes)
        for (; b + TB_LANES <= batch; b += TB_LANES) {
            const ptrdiff_t pb = (ptrdiff_t)b;
            SFX(lanes)(p, inv, in + 2 * pb * in_row_stride, in_row_stride, in_stride,
                       out + 2 * pb * out_row_stride, out_row_stride, out_stride, scale,
                       work);
        }
    for (; b < batch; b++) {
        const ptrdiff_t pb = (ptrdiff_t)b;
        SFX(row)(p, inv, in + 2 * pb * in_row_stride, in_stride,
                 out + 2 * pb * out_row_stride, out_stride, scale, work);
    }
}

#undef TB_CMUL
#undef TB_LD
#undef TB_ST
#undef TB_TW
#undef TB_Y
#undef TB_YARGS2
#undef TB_YARGS3
#undef TB_YARGS4
#undef TB_YARGS5
#undef TB_YARGS8
#undef TB_YP
#undef TB_YPASS2
#undef TB_YPASS3
#undef TB_YPASS4
#undef TB_YPASS5
#undef TB_YPASS8
#undef TB_DEFINE_PASS
#undef TB_DEFINE_LANE_PASS
#undef TB_LANES
