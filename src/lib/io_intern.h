/* io_intern.h -- the reader's string sets (internal, not installed): the distinct strings of
   a categorical column (its levels) and the column names, each kept once, in insertion
   order, with a hash index; and the UTF-8 check of names. */
#ifndef BALLAST_IO_INTERN_H
#define BALLAST_IO_INTERN_H
#include <stddef.h>
#include <stdint.h>

/* A set of distinct strings in insertion order, with an open-addressing index (linear
   probing, load factor at most 1/2; common practice, no source). */
typedef struct dict {
  char **str;                 /* copies, NUL-terminated, in insertion order */
  size_t *len;
  uint32_t *hash;
  size_t n, cap;
  uint32_t *slot;             /* 0 empty, else index + 1 */
  size_t nslot;               /* a power of two, or 0 before the first insertion */
} dict;


/* Free what D holds and zero it (D itself is the caller's). */
void bl_io_dict_free (dict *d);
/* The index of S (N bytes) in D, or -1 when D does not hold it. */
long bl_io_dict_find (const dict *d, const char *s, size_t n);
/* Find S (N bytes) in D, or add a copy when D holds fewer than LIMIT strings.  Sets *IDX.
   Returns 0 when found, 1 when added, 2 when adding would exceed LIMIT, or -1 when memory
   ran out (D unchanged). */
int bl_io_dict_intern (dict *d, const char *s, size_t n, size_t limit, size_t *idx);
/* Nonzero when S (N bytes) is well-formed UTF-8. */
int bl_io_utf8_valid (const unsigned char *s, size_t n);

#endif
