/* order.h -- the row order of a key: a stable, deterministic sort permutation, for the
   modules that group or rank rows (diagnostics, cluster ids).  Depends on nothing but the
   error type. */
#ifndef BALLAST_ORDER_H
#define BALLAST_ORDER_H
#include <stddef.h>
#include <stdint.h>
#include "error.h"
#ifdef __cplusplus
extern "C" {
#endif

/* Row order by KEY (length N) into ORDER (length N, caller-owned): ORDER[0] is the row of the
   smallest key (a NaN key above every number), ties by row index (a deterministic, stable order).  Returns BL_OK, or
   BL_ENOMEM with ERR set (where "diagnose") and ORDER unchanged. */
int bl_order_by (const double *key, size_t n, size_t *order, bl_err *err);

/* The rows cut into G groups (1 <= G <= N) by the order of bl_order_by: GROUP[i] (length N,
   caller-owned) is g when row i's place in that order is in [g N / G, (g + 1) N / G).  The
   same groups as cutting bl_order_by's ORDER, found by multiple selection in O(N log G)
   instead of a sort (a NaN key counts above every number).  BL_OK, or BL_ENOMEM (or
   BL_EINTERNAL for a G out of range) with ERR set. */
int bl_order_groups (const double *key, size_t n, size_t G, uint32_t *group, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
