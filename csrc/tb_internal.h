/*
 * tb_internal.h -- what the kernel's own source files share (internal).
 *
 * Not a public header and not part of the API: firmware builds compile
 * the kernel's .c files with it, callers include tonebank.h only.  The
 * FFT plan layout lives here so that fused operations built on the FFT
 * (tb_ofdm.c) can drive its passes directly on their own workspace
 * layout instead of copying through the public execute call.
 */
#ifndef TB_INTERNAL_H
#define TB_INTERNAL_H

#include <stddef.h>
#include <stdint.h>

#include "tonebank.h"

/* Largest number of passes: every radix is >= 2 and n <= 2^20. */
#define TB_MAX_PASSES 20
/* Rows transformed together by the lane engine (see tb_fft_impl.h). */
#define TB_FFT_LANES 8
/* REALs of the 64-point form's twiddle table (tb_fft_impl.h). */
#define TB_CODELET_REALS 224

typedef struct {
    int radix;        /* r: 2, 3, 4, 5 or 8 */
    size_t l;         /* length of the sub-transforms this pass combines */
    size_t m;         /* n / (l * r): interleaved problems */
    size_t lp;        /* l of the previous pass (1 for pass 0) */
    size_t tw_offset; /* first twiddle of this pass, complex index */
} tb_fft_pass;

struct tb_fft_plan {
    size_t n;
    int precision;        /* TB_FLOAT32 or TB_FLOAT64 */
    int avx2;             /* 1: run the AVX2 copy of the kernels */
    int npass;            /* 0 when n == 1 */
    tb_fft_pass pass[TB_MAX_PASSES];
    size_t half;          /* REALs per part of the workspace */
    ptrdiff_t pad;        /* REALs between output slots: TB_PAD or 0 */
    int lanes;            /* 1: batches may run TB_FFT_LANES rows at once */
    int codelet;          /* 1: n = 64: the 8 x 8 form of tb_fft_impl.h
                           * replaces the passes and lanes */
    size_t ntwiddle;      /* complex entries in the table */
    const void *twiddles; /* float or double, inside this block */
};

/*
 * The two FFT engines, for fused operations.  Arguments are trusted (the
 * public entry points check them).  The workspace is the plan's
 * (tb_fft_workspace_size bytes), seen as
 *
 *     | W0 re | W0 im | W1 re | W1 im |     each part plan->half REALs
 *
 * tb_fft_core_row_*: one row.  Input element e at (xr[e*xs], xi[e*xs])
 *   (REAL stride xs: 2 for an interleaved caller buffer, 1 for a split
 *   array in W0), output interleaved at out[2*e*os], times scale.  The
 *   input may be W0 (re at work, im at work + half) or a caller buffer;
 *   it must not overlap out.
 * tb_fft_core_lanes_*: TB_FFT_LANES rows at once, only for plans with
 *   plan->lanes set.  The caller writes the rows into W0 in lane layout
 *   (element e of row r at W0re[e*TB_FFT_LANES + r], W0im likewise); the
 *   unscaled result comes back in the same layout in the returned part
 *   (its imaginary half at the returned pointer + plan->half).
 * Both run the AVX2 copy of the kernels when the plan chose it.
 */
void tb_fft_core_row_f32(const tb_fft_plan *p, int inv, const float *xr, const float *xi,
                         ptrdiff_t xs, float *out, ptrdiff_t os, float scale, float *work);
void tb_fft_core_row_f64(const tb_fft_plan *p, int inv, const double *xr,
                         const double *xi, ptrdiff_t xs, double *out, ptrdiff_t os,
                         double scale, double *work);
float *tb_fft_core_lanes_f32(const tb_fft_plan *p, int inv, float *work);
double *tb_fft_core_lanes_f64(const tb_fft_plan *p, int inv, double *work);

/*
 * Moving TB_FFT_LANES rows into and out of the lane layout, for plans
 * with plan->lanes set (shuffle-based transposes in the AVX2 copy).
 * tb_fft_core_lanes_load_*: row r is n contiguous interleaved complex
 *   values at rows[r]; they go to W0 in lane layout (see above).
 * tb_fft_core_lanes_store_*: res is what tb_fft_core_lanes_* returned;
 *   lane r goes to the n contiguous interleaved values at rows[r], times
 *   scale.  The rows must not overlap the workspace.
 */
void tb_fft_core_lanes_load_f32(const tb_fft_plan *p, const float *const *rows,
                                float *work);
void tb_fft_core_lanes_load_f64(const tb_fft_plan *p, const double *const *rows,
                                double *work);
void tb_fft_core_lanes_store_f32(const tb_fft_plan *p, const float *res, float scale,
                                 float *const *rows);
void tb_fft_core_lanes_store_f64(const tb_fft_plan *p, const double *res, double scale,
                                 double *const *rows);
/* tb_fft_core_lanes_store_range_*: only elements first .. first+count-1
 *   (< n) of every lane, to the count interleaved values at rows[r]:
 *   a gather of a run of bins straight from the lane layout. */
void tb_fft_core_lanes_store_range_f32(const tb_fft_plan *p, const float *res, size_t first,
                                       size_t count, float scale, float *const *rows);
void tb_fft_core_lanes_store_range_f64(const tb_fft_plan *p, const double *res,
                                       size_t first, size_t count, double scale,
                                       double *const *rows);

/*
 * The bin tables of a plan: every position < n and none used twice across
 * both tables.  tb_mark_bin_tables sets seen[pos] = 1 for each (seen: n
 * zeroed bytes, kept by the caller for the unused bins);
 * tb_check_bin_tables does the same on its own scratch.  TB_ERR_ARG for
 * a bad table, TB_ERR_NOMEM when the scratch cannot be had, else TB_OK.
 */
int tb_mark_bin_tables(size_t n, size_t n_a, const size_t *bins_a, size_t n_b,
                       const size_t *bins_b, unsigned char *seen);
int tb_check_bin_tables(size_t n, size_t n_a, const size_t *bins_a, size_t n_b,
                        const size_t *bins_b);

/* Bytes of one REAL of a precision: float for TB_FLOAT32, else double. */
size_t tb_real_size(int precision);

/*
 * The checks every symbol-by-symbol operation (CP-OFDM, WOLA, filtered
 * OFDM) makes before it runs, against a plan of precision plan_precision:
 * NULL pointers (b only when need_b) -> TB_ERR_NULL; a precision other
 * than the plan's -> TB_ERR_PRECISION; data not aligned to its REAL, a
 * workspace not aligned to double, or a prefix cp[s] outside
 * [cp_min, cp_max] -> TB_ERR_ARG.  TB_OK when the call may proceed.
 */
int tb_check_symbol_call(int plan_precision, int precision, size_t n_symbols,
                         const size_t *cp, size_t cp_min, size_t cp_max, const void *a,
                         const void *b, int need_b, const void *samples, const void *work);

#endif /* TB_INTERNAL_H */
