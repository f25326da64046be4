/* io_intern.c -- string interning for the reader (see io_intern.h): the hash, the
   open-addressing index, insertion; the UTF-8 check of column names.  Layer: io (below
   table.c; uses only alloc.h). */
#include <stdint.h>
#include <string.h>
#include "alloc.h"
#include "error.h"
#include "io_intern.h"

/* A 64-bit multiply-xorshift hash over 8-byte words (common practice, no source). */
static uint32_t
hash_bytes (const char *s, size_t n)
{
  uint64_t h = 0x9e3779b97f4a7c15u ^ (uint64_t) n;
  uint64_t w;
  while (n >= 8) {
    memcpy (&w, s, 8);
    h = (h ^ w) * 0xbf58476d1ce4e5b9u;
    h ^= h >> 31;
    s += 8;
    n -= 8;
  }
  w = 0;
  memcpy (&w, s, n);
  h = (h ^ w) * 0x94d049bb133111ebu;
  h ^= h >> 29;
  h *= 0xbf58476d1ce4e5b9u;
  h ^= h >> 32;
  return (uint32_t) h;
}

void
bl_io_dict_free (dict *d)
{
  for (size_t i = 0; i < d->n; i++)
    bl_free (d->str[i]);
  bl_free (d->str);
  bl_free (d->len);
  bl_free (d->hash);
  bl_free (d->slot);
  memset (d, 0, sizeof *d);
}

/* Rebuild the index with NSLOT slots.  Returns BL_OK or BL_ENOMEM (index unchanged). */
static int
dict_rehash (dict *d, size_t nslot)
{
  uint32_t *slot = bl_calloc (nslot, sizeof *slot);
  const size_t mask = nslot - 1;
  if (!slot)
    return BL_ENOMEM;
  for (size_t i = 0; i < d->n; i++) {
    size_t k = d->hash[i] & mask;
    while (slot[k])
      k = (k + 1) & mask;
    slot[k] = (uint32_t) (i + 1);
  }
  bl_free (d->slot);
  d->slot = slot;
  d->nslot = nslot;
  return BL_OK;
}

long
bl_io_dict_find (const dict *d, const char *s, size_t n)
{
  const uint32_t h = hash_bytes (s, n);
  size_t mask, k;
  if (!d->nslot)
    return -1;
  mask = d->nslot - 1;
  for (k = h & mask; d->slot[k]; k = (k + 1) & mask) {
    const size_t i = d->slot[k] - 1;
    if (d->hash[i] == h && d->len[i] == n && memcmp (d->str[i], s, n) == 0)
      return (long) i;
  }
  return -1;
}

/* Find S (N bytes) in D, or add a copy when D holds fewer than LIMIT strings.  Sets *IDX.
   Returns 0 when found, 1 when added, 2 when adding would exceed LIMIT, or -1 when memory
   ran out (D unchanged). */
int
bl_io_dict_intern (dict *d, const char *s, size_t n, size_t limit, size_t *idx)
{
  const uint32_t h = hash_bytes (s, n);
  size_t k, mask;
  char *copy;
  if (d->nslot) {
    mask = d->nslot - 1;
    for (k = h & mask; d->slot[k]; k = (k + 1) & mask) {
      const size_t i = d->slot[k] - 1;
      if (d->hash[i] == h && d->len[i] == n && memcmp (d->str[i], s, n) == 0) {
        *idx = i;
        return 0;
      }
    }
  }
  if (d->n >= limit)
    return 2;
  if (d->n == d->cap) {
    const size_t cap = d->cap ? 2 * d->cap : 16;
    char **str = bl_realloc (d->str, cap * sizeof *str);
    size_t *len;
    uint32_t *hash;
    if (!str)
      return -1;
    d->str = str;
    len = bl_realloc (d->len, cap * sizeof *len);
    if (!len)
      return -1;
    d->len = len;
    hash = bl_realloc (d->hash, cap * sizeof *hash);
    if (!hash)
      return -1;
    d->hash = hash;
    d->cap = cap;
  }
  if (2 * (d->n + 1) > d->nslot && dict_rehash (d, d->nslot ? 2 * d->nslot : 32) != BL_OK)
    return -1;
  copy = bl_malloc (n + 1);
  if (!copy)
    return -1;
  memcpy (copy, s, n);
  copy[n] = '\0';
  mask = d->nslot - 1;
  for (k = h & mask; d->slot[k]; k = (k + 1) & mask)
    ;
  d->slot[k] = (uint32_t) (d->n + 1);
  d->str[d->n] = copy;
  d->len[d->n] = n;
  d->hash[d->n] = h;
  *idx = d->n++;
  return 1;
}

/* Nonzero when S (N bytes) is well-formed UTF-8 (The Unicode Standard, ch. 3, table 3-7:
   no overlong forms, no surrogates D800-DFFF, nothing above U+10FFFF). */
int
bl_io_utf8_valid (const unsigned char *s, size_t n)
{
  size_t i = 0;
  while (i < n) {
    const unsigned c = s[i];
    unsigned lo = 0x80, hi = 0xbf;
    size_t more;
    if (c < 0x80) {
      i++;
      continue;
    }
    if (c >= 0xc2 && c <= 0xdf)
      more = 1;
    else if (c >= 0xe0 && c <= 0xef) {
      more = 2;
      if (c == 0xe0)
        lo = 0xa0;              /* overlong below U+0800 */
      else if (c == 0xed)
        hi = 0x9f;              /* surrogates */
    } else if (c >= 0xf0 && c <= 0xf4) {
      more = 3;
      if (c == 0xf0)
        lo = 0x90;              /* overlong below U+10000 */
      else if (c == 0xf4)
        hi = 0x8f;              /* above U+10FFFF */
    } else
      return 0;
    if (n - i <= more)
      return 0;
    if (s[i + 1] < lo || s[i + 1] > hi)
      return 0;
    for (size_t k = 2; k <= more; k++)
      if (s[i + k] < 0x80 || s[i + k] > 0xbf)
        return 0;
    i += more + 1;
  }
  return 1;
}

