/*
 * tonebank.h -- the public interface of the tonebank C kernel.
 *
 * Portable C99, no dependency but libm.  This header is the contract
 * between the kernel and everything that calls it (the Python binding,
 * a firmware build, the standalone tests).
 *
 * Conventions
 * -----------
 *  - Every exported name starts with tb_ / TB_.
 *  - Complex data are interleaved (re, im) pairs of float or double;
 *    there is no _Complex in the interface.
 *  - Lengths are size_t.  Strides are ptrdiff_t counted in complex
 *    elements (not bytes, not scalars) and may be negative or zero
 *    where that makes sense (see each function).
 *  - Plans are created once, are immutable afterwards and may be shared
 *    by any number of threads.  Execute calls never allocate, print or
 *    abort; they use caller-owned buffers and return a status.
 *  - Every function that can fail returns an int status: TB_OK (0) on
 *    success, one of the TB_ERR_* codes otherwise; tb_strerror() turns
 *    a status into a static, human-readable string.
 *
 * Sign and scaling convention of the FFT
 * --------------------------------------
 *    forward:  X[k] = scale * sum_{j=0}^{n-1} x[j] exp(-2 pi i j k / n)
 *    inverse:  x[j] = scale * sum_{k=0}^{n-1} X[k] exp(+2 pi i j k / n)
 *  The caller chooses `scale` (1, 1/n, 1/sqrt(n), ...).
 *
 * The block between the two "cffi declarations" markers below contains
 * plain declarations only; the Python build reads it verbatim as its
 * cffi cdef, so keep it free of preprocessor conditionals and macros
 * other than integer #defines.
 */
#ifndef TONEBANK_H
#define TONEBANK_H

#include <stddef.h>
#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

/* ---- begin cffi declarations ---- */

/* Status codes returned by every fallible function. */
#define TB_OK 0
#define TB_ERR_NULL 1      /* a required pointer argument is NULL */
#define TB_ERR_SIZE 2      /* size unsupported (float FFT: 0, > TB_FFT_MAX_SIZE or not 2^a 3^b 5^c;
                              fixed FFT: not a power of two in 2..TB_FIXED_MAX_SIZE) */
#define TB_ERR_PRECISION 3 /* unknown precision code, or plan/function precision mismatch */
#define TB_ERR_DIRECTION 4 /* direction is neither TB_FORWARD nor TB_INVERSE */
#define TB_ERR_NOMEM 5     /* plan allocation failed */
#define TB_ERR_ARG 6       /* another argument is invalid (e.g. a stride of 0 with n > 1) */

/* Precision codes. */
#define TB_FLOAT32 1
#define TB_FLOAT64 2

/* Transform directions. */
#define TB_FORWARD -1
#define TB_INVERSE 1

/* Largest transform size a plan accepts. */
#define TB_FFT_MAX_SIZE 1048576

/* Opaque, immutable FFT plan. */
typedef struct tb_fft_plan tb_fft_plan;

/* Static description of a status code; never NULL. */
const char *tb_strerror(int status);

/* Kernel version as "MAJOR.MINOR.PATCH". */
const char *tb_version(void);

/* 1 if a plan of size n can be created (1 <= n <= TB_FFT_MAX_SIZE and
 * n = 2^a 3^b 5^c), 0 otherwise. */
int tb_fft_size_supported(size_t n);

/* Create a plan for complex transforms of size n in the given precision
 * (TB_FLOAT32 or TB_FLOAT64).  On success *plan_out receives the plan and
 * TB_OK is returned; on failure *plan_out is set to NULL (when plan_out is
 * not NULL) and an error code is returned.  The plan holds every table
 * (factorisation, twiddles) in a single allocation. */
int tb_fft_plan_create(size_t n, int precision, tb_fft_plan **plan_out);

/* Release a plan; NULL is accepted and ignored. */
void tb_fft_plan_destroy(tb_fft_plan *plan);

/* Size and precision the plan was created with (0 for a NULL plan). */
size_t tb_fft_plan_size(const tb_fft_plan *plan);
int tb_fft_plan_precision(const tb_fft_plan *plan);

/* Which compiled copy of the kernels the plan runs: "avx2" (x86-64 CPUs
 * with AVX2, when the kernel was built with gcc or clang) or "portable"
 * (plain C99 compiled for the build's baseline target).  Both give
 * bit-identical results.  A static string; "" for a NULL plan. */
const char *tb_fft_plan_simd(const tb_fft_plan *plan);

/* Bytes of caller-owned workspace that tb_fft_execute_* needs with this
 * plan, whatever the batch count and strides (currently 4 * h scalars
 * of the plan's precision, h = n plus at most 112, or 8 n when n < 64;
 * 0 for a NULL plan).
 * The workspace must be aligned for double and must not overlap the
 * input or output.  One workspace per concurrent caller. */
size_t tb_fft_workspace_size(const tb_fft_plan *plan);

/* Batched transform of `batch` rows of n = tb_fft_plan_size(plan) points.
 *
 * Element j of row b is read at in + 2 * (b * in_row_stride + j * in_stride)
 * (scalars; strides are in complex elements) and written at
 * out + 2 * (b * out_row_stride + j * out_stride).
 *
 * In place is allowed when in and out describe exactly the same elements
 * (same pointer and strides); any other overlap between in and out is
 * undefined.  work must provide tb_fft_workspace_size(plan) bytes.
 * direction is TB_FORWARD or TB_INVERSE; every output is multiplied by
 * scale.  The _f32 function requires a TB_FLOAT32 plan and the _f64
 * function a TB_FLOAT64 plan (TB_ERR_PRECISION otherwise).
 *
 * Argument rules (checked in this order; nothing is written on error):
 *   TB_ERR_NULL       plan, in, out or work is NULL (even when batch == 0);
 *   TB_ERR_PRECISION  plan precision does not match the function;
 *   TB_ERR_DIRECTION  direction is not TB_FORWARD / TB_INVERSE;
 *   TB_ERR_ARG        in_stride or out_stride is 0 while n > 1, or
 *                     out_row_stride is 0 while batch > 1, or in / out
 *                     is not aligned for its scalar type, or work is not
 *                     aligned for double.
 * in_row_stride may be 0 (every row transforms the same input row).
 * batch == 0 is a successful no-op.  NaN and infinity in the input
 * propagate to the outputs they touch; nothing traps.  Built without
 * FMA contraction (see tb_fft.c), the results do not depend on the
 * thread, and the AVX2 and baseline kernels of x86-64 give bit-identical
 * results. */
int tb_fft_execute_f32(const tb_fft_plan *plan, int direction, size_t batch,
                       const float *in, ptrdiff_t in_row_stride, ptrdiff_t in_stride,
                       float *out, ptrdiff_t out_row_stride, ptrdiff_t out_stride,
                       float scale, void *work);
int tb_fft_execute_f64(const tb_fft_plan *plan, int direction, size_t batch,
                       const double *in, ptrdiff_t in_row_stride, ptrdiff_t in_stride,
                       double *out, ptrdiff_t out_row_stride, ptrdiff_t out_stride,
                       double scale, void *work);

/* ---- OFDM symbols: fused scatter / transform / cyclic prefix ------------ */

/* Opaque, immutable plan of the fused OFDM operations: an FFT of size n
 * plus two tables of bin positions.  Source "a" (typically the data
 * subcarriers, or every bin of a full grid) has n_a values per symbol
 * that go to FFT bins bins_a[0 .. n_a); source "b" (typically the
 * pilots) has n_b values that go to bins_b.  Positions are in natural
 * FFT order (0 = DC, n/2 .. n-1 the negative frequencies) and must be
 * distinct across both tables; every other bin is zero when
 * synthesizing and is not read back when analyzing. */
typedef struct tb_ofdm_plan tb_ofdm_plan;

/* Create a plan.  bins_b may be NULL when n_b == 0.  Errors: TB_ERR_NULL
 * (plan_out, or a table with a non-zero count, is NULL), TB_ERR_SIZE (n
 * unsupported, see tb_fft_size_supported), TB_ERR_PRECISION, TB_ERR_ARG
 * (a position >= n, a position repeated, or n_a + n_b > n),
 * TB_ERR_NOMEM. */
int tb_ofdm_plan_create(size_t n, int precision, size_t n_a, const size_t *bins_a,
                        size_t n_b, const size_t *bins_b, tb_ofdm_plan **plan_out);

/* Release a plan; NULL is accepted and ignored. */
void tb_ofdm_plan_destroy(tb_ofdm_plan *plan);

/* Bytes of caller-owned workspace the execute calls need with this plan
 * (aligned for double, one per concurrent caller; 0 for a NULL plan). */
size_t tb_ofdm_workspace_size(const tb_ofdm_plan *plan);

/* Synthesize n_symbols OFDM symbols for each of `batch` signals, in one
 * pass per symbol:
 *
 *     X[bins_a[k]] = a[k], X[bins_b[k]] = b[k], every other bin 0
 *     body[j]      = scale * sum_k X[k] exp(+2 pi i j k / n)   j < n
 *     symbol       = body[n - cp[s] .. n) followed by body      (CP first)
 *
 * Symbol s of signal q reads a at a + 2 * (q * a_batch_stride +
 * s * a_symbol_stride) (n_a contiguous complex values) and b likewise;
 * the symbols of signal q follow each other from out + 2 *
 * q * out_batch_stride, symbol s starting sum_{u<s} (n + cp[u]) complex
 * samples in.  cp holds n_symbols prefix lengths, each <= n.  Strides
 * are in complex elements; the b strides may be 0 (the same pilots for
 * every signal or symbol).  b may be NULL when the plan has n_b == 0.
 *
 * Errors (nothing written): TB_ERR_NULL (plan, cp, a, out, work, or b
 * with n_b > 0), TB_ERR_PRECISION, TB_ERR_ARG (a cp[s] > n, misaligned
 * pointers).  The inputs must not overlap the output. */
int tb_ofdm_synthesize_f32(const tb_ofdm_plan *plan, size_t batch, size_t n_symbols,
                           const size_t *cp, const float *a, ptrdiff_t a_batch_stride,
                           ptrdiff_t a_symbol_stride, const float *b,
                           ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                           float *out, ptrdiff_t out_batch_stride, float scale,
                           void *work);
int tb_ofdm_synthesize_f64(const tb_ofdm_plan *plan, size_t batch, size_t n_symbols,
                           const size_t *cp, const double *a, ptrdiff_t a_batch_stride,
                           ptrdiff_t a_symbol_stride, const double *b,
                           ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                           double *out, ptrdiff_t out_batch_stride, double scale,
                           void *work);

/* The inverse of synthesis, in one pass per symbol: skip the cp[s]
 * prefix samples of symbol s, take the forward FFT of the next n
 * samples (times scale), and write a[k] = X[bins_a[k]], b[k] =
 * X[bins_b[k]].  Same layouts as tb_ofdm_synthesize_* with the roles
 * of input and output exchanged; b may be NULL (pilots not wanted) even
 * when the plan has n_b > 0.  The a and b strides must not be 0.
 * Errors as for synthesis. */
int tb_ofdm_analyze_f32(const tb_ofdm_plan *plan, size_t batch, size_t n_symbols,
                        const size_t *cp, const float *in, ptrdiff_t in_batch_stride,
                        float *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                        float *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                        float scale, void *work);
int tb_ofdm_analyze_f64(const tb_ofdm_plan *plan, size_t batch, size_t n_symbols,
                        const size_t *cp, const double *in, ptrdiff_t in_batch_stride,
                        double *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                        double *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                        double scale, void *work);

/* ---- FBMC/OQAM: polyphase network + one FFT per symbol, fused ---------- */

/* Opaque, immutable plan of the FBMC/OQAM operations: m subcarriers (even,
 * an FFT size tb_fft_size_supported accepts), overlap factor K and a real
 * prototype filter of K*m taps, with the bin phases c[k] = j^k (-1)^(kK)
 * (k the natural FFT position).
 *
 * Signal model.  A complex grid value q[k] of symbol s is sent as two
 * real half-symbols: n = 2s carries Re q[k], n = 2s + 1 carries Im q[k],
 * half-symbol n starting n*m/2 samples into the burst:
 *
 *     x[t] = sum_n sum_k a[k,n] j^(k+n) h[t - n m/2]
 *                       exp(2 pi i k (t - n m/2 - K m/2) / m)
 *
 * with n counted from symbol `start_symbol` of the stream (only its
 * parity matters).  A burst of S symbols is S*m + tail samples long,
 * tail = K*m - m/2 (tb_fbmc_tail): the ringing of the last symbol. */
typedef struct tb_fbmc_plan tb_fbmc_plan;

/* Create a plan.  prototype: K*m taps (double whatever the precision;
 * converted once).  Errors: TB_ERR_NULL (plan_out or prototype NULL),
 * TB_ERR_PRECISION, TB_ERR_SIZE (m odd, < 2 or not a supported FFT
 * size), TB_ERR_ARG (overlap 0 or K*m > TB_FFT_MAX_SIZE), TB_ERR_NOMEM. */
int tb_fbmc_plan_create(size_t m, size_t overlap, int precision, const double *prototype,
                        tb_fbmc_plan **plan_out);

/* Release a plan; NULL is accepted and ignored. */
void tb_fbmc_plan_destroy(tb_fbmc_plan *plan);

/* Bytes of caller-owned workspace the execute calls need (aligned for
 * double, one per concurrent caller; 0 for a NULL plan). */
size_t tb_fbmc_workspace_size(const tb_fbmc_plan *plan);

/* K*m - m/2: samples a burst rings on after its last symbol (0 for NULL). */
size_t tb_fbmc_tail(const tb_fbmc_plan *plan);

/* Synthesize n_symbols symbols for each of `batch` signals.  Symbol s of
 * signal q reads m complex values at grid + 2 * (q * grid_batch_stride +
 * s * m); signal q's n_symbols*m + tail complex samples are all written
 * from out + 2 * q * out_batch_stride.  Cost per symbol: one m-point
 * inverse FFT (both half-symbols share it) and 2 K m real-by-complex
 * multiply-adds.  Errors (nothing written): TB_ERR_NULL (plan, grid,
 * out, work), TB_ERR_PRECISION, TB_ERR_ARG (misaligned pointers,
 * out_batch_stride 0 with batch > 1).  grid must not overlap out. */
int tb_fbmc_synthesize_f32(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                           size_t start_symbol, const float *grid,
                           ptrdiff_t grid_batch_stride, float *out,
                           ptrdiff_t out_batch_stride, void *work);
int tb_fbmc_synthesize_f64(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                           size_t start_symbol, const double *grid,
                           ptrdiff_t grid_batch_stride, double *out,
                           ptrdiff_t out_batch_stride, void *work);

/* Analyze n_symbols symbols of each of `batch` signals (n_symbols*m +
 * tail samples from in + 2 * q * in_batch_stride).  Half-symbol n's
 * matched-filter output is d[k,n] = conj(j^(k+n)) sum_t x[t + n m/2]
 * h[t] exp(-2 pi i k (t - K m/2) / m); its real part is the decision.
 *   separate == 0: writes m values per symbol, Re d[k,2s] + j Re d[k,2s+1]
 *                  (one FFT per symbol), at out + 2 * (q * out_batch_stride
 *                  + s * m);
 *   separate == 1: writes 2 m values per symbol, d[., 2s] then d[., 2s+1]
 *                  (two FFTs), at out + 2 * (q * out_batch_stride + 2 s m),
 *                  for a caller that equalises before taking the real part.
 * Errors (nothing written): TB_ERR_NULL, TB_ERR_PRECISION, TB_ERR_ARG
 * (separate not 0 or 1, misaligned pointers, out_batch_stride 0 with
 * batch > 1).  in must not overlap out. */
int tb_fbmc_analyze_f32(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                        size_t start_symbol, const float *in, ptrdiff_t in_batch_stride,
                        int separate, float *out, ptrdiff_t out_batch_stride, void *work);
int tb_fbmc_analyze_f64(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                        size_t start_symbol, const double *in, ptrdiff_t in_batch_stride,
                        int separate, double *out, ptrdiff_t out_batch_stride, void *work);

/* ---- Selective mapping (SLM): fused candidate search ------------------- */

/* Opaque, immutable plan of the fused SLM candidate search: grids of n
 * bins (natural FFT order: DC first, positive then negative
 * frequencies), zero-padded to an m-point inverse DFT, m = L n for an
 * integer oversampling L.  Bin k < n - n/2 goes to position k, bin
 * k >= n - n/2 to position k + m - n.  Internally the m points are L
 * polyphase branches of n-point FFTs (see tb_slm.c), so n must be a
 * supported FFT size; m need not be. */
typedef struct tb_slm_plan tb_slm_plan;

/* Create a plan.  Errors: TB_ERR_NULL (plan_out), TB_ERR_PRECISION,
 * TB_ERR_ARG (n == 0, m < n or m not a multiple of n), TB_ERR_SIZE (n
 * unsupported, see tb_fft_size_supported, or m > TB_FFT_MAX_SIZE),
 * TB_ERR_NOMEM. */
int tb_slm_plan_create(size_t n, size_t m, int precision, tb_slm_plan **plan_out);

/* Release a plan; NULL is accepted and ignored. */
void tb_slm_plan_destroy(tb_slm_plan *plan);

/* Bytes of caller-owned workspace tb_slm_select_* needs with this plan
 * (the n-point FFT workspace, n complex values and two rows of m
 * complex values; aligned for double, one per concurrent caller; 0 for
 * a NULL plan). */
size_t tb_slm_workspace_size(const tb_slm_plan *plan);

/* For each of n_symbols grids, build the n_candidates candidates
 *
 *     c_u[j] = scale * sum_k grid[k] phase_u[k] exp(+2 pi i j pos(k) / m)
 *
 * one at a time, measure peak_u = max_j |c_u[j]|^2, and keep only the
 * winner: candidate u replaces the best so far when peak_u < best *
 * (1 - tie_margin) (compared in double), so ties and near-ties within
 * the margin go to the lowest index.  Writes the winner's m samples to
 * out + 2 * s * out_stride, its index to index[s] and its peak power to
 * peak[s].  Grid s is read at grid + 2 * s * grid_stride and phase
 * sequence u at phases + 2 * u * phase_stride (n contiguous complex
 * values each; strides in complex elements, grid_stride and
 * phase_stride may be 0).  Never more than two candidates are held, and
 * a candidate is abandoned as soon as part of it reaches the bound (it
 * cannot win); the choice is that of the full search.
 *
 * Errors (checked before anything is written): TB_ERR_NULL (plan, grid,
 * phases, out, index, peak or work), TB_ERR_PRECISION, TB_ERR_ARG
 * (n_candidates == 0, out_stride == 0 with n_symbols > 1, tie_margin
 * not in [0, 1), misaligned pointers).  n_symbols == 0 is a no-op.
 * Inputs must not overlap the outputs or the workspace. */
int tb_slm_select_f32(const tb_slm_plan *plan, size_t n_symbols, size_t n_candidates,
                      const float *grid, ptrdiff_t grid_stride, const float *phases,
                      ptrdiff_t phase_stride, float *out, ptrdiff_t out_stride,
                      size_t *index, double *peak, float scale, double tie_margin,
                      void *work);
int tb_slm_select_f64(const tb_slm_plan *plan, size_t n_symbols, size_t n_candidates,
                      const double *grid, ptrdiff_t grid_stride, const double *phases,
                      ptrdiff_t phase_stride, double *out, ptrdiff_t out_stride,
                      size_t *index, double *peak, double scale, double tie_margin,
                      void *work);
/* ---- channel models: time-varying FIR (tapped delay line) ------------- */

/* Filter `batch` signals of n samples through a tapped delay line of
 * n_lags lags whose taps vary linearly in time between knots:
 *
 *     y[i] = sum_{m=0}^{n_lags-1} c_m(i) x[i - m],
 *     c_m(i) = A_m + t (B_m - A_m),   A = knot k, B = knot k + 1,
 *     k = (offset + i) / interval,    t = ((offset + i) % interval) / interval
 *
 * (integer division; t is computed in double).  taps holds n_tap_sets
 * sets of n_knots knots of n_lags complex taps, set-major then
 * knot-major, contiguous: tap m of knot k of set s is complex element
 * (s * n_knots + k) * n_lags + m.  Signal q uses set q % n_tap_sets.
 * With n_knots == 1 the taps are constant and interval / offset are
 * ignored; otherwise every sample needs knots k and k + 1, i.e.
 * n_knots >= (offset + n - 1) / interval + 2.
 *
 * hist holds, per signal, the n_lags - 1 samples that preceded x[0]
 * (oldest first; zeros for a fresh start); it may be NULL when
 * n_lags == 1.  The kernel evaluates y[i] as sum_m A_m x[i - m] + t *
 * sum_m (B_m - A_m) x[i - m] (equal to the definition up to rounding);
 * each sum is accumulated over m = 0, 1, ... in that order,
 * so a signal cut into chunks (passing the last n_lags - 1 input samples
 * on as hist and offset advanced by the chunk length) gives bit-identical
 * output.  The samples of signal q start at x + 2 * q * x_batch_stride
 * (hist, y likewise); strides in complex elements; samples contiguous.
 * No workspace; y must not overlap x, hist or taps.
 *
 * Errors (nothing written): TB_ERR_NULL (x, taps, y, or hist with
 * n_lags > 1), TB_ERR_ARG (n_lags, n_tap_sets or n_knots is 0,
 * interval is 0 with n_knots > 1, or too few knots). */
int tb_channel_fir_f32(size_t batch, size_t n, size_t n_lags,
                       const float *x, ptrdiff_t x_batch_stride,
                       const float *hist, ptrdiff_t hist_batch_stride,
                       const float *taps, size_t n_tap_sets, size_t n_knots,
                       size_t interval, size_t offset,
                       float *y, ptrdiff_t y_batch_stride);
int tb_channel_fir_f64(size_t batch, size_t n, size_t n_lags,
                       const double *x, ptrdiff_t x_batch_stride,
                       const double *hist, ptrdiff_t hist_batch_stride,
                       const double *taps, size_t n_tap_sets, size_t n_knots,
                       size_t interval, size_t offset,
                       double *y, ptrdiff_t y_batch_stride);
/* ---- windowed OFDM (WOLA): ramps, overlap-add, receive fold-back ------- */
/* (filterbank branch: tb_wola.c, tb_wola_impl.h) */

/* Opaque, immutable plan of windowed-overlap-add OFDM: the tables of a
 * tb_ofdm_plan -- bins_a, bins_b, same rules -- plus a transmit ramp of
 * `tx` samples and a receive ramp of `rx` samples.  tx_up[0 .. tx) and
 * rx_up[0 .. rx) are the rising halves; the falling halves are the same
 * values in reverse order.  For an exact round trip the caller uses
 * complementary ramps (up[i] + up[len-1-i] == 1), e.g. raised cosines.
 *
 * Symbol s (prefix cp[s] >= tx + rx), with body[j] the scaled inverse FFT
 * (j taken mod n) and o_s = sum_{u<s} (n + cp[u]) its start:
 *
 *   out[o_s + i] (+)= g(i) * body[i - cp[s]],   0 <= i < cp[s] + n + tx
 *   g(i) = tx_up[i]               for i < tx          (inside the prefix)
 *        = 1                      for tx <= i < cp[s] + n
 *        = tx_up[tx-1-(i-cp-n)]   for i >= cp[s] + n  (cyclic suffix)
 *
 * so the suffix of symbol s is added onto the ramp-up of symbol s+1
 * and a signal of S symbols has sum(n + cp) + tx samples.  Analysis of
 * symbol s takes the n + rx samples ending at the end of its FFT window,
 * y[j] = x[o_s + cp[s] + j] for -rx <= j < n, weights the first and last
 * rx of them with the receive ramps and folds the first rx onto the last:
 *
 *   z[j] = y[j]                                       0 <= j < n - rx
 *   z[n-rx+i] = rx_up[rx-1-i] y[n-rx+i] + rx_up[i] y[i-rx],  0 <= i < rx
 *
 * then forward FFT, times scale, gather.  The samples past the last
 * window (the final tx) are not read. */
typedef struct tb_wola_plan tb_wola_plan;

/* Errors: as tb_ofdm_plan_create, and TB_ERR_NULL when tx > 0 and tx_up
 * is NULL (rx likewise), TB_ERR_ARG when tx or rx exceed n. */
int tb_wola_plan_create(size_t n, int precision, size_t n_a, const size_t *bins_a,
                        size_t n_b, const size_t *bins_b, size_t tx, const double *tx_up,
                        size_t rx, const double *rx_up, tb_wola_plan **plan_out);
void tb_wola_plan_destroy(tb_wola_plan *plan);
size_t tb_wola_workspace_size(const tb_wola_plan *plan);

/* Layouts as tb_ofdm_synthesize_* / tb_ofdm_analyze_*, except the
 * output (input) of each signal holding sum(n + cp) + tx samples.
 * Errors as there, plus TB_ERR_ARG when a cp[s] < tx + rx. */
int tb_wola_synthesize_f32(const tb_wola_plan *plan, size_t batch, size_t n_symbols,
                           const size_t *cp, const float *a, ptrdiff_t a_batch_stride,
                           ptrdiff_t a_symbol_stride, const float *b,
                           ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                           float *out, ptrdiff_t out_batch_stride, float scale,
                           void *work);
int tb_wola_synthesize_f64(const tb_wola_plan *plan, size_t batch, size_t n_symbols,
                           const size_t *cp, const double *a, ptrdiff_t a_batch_stride,
                           ptrdiff_t a_symbol_stride, const double *b,
                           ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                           double *out, ptrdiff_t out_batch_stride, double scale,
                           void *work);
int tb_wola_analyze_f32(const tb_wola_plan *plan, size_t batch, size_t n_symbols,
                        const size_t *cp, const float *in, ptrdiff_t in_batch_stride,
                        float *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                        float *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                        float scale, void *work);
int tb_wola_analyze_f64(const tb_wola_plan *plan, size_t batch, size_t n_symbols,
                        const size_t *cp, const double *in, ptrdiff_t in_batch_stride,
                        double *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                        double *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                        double scale, void *work);

/* ---- filtered OFDM: symbol + FIR filter by per-symbol fast convolution --- */
/* (filterbank branch: tb_fofdm.c, tb_fofdm_impl.h) */

/* Opaque, immutable plan of filtered OFDM: the bin tables of a
 * tb_ofdm_plan on an n-point transform, a complex FIR filter h of
 * `taps` coefficients (interleaved double pairs) and a convolution size
 * m (2^a 3^b 5^c, m >= n + max cp + taps - 1; the caller chooses it).
 * The plan stores H = DFT_m(h), the response of the matched receive
 * filter g[t] = conj(h[taps-1-t]) (see tb_fofdm.c), and a real gain per
 * FFT position, gain[0 .. n), applied to the gathered receive values.
 *
 * Synthesis: symbol s (CP-OFDM symbol of n + cp[s] samples, body scaled
 * by `scale`) is convolved with h and the n + cp[s] + taps - 1 results
 * are added into the output from o_s = sum_{u<s}(n + cp[u]); a signal of
 * S symbols has sum(n + cp) + taps - 1 samples (the caller's buffer is
 * overwritten, no need to zero it).  Each convolution is one m-point
 * FFT, a product with H and one inverse m-point FFT.
 *
 * Analysis: for symbol s the n + taps - 1 samples from o_s + cp[s] are
 * convolved with g; outputs taps-1 .. taps-2+n (the symbol's FFT window
 * after both filters' delay) are transformed (forward, n points),
 * multiplied by scale * gain[pos] and gathered.  (The kernel computes
 * this as n-point FFTs without convolving; tb_fofdm.c gives the
 * identity.)
 * Input per signal: sum(n + cp) + taps - 1 samples. */
typedef struct tb_fofdm_plan tb_fofdm_plan;

/* Errors: as tb_ofdm_plan_create; TB_ERR_SIZE when m is unsupported
 * (or no FFT size of at least 2 taps - 2 points exists for the receive
 * correlation);
 * TB_ERR_NULL (taps or gain NULL); TB_ERR_ARG when taps == 0 or
 * n + taps - 1 > m. */
int tb_fofdm_plan_create(size_t n, size_t m, int precision, size_t n_a,
                         const size_t *bins_a, size_t n_b, const size_t *bins_b,
                         size_t taps, const double *h, const double *gain,
                         tb_fofdm_plan **plan_out);
void tb_fofdm_plan_destroy(tb_fofdm_plan *plan);
size_t tb_fofdm_workspace_size(const tb_fofdm_plan *plan);

/* Layouts as tb_ofdm_synthesize_* / tb_ofdm_analyze_*; errors as there,
 * plus TB_ERR_ARG when n + cp[s] + taps - 1 > m. */
int tb_fofdm_synthesize_f32(const tb_fofdm_plan *plan, size_t batch, size_t n_symbols,
                            const size_t *cp, const float *a, ptrdiff_t a_batch_stride,
                            ptrdiff_t a_symbol_stride, const float *b,
                            ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                            float *out, ptrdiff_t out_batch_stride, float scale,
                            void *work);
int tb_fofdm_synthesize_f64(const tb_fofdm_plan *plan, size_t batch, size_t n_symbols,
                            const size_t *cp, const double *a, ptrdiff_t a_batch_stride,
                            ptrdiff_t a_symbol_stride, const double *b,
                            ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                            double *out, ptrdiff_t out_batch_stride, double scale,
                            void *work);
int tb_fofdm_analyze_f32(const tb_fofdm_plan *plan, size_t batch, size_t n_symbols,
                         const size_t *cp, const float *in, ptrdiff_t in_batch_stride,
                         float *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                         float *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                         float scale, void *work);
int tb_fofdm_analyze_f64(const tb_fofdm_plan *plan, size_t batch, size_t n_symbols,
                         const size_t *cp, const double *in, ptrdiff_t in_batch_stride,
                         double *a, ptrdiff_t a_batch_stride, ptrdiff_t a_symbol_stride,
                         double *b, ptrdiff_t b_batch_stride, ptrdiff_t b_symbol_stride,
                         double scale, void *work);

/* ---- synchronisation: sliding correlation a period apart ------------- */
/* (tb_halves.c, tb_halves_impl.h) */

/* For each of `batch` signals of n complex samples x, and each start
 * d = 0 .. n_out - 1 with n_out = n - period - window + 1:
 *
 *     p[d] = sum_{m=0}^{window-1} conj(x[d+m]) x[d+m+period]   (complex)
 *     r[d] = sum_{m=0}^{window-1} |x[d+m+period]|^2           (real)
 *
 * the correlation and later-part energy behind timing metrics for
 * preambles with repeated parts and for the cyclic prefix.  Computed as
 * running sums restarted from a direct sum every 4096 outputs, in
 * double for both precisions, so the error does not grow with n.  The
 * samples of signal q start at x + 2 * q * x_stride, its outputs at
 * p + 2 * q * p_stride and r + q * r_stride (strides in elements of
 * each array: complex for x and p, real for r); samples contiguous.  No
 * workspace; p and r must not overlap x.
 *
 * Errors (nothing written): TB_ERR_NULL (x, p or r NULL), TB_ERR_ARG
 * (period or window is 0, or n < period + window - 1). */
int tb_halves_correlation_f32(size_t batch, size_t n, size_t period, size_t window,
                              const float *x, ptrdiff_t x_stride, float *p,
                              ptrdiff_t p_stride, float *r, ptrdiff_t r_stride);
int tb_halves_correlation_f64(size_t batch, size_t n, size_t period, size_t window,
                              const double *x, ptrdiff_t x_stride, double *p,
                              ptrdiff_t p_stride, double *r, ptrdiff_t r_stride);
/* ---- fixed-point FFT: Q15 / Q31, radix 2, shifts, saturation ---------- */
/* (tb_fixed.c, tb_fixed_impl.h) */

/* Formats (distinct from TB_FLOAT32 / TB_FLOAT64): data int16_t with 15
 * fraction bits, products and sums in int32_t (TB_Q15); data int32_t
 * with 31 fraction bits, products and sums in int64_t (TB_Q31). */
#define TB_Q15 15
#define TB_Q31 31

/* Rounding of every right shift: add half an LSB then shift (floor), or
 * round exact halves to the even neighbour. */
#define TB_ROUND_HALF_UP 0
#define TB_ROUND_CONVERGENT 1

/* Largest fixed-point transform size. */
#define TB_FIXED_MAX_SIZE 65536

/* Opaque, immutable plan of one fixed-point FFT configuration: size n =
 * 2^m, format, twiddle table, per-stage shifts (or block floating
 * point) and rounding.  The plan copies the tables it is given. */
typedef struct tb_fixed_plan tb_fixed_plan;

/* Create a plan.
 *
 *   n          a power of two, 2 .. TB_FIXED_MAX_SIZE;
 *   format     TB_Q15 or TB_Q31;
 *   twiddles   n/2 interleaved (re, im) pairs W[i], i < n/2, of the
 *              format's type (int16_t for TB_Q15, int32_t for TB_Q31;
 *              any alignment), used as given: pass the conjugate table
 *              for an inverse transform.  Each pair must satisfy
 *              |re| + |im| <= 2^(f+1) - 1 (true of any rounded point of
 *              the unit circle), which keeps every product sum inside
 *              its accumulator.  NULL: the plan computes the FORWARD
 *              table, rint(cos(2 pi i / n) 2^f), rint(-sin(2 pi i / n)
 *              2^f), saturated to [-2^f, 2^f - 1];
 *   shifts     m bytes, the right shift (0, 1 or 2) of each stage, or
 *              NULL for block floating point (per transform and stage,
 *              0 if the stage input's largest component magnitude M <
 *              2^(f-2), 1 if M < 2^(f-1), else 2);
 *   rounding   TB_ROUND_HALF_UP or TB_ROUND_CONVERGENT.
 *
 * Errors (*plan_out set to NULL when plan_out is not NULL): TB_ERR_NULL
 * (plan_out), TB_ERR_SIZE (n), TB_ERR_PRECISION (format), TB_ERR_ARG (a
 * shift > 2, an unknown rounding, a twiddle pair out of bounds),
 * TB_ERR_NOMEM. */
int tb_fixed_plan_create(size_t n, int format, const void *twiddles,
                         const unsigned char *shifts, int rounding,
                         tb_fixed_plan **plan_out);

/* Release a plan; NULL is accepted and ignored. */
void tb_fixed_plan_destroy(tb_fixed_plan *plan);

/* `count` transforms of n points, contiguous:
 *
 *     in:   | x0[0].re x0[0].im x0[1].re ... x0[n-1].im | x1[0].re ... |
 *     out:  the same layout, natural order, format's type
 *
 * Radix 2, decimation in time: the input is copied into out in
 * bit-reversed order, then m stages work in place in out.  Stage k (h =
 * 2^k) combines a = x[g + j], b = x[g + j + h] of every group g of 2h
 * points with w = W[j n / (2h)]:
 *
 *     t  = R(b w, f)                (each component rounded by f bits)
 *     y0 = S(R(a + t, s_k))         y1 = S(R(a - t, s_k))
 *
 * R(v, k) shifts right by k bits with the plan's rounding, S saturates
 * to [-2^f, 2^f - 1] and counts one saturation per clipped component.
 * exponent[i] receives the total right shift of transform i (the sum
 * of its stage shifts) and saturations[i] its saturation count; the
 * float value of out is out * 2^exponent / 2^f.  No workspace; nothing
 * allocated.
 *
 * in == out (the very same buffer) transforms in place; otherwise in and
 * out must not overlap (TB_ERR_ARG when the address ranges overlap).
 * Errors (nothing written): TB_ERR_NULL (plan, in, out, exponent or
 * saturations, even when count == 0), TB_ERR_PRECISION (a TB_Q31 plan
 * given to the _q15 function or the reverse), TB_ERR_ARG (overlap).
 * count == 0 is a successful no-op. */
int tb_fixed_fft_q15(const tb_fixed_plan *plan, size_t count, const int16_t *in,
                     int16_t *out, int64_t *exponent, int64_t *saturations);
int tb_fixed_fft_q31(const tb_fixed_plan *plan, size_t count, const int32_t *in,
                     int32_t *out, int64_t *exponent, int64_t *saturations);
/* ---- end cffi declarations ---- */

#ifdef __cplusplus
}
#endif

#endif /* TONEBANK_H */
