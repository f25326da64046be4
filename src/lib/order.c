/* order.c -- bl_order_by, the row order of a key (order.h): rows sorted by key, ties by row
   index, through qsort on (key, row) pairs; and bl_order_groups, the same order cut into G
   equal groups by selection, with no sort. */
#include <stdint.h>
#include <stdlib.h>
#include "alloc.h"
#include "order.h"

typedef struct keyed { double key; size_t idx; } keyed;

/* (key, row) pairs in the total order of bl_order_by: by key (NaN above every number),
   then by row. */
static int
keyed_less (const keyed *a, const keyed *b)
{
  const int na = a->key != a->key, nb = b->key != b->key;
  if (na != nb)
    return nb;
  if (!na && a->key != b->key)
    return a->key < b->key;
  return a->idx < b->idx;
}

static int
cmp_keyed (const void *pa, const void *pb)
{
  const keyed *a = pa, *b = pb;
  return keyed_less (b, a) - keyed_less (a, b);
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

/* ---------------------------------------------------------------- groups by selection */

static void
swap_keyed (keyed *a, keyed *b)
{
  const keyed t = *a;
  *a = *b;
  *b = t;
}

/* Quickselect (Hoare 1961, Comm. ACM 4, 321, "FIND"), median-of-three pivot, with qsort of
   the range as the fallback after 2 log2 n rounds (introselect; Musser 1997, Software:
   Practice and Experience 27, 983-993): afterwards K[T] is the element of rank T within
   [LO, HI), everything before it is smaller and everything after it larger. */
static void
select_nth (keyed *k, size_t lo, size_t hi, size_t t)
{
  size_t depth = 2;
  for (size_t m = hi - lo; m > 1; m >>= 1)
    depth += 2;
  while (hi - lo > 3) {
    size_t mid = lo + (hi - lo) / 2, i = lo, j = hi - 1;
    keyed piv;
    if (depth-- == 0) {
      qsort (k + lo, hi - lo, sizeof *k, cmp_keyed);
      return;
    }
    if (keyed_less (&k[mid], &k[lo]))
      swap_keyed (&k[mid], &k[lo]);
    if (keyed_less (&k[hi - 1], &k[lo]))
      swap_keyed (&k[hi - 1], &k[lo]);
    if (keyed_less (&k[hi - 1], &k[mid]))
      swap_keyed (&k[hi - 1], &k[mid]);
    piv = k[mid];
    /* Hoare partition: [lo, j] <= piv <= [j + 1, hi) with the pivot's keys all distinct */
    for (;;) {
      while (keyed_less (&k[i], &piv))
        i++;
      while (keyed_less (&piv, &k[j]))
        j--;
      if (i >= j)
        break;
      swap_keyed (&k[i], &k[j]);
      i++;
      j--;
    }
    if (t <= j)
      hi = j + 1;
    else
      lo = j + 1;
  }
  /* three or fewer left: insertion sort */
  for (size_t a = lo + 1; a < hi; a++)
    for (size_t b = a; b > lo && keyed_less (&k[b], &k[b - 1]); b--)
      swap_keyed (&k[b], &k[b - 1]);
}

/* Every boundary rank RANK[R0 .. R1) put in place inside [LO, HI) (multiple selection: the
   middle boundary first, then each side; O(n log G) in all). */
static void
select_ranks (keyed *k, size_t lo, size_t hi, const size_t *rank, size_t r0, size_t r1)
{
  while (r0 < r1 && hi - lo > 1) {
    const size_t mid = r0 + (r1 - r0) / 2, t = rank[mid];
    select_nth (k, lo, hi, t);
    select_ranks (k, lo, t, rank, r0, mid);
    lo = t + 1;
    r0 = mid + 1;
  }
}

int
bl_order_groups (const double *key, size_t n, size_t G, uint32_t *group, bl_err *err)
{
  keyed *k;
  size_t *rank;
  if (G < 1 || G > n || G > UINT32_MAX)
    return bl_fail (err, BL_EINTERNAL, "diagnose", "%zu groups of %zu rows", G, n);
  k = bl_mallocn (n, sizeof *k);
  rank = bl_mallocn (G, sizeof *rank);
  if (!k || !rank) {
    bl_free (k);
    bl_free (rank);
    return bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
  }
  for (size_t i = 0; i < n; i++) {
    k[i].key = key[i];
    k[i].idx = i;
  }
  for (size_t g = 1; g < G; g++)
    rank[g - 1] = g * n / G;
  select_ranks (k, 0, n, rank, 0, G - 1);
  for (size_t g = 0; g < G; g++)
    for (size_t q = g * n / G; q < (g + 1) * n / G; q++)
      group[k[q].idx] = (uint32_t) g;
  bl_free (k);
  bl_free (rank);
  return BL_OK;
}
