/*
 * tb_fft_avx2.h -- hand-written AVX2 data movement for the FFT (internal).
 *
 * Not a public header.  tb_fft.c includes it once, inside the region it
 * compiles for AVX2 (x86-64, gcc or clang, TB_DISPATCH_AVX2), before the
 * AVX2 copies of tb_fft_impl.h, which call these routines where the
 * portable copy runs plain loops.  Nothing here does arithmetic on the
 * data except the final `scale *` of an output, which the portable code
 * performs too, in the same precision: both copies stay bit-identical.
 *
 * Only shuffles of whole vectors (no gathers), unaligned loads and
 * stores (the caller's rows and the workspace are only aligned to their
 * scalar type).  One routine per precision, since the shuffles differ.
 *
 * Rows <-> lanes.  The lane engine (see "Lanes" in tb_fft_impl.h) keeps
 * TB_FFT_LANES = 8 rows with the row as the innermost index:
 *
 *     row r (interleaved):     re0 im0 re1 im1 re2 im2 ...
 *     lanes (split):           xr[e*8 + r] = re of element e of row r
 *                              xi[e*8 + r] = im of element e of row r
 *
 * float: one __m256 holds 4 complex elements of a row, or one element of
 * all 8 rows.  8 rows x 4 elements are an 8 x 8 block of floats, and its
 * transpose is exactly the 8 lane vectors of those 4 elements:
 *
 *     row 0: re0 im0 re1 im1 re2 im2 re3 im3        xr[0*8..]: re0 of rows 0..7
 *     row 1: re0 im0 re1 im1 ...             --->   xi[0*8..]: im0 of rows 0..7
 *     ...                                           xr[1*8..]: re1 of rows 0..7
 *     row 7: ...                                    ...  (8 vectors)
 *
 * double: one __m256d holds 2 complex elements of a row, or one element
 * of 4 rows; the 8 lanes are two 4 x 4 blocks (rows 0-3 and 4-7):
 *
 *     row 0: re0 im0 re1 im1                        xr[0*8 + 0..3]: re0 of rows 0..3
 *     row 1: ...                             --->   xi[0*8 + 0..3]: im0 of rows 0..3
 *     row 2: ...                                    xr[1*8 + 0..3]: re1 of rows 0..3
 *     row 3: ...                                    xi[1*8 + 0..3]: im1 of rows 0..3
 *
 * The way back (lanes -> rows) is the same transpose, times scale.
 * Elements left over at the end of a row (n not a multiple of 4 or 2)
 * are moved one by one.
 */

/* 8 x 8 transpose of floats: on return v[k] holds element k of the
 * original v[0..7] (unpack pairs of rows, then pairs of pairs, then the
 * 128-bit halves). */
static inline void tb_avx2_transpose8_ps(__m256 v[8])
{
    const __m256 t0 = _mm256_unpacklo_ps(v[0], v[1]), t1 = _mm256_unpackhi_ps(v[0], v[1]);
    const __m256 t2 = _mm256_unpacklo_ps(v[2], v[3]), t3 = _mm256_unpackhi_ps(v[2], v[3]);
    const __m256 t4 = _mm256_unpacklo_ps(v[4], v[5]), t5 = _mm256_unpackhi_ps(v[4], v[5]);
    const __m256 t6 = _mm256_unpacklo_ps(v[6], v[7]), t7 = _mm256_unpackhi_ps(v[6], v[7]);
    const __m256 s0 = _mm256_shuffle_ps(t0, t2, 0x44), s1 = _mm256_shuffle_ps(t0, t2, 0xEE);
    const __m256 s2 = _mm256_shuffle_ps(t1, t3, 0x44), s3 = _mm256_shuffle_ps(t1, t3, 0xEE);
    const __m256 s4 = _mm256_shuffle_ps(t4, t6, 0x44), s5 = _mm256_shuffle_ps(t4, t6, 0xEE);
    const __m256 s6 = _mm256_shuffle_ps(t5, t7, 0x44), s7 = _mm256_shuffle_ps(t5, t7, 0xEE);
    v[0] = _mm256_permute2f128_ps(s0, s4, 0x20);
    v[1] = _mm256_permute2f128_ps(s1, s5, 0x20);
    v[2] = _mm256_permute2f128_ps(s2, s6, 0x20);
    v[3] = _mm256_permute2f128_ps(s3, s7, 0x20);
    v[4] = _mm256_permute2f128_ps(s0, s4, 0x31);
    v[5] = _mm256_permute2f128_ps(s1, s5, 0x31);
    v[6] = _mm256_permute2f128_ps(s2, s6, 0x31);
    v[7] = _mm256_permute2f128_ps(s3, s7, 0x31);
}

/* 4 x 4 transpose of doubles. */
static inline void tb_avx2_transpose4_pd(__m256d v[4])
{
    const __m256d t0 = _mm256_unpacklo_pd(v[0], v[1]), t1 = _mm256_unpackhi_pd(v[0], v[1]);
    const __m256d t2 = _mm256_unpacklo_pd(v[2], v[3]), t3 = _mm256_unpackhi_pd(v[2], v[3]);
    v[0] = _mm256_permute2f128_pd(t0, t2, 0x20);
    v[1] = _mm256_permute2f128_pd(t1, t3, 0x20);
    v[2] = _mm256_permute2f128_pd(t0, t2, 0x31);
    v[3] = _mm256_permute2f128_pd(t1, t3, 0x31);
}

/* 8 contiguous interleaved rows src[r] (n elements each) -> lanes. */
static void rows_to_lanes_f32_avx2(size_t n, const float *const *src, float *xr, float *xi)
{
    const float *s[8]; /* local copy: the row pointers stay in registers */
    size_t e, r;
    for (r = 0; r < 8; r++)
        s[r] = src[r];
    for (e = 0; e + 4 <= n; e += 4) {
        __m256 v[8];
        for (r = 0; r < 8; r++)
            v[r] = _mm256_loadu_ps(s[r] + 2 * e);
        tb_avx2_transpose8_ps(v);
        for (r = 0; r < 4; r++) {
            _mm256_storeu_ps(xr + 8 * (e + r), v[2 * r]);
            _mm256_storeu_ps(xi + 8 * (e + r), v[2 * r + 1]);
        }
    }
    for (; e < n; e++)
        for (r = 0; r < 8; r++) {
            xr[8 * e + r] = src[r][2 * e];
            xi[8 * e + r] = src[r][2 * e + 1];
        }
}

/* Lanes -> 8 contiguous interleaved rows dst[r], times scale (skipped
 * when scaled == 0, for scale == 1: x * 1 == x exactly). */
TB_INLINE void
tb_avx2_l2r_f32(size_t n, const float *xr, const float *xi, float scale, float *const *dst,
                const int scaled)
{
    const __m256 sc = _mm256_set1_ps(scale);
    float *d[8];
    size_t e, r;
    for (r = 0; r < 8; r++)
        d[r] = dst[r];
    for (e = 0; e + 4 <= n; e += 4) {
        __m256 v[8];
        for (r = 0; r < 4; r++) {
            v[2 * r] = _mm256_loadu_ps(xr + 8 * (e + r));
            v[2 * r + 1] = _mm256_loadu_ps(xi + 8 * (e + r));
            if (scaled) {
                v[2 * r] = _mm256_mul_ps(sc, v[2 * r]);
                v[2 * r + 1] = _mm256_mul_ps(sc, v[2 * r + 1]);
            }
        }
        tb_avx2_transpose8_ps(v);
        for (r = 0; r < 8; r++)
            _mm256_storeu_ps(d[r] + 2 * e, v[r]);
    }
    for (; e < n; e++)
        for (r = 0; r < 8; r++) {
            dst[r][2 * e] = scale * xr[8 * e + r];
            dst[r][2 * e + 1] = scale * xi[8 * e + r];
        }
}

static void lanes_to_rows_f32_avx2(size_t n, const float *xr, const float *xi, float scale,
                                   float *const *dst)
{
    if (scale == 1.0f)
        tb_avx2_l2r_f32(n, xr, xi, scale, dst, 0);
    else
        tb_avx2_l2r_f32(n, xr, xi, scale, dst, 1);
}

static void rows_to_lanes_f64_avx2(size_t n, const double *const *src, double *xr,
                                   double *xi)
{
    const double *s[8];
    size_t e, r, h;
    for (r = 0; r < 8; r++)
        s[r] = src[r];
    for (e = 0; e + 2 <= n; e += 2)
        for (h = 0; h < 8; h += 4) {
            __m256d v[4];
            for (r = 0; r < 4; r++)
                v[r] = _mm256_loadu_pd(s[h + r] + 2 * e);
            tb_avx2_transpose4_pd(v);
            _mm256_storeu_pd(xr + 8 * e + h, v[0]);
            _mm256_storeu_pd(xi + 8 * e + h, v[1]);
            _mm256_storeu_pd(xr + 8 * (e + 1) + h, v[2]);
            _mm256_storeu_pd(xi + 8 * (e + 1) + h, v[3]);
        }
    for (; e < n; e++)
        for (r = 0; r < 8; r++) {
            xr[8 * e + r] = src[r][2 * e];
            xi[8 * e + r] = src[r][2 * e + 1];
        }
}

TB_INLINE void
tb_avx2_l2r_f64(size_t n, const double *xr, const double *xi, double scale,
                double *const *dst, const int scaled)
{
    const __m256d sc = _mm256_set1_pd(scale);
    double *d[8];
    size_t e, r, h;
    for (r = 0; r < 8; r++)
        d[r] = dst[r];
    for (e = 0; e + 2 <= n; e += 2)
        for (h = 0; h < 8; h += 4) {
            __m256d v[4];
            v[0] = _mm256_loadu_pd(xr + 8 * e + h);
            v[1] = _mm256_loadu_pd(xi + 8 * e + h);
            v[2] = _mm256_loadu_pd(xr + 8 * (e + 1) + h);
            v[3] = _mm256_loadu_pd(xi + 8 * (e + 1) + h);
            if (scaled)
                for (r = 0; r < 4; r++)
                    v[r] = _mm256_mul_pd(sc, v[r]);
            tb_avx2_transpose4_pd(v);
            for (r = 0; r < 4; r++)
                _mm256_storeu_pd(d[h + r] + 2 * e, v[r]);
        }
    for (; e < n; e++)
        for (r = 0; r < 8; r++) {
            dst[r][2 * e] = scale * xr[8 * e + r];
            dst[r][2 * e + 1] = scale * xi[8 * e + r];
        }
}

static void lanes_to_rows_f64_avx2(size_t n, const double *xr, const double *xi,
                                   double scale, double *const *dst)
{
    if (scale == 1.0)
        tb_avx2_l2r_f64(n, xr, xi, scale, dst, 0);
    else
        tb_avx2_l2r_f64(n, xr, xi, scale, dst, 1);
}

/*
 * Pairs of complex doubles for the 64-point form (SFX(dft64_pairs) in
 * tb_fft_impl.h): one __m256d holds (re0, im0, re1, im1).  The same
 * operations as the portable cv_* of the template, lane for lane.
 */
typedef __m256d cv_f64_avx2;

static inline __m256d cv_add_f64_avx2(__m256d a, __m256d b) { return _mm256_add_pd(a, b); }
static inline __m256d cv_sub_f64_avx2(__m256d a, __m256d b) { return _mm256_sub_pd(a, b); }
static inline __m256d cv_mul_f64_avx2(__m256d a, __m256d b) { return _mm256_mul_pd(a, b); }
static inline __m256d cv_addsub_f64_avx2(__m256d a, __m256d b)
{
    return _mm256_addsub_pd(a, b);
}
static inline __m256d cv_swap_f64_avx2(__m256d a) { return _mm256_permute_pd(a, 0x5); }
static inline __m256d cv_blend_f64_avx2(__m256d a, __m256d b)
{
    return _mm256_blend_pd(a, b, 0xA);
}
static inline __m256d cv_set1_f64_avx2(double a) { return _mm256_set1_pd(a); }
/* In place: complex c of u[r] <-> complex r of u[c], r, c < 2 */
static inline void cv_transpose_f64_avx2(__m256d *u)
{
    const __m256d a = u[0], b = u[1];
    u[0] = _mm256_permute2f128_pd(a, b, 0x20);
    u[1] = _mm256_permute2f128_pd(a, b, 0x31);
}
static inline __m256d cv_load_f64_avx2(const double *p) { return _mm256_loadu_pd(p); }
static inline void cv_store_f64_avx2(double *p, __m256d a) { _mm256_storeu_pd(p, a); }
static inline __m256d cv_gather_f64_avx2(const double *xr, const double *xi, ptrdiff_t xs,
                                         ptrdiff_t e)
{
    return _mm256_set_pd(xi[(e + 1) * xs], xr[(e + 1) * xs], xi[e * xs], xr[e * xs]);
}
static inline __m256d cv_load_split_f64_avx2(const double *xr, const double *xi, ptrdiff_t e)
{
    const __m128d re = _mm_loadu_pd(xr + e), im = _mm_loadu_pd(xi + e);
    return _mm256_insertf128_pd(_mm256_castpd128_pd256(_mm_unpacklo_pd(re, im)),
                                _mm_unpackhi_pd(re, im), 1);
}
static inline void cv_scatter_f64_avx2(double *out, ptrdiff_t os, ptrdiff_t k, __m256d a)
{
    _mm_storeu_pd(out + 2 * k * os, _mm256_castpd256_pd128(a));
    _mm_storeu_pd(out + 2 * (k + 1) * os, _mm256_extractf128_pd(a, 1));
}

/*
 * Quads of complex floats for the same 64-point form in single precision:
 * one __m256 holds (re0, im0, ..., re3, im3); the block transpose is a
 * 4 x 4 transpose of 64-bit complex values.
 */
typedef __m256 cv_f32_avx2;

static inline __m256 cv_add_f32_avx2(__m256 a, __m256 b) { return _mm256_add_ps(a, b); }
static inline __m256 cv_sub_f32_avx2(__m256 a, __m256 b) { return _mm256_sub_ps(a, b); }
static inline __m256 cv_mul_f32_avx2(__m256 a, __m256 b) { return _mm256_mul_ps(a, b); }
static inline __m256 cv_addsub_f32_avx2(__m256 a, __m256 b) { return _mm256_addsub_ps(a, b); }
static inline __m256 cv_swap_f32_avx2(__m256 a) { return _mm256_permute_ps(a, 0xB1); }
static inline __m256 cv_blend_f32_avx2(__m256 a, __m256 b)
{
    return _mm256_blend_ps(a, b, 0xAA);
}
static inline __m256 cv_set1_f32_avx2(float a) { return _mm256_set1_ps(a); }
static inline __m256 cv_load_f32_avx2(const float *p) { return _mm256_loadu_ps(p); }
static inline void cv_store_f32_avx2(float *p, __m256 a) { _mm256_storeu_ps(p, a); }
static inline __m256 cv_gather_f32_avx2(const float *xr, const float *xi, ptrdiff_t xs,
                                        ptrdiff_t e)
{
    return _mm256_set_ps(xi[(e + 3) * xs], xr[(e + 3) * xs], xi[(e + 2) * xs],
                         xr[(e + 2) * xs], xi[(e + 1) * xs], xr[(e + 1) * xs], xi[e * xs],
                         xr[e * xs]);
}
static inline __m256 cv_load_split_f32_avx2(const float *xr, const float *xi, ptrdiff_t e)
{
    const __m128 re = _mm_loadu_ps(xr + e), im = _mm_loadu_ps(xi + e);
    return _mm256_insertf128_ps(_mm256_castps128_ps256(_mm_unpacklo_ps(re, im)),
                                _mm_unpackhi_ps(re, im), 1);
}
static inline void cv_scatter_f32_avx2(float *out, ptrdiff_t os, ptrdiff_t k, __m256 a)
{
    const __m128 lo = _mm256_castps256_ps128(a), hi = _mm256_extractf128_ps(a, 1);
    _mm_storel_pi((__m64 *)(void *)(out + 2 * k * os), lo);
    _mm_storeh_pi((__m64 *)(void *)(out + 2 * (k + 1) * os), lo);
    _mm_storel_pi((__m64 *)(void *)(out + 2 * (k + 2) * os), hi);
    _mm_storeh_pi((__m64 *)(void *)(out + 2 * (k + 3) * os), hi);
}
/* In place: complex c of u[r] <-> complex r of u[c], r, c < 4 (each
 * complex float is one 64-bit lane of the double view) */
static inline void cv_transpose_f32_avx2(__m256 *u)
{
    const __m256d u0 = _mm256_castps_pd(u[0]), u1 = _mm256_castps_pd(u[1]);
    const __m256d u2 = _mm256_castps_pd(u[2]), u3 = _mm256_castps_pd(u[3]);
    const __m256d t0 = _mm256_unpacklo_pd(u0, u1), t1 = _mm256_unpackhi_pd(u0, u1);
    const __m256d t2 = _mm256_unpacklo_pd(u2, u3), t3 = _mm256_unpackhi_pd(u2, u3);
    u[0] = _mm256_castpd_ps(_mm256_permute2f128_pd(t0, t2, 0x20));
    u[1] = _mm256_castpd_ps(_mm256_permute2f128_pd(t1, t3, 0x20));
    u[2] = _mm256_castpd_ps(_mm256_permute2f128_pd(t0, t2, 0x31));
    u[3] = _mm256_castpd_ps(_mm256_permute2f128_pd(t1, t3, 0x31));
}

/*
 * Vector primitives for the AVX2 pass kernels (SFX(vpass4) in
 * tb_fft_impl.h), one set per precision, named like the template's
 * functions (name_f32_avx2, name_f64_avx2) so that the template calls
 * SFX(vadd) and so on.  VLEN is the number of REALs in a vector.
 *
 *   vld / vst        V contiguous REALs
 *   vset1            one REAL in every lane
 *   vadd vsub vmul   lane by lane, one IEEE operation each
 *   vld_split        V contiguous interleaved complex values (2V REALs)
 *                    -> their real parts, their imaginary parts
 *   vst_inter        the reverse: re and im vectors -> 2V REALs
 *   vld_t4           4V contiguous REALs seen as V rows of 4
 *                    -> 4 vectors, vector q = column q of the rows
 */
enum { VLEN_f32_avx2 = 8, VLEN_f64_avx2 = 4 };
typedef __m256 vec_f32_avx2;
typedef __m256d vec_f64_avx2;

static inline __m256 vld_f32_avx2(const float *p) { return _mm256_loadu_ps(p); }
static inline void vst_f32_avx2(float *p, __m256 v) { _mm256_storeu_ps(p, v); }
static inline __m256 vset1_f32_avx2(float a) { return _mm256_set1_ps(a); }
static inline __m256 vadd_f32_avx2(__m256 a, __m256 b) { return _mm256_add_ps(a, b); }
static inline __m256 vsub_f32_avx2(__m256 a, __m256 b) { return _mm256_sub_ps(a, b); }
static inline __m256 vmul_f32_avx2(__m256 a, __m256 b) { return _mm256_mul_ps(a, b); }

static inline __m256d vld_f64_avx2(const double *p) { return _mm256_loadu_pd(p); }
static inline void vst_f64_avx2(double *p, __m256d v) { _mm256_storeu_pd(p, v); }
static inline __m256d vset1_f64_avx2(double a) { return _mm256_set1_pd(a); }
static inline __m256d vadd_f64_avx2(__m256d a, __m256d b) { return _mm256_add_pd(a, b); }
static inline __m256d vsub_f64_avx2(__m256d a, __m256d b) { return _mm256_sub_pd(a, b); }
static inline __m256d vmul_f64_avx2(__m256d a, __m256d b) { return _mm256_mul_pd(a, b); }

/* r0 i0 r1 i1 ... r7 i7  ->  re = r0..r7, im = i0..i7.  The in-lane
 * shuffle gives r0 r1 r4 r5 | r2 r3 r6 r7; the 64-bit permute puts the
 * pairs in order. */
static inline void vld_split_f32_avx2(const float *p, __m256 *re, __m256 *im)
{
    const __m256 a = _mm256_loadu_ps(p), b = _mm256_loadu_ps(p + 8);
    const __m256 r = _mm256_shuffle_ps(a, b, 0x88), i = _mm256_shuffle_ps(a, b, 0xDD);
    *re = _mm256_castpd_ps(_mm256_permute4x64_pd(_mm256_castps_pd(r), 0xD8));
    *im = _mm256_castpd_ps(_mm256_permute4x64_pd(_mm256_castps_pd(i), 0xD8));
}

/* re = r0..r7, im = i0..i7  ->  r0 i0 r1 i1 ... r7 i7. */
static inline void vst_inter_f32_avx2(float *p, __m256 re, __m256 im)
{
    const __m256 lo = _mm256_unpacklo_ps(re, im); /* r0 i0 r1 i1 | r4 i4 r5 i5 */
    const __m256 hi = _mm256_unpackhi_ps(re, im); /* r2 i2 r3 i3 | r6 i6 r7 i7 */
    _mm256_storeu_ps(p, _mm256_permute2f128_ps(lo, hi, 0x20));
    _mm256_storeu_ps(p + 8, _mm256_permute2f128_ps(lo, hi, 0x31));
}

/* 8 rows of 4 floats (rows k at p[4k .. 4k+4)) -> v[q] = column q.  The
 * 128-bit halves are paired first (rows k and k+4 side by side), then
 * each half does the 4 x 4 transpose of unpack + shuffle. */
static inline void vld_t4_f32_avx2(const float *p, __m256 v[4])
{
    const __m256 l0 = _mm256_loadu_ps(p), l1 = _mm256_loadu_ps(p + 8);
    const __m256 l2 = _mm256_loadu_ps(p + 16), l3 = _mm256_loadu_ps(p + 24);
    const __m256 a0 = _mm256_permute2f128_ps(l0, l2, 0x20); /* row 0 | row 4 */
    const __m256 a1 = _mm256_permute2f128_ps(l0, l2, 0x31); /* row 1 | row 5 */
    const __m256 a2 = _mm256_permute2f128_ps(l1, l3, 0x20); /* row 2 | row 6 */
    const __m256 a3 = _mm256_permute2f128_ps(l1, l3, 0x31); /* row 3 | row 7 */
    const __m256 t0 = _mm256_unpacklo_ps(a0, a1), t1 = _mm256_unpackhi_ps(a0, a1);
    const __m256 t2 = _mm256_unpacklo_ps(a2, a3), t3 = _mm256_unpackhi_ps(a2, a3);
    v[0] = _mm256_shuffle_ps(t0, t2, 0x44);
    v[1] = _mm256_shuffle_ps(t0, t2, 0xEE);
    v[2] = _mm256_shuffle_ps(t1, t3, 0x44);
    v[3] = _mm256_shuffle_ps(t1, t3, 0xEE);
}

/* r0 i0 r1 i1 r2 i2 r3 i3  ->  re = r0..r3, im = i0..i3. */
static inline void vld_split_f64_avx2(const double *p, __m256d *re, __m256d *im)
{
    const __m256d a = _mm256_loadu_pd(p), b = _mm256_loadu_pd(p + 4);
    /* unpack: r0 r2 | r1 r3 and i0 i2 | i1 i3; the permute swaps the middle */
    *re = _mm256_permute4x64_pd(_mm256_unpacklo_pd(a, b), 0xD8);
    *im = _mm256_permute4x64_pd(_mm256_unpackhi_pd(a, b), 0xD8);
}

static inline void vst_inter_f64_avx2(double *p, __m256d re, __m256d im)
{
    const __m256d lo = _mm256_unpacklo_pd(re, im); /* r0 i0 | r2 i2 */
    const __m256d hi = _mm256_unpackhi_pd(re, im); /* r1 i1 | r3 i3 */
    _mm256_storeu_pd(p, _mm256_permute2f128_pd(lo, hi, 0x20));
    _mm256_storeu_pd(p + 4, _mm256_permute2f128_pd(lo, hi, 0x31));
}

/* 4 rows of 4 doubles -> v[q] = column q. */
static inline void vld_t4_f64_avx2(const double *p, __m256d v[4])
{
    v[0] = _mm256_loadu_pd(p);
    v[1] = _mm256_loadu_pd(p + 4);
    v[2] = _mm256_loadu_pd(p + 8);
    v[3] = _mm256_loadu_pd(p + 12);
    tb_avx2_transpose4_pd(v);
}

/* f32 only: two groups of 4 floats, p[0..4) and p2[0..4), in one vector. */
static inline __m256 vld_2x4_f32_avx2(const float *p, const float *p2)
{
    return _mm256_insertf128_ps(_mm256_castps128_ps256(_mm_loadu_ps(p)), _mm_loadu_ps(p2),
                                1);
}

/* f32 only: a in the low 4 lanes, b in the high 4. */
static inline __m256 vset2_f32_avx2(float a, float b)
{
    return _mm256_insertf128_ps(_mm256_castps128_ps256(_mm_set1_ps(a)), _mm_set1_ps(b), 1);
}
