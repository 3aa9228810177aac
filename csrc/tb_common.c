/*
 * tb_common.c -- status strings and version of the tonebank C kernel.
 *
 * Every string returned here is a static constant: callers may keep the
 * pointer forever and must not free it.
 */
#include "tonebank.h"

const char *tb_strerror(int status)
{
    switch (status) {
    case TB_OK:
        return "success";
    case TB_ERR_NULL:
        return "a required pointer argument is NULL";
    case TB_ERR_SIZE:
        return "unsupported transform size (must be 1..1048576 and of the form 2^a 3^b 5^c)";
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
