/*
 * tb_common.c -- status strings, version, and the helpers the kernel's
 * operations share (declared in tb_internal.h).
 *
 * Every string returned here is a static constant: callers may keep the
 * pointer forever and must not free it.
 */
#include <stdlib.h>

#include "tb_internal.h"

const char *tb_strerror(int status)
{
    switch (status) {
    case TB_OK:
        return "success";
    case TB_ERR_NULL:
        return "a required pointer argument is NULL";
    case TB_ERR_SIZE:
        return "unsupported transform size (floating-point FFT: 1..1048576 of the form "
               "2^a 3^b 5^c; fixed-point FFT: a power of two, 2..65536)";
    case TB_ERR_PRECISION:
        return "unknown precision, or the plan precision does not match the function";
    case TB_ERR_DIRECTION:
        return "direction must be TB_FORWARD (-1) or TB_INVERSE (+1)";
    case TB_ERR_NOMEM:
        return "out of memory while allocating a plan";
    case TB_ERR_ARG:
        return "invalid argument (zero stride, misaligned buffer or similar)";
    default:
        return "unknown tonebank status code";
    }
}

const char *tb_version(void)
{
    return "0.1.0";
}

size_t tb_real_size(int precision)
{
    return precision == TB_FLOAT32 ? sizeof(float) : sizeof(double);
}

int tb_check_symbol_call(int plan_precision, int precision, size_t n_symbols,
                         const size_t *cp, size_t cp_min, size_t cp_max, const void *a,
                         const void *b, int need_b, const void *samples, const void *work)
{
    const size_t rs = tb_real_size(precision);
    size_t s;
    if (cp == NULL || a == NULL || samples == NULL || work == NULL || (need_b && b == NULL))
        return TB_ERR_NULL;
    if (plan_precision != precision)
        return TB_ERR_PRECISION;
    if (((uintptr_t)a % rs) != 0 || ((uintptr_t)samples % rs) != 0 ||
        (b != NULL && ((uintptr_t)b % rs) != 0) || ((uintptr_t)work % sizeof(double)) != 0)
        return TB_ERR_ARG;
    for (s = 0; s < n_symbols; s++)
        if (cp[s] < cp_min || cp[s] > cp_max)
            return TB_ERR_ARG;
    return TB_OK;
}

int tb_mark_bin_tables(size_t n, size_t n_a, const size_t *bins_a, size_t n_b,
                       const size_t *bins_b, unsigned char *seen)
{
    size_t k;
    for (k = 0; k < n_a + n_b; k++) {
        const size_t pos = k < n_a ? bins_a[k] : bins_b[k - n_a];
        if (pos >= n || seen[pos])
            return TB_ERR_ARG;
        seen[pos] = 1;
    }
    return TB_OK;
}

int tb_check_bin_tables(size_t n, size_t n_a, const size_t *bins_a, size_t n_b,
                        const size_t *bins_b)
{
    unsigned char *seen = (unsigned char *)calloc(n, 1);
    int st;
    if (seen == NULL)
        return TB_ERR_NOMEM;
    st = tb_mark_bin_tables(n, n_a, bins_a, n_b, bins_b, seen);
    free(seen);
    return st;
}
