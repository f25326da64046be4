/* check_order.c -- bl_order_by (order.h), the stable row order of a key.

   The checks:
   - reference: the order of a high-entropy key against an insertion sort written here;
   - identities: ties keep row order (a constant key gives the identity permutation), an
     already sorted key gives the identity, n = 0 touches nothing;
   - errors: every allocation failure returns BL_ENOMEM with ORDER unchanged (a build with
     --enable-alloc-fail). */
#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "error.h"
#include "order.h"
#include "testutil.h"

/* The order by an insertion sort: stable by construction (a key moves only past larger
   keys), so ties keep row order. */
static void
order_direct (const double *key, size_t n, size_t *order)
{
  for (size_t i = 0; i < n; i++) {
    size_t k = i;
    while (k > 0 && key[order[k - 1]] > key[i]) {
      order[k] = order[k - 1];
      k--;
    }
    order[k] = i;
  }
}

START_TEST (order_matches_insertion_sort)
{
  enum { N = 257 };
  double key[N];
  size_t got[N], want[N];
  bl_err err = { 0 };
  /* a key with ties (every 7th row repeats an earlier value) and negative values */
  for (size_t i = 0; i < N; i++)
    key[i] = (i % 7 == 3) ? key[i / 2] : sin (2.385 * (double) i + 0.719) * 31.7;
  order_direct (key, N, want);
  ck_assert_int_eq (bl_order_by (key, N, got, &err), BL_OK);
  for (size_t i = 0; i < N; i++)
    ck_assert_msg (got[i] == want[i], "order[%zu]: %zu, want %zu", i, got[i], want[i]);
}
END_TEST

START_TEST (order_ties_by_row)
{
  const double same[5] = { 1.618, 1.618, 1.618, 1.618, 1.618 };
  const double sorted[4] = { -3.25, -0.5, 0.0, 2.75 };
  const double two[6] = { 2.5, -1.25, 2.5, -1.25, 2.5, -1.25 };
  const size_t two_want[6] = { 1, 3, 5, 0, 2, 4 };
  size_t o[6];
  bl_err err = { 0 };
  ck_assert_int_eq (bl_order_by (same, 5, o, &err), BL_OK);
  for (size_t i = 0; i < 5; i++)
    ck_assert_msg (o[i] == i, "constant key: order[%zu] = %zu", i, o[i]);
  ck_assert_int_eq (bl_order_by (sorted, 4, o, &err), BL_OK);
  for (size_t i = 0; i < 4; i++)
    ck_assert_msg (o[i] == i, "sorted key: order[%zu] = %zu", i, o[i]);
  ck_assert_int_eq (bl_order_by (two, 6, o, &err), BL_OK);
  for (size_t i = 0; i < 6; i++)
    ck_assert_msg (o[i] == two_want[i], "two values: order[%zu] = %zu", i, o[i]);
  o[0] = 99;
  ck_assert_int_eq (bl_order_by (two, 0, o, &err), BL_OK);
  ck_assert_uint_eq (o[0], 99);
}
END_TEST

typedef struct order_ctx { double key[40]; size_t order[40]; } order_ctx;

static int
order_run (void *ctx, bl_err *err)
{
  order_ctx *c = ctx;
  for (size_t i = 0; i < 40; i++)
    c->order[i] = 77;
  return bl_order_by (c->key, 40, c->order, err);
}

static void
order_after (void *ctx, int st, unsigned long n)
{
  const order_ctx *c = ctx;
  for (size_t i = 0; i < 40; i++)
    ck_assert_msg (st == BL_OK || c->order[i] == 77, "N=%lu: order[%zu] changed on failure",
                   n, i);
  if (st == BL_OK)
    ck_assert_uint_eq (c->order[0], 39);       /* the key falls with the row index */
}

START_TEST (order_alloc_failures)
{
  order_ctx c;
  for (size_t i = 0; i < 40; i++)
    c.key[i] = 9.875 - 0.25 * (double) i;
  if (!test_alloc_fail_active ())
    return;
  ck_assert_uint_eq (test_alloc_fail_loop ("order_by", order_run, order_after, &c, 10, NULL), 2);
}
END_TEST

/* bl_order_groups equals the cut of bl_order_by's order into G groups (the definition in
   order.h; the order itself is checked above against an insertion sort), over sizes, group
   counts and key patterns chosen to break a selection: sorted, reversed, all equal (ties by
   row), few distinct values, NaNs, an organ pipe and random keys from a fixed LCG
   (Knuth, TAOCP 2, 3.3.4: a = 6364136223846793005, c = 1442695040888963407). */
static double
pattern_key (int pat, size_t i, size_t n, unsigned long long *state)
{
  switch (pat) {
  case 0: return (double) i;
  case 1: return (double) (n - i);
  case 2: return 3.5;
  case 3: return (double) (i % 3);
  case 4: return (i % 7 == 0) ? NAN : (double) (i % 11);
  case 5: return (double) (i < n / 2 ? i : n - i);
  default:
    *state = *state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double) (*state >> 11) / 9007199254740992.0;
  }
}

START_TEST (groups_equal_the_cut_order)
{
  static const size_t sizes[] = { 1, 2, 3, 4, 5, 7, 20, 41, 100, 257, 1000, 4099 };
  static const size_t gs[] = { 1, 2, 3, 5, 10, 20 };
  unsigned long long state = 12345;
  for (size_t a = 0; a < sizeof sizes / sizeof sizes[0]; a++) {
    const size_t n = sizes[a];
    double *key = malloc (n * sizeof *key);
    size_t *order = malloc (n * sizeof *order);
    uint32_t *grp = malloc (n * sizeof *grp);
    ck_assert (key && order && grp);
    for (int pat = 0; pat < 7; pat++) {
      for (size_t i = 0; i < n; i++)
        key[i] = pattern_key (pat, i, n, &state);
      ck_assert_int_eq (bl_order_by (key, n, order, NULL), BL_OK);
      for (size_t b = 0; b < sizeof gs / sizeof gs[0]; b++) {
        const size_t G = gs[b];
        if (G > n)
          continue;
        ck_assert_int_eq (bl_order_groups (key, n, G, grp, NULL), BL_OK);
        for (size_t g = 0; g < G; g++)
          for (size_t q = g * n / G; q < (g + 1) * n / G; q++)
            ck_assert_msg (grp[order[q]] == g, "n %zu pattern %d G %zu: row %zu in group %u, "
                           "not %zu", n, pat, G, order[q], grp[order[q]], g);
      }
    }
    free (key);
    free (order);
    free (grp);
  }
}
END_TEST

START_TEST (groups_refuse_bad_counts)
{
  double key[3] = { 1, 2, 3 };
  uint32_t grp[3];
  bl_err e;
  bl_err_clear (&e);
  ck_assert_int_eq (bl_order_groups (key, 3, 0, grp, &e), BL_EINTERNAL);
  ck_assert_int_eq (bl_order_groups (key, 3, 4, grp, &e), BL_EINTERNAL);
}
END_TEST

static int
groups_run (void *ctx, bl_err *err)
{
  order_ctx *c = ctx;
  uint32_t grp[40];
  const int st = bl_order_groups (c->key, 40, 4, grp, err);
  if (st == BL_OK)
    for (size_t i = 0; i < 40; i++)
      c->order[i] = grp[i];
  return st;
}

static void
groups_after (void *ctx, int st, unsigned long n)
{
  const order_ctx *c = ctx;
  (void) n;
  if (st == BL_OK)
    ck_assert_uint_eq (c->order[0], 3);        /* row 0 has the largest key */
}

START_TEST (groups_alloc_failures)
{
  order_ctx c;
  for (size_t i = 0; i < 40; i++)
    c.key[i] = 9.875 - 0.25 * (double) i;
  if (!test_alloc_fail_active ())
    return;
  ck_assert_uint_eq (test_alloc_fail_loop ("order_groups", groups_run, groups_after, &c, 10,
                                           NULL), 3);
}
END_TEST

static Suite *
order_suite (void)
{
  Suite *s = suite_create ("order");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  tcase_add_test (ref, order_matches_insertion_sort);
  tcase_add_test (idt, order_ties_by_row);
  tcase_add_test (idt, groups_equal_the_cut_order);
  tcase_add_test (err, groups_refuse_bad_counts);
  tcase_add_test (err, groups_alloc_failures);
  tcase_add_test (err, order_alloc_failures);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  return s;
}

int
main (void)
{
  SRunner *sr = srunner_create (order_suite ());
  int nf;
  srunner_run_all (sr, CK_NORMAL);
  nf = srunner_ntests_failed (sr);
  srunner_free (sr);
  return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
