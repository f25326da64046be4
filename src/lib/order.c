/* order.c -- bl_order_by, the row order of a key (order.h): rows sorted by key, ties by row
   index, through qsort on (key, row) pairs. */
#include <stdlib.h>
#include "alloc.h"
#include "order.h"

typedef struct keyed { double key; size_t idx; } keyed;

static int
cmp_keyed (const void *pa, const void *pb)
{
  const keyed *a = pa, *b = pb;
  if (a->key < b->key) return -1;
  if (a->key > b->key) return 1;
  return (a->idx > b->idx) - (a->idx < b->idx);    /* ties by row index */
}

int
bl_order_by (const double *key, size_t n, size_t *order, bl_err *err)
{
  keyed *k = bl_mallocn (n ? n : 1, sizeof *k);
  if (!k)
    return bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
  for (size_t i = 0; i < n; i++) {
    k[i].key = key[i];
    k[i].idx = i;
  }
  qsort (k, n, sizeof *k, cmp_keyed);
  for (size_t i = 0; i < n; i++)
    order[i] = k[i].idx;
  bl_free (k);
  return BL_OK;
}
