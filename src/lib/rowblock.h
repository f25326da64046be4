/* rowblock.h -- the one iterator over rows in blocks: rows [start, end) in blocks of BLK
   rows, the last block holding what is left.  Not installed; header only.

   Every streamed pass over the rows of a design (filling X a block at a time with
   bl_design_fill, a block of the IRLS, the slices of the QR fold) is this loop; the block
   size is the caller's, so that each pass keeps the block it has always had (the IRLS's
   BL_IRLS_BLOCK, the WLS and sandwich passes' 1024, the fold's 512) and with it the order of
   its sums, bit for bit.

     for (bl_rowblock b = bl_rowblock_first (0, n, BL_IRLS_BLOCK); bl_rowblock_more (&b);
          bl_rowblock_next (&b)) {
       bl_design_fill (d, b.row0, b.n, X, BL_IRLS_BLOCK);
       ...rows b.row0 + i for i < b.n...
     }

   or, the same loop, BL_ROWBLOCK_FOR (b, 0, n, BL_IRLS_BLOCK) { ... }.  BLK must be > 0;
   START > END gives no block, as START == END does. */
#ifndef BALLAST_ROWBLOCK_H
#define BALLAST_ROWBLOCK_H
#include <stddef.h>

typedef struct bl_rowblock {
  size_t row0;    /* the block's first row */
  size_t n;       /* rows in the block: blk, or fewer in the last block */
  size_t end;     /* one past the last row of the range */
  size_t blk;     /* rows per block */
} bl_rowblock;

/* Rows in the block starting at B->row0: B->blk, or what is left before B->end. */
static inline size_t
bl_rowblock_len (const bl_rowblock *b)
{
  return b->end - b->row0 < b->blk ? b->end - b->row0 : b->blk;
}

/* The first block of [START, END) in blocks of BLK rows. */
static inline bl_rowblock
bl_rowblock_first (size_t start, size_t end, size_t blk)
{
  bl_rowblock b;
  b.row0 = start;
  b.end = end;
  b.blk = blk;
  b.n = start < end ? bl_rowblock_len (&b) : 0;
  return b;
}

/* Nonzero while B is a block of its range (not past the end). */
static inline int
bl_rowblock_more (const bl_rowblock *b)
{
  return b->row0 < b->end;
}

/* Step B to the next block. */
static inline void
bl_rowblock_next (bl_rowblock *b)
{
  b->row0 += b->blk;
  b->n = b->row0 < b->end ? bl_rowblock_len (b) : 0;
}

#define BL_ROWBLOCK_FOR(b, start, end, blk)                                        \
  for (bl_rowblock b = bl_rowblock_first ((start), (end), (blk)); bl_rowblock_more (&b); \
       bl_rowblock_next (&b))

#endif
