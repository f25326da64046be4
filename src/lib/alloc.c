/* alloc.c -- allocation wrappers with optional fault injection (see alloc.h). */
#ifdef HAVE_CONFIG_H
#include "config.h"
#endif
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"

#ifdef BL_ALLOC_FAIL
/* Test builds only: a process-wide counter.  This is the one piece of mutable global state in
   the library, and it exists only when configure was given --enable-alloc-fail. */
static unsigned long fail_at, count;
static int
should_fail (void)
{
  count++;
  return fail_at != 0 && count == fail_at;
}
void bl_alloc_fail_at (unsigned long n) { fail_at = n; count = 0; }
unsigned long bl_alloc_count (void) { return count; }
#else
static int should_fail (void) { return 0; }
void bl_alloc_fail_at (unsigned long n) { (void) n; }
unsigned long bl_alloc_count (void) { return 0; }
#endif

void *bl_malloc (size_t size) { return should_fail () ? NULL : malloc (size ? size : 1); }
void *bl_calloc (size_t n, size_t size)
{
  return should_fail () ? NULL : calloc (n ? n : 1, size ? size : 1);
}
void *bl_realloc (void *ptr, size_t size)
{
  return should_fail () ? NULL : realloc (ptr, size ? size : 1);
}
void bl_free (void *ptr) { free (ptr); }

void *
bl_mallocn (size_t n, size_t size)
{
  if (size && n > SIZE_MAX / size)
    return NULL;
  return bl_malloc (n * size);
}

char *
bl_strdup (const char *s)
{
  const size_t len = strlen (s);
  char *d = bl_malloc (len + 1);
  if (d)
    memcpy (d, s, len + 1);
  return d;
}
