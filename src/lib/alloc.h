/* alloc.h -- the library's allocation entry points.

   Every allocation in libballast goes through these, so that a test build can make the N-th
   allocation fail (configure --enable-alloc-fail; SQLite's malloc tests do the same) and check
   that each caller returns BL_ENOMEM and leaks nothing.  In a normal build they are the C
   library's functions. */
#ifndef BALLAST_ALLOC_H
#define BALLAST_ALLOC_H
#include <stddef.h>
#ifdef __cplusplus
extern "C" {
#endif

void *bl_malloc (size_t size);
void *bl_calloc (size_t n, size_t size);
void *bl_realloc (void *ptr, size_t size);
void bl_free (void *ptr);
/* A copy of S (NUL-terminated), or NULL when memory runs out. */
char *bl_strdup (const char *s);
/* Overflow-checked n*size allocation; NULL on overflow or exhaustion. */
void *bl_mallocn (size_t n, size_t size);

/* Fault injection, for tests only.  bl_alloc_fail_at (N) makes the N-th allocation from now
   fail (N = 0 turns it off); bl_alloc_count () returns how many allocations were attempted
   since the last call to bl_alloc_fail_at.  In a build without --enable-alloc-fail both are
   no-ops and bl_alloc_count returns 0.  Not thread-safe: tests call them from one thread. */
void bl_alloc_fail_at (unsigned long n);
unsigned long bl_alloc_count (void);

#ifdef __cplusplus
}
#endif
#endif
