/* thread.h -- the library's helper threads (one per read or per fit, never one per row block).

   The reader's parse worker and the gzip producer run small, non-recursive loops; a thread
   with a bounded stack costs less to start (and far less under AddressSanitizer, which
   clears the shadow of the whole stack) than one with the default 8 MiB. */
#ifndef BALLAST_THREAD_H
#define BALLAST_THREAD_H
#include <pthread.h>
#include <stddef.h>

/* Stack size of the helper threads: 1 MiB (the loops use a few KiB). */
#define BL_THREAD_STACK ((size_t) 1 << 20)

/* pthread_create with a stack of BL_THREAD_STACK bytes (the default when the size cannot be
   set).  Returns 0 on success, else the error number, as pthread_create does. */
int bl_thread_start (pthread_t *tid, void *(*fn) (void *), void *arg);

#endif
