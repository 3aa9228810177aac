/*
 * tb_fbmc.c -- FBMC/OQAM synthesis and analysis: a polyphase network
 * around one FFT per symbol, fused.
 *
 * M subcarriers, overlap factor K, a real prototype h of K*M taps (given
 * at plan creation, unit energy for the Python binding).  A complex grid
 * value q[k] of symbol s travels as two real half-symbols (Re q, then
 * Im q M/2 samples later); half-symbol n is the pulse
 *
 *     sum_k a[k,n] j^(k+n) h[t - nM/2] exp(2 pi i k (t - nM/2 - KM/2) / M).
 *
 * With the bin phases c[k] = j^k (-1)^(kK) (a table in the plan) both
 * half-symbols of a symbol come out of ONE inverse FFT, z = IDFT(q c):
 * since conj(c[k]) = (-1)^k c[k], each real-input transform x obeys
 * conj(x[-l]) = x[l + M/2], so with w[l] = conj(z[(M/2 - l) mod M])
 *
 *     first half-symbol  (Re q):  x0 = (z + w) / 2
 *     second half-symbol (Im q):  j x1 = (z - w) / 2   (j^n folded in)
 *
 * and the sign (-1)^s of j^(2s) too (the 1/2 and the sign are the IFFT's
 * scale, exact).  The polyphase network then adds the periodically
 * extended half-symbols times h:
 *
 *   grid row s --*c--> W0 --IFFT--> Z --mirror--> A = x0, B = j x1 (signs in)
 *
 *   out:  |<------------- K M ------------->|
 *         [sM ...... A*h (K periods of A) ..]
 *               [sM+M/2 .. B*h (K periods of B) ..]
 *
 * but gathered rather than scattered: cut the output into half periods
 * of M/2 samples; half period j is the sum of 2K contributions, tap
 * i = 0 .. 2K-1 from half-symbol n = j - i (rows x_n = A or B):
 *
 *     out_j[r] = sum_i h[i M/2 + r] x_{j-i}[(i mod 2) M/2 + r],  r < M/2.
 *
 * Symbols go in chunks of `chunk` (tb_fbmc_chunk: 4 to 32, about 256 KiB
 * of rows).  Each symbol of a chunk is transformed and split into its two
 * rows in a ring of 2 chunk + 2K - 1 rows in the workspace (row n in slot
 * n mod slots); then every output half period the chunk completes is
 * computed once and stored once, the tail's with the last chunk:
 *
 *   ring:  | rows 2 s0 - 2K + 1 .. 2 s0 - 1 (kept) | rows 2 s0 .. 2 s1 - 1 (new) |
 *          (as slots, wrapping)
 *   out:   half periods 2 s0 .. 2 s1 - 1  (last chunk: .. 2 S + 2K - 2)
 *
 * The half periods all 2K taps reach go a block of positions at a time
 * (TB_FBMC_BLOCK_BYTES), over runs of up to 16 half periods: the block's
 * taps (a contiguous table hb in the plan) and each row's block are read
 * from L1 for the whole run, and each output is stored once, K = 4 in one
 * pass of all 8 taps, other K in groups of 4 (and 2).  The first and last
 * 2K - 1 half periods of a burst, which fewer half-symbols reach, take
 * the taps two per pass over the whole half period.  So per sample the
 * network costs 2K multiply-adds from L1 and one store, instead of K
 * read-modify-write passes over the output (the overlap-add it replaces,
 * 5 loads and a store per 2 multiply-adds).  Rows are 2M REALs plus a
 * cache line apart (TB_FBMC_PAD): at power-of-two M the blocks of
 * consecutive rows would otherwise fall into one L1 set.
 *
 * Analysis runs the other way: each half-symbol's K*M samples are folded
 * with h into M (v[p] = sum_i h[p+iM] y[p+iM], the polyphase network),
 * and the two real decisions of a symbol again share one forward FFT:
 *
 *     t[p] = (v0[p] + conj(v0[M/2-p]) + v1[p] - conj(v1[M/2-p])) / 2
 *     q_hat[k] = (-1)^s conj(c[k]) DFT(t)[k] = a0 + j a1
 *
 * In "separate" mode each half-symbol gets its own FFT and the complex
 * matched-filter output conj(j^n c[k]) DFT(v)[k] is written (a caller
 * that equalises must divide by the channel before taking the real part).
 *
 * When M is a multiple of 4, c[k] is a circular shift by M/4 (K even) or
 * 3M/4 (K odd) samples, so synthesis transforms the grid row where it
 * lies and reads z shifted, and analysis writes t shifted and lets the
 * FFT's scale carry the sign: no multiplication passes over the bins.
 *
 * Plan memory: one allocation (plus the FFT plan it owns)
 *     +---------------------+------------------+---------------+--------------------+
 *     | struct tb_fbmc_plan | hh: 2 K M REALs  | c: 2 M REALs  | hb: 2 K M REALs,   |
 *     |                     |                  |               | in whole blocks    |
 *     +---------------------+------------------+---------------+--------------------+
 * hh holds each tap twice (hh[2l] = hh[2l+1] = h[l]) so that the filter
 * loops run over interleaved complex data as plain REAL loops that
 * compilers vectorise; c holds the bin phases interleaved (re, im); hb
 * holds hh again block by block for the synthesis network (for each block
 * of positions its 2K half periods' taps one after the other, the last
 * block padded with zeros: tb_fbmc_fill_blocks).
 *
 * Workspace (tb_fbmc_workspace_size): the FFT's workspace (W0, W1), the
 * row Z (M interleaved complex values), then the synthesis ring:
 * 2 chunk + 2K - 1 rows of M complex values plus TB_FBMC_PAD bytes each
 * (analysis uses its first two rows as A and B).  E.g. K = 4, complex128:
 * about 270 KiB for M = 256 and 1024, 1.1 MiB for M = 4096 (4 symbols
 * per chunk; half that in complex64).
 */
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"
#include "tb_internal.h"

struct tb_fbmc_plan {
    tb_fft_plan *fft;
    size_t m, overlap;
    size_t shift;   /* M % 4 == 0: c[k] = exp(2 pi i k shift / M), else 0 */
    size_t chunk;   /* symbols per chunk of synthesis (tb_fbmc_chunk) */
    const void *hh; /* 2 K M REALs, inside this block */
    const void *c;  /* 2 M REALs, inside this block */
    const void *hb; /* the taps block by block for synthesis (tb_fbmc_blocks) */
};

/* Bytes of one block of positions of the synthesis network (a few
 * AVX registers); see fbmc_network in tb_fbmc_impl.h. */
#define TB_FBMC_BLOCK_BYTES ((size_t)128)

/* Blocks of TB_FBMC_BLOCK_BYTES in a half period of m REALs of rs bytes
 * (the last one possibly partial). */
static size_t tb_fbmc_blocks(size_t m, size_t rs)
{
    const size_t b = TB_FBMC_BLOCK_BYTES / rs;
    return (m + b - 1) / b;
}

/* Bytes of padding after each half-symbol row of synthesis (one cache
 * line): see FBMC_ROW in tb_fbmc_impl.h. */
#define TB_FBMC_PAD ((size_t)64)

/* Bytes the ring of half-symbol rows of one synthesis chunk aims at:
 * small enough to stay in a core's L2 cache between the split that
 * writes a row and the network that reads it. */
#define TB_FBMC_CHUNK_BYTES ((size_t)256 * 1024)
/* Symbols per chunk: at least TB_FBMC_CHUNK_MIN, so that each block's
 * taps serve at least 2 * TB_FBMC_CHUNK_MIN output half periods per load
 * even when a few rows already fill the budget (large M: measured, the
 * taps re-read per symbol cost more than the larger ring); at most
 * TB_FBMC_CHUNK_MAX, beyond which longer chunks gain nothing (and the
 * workspace of a small plan stays small). */
#define TB_FBMC_CHUNK_MIN 4
#define TB_FBMC_CHUNK_MAX 32

/* Symbols per synthesis chunk for m subcarriers, overlap K, REALs of rs
 * bytes: as many as keep the ring (2 rows per symbol plus the 2K - 1
 * rows still needed from before the chunk) within TB_FBMC_CHUNK_BYTES,
 * clamped to [TB_FBMC_CHUNK_MIN, TB_FBMC_CHUNK_MAX]. */
static size_t tb_fbmc_chunk(size_t m, size_t overlap, size_t rs)
{
    const size_t row = 2 * m * rs + TB_FBMC_PAD, rows = TB_FBMC_CHUNK_BYTES / row;
    const size_t chunk = rows > 2 * overlap - 1 ? (rows - (2 * overlap - 1)) / 2 : 0;
    if (chunk < TB_FBMC_CHUNK_MIN)
        return TB_FBMC_CHUNK_MIN;
    return chunk < TB_FBMC_CHUNK_MAX ? chunk : TB_FBMC_CHUNK_MAX;
}

/* Rows in the synthesis ring: a chunk's 2 * chunk half-symbols and the
 * 2K - 1 before them that its first output half periods still read. */
static size_t tb_fbmc_slots(const tb_fbmc_plan *plan)
{
    return 2 * plan->chunk + 2 * plan->overlap - 1;
}

/* Bytes of the struct, rounded up so the tables after it are aligned. */
static size_t tb_fbmc_head(void)
{
    const size_t a = 2 * sizeof(double);
    return (sizeof(struct tb_fbmc_plan) + a - 1) / a * a;
}

/* The synthesis network's copy of the taps, block by block: for block b
 * of a half period (TB_FBMC_BLOCK_BYTES of REALs, B of them) the 2K
 * half periods' taps one after the other, hb[(b 2K + i) B + t] =
 * hh[i m + b B + t] (zero past the end of a partial last block), so that
 * a block's taps are one short contiguous table instead of 2K strips m
 * REALs apart (which would share L1 sets with the output). */
static void tb_fbmc_fill_blocks(void *hb, const void *hh, size_t m, size_t overlap,
                                int precision)
{
    const size_t rs = tb_real_size(precision), b = TB_FBMC_BLOCK_BYTES / rs;
    const size_t n2 = 2 * overlap, nb = tb_fbmc_blocks(m, rs);
    size_t k, i, t;
    for (k = 0; k < nb; k++)
        for (i = 0; i < n2; i++)
            for (t = 0; t < b; t++) {
                const size_t pos = k * b + t, dst = (k * n2 + i) * b + t;
                if (precision == TB_FLOAT32)
                    ((float *)hb)[dst] = pos < m ? ((const float *)hh)[i * m + pos] : 0.0f;
                else
                    ((double *)hb)[dst] = pos < m ? ((const double *)hh)[i * m + pos] : 0.0;
            }
}

int tb_fbmc_plan_create(size_t m, size_t overlap, int precision, const double *prototype,
                        tb_fbmc_plan **plan_out)
{
    tb_fbmc_plan *p;
    unsigned char *base;
    size_t rs, l, k, taps;
    int st;

    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if (prototype == NULL)
        return TB_ERR_NULL;
    if (precision != TB_FLOAT32 && precision != TB_FLOAT64)
        return TB_ERR_PRECISION;
    if (m < 2 || m % 2 != 0 || !tb_fft_size_supported(m))
        return TB_ERR_SIZE;
    if (overlap < 1 || overlap > TB_FFT_MAX_SIZE / m)
        return TB_ERR_ARG;
    rs = tb_real_size(precision);
    taps = overlap * m;
    base = (unsigned char *)malloc(tb_fbmc_head() + (2 * taps + 2 * m) * rs +
                                   tb_fbmc_blocks(m, rs) * 2 * overlap * TB_FBMC_BLOCK_BYTES);
    if (base == NULL)
        return TB_ERR_NOMEM;
    p = (tb_fbmc_plan *)(void *)base;
    st = tb_fft_plan_create(m, precision, &p->fft);
    if (st != TB_OK) {
        free(base);
        return st;
    }
    p->m = m;
    p->overlap = overlap;
    /* c[k] = j^k (K even) or (-j)^k (K odd) is exp(2 pi i k shift / M)
     * with shift = M/4 or 3M/4: a circular shift in time, applied while
     * the data are moved anyway instead of as a multiplication pass. */
    p->shift = m % 4 != 0 ? 0 : (overlap % 2 == 0 ? m / 4 : 3 * m / 4);
    p->chunk = tb_fbmc_chunk(m, overlap, rs);
    p->hh = base + tb_fbmc_head();
    p->c = base + tb_fbmc_head() + 2 * taps * rs;
    p->hb = base + tb_fbmc_head() + (2 * taps + 2 * m) * rs;
    for (l = 0; l < taps; l++) {
        if (precision == TB_FLOAT32) {
            float *hh = (float *)(void *)(base + tb_fbmc_head());
            hh[2 * l] = hh[2 * l + 1] = (float)prototype[l];
        } else {
            double *hh = (double *)(void *)(base + tb_fbmc_head());
            hh[2 * l] = hh[2 * l + 1] = prototype[l];
        }
    }
    /* c[k] = j^k (-1)^(kK): exactly 1, j, -1 or -j. */
    for (k = 0; k < m; k++) {
        static const int re4[4] = {1, 0, -1, 0}, im4[4] = {0, 1, 0, -1};
        const int sign = ((k * overlap) & 1) ? -1 : 1;
        const int cr = sign * re4[k & 3], ci = sign * im4[k & 3];
        if (precision == TB_FLOAT32) {
            float *c = (float *)(void *)(base + tb_fbmc_head() + 2 * taps * rs);
            c[2 * k] = (float)cr;
            c[2 * k + 1] = (float)ci;
        } else {
            double *c = (double *)(void *)(base + tb_fbmc_head() + 2 * taps * rs);
            c[2 * k] = (double)cr;
            c[2 * k + 1] = (double)ci;
        }
    }
    tb_fbmc_fill_blocks(base + tb_fbmc_head() + (2 * taps + 2 * m) * rs, p->hh, m, overlap,
                        precision);
    *plan_out = p;
    return TB_OK;
}

void tb_fbmc_plan_destroy(tb_fbmc_plan *plan)
{
    if (plan == NULL)
        return;
    tb_fft_plan_destroy(plan->fft);
    free(plan);
}

size_t tb_fbmc_workspace_size(const tb_fbmc_plan *plan)
{
    size_t rs;
    if (plan == NULL)
        return 0;
    rs = tb_real_size(plan->fft->precision);
    return tb_fft_workspace_size(plan->fft) + 2 * plan->m * rs +
           tb_fbmc_slots(plan) * (2 * plan->m * rs + TB_FBMC_PAD);
}

size_t tb_fbmc_tail(const tb_fbmc_plan *plan)
{
    if (plan == NULL)
        return 0;
    return plan->overlap * plan->m - plan->m / 2;
}

/* Checks shared by the execute calls; TB_OK when they may proceed. */
static int tb_fbmc_check(const tb_fbmc_plan *plan, int precision, const void *in,
                         const void *out, const void *work)
{
    const size_t rs = tb_real_size(precision);
    if (plan == NULL || in == NULL || out == NULL || work == NULL)
        return TB_ERR_NULL;
    if (plan->fft->precision != precision)
        return TB_ERR_PRECISION;
    if (((uintptr_t)in % rs) != 0 || ((uintptr_t)out % rs) != 0 ||
        ((uintptr_t)work % sizeof(double)) != 0)
        return TB_ERR_ARG;
    return TB_OK;
}

/* ---- the operations, once per precision (and per ISA) -------------------- */

/* As in tb_fft.c: on x86-64 with gcc or clang the loops are compiled a
 * second time for AVX2 and the FFT plan's run-time choice picks the copy
 * (no FMA and -ffp-contract=off: both copies give the same bits). */
#if !defined(TB_NO_DISPATCH) && (defined(__x86_64__) || defined(_M_X64)) &&            \
    (defined(__GNUC__) || defined(__clang__))
#define TB_FBMC_AVX2 1
#else
#define TB_FBMC_AVX2 0
#endif

#define REAL float
#define FFTROW tb_fft_core_row_f32
#define SFX(name) name##_f32
#include "tb_fbmc_impl.h"
#undef SFX
#if TB_FBMC_AVX2
#if defined(__clang__)
#pragma clang attribute push(__attribute__((target("avx2"))), apply_to = function)
#else
#pragma GCC push_options
#pragma GCC target("avx2")
#endif
#define SFX(name) name##_f32_avx2
#include "tb_fbmc_impl.h"
#undef SFX
#if defined(__clang__)
#pragma clang attribute pop
#else
#pragma GCC pop_options
#endif
#endif
#undef FFTROW
#undef REAL

#define REAL double
#define FFTROW tb_fft_core_row_f64
#define SFX(name) name##_f64
#include "tb_fbmc_impl.h"
#undef SFX
#if TB_FBMC_AVX2
#if defined(__clang__)
#pragma clang attribute push(__attribute__((target("avx2"))), apply_to = function)
#else
#pragma GCC push_options
#pragma GCC target("avx2")
#endif
#define SFX(name) name##_f64_avx2
#include "tb_fbmc_impl.h"
#undef SFX
#if defined(__clang__)
#pragma clang attribute pop
#else
#pragma GCC pop_options
#endif
#endif
#undef FFTROW
#undef REAL

/* ---- public entry points: checks, then the chosen copy -------------------- */

/* Which compiled copy runs: the one the FFT plan chose at creation. */
#if TB_FBMC_AVX2
#define TB_FBMC_USE_AVX2(plan) ((plan)->fft->avx2)
#else
#define TB_FBMC_USE_AVX2(plan) 0
#define fbmc_synthesize_f32_avx2 fbmc_synthesize_f32
#define fbmc_synthesize_f64_avx2 fbmc_synthesize_f64
#define fbmc_analyze_f32_avx2 fbmc_analyze_f32
#define fbmc_analyze_f64_avx2 fbmc_analyze_f64
#endif

int tb_fbmc_synthesize_f32(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                           size_t start_symbol, const float *grid,
                           ptrdiff_t grid_batch_stride, float *out,
                           ptrdiff_t out_batch_stride, void *work)
{
    int st = tb_fbmc_check(plan, TB_FLOAT32, grid, out, work);
    if (st != TB_OK)
        return st;
    if (batch > 1 && out_batch_stride == 0)
        return TB_ERR_ARG;
    if (TB_FBMC_USE_AVX2(plan))
        fbmc_synthesize_f32_avx2(plan, batch, n_symbols, start_symbol, grid,
                                 grid_batch_stride, out, out_batch_stride, work);
    else
        fbmc_synthesize_f32(plan, batch, n_symbols, start_symbol, grid, grid_batch_stride,
                            out, out_batch_stride, work);
    return TB_OK;
}

int tb_fbmc_synthesize_f64(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                           size_t start_symbol, const double *grid,
                           ptrdiff_t grid_batch_stride, double *out,
                           ptrdiff_t out_batch_stride, void *work)
{
    int st = tb_fbmc_check(plan, TB_FLOAT64, grid, out, work);
    if (st != TB_OK)
        return st;
    if (batch > 1 && out_batch_stride == 0)
        return TB_ERR_ARG;
    if (TB_FBMC_USE_AVX2(plan))
        fbmc_synthesize_f64_avx2(plan, batch, n_symbols, start_symbol, grid,
                                 grid_batch_stride, out, out_batch_stride, work);
    else
        fbmc_synthesize_f64(plan, batch, n_symbols, start_symbol, grid, grid_batch_stride,
                            out, out_batch_stride, work);
    return TB_OK;
}

int tb_fbmc_analyze_f32(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                        size_t start_symbol, const float *in, ptrdiff_t in_batch_stride,
                        int separate, float *out, ptrdiff_t out_batch_stride, void *work)
{
    int st = tb_fbmc_check(plan, TB_FLOAT32, in, out, work);
    if (st != TB_OK)
        return st;
    if ((separate != 0 && separate != 1) || (batch > 1 && out_batch_stride == 0))
        return TB_ERR_ARG;
    if (TB_FBMC_USE_AVX2(plan))
        fbmc_analyze_f32_avx2(plan, batch, n_symbols, start_symbol, in, in_batch_stride,
                              separate, out, out_batch_stride, work);
    else
        fbmc_analyze_f32(plan, batch, n_symbols, start_symbol, in, in_batch_stride,
                         separate, out, out_batch_stride, work);
    return TB_OK;
}

int tb_fbmc_analyze_f64(const tb_fbmc_plan *plan, size_t batch, size_t n_symbols,
                        size_t start_symbol, const double *in, ptrdiff_t in_batch_stride,
                        int separate, double *out, ptrdiff_t out_batch_stride, void *work)
{
    int st = tb_fbmc_check(plan, TB_FLOAT64, in, out, work);
    if (st != TB_OK)
        return st;
    if ((separate != 0 && separate != 1) || (batch > 1 && out_batch_stride == 0))
        return TB_ERR_ARG;
    if (TB_FBMC_USE_AVX2(plan))
        fbmc_analyze_f64_avx2(plan, batch, n_symbols, start_symbol, in, in_batch_stride,
                              separate, out, out_batch_stride, work);
    else
        fbmc_analyze_f64(plan, batch, n_symbols, start_symbol, in, in_batch_stride,
                         separate, out, out_batch_stride, work);
    return TB_OK;
}
