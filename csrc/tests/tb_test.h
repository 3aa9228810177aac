/*
 * tb_test.h -- what the standalone C tests share (test-only, not part of
 * the kernel): pass/fail counters, a seeded random generator, allocation
 * that stops the test when memory runs out, and element access for
 * buffers of either precision.  Each test_<op>.c includes it once, after
 * tonebank.h; its own check() prints what failed and counts it here.
 * Define TB_TEST_SEED before the include for another random sequence.
 */
#ifndef TB_TEST_H
#define TB_TEST_H

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#ifndef TB_TEST_SEED
#define TB_TEST_SEED 0x9E3779B97F4A7C15u
#endif

static long n_passed = 0, n_failed = 0;

/* xorshift64* (Vigna, "An experimental exploration of Marsaglia's
 * xorshift generators, scrambled", 2016, from memory): uniform in [-1, 1). */
static uint64_t rng_state = TB_TEST_SEED;
static inline double rnd(void)
{
    rng_state ^= rng_state >> 12;
    rng_state ^= rng_state << 25;
    rng_state ^= rng_state >> 27;
    return (double)((rng_state * 0x2545F4914F6CDD1DULL) >> 11) / 4503599627370496.0 - 1.0;
}

static inline void *xmalloc(size_t bytes)
{
    void *p = malloc(bytes ? bytes : 1);
    if (p == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    return p;
}

static inline void *xcalloc(size_t count, size_t size)
{
    void *p = calloc(count ? count : 1, size ? size : 1);
    if (p == NULL) {
        printf("out of memory in the test\n");
        exit(2);
    }
    return p;
}

/* Bytes of one REAL of a precision. */
static inline size_t rsize(int prec)
{
    return prec == TB_FLOAT32 ? sizeof(float) : sizeof(double);
}

/* Element i of a float or double buffer, as double. */
static inline void put(int prec, void *buf, size_t i, double v)
{
    if (prec == TB_FLOAT32)
        ((float *)buf)[i] = (float)v;
    else
        ((double *)buf)[i] = v;
}

static inline double get(int prec, const void *buf, size_t i)
{
    return prec == TB_FLOAT32 ? (double)((const float *)buf)[i] : ((const double *)buf)[i];
}

#endif /* TB_TEST_H */
