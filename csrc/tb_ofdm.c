/*
 * tb_ofdm.c -- fused OFDM symbol synthesis and analysis.
 *
 * A numpy chain builds OFDM symbols in several passes over memory: zero a
 * grid, scatter the used bins, inverse FFT, copy the cyclic prefix,
 * concatenate.  Here each symbol is done in one pass while it is hot in
 * the cache: its values are scattered straight into the FFT's own split
 * workspace, the FFT's last pass writes the symbol body into its place
 * in the output, and the prefix is copied from the body's tail:
 *
 *   a (n_a values) --+                            out, one signal:
 *                    +--> W0 (split, zeroed) --FFT--> | cp | body (n) | cp | body | ...
 *   b (n_b values) --+    X[bins_a[k]] = a[k]             ^-- copy of the body's
 *                         X[bins_b[k]] = b[k]                 last cp samples
 *
 * Analysis runs the other way: the FFT's first pass reads the body
 * straight from the caller's samples (the prefix is skipped, not
 * copied) and the wanted bins are gathered from the result.
 *
 * Small n (plan->lanes, n <= 64): symbols go through the FFT eight at a
 * time in the lane layout of tb_fft_impl.h, which is where small
 * transforms get their speed.  Each symbol is scattered into (or
 * gathered from) a plain interleaved row of n bins in a free part of the
 * FFT workspace, where every run of bins is one block copy, and the
 * eight rows are moved into (out of) the lanes by the FFT's own
 * transposes (tb_fft_core_lanes_load_* / _store_*, shuffle-based in the
 * AVX2 copy):
 *
 *   synthesis:  a, b --runs--> 8 rows in W1 --load--> lanes in W0 --FFT-->
 *               lanes --store, times scale--> 8 symbol bodies, + prefixes
 *   analysis:   8 bodies --load--> lanes in W0 --FFT--> lanes --store-->
 *               8 rows in the free part --runs, times scale--> a, b
 *
 * Plan memory: one allocation
 *     +---------------------+-------------+-------------+-----------------+
 *     | struct tb_ofdm_plan | runs of a   | runs of b   | runs of nulls   |
 *     +---------------------+-------------+-------------+-----------------+
 * (see tb_run below) plus the FFT plan it owns.
 *
 * Workspace (tb_ofdm_workspace_size): the FFT's workspace followed by one
 * interleaved row of n complex values (analysis of one symbol writes its
 * spectrum there before the gather).
 */
#include <stdlib.h>
#include <string.h>

#include "tonebank.h"
#include "tb_internal.h"

/*
 * Bin tables are kept as runs of consecutive positions, because plans
 * are made of runs (a band of data subcarriers between two pilots, a
 * guard band): run r of a table covers values k .. k+len-1 of the
 * table, which sit at FFT positions pos .. pos+len-1.  The scatter and
 * gather then move whole runs with unit-stride loops, and the null bins
 * (every position in neither table, also as runs) are the only ones
 * zeroed before a synthesis.  For a 52-of-64 plan with 4 pilots:
 *
 *     table a (48 data):  runs (k=0,  pos=38, len=5), (k=5, pos=44, len=13), ...
 *     nulls:              (pos=0, len=1) (DC), (pos=27, len=11) (guards)
 */
typedef struct {
    size_t k, pos, len;
} tb_run;

struct tb_ofdm_plan {
    tb_fft_plan *fft;
    size_t n;
    size_t n_a, n_b;
    size_t nrun_a, nrun_b, nrun_null;
    const tb_run *run_a;    /* inside this block */
    const tb_run *run_b;    /* inside this block, after run_a */
    const tb_run *run_null; /* inside this block, after run_b (k unused) */
};

/* Runs of a table of positions (or, with tab == NULL, of the positions
 * where owner[pos] == 0); writes them to out when out != NULL and
 * returns their number. */
static size_t tb_ofdm_runs(const size_t *tab, size_t count, const unsigned char *owner,
                           size_t n, tb_run *out)
{
    size_t nrun = 0, i = 0;
    if (tab != NULL) {
        while (i < count) {
            size_t len = 1;
            while (i + len < count && tab[i + len] == tab[i] + len)
                len++;
            if (out != NULL) {
                out[nrun].k = i;
                out[nrun].pos = tab[i];
                out[nrun].len = len;
            }
            nrun++;
            i += len;
        }
    } else {
        while (i < n) {
            size_t len = 0;
            if (owner[i]) {
                i++;
                continue;
            }
            while (i + len < n && !owner[i + len])
                len++;
            if (out != NULL) {
                out[nrun].k = 0;
                out[nrun].pos = i;
                out[nrun].len = len;
            }
            nrun++;
            i += len;
        }
    }
    return nrun;
}

/* Where symbol `s` of signal `q` lives; filled in symbol order. */
typedef struct {
    size_t q, s;   /* signal and symbol index */
    size_t offset; /* complex samples from the signal's start to the symbol */
} tb_ofdm_cursor;

/* Advance the cursor to the next symbol (row-major over signals, symbols). */
static void tb_ofdm_next(tb_ofdm_cursor *c, size_t n, size_t n_symbols, const size_t *cp)
{
    c->offset += n + cp[c->s];
    if (++c->s == n_symbols) {
        c->s = 0;
        c->q++;
        c->offset = 0;
    }
}

int tb_ofdm_plan_create(size_t n, int precision, size_t n_a, const size_t *bins_a,
                        size_t n_b, const size_t *bins_b, tb_ofdm_plan **plan_out)
{
    tb_ofdm_plan *p;
    unsigned char *seen;
    size_t nrun_a, nrun_b, nrun_null;
    int st;

    if (plan_out == NULL)
        return TB_ERR_NULL;
    *plan_out = NULL;
    if ((n_a > 0 && bins_a == NULL) || (n_b > 0 && bins_b == NULL))
        return TB_ERR_NULL;
    if (precision != TB_FLOAT32 && precision != TB_FLOAT64)
        return TB_ERR_PRECISION;
    if (!tb_fft_size_supported(n))
        return TB_ERR_SIZE;
    if (n_a > n || n_b > n - n_a)
        return TB_ERR_ARG;

    /* Every position in range and used once. */
    seen = (unsigned char *)calloc(n, 1);
    if (seen == NULL)
        return TB_ERR_NOMEM;
    st = tb_mark_bin_tables(n, n_a, bins_a, n_b, bins_b, seen);
    if (st != TB_OK) {
        free(seen);
        return st;
    }
    nrun_a = tb_ofdm_runs(bins_a, n_a, NULL, n, NULL);
    nrun_b = n_b > 0 ? tb_ofdm_runs(bins_b, n_b, NULL, n, NULL) : 0;
    nrun_null = tb_ofdm_runs(NULL, 0, seen, n, NULL);

    p = (tb_ofdm_plan *)malloc(sizeof(tb_ofdm_plan) +
                               (nrun_a + nrun_b + nrun_null) * sizeof(tb_run));
    if (p == NULL) {
        free(seen);
        return TB_ERR_NOMEM;
    }
    st = tb_fft_plan_create(n, precision, &p->fft);
    if (st != TB_OK) {
        free(seen);
        free(p);
        return st;
    }
    {
        tb_run *runs = (tb_run *)(p + 1);
        tb_ofdm_runs(bins_a, n_a, NULL, n, runs);
        if (n_b > 0)
            tb_ofdm_runs(bins_b, n_b, NULL, n, runs + nrun_a);
        tb_ofdm_runs(NULL, 0, seen, n, runs + nrun_a + nrun_b);
        p->run_a = runs;
        p->run_b = runs + nrun_a;
        p->run_null = runs + nrun_a + nrun_b;
    }
    free(seen);
    p->n = n;
    p->n_a = n_a;
    p->n_b = n_b;
    p->nrun_a = nrun_a;
    p->nrun_b = nrun_b;
    p->nrun_null = nrun_null;
    *plan_out = p;
    return TB_OK;
}

void tb_ofdm_plan_destroy(tb_ofdm_plan *plan)
{
    if (plan == NULL)
        return;
    tb_fft_plan_destroy(plan->fft);
    free(plan);
}

size_t tb_ofdm_workspace_size(const tb_ofdm_plan *plan)
{
    if (plan == NULL)
        return 0;
    return tb_fft_workspace_size(plan->fft) +
           2 * plan->n * tb_real_size(plan->fft->precision);
}

/* Checks shared by every execute call; TB_OK when it may proceed. */
static int tb_ofdm_check(const tb_ofdm_plan *plan, int precision, size_t n_symbols,
                         const size_t *cp, const void *a, const void *b, int need_b,
                         const void *samples, const void *work)
{
    if (plan == NULL)
        return TB_ERR_NULL;
    return tb_check_symbol_call(plan->fft->precision, precision, n_symbols, cp, 0, plan->n,
                                a, b, need_b, samples, work);
}

/* ---- the operations, once per precision ---------------------------------- */

#define REAL float
#define PREC TB_FLOAT32
#define SFX(name) name##_f32
#include "tb_ofdm_impl.h"
#undef REAL
#undef PREC
#undef SFX

#define REAL double
#define PREC TB_FLOAT64
#define SFX(name) name##_f64
#include "tb_ofdm_impl.h"
#undef REAL
#undef PREC
#undef SFX
