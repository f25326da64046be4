/* order.h -- the row order of a key: a stable, deterministic sort permutation, for the
   modules that group or rank rows (diagnostics, cluster ids).  Depends on nothing but the
   error type. */
#ifndef BALLAST_ORDER_H
#define BALLAST_ORDER_H
#include <stddef.h>
#include "error.h"
#ifdef __cplusplus
extern "C" {
#endif

/* Row order by KEY (length N) into ORDER (length N, caller-owned): ORDER[0] is the row of the
   smallest key, ties by row index (a deterministic, stable order).  Returns BL_OK, or
   BL_ENOMEM with ERR set (where "diagnose") and ORDER unchanged. */
int bl_order_by (const double *key, size_t n, size_t *order, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
