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

#ifdef TB_AVX2_KERNELS
/*
 * Radix-4 passes with explicit AVX2 vectors (the AVX2 copy only).
 *
 * The compiler vectorises SFX(col4) well when a column is long, but a
 * Stockham FFT also has passes with short columns (m of 4 or 16 for
 * n <= 4096) and a last pass that gathers its inputs with stride 4;
 * there its code spends more instructions on loop control, peeling and
 * shuffles than on the butterflies.  SFX(vpass4) runs the same
 * butterflies, with the same IEEE operations in the same order as
 * SFX(col4) (so the result is bit-identical to the portable copy), on
 * whole vectors of V = SFX(VLEN) REALs (8 floats or 4 doubles) laid
 * out to suit each kind of pass (logical indices as in the pass
 * picture; x(g, q, j) = x[g + m*(q + 4*j)]):
 *
 *   first pass (l == 1)   lanes = V consecutive g; the caller's
 *                         interleaved input is split into re/im vectors
 *                         on the fly (vld_split);
 *   m % V == 0            lanes = V consecutive g of one column j, one
 *                         broadcast twiddle per column (columns of one
 *                         or two vectors: SFX(vcols4));
 *   m == 4, float         lanes = 4 g of column j, then 4 g of column
 *                         j+1: two 128-bit loads, one 256-bit store
 *                             | x(0..3, q, j) | x(0..3, q, j+1) |
 *   m == 1 (last pass)    lanes = V consecutive columns j; the 4V inputs
 *                         x[4j + q] are contiguous and one transpose
 *                         (vld_t4) turns them into 4 vectors, one per
 *                         q; twiddles are plain vector loads along j,
 *                         and the outputs are interleaved on the way
 *                         out (vst_inter):
 *                             x: j0:q0 q1 q2 q3 | j0+1:q0 q1 q2 q3 | ...
 *                             -> a_q = x(q, j0 .. j0+V-1)
 *
 * Returns 0, leaving everything untouched, for the layouts it does not
 * cover (the caller then runs the plain code).
 */
#define TB_V SFX(vec)

/* a *= (wr + i wi), as TB_CMUL. */
TB_INLINE void SFX(vcmul)(TB_V *ar, TB_V *ai, TB_V wr, TB_V wi)
{
    const TB_V tr = SFX(vsub)(SFX(vmul)(*ar, wr), SFX(vmul)(*ai, wi));
    *ai = SFX(vadd)(SFX(vmul)(*ar, wi), SFX(vmul)(*ai, wr));
    *ar = tr;
}

/* In place: a_b <- sum_q a_q exp(-2 pi i q b / 4), as SFX(col4). */
TB_INLINE void SFX(vdft4)(TB_V *ar, TB_V *ai)
{
    const TB_V t0r = SFX(vadd)(ar[0], ar[2]), t0i = SFX(vadd)(ai[0], ai[2]);
    const TB_V t1r = SFX(vsub)(ar[0], ar[2]), t1i = SFX(vsub)(ai[0], ai[2]);
    const TB_V t2r = SFX(vadd)(ar[1], ar[3]), t2i = SFX(vadd)(ai[1], ai[3]);
    const TB_V t3r = SFX(vsub)(ar[1], ar[3]), t3i = SFX(vsub)(ai[1], ai[3]);
    ar[0] = SFX(vadd)(t0r, t2r);
    ai[0] = SFX(vadd)(t0i, t2i);
    ar[1] = SFX(vadd)(t1r, t3i);
    ai[1] = SFX(vsub)(t1i, t3r);
    ar[2] = SFX(vsub)(t0r, t2r);
    ai[2] = SFX(vsub)(t0i, t2i);
    ar[3] = SFX(vsub)(t1r, t3i);
    ai[3] = SFX(vadd)(t1i, t3r);
}

/* The last radix-4 pass (m == 1) of SFX(vpass4), V columns at a time;
 * conj and scaled are literal constants at each call. */
TB_INLINE void SFX(vlast4)(ptrdiff_t nblk, ptrdiff_t plp, ptrdiff_t pl, const REAL *xr,
                           const REAL *xi, ptrdiff_t xpad, REAL *yr, const ptrdiff_t *yo,
                           const REAL *tw, REAL sc, const int conj, const int scaled)
{
    const ptrdiff_t V = SFX(VLEN);
    const TB_V vsc = SFX(vset1)(sc), vsg = SFX(vset1)((REAL)-1);
    TB_V ar[4], ai[4], wr, wi;
    ptrdiff_t c, jo, q, b;
    for (c = 0; c < nblk; c++) {
        const ptrdiff_t j0 = c * plp;
        const REAL *x0r = xr + 4 * j0 + c * xpad, *x0i = xi + 4 * j0 + c * xpad;
        for (jo = 0; jo < plp; jo += V) {
            const REAL *twr = tw + j0 + jo, *twi = tw + pl + j0 + jo;
            SFX(vld_t4)(x0r + 4 * jo, ar);
            SFX(vld_t4)(x0i + 4 * jo, ai);
            for (q = 1; q < 4; q++) {
                wr = SFX(vld)(twr + (q - 1) * 2 * pl);
                wi = SFX(vld)(twi + (q - 1) * 2 * pl);
                if (conj)
                    wi = SFX(vmul)(vsg, wi);
                SFX(vcmul)(&ar[q], &ai[q], wr, wi);
            }
            SFX(vdft4)(ar, ai);
            for (b = 0; b < 4; b++) {
                if (scaled) {
                    ar[b] = SFX(vmul)(vsc, ar[b]);
                    ai[b] = SFX(vmul)(vsc, ai[b]);
                }
                SFX(vst_inter)(yr + yo[b] + 2 * (j0 + jo), ar[b], ai[b]);
            }
        }
    }
}

/* Passes whose columns are nv = 1 or 2 vectors long (m = nv V; nv is a
 * literal at each call, so the column is straight code): the 4 inputs of
 * column j are the 4 m contiguous REALs from x + 4 m j, its outputs start
 * at y + m j in each slot; one base pointer each (re/im at a fixed
 * distance) keeps the whole loop in registers. */
TB_INLINE void SFX(vcols4)(ptrdiff_t nblk, ptrdiff_t plp, ptrdiff_t pl, const REAL *xr,
                           const REAL *xi, ptrdiff_t xpad, REAL *yr, REAL *yi,
                           const ptrdiff_t *yo, const REAL *tw, REAL sg, const ptrdiff_t nv)
{
    const ptrdiff_t V = SFX(VLEN), pm = nv * V;
    const ptrdiff_t dxi = xi - xr, dyi = yi - yr;
    TB_V ar[4], ai[4], wr[4], wi[4];
    ptrdiff_t c, jo, q, b, g;
    for (c = 0; c < nblk; c++) {
        const ptrdiff_t j0 = c * plp;
        const REAL *sr = xr + 4 * pm * j0 + c * xpad;
        REAL *dr = yr + pm * j0;
        for (jo = 0; jo < plp; jo++, sr += 4 * pm, dr += pm) {
            const REAL *twr = tw + j0 + jo, *twi = tw + pl + j0 + jo;
            for (q = 1; q < 4; q++) {
                wr[q] = SFX(vset1)(twr[(q - 1) * 2 * pl]);
                wi[q] = SFX(vset1)(sg * twi[(q - 1) * 2 * pl]);
            }
            for (g = 0; g < pm; g += V) {
                for (q = 0; q < 4; q++) {
                    ar[q] = SFX(vld)(sr + g + pm * q);
                    ai[q] = SFX(vld)(sr + dxi + g + pm * q);
                }
                for (q = 1; q < 4; q++)
                    SFX(vcmul)(&ar[q], &ai[q], wr[q], wi[q]);
                SFX(vdft4)(ar, ai);
                for (b = 0; b < 4; b++) {
                    SFX(vst)(dr + g + yo[b], ar[b]);
                    SFX(vst)(dr + dyi + g + yo[b], ai[b]);
                }
            }
        }
    }
}

static int SFX(vpass4)(const tb_fft_pass *ps, const REAL *xr, const REAL *xi, ptrdiff_t xs,
                       ptrdiff_t xpad, REAL *yr, REAL *yi, ptrdiff_t ys, ptrdiff_t ypad,
                       const REAL *tw, int inv, REAL sc)
{
    const ptrdiff_t V = SFX(VLEN);
    const REAL sg = inv ? (REAL)-1 : (REAL)1;
    const ptrdiff_t pm = (ptrdiff_t)ps->m, pl = (ptrdiff_t)ps->l;
    const ptrdiff_t plp = xpad ? (ptrdiff_t)ps->lp : pl, nblk = pl / plp;
    ptrdiff_t yo[4], b, c, jo, g, q;
    TB_V ar[4], ai[4], wr[4], wi[4];
    for (b = 0; b < 4; b++)
        yo[b] = (inv ? (4 - b) % 4 : b) * (pm * pl * ys + ypad);
    if (pl == 1) {
        if (ys != 1 || sc != (REAL)1 || pm % V != 0 || (xs != 1 && xs != 2))
            return 0;
        for (g = 0; g < pm; g += V) {
            for (q = 0; q < 4; q++) {
                if (xs == 2) {
                    SFX(vld_split)(xr + 2 * (g + pm * q), &ar[q], &ai[q]);
                } else {
                    ar[q] = SFX(vld)(xr + g + pm * q);
                    ai[q] = SFX(vld)(xi + g + pm * q);
                }
            }
            SFX(vdft4)(ar, ai);
            for (b = 0; b < 4; b++) {
                SFX(vst)(yr + yo[b] + g, ar[b]);
                SFX(vst)(yi + yo[b] + g, ai[b]);
            }
        }
        return 1;
    }
    if (xs != 1)
        return 0;
    if ((pm == V || pm == 2 * V) && ys == 1 && sc == (REAL)1) {
        if (pm == V)
            SFX(vcols4)(nblk, plp, pl, xr, xi, xpad, yr, yi, yo, tw, sg, 1);
        else
            SFX(vcols4)(nblk, plp, pl, xr, xi, xpad, yr, yi, yo, tw, sg, 2);
        return 1;
    }
    if (pm % V == 0 && ys == 1 && sc == (REAL)1) {
        for (c = 0; c < nblk; c++) {
            const ptrdiff_t j0 = c * plp;
            const REAL *x0r = xr + 4 * pm * j0 + c * xpad, *x0i = xi + 4 * pm * j0 + c * xpad;
            for (jo = 0; jo < plp; jo++) {
                const REAL *twr = tw + j0 + jo, *twi = tw + pl + j0 + jo;
                const REAL *sr = x0r + 4 * pm * jo, *si = x0i + 4 * pm * jo;
                const ptrdiff_t o = pm * (j0 + jo);
                for (q = 1; q < 4; q++) {
                    wr[q] = SFX(vset1)(twr[(q - 1) * 2 * pl]);
                    wi[q] = SFX(vset1)(sg * twi[(q - 1) * 2 * pl]);
                }
                for (g = 0; g < pm; g += V) {
                    for (q = 0; q < 4; q++) {
                        ar[q] = SFX(vld)(sr + g + pm * q);
                        ai[q] = SFX(vld)(si + g + pm * q);
                    }
                    for (q = 1; q < 4; q++)
                        SFX(vcmul)(&ar[q], &ai[q], wr[q], wi[q]);
                    SFX(vdft4)(ar, ai);
                    for (b = 0; b < 4; b++) {
                        SFX(vst)(yr + yo[b] + o + g, ar[b]);
                        SFX(vst)(yi + yo[b] + o + g, ai[b]);
                    }
                }
            }
        }
        return 1;
    }
#if TB_AVX2_HALVES
    if (V == 8 && pm == 4 && ys == 1 && sc == (REAL)1 && plp % 2 == 0) {
        for (c = 0; c < nblk; c++) {
            const ptrdiff_t j0 = c * plp;
            const REAL *x0r = xr + 16 * j0 + c * xpad, *x0i = xi + 16 * j0 + c * xpad;
            for (jo = 0; jo < plp; jo += 2) {
                const REAL *twr = tw + j0 + jo, *twi = tw + pl + j0 + jo;
                const REAL *sr = x0r + 16 * jo, *si = x0i + 16 * jo;
                const ptrdiff_t o = 4 * (j0 + jo);
                for (q = 1; q < 4; q++) {
                    const ptrdiff_t t = (q - 1) * 2 * pl;
                    wr[q] = SFX(vset2)(twr[t], twr[t + 1]);
                    wi[q] = SFX(vset2)(sg * twi[t], sg * twi[t + 1]);
                }
                for (q = 0; q < 4; q++) {
                    ar[q] = SFX(vld_2x4)(sr + 4 * q, sr + 16 + 4 * q);
                    ai[q] = SFX(vld_2x4)(si + 4 * q, si + 16 + 4 * q);
                }
                for (q = 1; q < 4; q++)
                    SFX(vcmul)(&ar[q], &ai[q], wr[q], wi[q]);
                SFX(vdft4)(ar, ai);
                for (b = 0; b < 4; b++) {
                    SFX(vst)(yr + yo[b] + o, ar[b]);
                    SFX(vst)(yi + yo[b] + o, ai[b]);
                }
            }
        }
        return 1;
    }
#endif
    if (pm == 1 && ys == 2 && plp % V == 0) {
        /* w * 1 == w and x * 1 == x exactly: the forward direction skips
         * the sign product of the twiddles and a unit scale its product,
         * each in its own compiled copy of the loop */
        if (inv)
            SFX(vlast4)(nblk, plp, pl, xr, xi, xpad, yr, yo, tw, sc, 1, sc != (REAL)1);
        else if (sc != (REAL)1)
            SFX(vlast4)(nblk, plp, pl, xr, xi, xpad, yr, yo, tw, sc, 0, 1);
        else
            SFX(vlast4)(nblk, plp, pl, xr, xi, xpad, yr, yo, tw, sc, 0, 0);
        return 1;
    }
    return 0;
}
#undef TB_V
#define TB_TRY_VPASS(R)                                                        \
    if (R == 4 && SFX(vpass4)(ps, xr, xi, xs, xpad, yr, yi, ys, ypad, tw, inv, sc)) \
        return;
#else
#define TB_TRY_VPASS(R)
#endif

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
        TB_TRY_VPASS(R)                                                        \
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

/*
 * Rows <-> lanes.  SFX(lanes_in) copies TB_LANES rows (row r starts at
 * src[r], interleaved, element stride `is`) into the lane layout of W0;
 * SFX(lanes_out) copies the lanes back into rows dst[r] (element stride
 * os), times scale.  Contiguous rows (stride 1) take the shuffle-based
 * transposes of tb_fft_avx2.h in the AVX2 copy; plain loops otherwise.
 */
static void SFX(lanes_in)(size_t n, const REAL *const *src, ptrdiff_t is, REAL *xr,
                          REAL *xi)
{
    const ptrdiff_t L = TB_LANES, pn = (ptrdiff_t)n;
    ptrdiff_t r, e;
#ifdef TB_AVX2_KERNELS
    if (is == 1) {
        SFX(rows_to_lanes)(n, src, xr, xi);
        return;
    }
#endif
    for (r = 0; r < L; r++) {
        const REAL *s = src[r];
        if (is == 1)
            for (e = 0; e < pn; e++) {
                xr[e * L + r] = s[2 * e];
                xi[e * L + r] = s[2 * e + 1];
            }
        else
            for (e = 0; e < pn; e++) {
                xr[e * L + r] = s[2 * e * is];
                xi[e * L + r] = s[2 * e * is + 1];
            }
    }
}

static void SFX(lanes_out)(size_t n, const REAL *xr, const REAL *xi, REAL scale,
                           REAL *const *dst, ptrdiff_t os)
{
    const ptrdiff_t L = TB_LANES, pn = (ptrdiff_t)n;
    ptrdiff_t r, e;
#ifdef TB_AVX2_KERNELS
    if (os == 1) {
        SFX(lanes_to_rows)(n, xr, xi, scale, dst);
        return;
    }
#endif
    for (r = 0; r < L; r++) {
        REAL *d = dst[r];
        if (os == 1)
            for (e = 0; e < pn; e++) {
                d[2 * e] = scale * xr[e * L + r];
                d[2 * e + 1] = scale * xi[e * L + r];
            }
        else
            for (e = 0; e < pn; e++) {
                d[2 * e * os] = scale * xr[e * L + r];
                d[2 * e * os + 1] = scale * xi[e * L + r];
            }
    }
}

/*
 * `count` rows (1 <= count <= TB_LANES) through the lane engine: row r at
 * in + 2*r*irs (element stride is), out likewise.  With fewer than
 * TB_LANES rows the spare lanes transform copies of the last row and
 * write to the workspace part that does not hold the result; each lane
 * runs the same operations whatever the others hold.
 */
static void SFX(lanes)(const tb_fft_plan *p, int inv, size_t count, const REAL *in,
                       ptrdiff_t irs, ptrdiff_t is, REAL *out, ptrdiff_t ors, ptrdiff_t os,
                       REAL scale, REAL *work)
{
    const REAL *src[TB_LANES];
    REAL *dst[TB_LANES], *res, *spare;
    ptrdiff_t r;
    for (r = 0; r < TB_LANES; r++) {
        const ptrdiff_t k = r < (ptrdiff_t)count ? r : (ptrdiff_t)count - 1;
        src[r] = in + 2 * k * irs;
        dst[r] = out + 2 * k * ors;
    }
    /* all input is read before any output is written (in place works) */
    SFX(lanes_in)(p->n, src, is, work, work + p->half);
    res = SFX(lane_passes)(p, inv, work);
    spare = (res == work) ? work + 2 * p->half : work;
    for (r = (ptrdiff_t)count; r < TB_LANES; r++)
        dst[r] = spare;
    SFX(lanes_out)(p->n, res, res + p->half, scale, dst, os);
}

/*
 * The 64-point transform as 8 x 8 on groups of complex values (plans with
 * p->codelet set: n = 64, both precisions).
 *
 * The pass engine runs 64 = 4 * 4 * 4 in three passes and batches it
 * through the lane engine, whose transposes cost as much as the
 * butterflies.  This size instead has one straight form that works on a
 * row where it lies, so a batch is just its rows one after the other and
 * single rows, batches and the fused operations all perform exactly the
 * same operations.  One Cooley-Tukey split (x index 8 j1 + j2, y index
 * k1 + 8 k2, w = exp(-2 pi i / 64)):
 *
 *   stage 1, columns j2:  T[j2, k1] = w^(j2 k1) DFT8_j1(x[8 j1 + j2])[k1]
 *   stage 2, rows k1:     y[k1 + 8 k2] = DFT8_j2(T[j2, k1])[k2]
 *
 * Every value (a cv) is W = TB_CVW complex numbers interleaved, one
 * 256-bit register: W = 2 doubles (re0, im0, re1, im1) or W = 4 floats.
 * Stage 1 takes the columns W at a time (elements 8 j1 + j2 .. j2 + W - 1
 * are contiguous in the row), stage 2 the rows k1 W at a time (stage 1
 * stores T block-transposed, W x W complex values, so that T[j2, k1 ..
 * k1 + W - 1] are adjacent), and the outputs y[k1 + 8 k2 .. + W - 1] are
 * again contiguous.  SFX(cv8) is the DFT8 on cvs: additions, exchanges of
 * real and imaginary parts (-i), and two products by sqrt(1/2).  The
 * twiddles are one complex product each (k1 >= 1, every column alike).
 * T lives in W1.
 *
 * The cv operations (SFX(cv_*)) are one AVX2 register in the AVX2 copies
 * (tb_fft_avx2.h), two SSE registers in the portable copy on x86-64 (SSE2
 * is part of that target), and plain C on 2 W REALs elsewhere; each lane
 * performs the same IEEE operation in all three, so the copies stay
 * bit-identical (test_fft.c compares them).  The inverse exchanges real
 * and imaginary parts on input and output (the DFT of i conj(x) is
 * i conj of the unnormalised inverse DFT of x: exact).
 *
 * Twiddle table, after the passes' table: for column group g (j2 = W g +
 * c, c < W) and k1 = 1..7, 4 W REALs at ((g * 7 + k1 - 1) * 4 W): the
 * real parts of w^(j2 k1), each twice, then the imaginary parts, each
 * twice (so that the product is two multiplications and an addsub).
 */
#if defined(TB_REAL_F64)
#define TB_CVW 2 /* complex values per cv: two doubles ... */
#else
#define TB_CVW 4 /* ... or four floats (one AVX2 register) */
#endif
#if defined(TB_AVX2_KERNELS)
/* AVX2: the cv_*_f64_avx2 / cv_*_f32_avx2 operations of tb_fft_avx2.h. */
#elif TB_PAIRS_SSE2 && defined(TB_REAL_F64)
/* x86-64 without AVX2: one SSE2 register per complex double.  SSE2 has no
 * addsub, so it is the difference with its odd lane taken from the sum:
 * the same two IEEE results per lane as the AVX2 instruction. */
typedef struct {
    __m128d a, b; /* (r0, i0), (r1, i1) */
} SFX(cv);

TB_INLINE SFX(cv) SFX(cv_pair)(__m128d a, __m128d b)
{
    SFX(cv) r;
    r.a = a;
    r.b = b;
    return r;
}
TB_INLINE SFX(cv) SFX(cv_add)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_add_pd(x.a, y.a), _mm_add_pd(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_sub)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_sub_pd(x.a, y.a), _mm_sub_pd(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_mul)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_mul_pd(x.a, y.a), _mm_mul_pd(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_addsub)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_move_sd(_mm_add_pd(x.a, y.a), _mm_sub_pd(x.a, y.a)),
                        _mm_move_sd(_mm_add_pd(x.b, y.b), _mm_sub_pd(x.b, y.b)));
}
TB_INLINE SFX(cv) SFX(cv_swap)(SFX(cv) x)
{
    return SFX(cv_pair)(_mm_shuffle_pd(x.a, x.a, 1), _mm_shuffle_pd(x.b, x.b, 1));
}
TB_INLINE SFX(cv) SFX(cv_blend)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_move_sd(y.a, x.a), _mm_move_sd(y.b, x.b));
}
TB_INLINE SFX(cv) SFX(cv_set1)(REAL v)
{
    return SFX(cv_pair)(_mm_set1_pd(v), _mm_set1_pd(v));
}
/* In place: complex c of u[r] <-> complex r of u[c], r, c < 2 */
TB_INLINE void SFX(cv_transpose)(SFX(cv) *u)
{
    const __m128d t = u[0].b;
    u[0].b = u[1].a;
    u[1].a = t;
}
TB_INLINE SFX(cv) SFX(cv_load)(const REAL *p)
{
    return SFX(cv_pair)(_mm_loadu_pd(p), _mm_loadu_pd(p + 2));
}
TB_INLINE void SFX(cv_store)(REAL *p, SFX(cv) x)
{
    _mm_storeu_pd(p, x.a);
    _mm_storeu_pd(p + 2, x.b);
}
TB_INLINE SFX(cv) SFX(cv_gather)(const REAL *xr, const REAL *xi, ptrdiff_t xs, ptrdiff_t e)
{
    return SFX(cv_pair)(_mm_set_pd(xi[e * xs], xr[e * xs]),
                        _mm_set_pd(xi[(e + 1) * xs], xr[(e + 1) * xs]));
}
TB_INLINE SFX(cv) SFX(cv_load_split)(const REAL *xr, const REAL *xi, ptrdiff_t e)
{
    const __m128d re = _mm_loadu_pd(xr + e), im = _mm_loadu_pd(xi + e);
    return SFX(cv_pair)(_mm_unpacklo_pd(re, im), _mm_unpackhi_pd(re, im));
}
TB_INLINE void SFX(cv_scatter)(REAL *out, ptrdiff_t os, ptrdiff_t k, SFX(cv) x)
{
    _mm_storeu_pd(out + 2 * k * os, x.a);
    _mm_storeu_pd(out + 2 * (k + 1) * os, x.b);
}
#elif TB_PAIRS_SSE2
/* x86-64 without AVX2, float: four complex values in two SSE registers
 * (two complex each).  SSE2 has neither addsub nor a lane blend: they are
 * bit masks over the two IEEE results, the same values per lane. */
typedef struct {
    __m128 a, b; /* (r0, i0, r1, i1), (r2, i2, r3, i3) */
} SFX(cv);

TB_INLINE SFX(cv) SFX(cv_pair)(__m128 a, __m128 b)
{
    SFX(cv) r;
    r.a = a;
    r.b = b;
    return r;
}
/* the imaginary lanes from y, the real lanes from x */
TB_INLINE __m128 SFX(cv_pick_im)(__m128 x, __m128 y)
{
    const __m128 m = _mm_castsi128_ps(_mm_set_epi32(-1, 0, -1, 0));
    return _mm_or_ps(_mm_and_ps(m, y), _mm_andnot_ps(m, x));
}
TB_INLINE SFX(cv) SFX(cv_add)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_add_ps(x.a, y.a), _mm_add_ps(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_sub)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_sub_ps(x.a, y.a), _mm_sub_ps(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_mul)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(_mm_mul_ps(x.a, y.a), _mm_mul_ps(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_addsub)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(SFX(cv_pick_im)(_mm_sub_ps(x.a, y.a), _mm_add_ps(x.a, y.a)),
                        SFX(cv_pick_im)(_mm_sub_ps(x.b, y.b), _mm_add_ps(x.b, y.b)));
}
TB_INLINE SFX(cv) SFX(cv_swap)(SFX(cv) x)
{
    return SFX(cv_pair)(_mm_shuffle_ps(x.a, x.a, 0xB1), _mm_shuffle_ps(x.b, x.b, 0xB1));
}
TB_INLINE SFX(cv) SFX(cv_blend)(SFX(cv) x, SFX(cv) y)
{
    return SFX(cv_pair)(SFX(cv_pick_im)(x.a, y.a), SFX(cv_pick_im)(x.b, y.b));
}
TB_INLINE SFX(cv) SFX(cv_set1)(REAL v)
{
    return SFX(cv_pair)(_mm_set1_ps(v), _mm_set1_ps(v));
}
TB_INLINE SFX(cv) SFX(cv_load)(const REAL *p)
{
    return SFX(cv_pair)(_mm_loadu_ps(p), _mm_loadu_ps(p + 4));
}
TB_INLINE void SFX(cv_store)(REAL *p, SFX(cv) x)
{
    _mm_storeu_ps(p, x.a);
    _mm_storeu_ps(p + 4, x.b);
}
TB_INLINE SFX(cv) SFX(cv_gather)(const REAL *xr, const REAL *xi, ptrdiff_t xs, ptrdiff_t e)
{
    return SFX(cv_pair)(_mm_set_ps(xi[(e + 1) * xs], xr[(e + 1) * xs], xi[e * xs], xr[e * xs]),
                        _mm_set_ps(xi[(e + 3) * xs], xr[(e + 3) * xs], xi[(e + 2) * xs],
                                   xr[(e + 2) * xs]));
}
TB_INLINE SFX(cv) SFX(cv_load_split)(const REAL *xr, const REAL *xi, ptrdiff_t e)
{
    const __m128 re = _mm_loadu_ps(xr + e), im = _mm_loadu_ps(xi + e);
    return SFX(cv_pair)(_mm_unpacklo_ps(re, im), _mm_unpackhi_ps(re, im));
}
TB_INLINE void SFX(cv_scatter)(REAL *out, ptrdiff_t os, ptrdiff_t k, SFX(cv) x)
{
    _mm_storel_pi((__m64 *)(void *)(out + 2 * k * os), x.a);
    _mm_storeh_pi((__m64 *)(void *)(out + 2 * (k + 1) * os), x.a);
    _mm_storel_pi((__m64 *)(void *)(out + 2 * (k + 2) * os), x.b);
    _mm_storeh_pi((__m64 *)(void *)(out + 2 * (k + 3) * os), x.b);
}
/* In place: complex c of u[r] <-> complex r of u[c], r, c < 4 */
TB_INLINE void SFX(cv_transpose)(SFX(cv) *u)
{
    const __m128 a0 = u[0].a, b0 = u[0].b, a1 = u[1].a, b1 = u[1].b;
    const __m128 a2 = u[2].a, b2 = u[2].b, a3 = u[3].a, b3 = u[3].b;
    u[0] = SFX(cv_pair)(_mm_movelh_ps(a0, a1), _mm_movelh_ps(a2, a3));
    u[1] = SFX(cv_pair)(_mm_movehl_ps(a1, a0), _mm_movehl_ps(a3, a2));
    u[2] = SFX(cv_pair)(_mm_movelh_ps(b0, b1), _mm_movelh_ps(b2, b3));
    u[3] = SFX(cv_pair)(_mm_movehl_ps(b1, b0), _mm_movehl_ps(b3, b2));
}
#else
/* Plain C: 2 TB_CVW REALs, the same operation on every one. */
typedef struct {
    REAL v[2 * TB_CVW];
} SFX(cv);

TB_INLINE SFX(cv) SFX(cv_add)(SFX(cv) a, SFX(cv) b)
{
    int l;
    for (l = 0; l < 2 * TB_CVW; l++)
        a.v[l] = a.v[l] + b.v[l];
    return a;
}
TB_INLINE SFX(cv) SFX(cv_sub)(SFX(cv) a, SFX(cv) b)
{
    int l;
    for (l = 0; l < 2 * TB_CVW; l++)
        a.v[l] = a.v[l] - b.v[l];
    return a;
}
TB_INLINE SFX(cv) SFX(cv_mul)(SFX(cv) a, SFX(cv) b)
{
    int l;
    for (l = 0; l < 2 * TB_CVW; l++)
        a.v[l] = a.v[l] * b.v[l];
    return a;
}
/* real parts a - b, imaginary parts a + b */
TB_INLINE SFX(cv) SFX(cv_addsub)(SFX(cv) a, SFX(cv) b)
{
    int l;
    for (l = 0; l < 2 * TB_CVW; l += 2) {
        a.v[l] = a.v[l] - b.v[l];
        a.v[l + 1] = a.v[l + 1] + b.v[l + 1];
    }
    return a;
}
/* real and imaginary parts exchanged */
TB_INLINE SFX(cv) SFX(cv_swap)(SFX(cv) a)
{
    int l;
    for (l = 0; l < 2 * TB_CVW; l += 2) {
        const REAL r = a.v[l];
        a.v[l] = a.v[l + 1];
        a.v[l + 1] = r;
    }
    return a;
}
/* real parts from a, imaginary parts from b */
TB_INLINE SFX(cv) SFX(cv_blend)(SFX(cv) a, SFX(cv) b)
{
    int l;
    for (l = 1; l < 2 * TB_CVW; l += 2)
        a.v[l] = b.v[l];
    return a;
}
TB_INLINE SFX(cv) SFX(cv_set1)(REAL x)
{
    SFX(cv) a;
    int l;
    for (l = 0; l < 2 * TB_CVW; l++)
        a.v[l] = x;
    return a;
}
TB_INLINE SFX(cv) SFX(cv_load)(const REAL *p)
{
    SFX(cv) a;
    int l;
    for (l = 0; l < 2 * TB_CVW; l++)
        a.v[l] = p[l];
    return a;
}
TB_INLINE void SFX(cv_store)(REAL *p, SFX(cv) a)
{
    int l;
    for (l = 0; l < 2 * TB_CVW; l++)
        p[l] = a.v[l];
}
/* elements e .. e + TB_CVW - 1 of a row whose element i is (xr[i xs], xi[i xs]) */
TB_INLINE SFX(cv) SFX(cv_gather)(const REAL *xr, const REAL *xi, ptrdiff_t xs, ptrdiff_t e)
{
    SFX(cv) a;
    int c;
    for (c = 0; c < TB_CVW; c++) {
        a.v[2 * c] = xr[(e + c) * xs];
        a.v[2 * c + 1] = xi[(e + c) * xs];
    }
    return a;
}
/* the same from a split row (xs = 1); the SIMD copies load it as halves */
TB_INLINE SFX(cv) SFX(cv_load_split)(const REAL *xr, const REAL *xi, ptrdiff_t e)
{
    return SFX(cv_gather)(xr, xi, 1, e);
}
/* the TB_CVW complex values to out[2 (k + c) os], c < TB_CVW */
TB_INLINE void SFX(cv_scatter)(REAL *out, ptrdiff_t os, ptrdiff_t k, SFX(cv) a)
{
    int c;
    for (c = 0; c < TB_CVW; c++) {
        out[2 * (k + c) * os] = a.v[2 * c];
        out[2 * (k + c) * os + 1] = a.v[2 * c + 1];
    }
}
/* In place: complex c of u[r] <-> complex r of u[c] (a TB_CVW x TB_CVW
 * transpose of complex values). */
TB_INLINE void SFX(cv_transpose)(SFX(cv) *u)
{
    int r, c;
    for (r = 0; r < TB_CVW; r++)
        for (c = r + 1; c < TB_CVW; c++) {
            const REAL a = u[r].v[2 * c], b = u[r].v[2 * c + 1];
            u[r].v[2 * c] = u[c].v[2 * r];
            u[r].v[2 * c + 1] = u[c].v[2 * r + 1];
            u[c].v[2 * r] = a;
            u[c].v[2 * r + 1] = b;
        }
}
#endif

/* In place: v[k] <- forward DFT8 over j of v[j], on pairs. */
TB_INLINE void SFX(cv8)(SFX(cv) v[8])
{
    const SFX(cv) h = SFX(cv_set1)((REAL)0.70710678118654752440084436210484903928L);
    const SFX(cv) e0 = SFX(cv_add)(v[0], v[4]), e1 = SFX(cv_sub)(v[0], v[4]);
    const SFX(cv) e2 = SFX(cv_add)(v[2], v[6]), e3 = SFX(cv_sub)(v[2], v[6]);
    const SFX(cv) o0 = SFX(cv_add)(v[1], v[5]), o1 = SFX(cv_sub)(v[1], v[5]);
    const SFX(cv) o2 = SFX(cv_add)(v[3], v[7]), o3 = SFX(cv_sub)(v[3], v[7]);
    const SFX(cv) te = SFX(cv_swap)(e3), to = SFX(cv_swap)(o3);
    const SFX(cv) ep = SFX(cv_add)(e1, te), em = SFX(cv_sub)(e1, te);
    const SFX(cv) op = SFX(cv_add)(o1, to), om = SFX(cv_sub)(o1, to);
    /* DFT4s: E1 = e1 - i e3, E3 = e1 + i e3, likewise O1 and O3 */
    const SFX(cv) E0 = SFX(cv_add)(e0, e2), E2 = SFX(cv_sub)(e0, e2);
    const SFX(cv) E1 = SFX(cv_blend)(ep, em), E3 = SFX(cv_blend)(em, ep);
    const SFX(cv) O0 = SFX(cv_add)(o0, o2), O2 = SFX(cv_sub)(o0, o2);
    const SFX(cv) O1 = SFX(cv_blend)(op, om), O3 = SFX(cv_blend)(om, op);
    /* W1 = w8 O1 = h ((r + i) + i (i - r)) for O1 = r + i i */
    const SFX(cv) t1 = SFX(cv_swap)(O1);
    const SFX(cv) W1 = SFX(cv_mul)(h, SFX(cv_blend)(SFX(cv_add)(O1, t1), SFX(cv_sub)(O1, t1)));
    /* w8^3 O3 = (U0, -U1) with U = h ((i - r), (i + r)) for O3 = r + i i */
    const SFX(cv) t3 = SFX(cv_swap)(O3);
    const SFX(cv) U = SFX(cv_mul)(h, SFX(cv_blend)(SFX(cv_sub)(t3, O3), SFX(cv_add)(O3, t3)));
    /* -i O2 */
    const SFX(cv) t2 = SFX(cv_swap)(O2);
    const SFX(cv) Ep = SFX(cv_add)(E2, t2), Em = SFX(cv_sub)(E2, t2);
    const SFX(cv) Up = SFX(cv_add)(E3, U), Um = SFX(cv_sub)(E3, U);
    v[0] = SFX(cv_add)(E0, O0);
    v[4] = SFX(cv_sub)(E0, O0);
    v[1] = SFX(cv_add)(E1, W1);
    v[5] = SFX(cv_sub)(E1, W1);
    v[2] = SFX(cv_blend)(Ep, Em);
    v[6] = SFX(cv_blend)(Em, Ep);
    v[3] = SFX(cv_blend)(Up, Um);
    v[7] = SFX(cv_blend)(Um, Up);
}

/*
 * The 64-point form on one row: element e at (xr[e xs], xi[e xs]) ->
 * out[2 k os] (interleaved) times scale; inverse when inv.  t: 128 REALs
 * (W1).  All of x is read before out is written, so in place works.
 * in_mode and out_mode are constants after inlining, so that pairs are
 * plain loads and stores where the layout allows: in_mode 1 for an
 * interleaved contiguous row (xs = 2, xi = xr + 1), 2 for a split one
 * (xs = 1, as the fused operations prepare in W0), 0 for any other
 * stride; out_mode 1 for os = 1, 0 otherwise.
 */
TB_INLINE void SFX(dft64_pairs)(const REAL *cw, int inv, const REAL *xr, const REAL *xi,
                                ptrdiff_t xs, REAL *out, ptrdiff_t os, REAL scale,
                                REAL *TB_RESTRICT t, const int in_mode, const int out_mode)
{
    enum { W = TB_CVW, G = 8 / TB_CVW };
    const SFX(cv) sc = SFX(cv_set1)(scale);
    ptrdiff_t p, q, j, k, c;
    for (p = 0; p < G; p++) { /* columns W p .. W p + W - 1 */
        SFX(cv) v[8];
        for (j = 0; j < 8; j++) {
            const ptrdiff_t e = 8 * j + W * p;
            const SFX(cv) a = in_mode == 1   ? SFX(cv_load)(xr + 2 * e)
                              : in_mode == 2 ? SFX(cv_load_split)(xr, xi, e)
                                             : SFX(cv_gather)(xr, xi, xs, e);
            v[j] = inv ? SFX(cv_swap)(a) : a;
        }
        SFX(cv8)(v);
        for (k = 1; k < 8; k++) {
            const REAL *w = cw + (p * 7 + k - 1) * 4 * W;
            v[k] = SFX(cv_addsub)(SFX(cv_mul)(v[k], SFX(cv_load)(w)),
                                  SFX(cv_mul)(SFX(cv_swap)(v[k]), SFX(cv_load)(w + 2 * W)));
        }
        /* block transposes, so that T[j2, k1 .. k1 + W - 1] are adjacent */
        for (q = 0; q < G; q++) {
            SFX(cv_transpose)(v + W * q);
            for (c = 0; c < W; c++)
                SFX(cv_store)(t + 2 * ((W * p + c) * 8 + W * q), v[W * q + c]);
        }
    }
    for (q = 0; q < G; q++) { /* rows W q .. W q + W - 1 */
        SFX(cv) v[8];
        for (j = 0; j < 8; j++)
            v[j] = SFX(cv_load)(t + 2 * (j * 8 + W * q));
        SFX(cv8)(v);
        for (k = 0; k < 8; k++) {
            SFX(cv) a = SFX(cv_mul)(sc, v[k]);
            if (inv)
                a = SFX(cv_swap)(a);
            if (out_mode)
                SFX(cv_store)(out + 2 * (W * q + 8 * k), a);
            else
                SFX(cv_scatter)(out, os, W * q + 8 * k, a);
        }
    }
}

static void SFX(row_dft64)(const tb_fft_plan *p, int inv, const REAL *xr, const REAL *xi,
                           ptrdiff_t xs, REAL *out, ptrdiff_t os, REAL scale, REAL *t)
{
    const REAL *cw = (const REAL *)p->twiddles + 2 * p->ntwiddle;
    const int in_mode = (xs == 2 && xi == xr + 1) ? 1 : xs == 1 ? 2 : 0;
    if (os == 1) {
        if (in_mode == 1)
            SFX(dft64_pairs)(cw, inv, xr, xi, xs, out, os, scale, t, 1, 1);
        else if (in_mode == 2)
            SFX(dft64_pairs)(cw, inv, xr, xi, xs, out, os, scale, t, 2, 1);
        else
            SFX(dft64_pairs)(cw, inv, xr, xi, xs, out, os, scale, t, 0, 1);
    } else if (in_mode == 2) {
        SFX(dft64_pairs)(cw, inv, xr, xi, xs, out, os, scale, t, 2, 0);
    } else {
        SFX(dft64_pairs)(cw, inv, xr, xi, xs, out, os, scale, t, 0, 0);
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
    if (p->codelet) { /* n = 64: the 8 x 8 form above, scratch W1 */
        SFX(row_dft64)(p, inv, xr, xi, xs, out, os, scale, work + 2 * half);
        return;
    }
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
 * the plan allows (the last one possibly with spare lanes), then one row
 * at a time. */
static void SFX(rows)(const tb_fft_plan *p, int inv, size_t batch, const REAL *in,
                      ptrdiff_t in_row_stride, ptrdiff_t in_stride, REAL *out,
                      ptrdiff_t out_row_stride, ptrdiff_t out_stride, REAL scale,
                      REAL *work)
{
    size_t b = 0;
    if (p->lanes)
        while (b < batch && (batch - b >= TB_LANES || 2 * (batch - b) > TB_LANES)) {
            /* full groups, then a last group with spare lanes when more
             * than half of it is real rows (cheaper than single rows) */
            const ptrdiff_t pb = (ptrdiff_t)b;
            const size_t count = batch - b < TB_LANES ? batch - b : TB_LANES;
            SFX(lanes)(p, inv, count, in + 2 * pb * in_row_stride, in_row_stride, in_stride,
                       out + 2 * pb * out_row_stride, out_row_stride, out_stride, scale,
                       work);
            b += count;
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
#undef TB_TRY_VPASS
#undef TB_DEFINE_LANE_PASS
#undef TB_LANES
#undef TB_CVW
