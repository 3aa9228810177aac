/*
 * bench_fft.c -- micro-benchmark of the tonebank C FFT (no Python).
 *
 *     make -C csrc bench
 *
 * Prints nanoseconds per transform (one row of n points) for
 * n in {64, 256, 1024, 4096} x batch in {1, 14, 140}, both precisions,
 * forward direction, contiguous out-of-place rows, scale 1.  Each figure
 * is the best of 5 trials of at least ~20 ms each, so it is a "quiet
 * machine" figure; compare ratios from one run, not absolute numbers
 * across runs.  Optional arguments: a list of sizes to use instead.
 */
#if !defined(_POSIX_C_SOURCE)
#define _POSIX_C_SOURCE 199309L
#endif

#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "../tonebank.h"

static double now_seconds(void)
{
#if defined(CLOCK_MONOTONIC)
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
#else
    return (double)clock() / (double)CLOCKS_PER_SEC;
#endif
}

static int run(const tb_fft_plan *p, int prec, size_t n, size_t batch, void *in, void *out,
               void *work)
{
    if (prec == TB_FLOAT32)
        return tb_fft_execute_f32(p, TB_FORWARD, batch, (const float *)in, (ptrdiff_t)n, 1,
                                  (float *)out, (ptrdiff_t)n, 1, 1.0f, work);
    return tb_fft_execute_f64(p, TB_FORWARD, batch, (const double *)in, (ptrdiff_t)n, 1,
                              (double *)out, (ptrdiff_t)n, 1, 1.0, work);
}

/* Best-of-5 nanoseconds per row, or a negative value on error. */
static double bench(size_t n, int prec, size_t batch)
{
    tb_fft_plan *p = NULL;
    size_t rs = prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
    void *in, *out, *work;
    size_t i, reps = 1;
    double best = -1.0;
    int trial;

    if (tb_fft_plan_create(n, prec, &p) != TB_OK)
        return -1.0;
    in = malloc(2 * n * batch * rs);
    out = malloc(2 * n * batch * rs);
    work = malloc(tb_fft_workspace_size(p));
    if (in == NULL || out == NULL || work == NULL) {
        tb_fft_plan_destroy(p);
        free(in);
        free(out);
        free(work);
        return -1.0;
    }
    for (i = 0; i < 2 * n * batch; i++) {
        double v = (double)((i * 2654435761u) % 1000u) / 500.0 - 1.0;
        if (prec == TB_FLOAT32)
            ((float *)in)[i] = (float)v;
        else
            ((double *)in)[i] = v;
    }
    /* calibrate: grow reps until one trial takes >= 20 ms */
    for (;;) {
        double t0 = now_seconds(), dt;
        for (i = 0; i < reps; i++)
            run(p, prec, n, batch, in, out, work);
        dt = now_seconds() - t0;
        if (dt >= 0.02 || reps > ((size_t)1 << 30))
            break;
        reps *= 2;
    }
    for (trial = 0; trial < 5; trial++) {
        double t0 = now_seconds(), ns;
        for (i = 0; i < reps; i++)
            run(p, prec, n, batch, in, out, work);
        ns = (now_seconds() - t0) * 1e9 / ((double)reps * (double)batch);
        if (best < 0 || ns < best)
            best = ns;
    }
    tb_fft_plan_destroy(p);
    free(in);
    free(out);
    free(work);
    return best;
}

int main(int argc, char **argv)
{
    static const size_t default_sizes[] = {64, 256, 1024, 4096};
    static const size_t batches[] = {1, 14, 140};
    size_t sizes[32], nsizes = 0, is, ib;
    int ip, a;

    for (a = 1; a < argc && nsizes < 32; a++) {
        long v = strtol(argv[a], NULL, 10);
        if (v > 0 && tb_fft_size_supported((size_t)v))
            sizes[nsizes++] = (size_t)v;
        else
            fprintf(stderr, "ignoring unsupported size %s\n", argv[a]);
    }
    if (nsizes == 0)
        for (nsizes = 0; nsizes < 4; nsizes++)
            sizes[nsizes] = default_sizes[nsizes];

    printf("tonebank %s C FFT, forward, ns per transform (best of 5)\n", tb_version());
    printf("%-9s %8s %12s %12s %12s\n", "precision", "n", "batch=1", "batch=14", "batch=140");
    for (ip = 0; ip < 2; ip++) {
        int prec = ip == 0 ? TB_FLOAT32 : TB_FLOAT64;
        for (is = 0; is < nsizes; is++) {
            printf("%-9s %8lu", prec == TB_FLOAT32 ? "float32" : "float64",
                   (unsigned long)sizes[is]);
            for (ib = 0; ib < 3; ib++)
                printf(" %12.1f", bench(sizes[is], prec, batches[ib]));
            printf("\n");
            fflush(stdout);
        }
    }
    return 0;
}
