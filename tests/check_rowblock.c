/* check_rowblock.c -- the row-block iterator (rowblock.h).

   - identities: the blocks of [start, end) tile the range in order with no gap or overlap,
     every block but the last holds BLK rows, and they are exactly the blocks of the
     hand-written loop they replace (for r0 = start; r0 < end; r0 += blk, with
     nb = min(blk, end - r0)), for ranges shorter than, equal to, and not a multiple of the
     block, with a start that is not 0;
   - basics: an empty range, and a start past the end, give no block; the macro and the
     functions walk the same blocks. */
#include <check.h>
#include <stdlib.h>
#include "rowblock.h"

START_TEST (rowblock_matches_hand_loop)
{
  static const size_t starts[] = { 0, 3, 2048, 777 };
  static const size_t lens[] = { 1, 511, 512, 513, 1024, 2047, 2048, 2049, 5001 };
  static const size_t blks[] = { 1, 7, 256, 512, 1024, 2048 };
  for (size_t s = 0; s < sizeof starts / sizeof starts[0]; s++)
    for (size_t l = 0; l < sizeof lens / sizeof lens[0]; l++)
      for (size_t k = 0; k < sizeof blks / sizeof blks[0]; k++) {
        const size_t start = starts[s], end = start + lens[l], blk = blks[k];
        size_t r0 = start, nblocks = 0, covered = 0;
        for (bl_rowblock b = bl_rowblock_first (start, end, blk); bl_rowblock_more (&b);
             bl_rowblock_next (&b)) {
          const size_t nb = end - r0 < blk ? end - r0 : blk;
          ck_assert_msg (r0 < end, "[%zu, %zu) by %zu: block past the end at %zu", start, end,
                         blk, b.row0);
          ck_assert_msg (b.row0 == r0 && b.n == nb, "[%zu, %zu) by %zu: block %zu is "
                         "(%zu, %zu), the hand loop's (%zu, %zu)", start, end, blk, nblocks,
                         b.row0, b.n, r0, nb);
          ck_assert_msg (b.n == blk || b.row0 + b.n == end, "[%zu, %zu) by %zu: short block "
                         "%zu not last", start, end, blk, nblocks);
          covered += b.n;
          nblocks++;
          r0 += blk;
        }
        ck_assert_msg (r0 >= end && covered == end - start
                       && nblocks == (end - start + blk - 1) / blk,
                       "[%zu, %zu) by %zu: %zu blocks cover %zu rows", start, end, blk,
                       nblocks, covered);
      }
}
END_TEST

START_TEST (rowblock_empty_and_macro)
{
  size_t seen = 0, rows = 0, last = 0;
  bl_rowblock b = bl_rowblock_first (40, 40, 16);
  ck_assert_msg (!bl_rowblock_more (&b) && b.n == 0, "empty range: a block (%zu, %zu)",
                 b.row0, b.n);
  b = bl_rowblock_first (41, 40, 16);
  ck_assert_msg (!bl_rowblock_more (&b) && b.n == 0, "start past the end: a block (%zu, %zu)",
                 b.row0, b.n);
  BL_ROWBLOCK_FOR (rb, 5, 42, 16) {
    ck_assert_msg (rb.row0 == 5 + 16 * seen, "macro block %zu at %zu", seen, rb.row0);
    rows += rb.n;
    last = rb.n;
    seen++;
  }
  ck_assert_msg (seen == 3 && rows == 37 && last == 5, "macro: %zu blocks, %zu rows, last %zu",
                 seen, rows, last);
  seen = 0;
  BL_ROWBLOCK_FOR (rb, 9, 9, 4)
    seen++;
  ck_assert_msg (seen == 0, "macro over an empty range: %zu blocks", seen);
}
END_TEST

static Suite *
rowblock_suite (void)
{
  Suite *s = suite_create ("rowblock");
  TCase *idt = tcase_create ("identities");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (idt, rowblock_matches_hand_loop);
  tcase_add_test (bas, rowblock_empty_and_macro);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  SRunner *sr = srunner_create (rowblock_suite ());
  int nf;
  srunner_run_all (sr, CK_NORMAL);
  nf = srunner_ntests_failed (sr);
  srunner_free (sr);
  return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
