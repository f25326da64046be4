/* source.h -- bytes from a file, standard input or memory; gzip found by its magic bytes. */
#ifndef BALLAST_SOURCE_H
#define BALLAST_SOURCE_H
#include <stddef.h>
#include "error.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef struct bl_source bl_source;   /* opaque; defined in source.c */

/* Open PATH for reading ("-" is standard input).  A stream that starts with the gzip magic
   bytes 1f 8b is inflated with zlib (concatenated members too); anything else is passed
   through unchanged.  Returns NULL and fills ERR (BL_EIO naming PATH, BL_ENOMEM) on failure. */
bl_source *bl_source_open (const char *path, bl_err *err);

/* A source over LEN bytes at BUF (not copied: BUF must outlive the source).  NAME is used in
   messages.  Gzip data in BUF is inflated as for files. */
bl_source *bl_source_open_mem (const void *buf, size_t len, const char *name, bl_err *err);

/* A new source over the same bytes as SRC, from their start, once SRC has been read to its
   end: a file is opened again by name and must be the same file, unchanged (else BL_EIO,
   "file changed while being read"); memory is read again; standard input that is a regular
   file is read again from where it started; a pipe, FIFO or device (which cannot be read
   twice) is read from the copy SRC made of it in a temporary file while it was read (BL_EIO
   naming the reason when no copy could be made).  Free with bl_source_free. */
bl_source *bl_source_reopen (const bl_source *src, bl_err *err);

/* Read up to CAP bytes into BUF.  Returns the number of bytes read (0 at the end) and sets
   *STATUS to BL_OK, or returns 0 with *STATUS = BL_EIO / BL_EDATA (corrupt or truncated gzip
   stream) / BL_ENOMEM and ERR filled.  A truncated gzip stream is an error, never a short
   success.  For a regular file, the size and modification time are checked at open and again
   at the end: a change is BL_EIO ("file changed while being read"). */
size_t bl_source_read (bl_source *src, void *buf, size_t cap, int *status, bl_err *err);

/* Inflate ahead on a thread of its own: from now on a producer thread fills up to NBUF
   buffers of SIZE bytes while the caller consumes them through bl_source_read, which hands
   out the same bytes, and the same failure (with the same message) at the same point of the
   stream, as without it.  Does nothing for a stream that is not gzip, or when called twice.
   Returns BL_OK, or BL_ENOMEM with ERR filled (the source then stays as it was).  When no
   thread can be started the source simply stays synchronous (BL_OK).  After this call the
   source must be used from one thread at a time, as before; bl_source_free stops the
   producer.  The first read should come before this call: zlib allocates its window on the
   first inflate, and that allocation then happens on the caller's thread. */
int bl_source_prefetch (bl_source *src, size_t nbuf, size_t size, bl_err *err);

/* The name given at open ("-" shows as "<stdin>"); valid until bl_source_free. */
const char *bl_source_name (const bl_source *src);
/* A size for read buffers: the number of bytes bl_source_read will deliver when it is known
   in advance (a plain regular file or a memory source), an upper bound for a gzip one, else
   0.  A hint, not a limit: a file that grows is caught by the change check. */
size_t bl_source_size_hint (const bl_source *src);
/* Nonzero when the stream is gzip-compressed. */
int bl_source_is_gzip (const bl_source *src);

/* Close and free.  Accepts NULL. */
void bl_source_free (bl_source *src);

#ifdef __cplusplus
}
#endif
#endif
