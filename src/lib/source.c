/* source.c -- bytes from a file, standard input or memory; gzip found by its magic bytes.

   A source hands out bytes in chunks of the caller's size, so that a reader never needs the
   whole input in memory.  Plain data pass through unchanged (as zlib's gzread does); data
   that start with the gzip magic bytes 1f 8b are inflated with zlib, member after member
   (RFC 1952 section 2.2: a gzip file is a series of members).  Every failure is sticky: once
   a read has failed, later reads return 0 with the same status and message. */
#ifndef _POSIX_C_SOURCE
#define _POSIX_C_SOURCE 200809L   /* st_mtim, ssize_t */
#endif
#define ZLIB_CONST
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>
#include "alloc.h"
#include "source.h"
#include "thread.h"

/* Input buffer for inflating a file: large enough that read(2) calls are few. */
#define IN_CAP (256u * 1024u)
/* The most one read(2) call is asked for (well under SSIZE_MAX everywhere). */
#define READ_MAX ((size_t) 1 << 30)

/* Buffers filled by the producer thread of bl_source_prefetch, passed to the reader through
   a slot queue (thread.h): the consumer owns the head slot's bytes until it releases it, the
   producer owns the slot it claimed. */
typedef struct ring {
  pthread_t tid;
  bl_slots q;
  int have_q;                 /* Q is initialized */
  unsigned char **buf;
  size_t *len;
  size_t nbuf, size;
  size_t off;                 /* bytes of the head slot already handed out */
} ring;

struct bl_source {
  char *name;                 /* for messages; "<stdin>" for "-" */
  int fd;                     /* -1 for a memory source */
  int own_fd;                 /* close at free (not standard input) */
  int regular;                /* a regular file: checked for changes at the end */
  off_t size0;                /* st_size at open */
  struct timespec mtime0;     /* st_mtim at open */
  const unsigned char *mem;   /* memory source */
  size_t mem_len, mem_pos;
  unsigned char peek[2];      /* bytes read at open to look for the gzip magic */
  size_t npeek, peek_pos;
  int raw_eof;                /* the underlying bytes are exhausted (and checked) */
  int gzip;
  int z_ready;                /* inflateInit2 succeeded: inflateEnd at free */
  int member_end;             /* the last inflate call ended a gzip member */
  z_stream zs;
  unsigned char *in;          /* inflate input for fd sources */
  int done;                   /* clean end reached */
  int status;                 /* BL_OK, or the sticky failure */
  bl_err saved;               /* the failure, replayed on later calls */
  ring *ring;                 /* producer thread, after bl_source_prefetch */
  int is_stdin;
  dev_t dev0;                 /* st_dev and st_ino at open: the same file when read again */
  ino_t ino0;
  off_t off0;                 /* standard input that is a regular file: where it started */
  int spool_fd;               /* a pipe, FIFO or device: the copy of its raw bytes, or -1 */
  int spool_errno;            /* why there is no copy (0: there is one, or none is needed) */
};

/* zlib's allocations go through bl_malloc too, so fault injection reaches them. */
static voidpf
z_alloc (voidpf opaque, uInt items, uInt size)
{
  (void) opaque;
  return bl_mallocn (items, size);
}

static void
z_free (voidpf opaque, voidpf p)
{
  (void) opaque;
  bl_free (p);
}

/* Record a failure in SRC (sticky) and in ERR; returns CODE. */
static int
src_fail (bl_source *src, int code, bl_err *err, const char *msg, const char *detail)
{
  if (detail)
    bl_fail (&src->saved, code, src->name, "%s: %s", msg, detail);
  else
    bl_fail (&src->saved, code, src->name, "%s", msg);
  src->status = code;
  if (err)
    *err = src->saved;
  return code;
}

static bl_source *
src_new (const char *name, bl_err *err)
{
  bl_source *src = bl_calloc (1, sizeof *src);
  if (!src) {
    bl_fail (err, BL_ENOMEM, name, "out of memory opening the input");
    return NULL;
  }
  src->fd = -1;
  src->spool_fd = -1;
  src->name = bl_strdup (name);
  if (!src->name) {
    bl_free (src);
    bl_fail (err, BL_ENOMEM, name, "out of memory opening the input");
    return NULL;
  }
  return src;
}

/* Compare the file's size and modification time now with those at open.  A regular file
   that another process rewrites or appends to while we read it would give a table that
   matches no version of the file; refusing is the only safe answer. */
static int
check_unchanged (bl_source *src, bl_err *err)
{
  struct stat st;
  if (!src->regular)
    return BL_OK;
  if (fstat (src->fd, &st) != 0)
    return src_fail (src, BL_EIO, err, "cannot stat", strerror (errno));
  if (st.st_size != src->size0 || st.st_mtim.tv_sec != src->mtime0.tv_sec
      || st.st_mtim.tv_nsec != src->mtime0.tv_nsec)
    return src_fail (src, BL_EIO, err, "file changed while being read", NULL);
  return BL_OK;
}

/* A source that cannot be read twice (standard input from a pipe, a FIFO, a device) copies
   its raw bytes, as read, to an unlinked temporary file in $TMPDIR (else /tmp), so that
   bl_source_reopen can hand them out again: the table reader reads a second time the rare
   column that the majority rule makes categorical after its first numbers were kept as
   doubles (table.c, reread_texts).  A file on disk, not memory, because the input may be
   larger than memory.  When the copy cannot be made or written, reading goes on and only
   bl_source_reopen fails, naming the reason. */
static void
spool_open (bl_source *src)
{
  const char *dir = getenv ("TMPDIR");
  char path[4096];
  if (!dir || !*dir)
    dir = "/tmp";
  if ((size_t) snprintf (path, sizeof path, "%s/ballast-input-XXXXXX", dir) >= sizeof path) {
    src->spool_errno = ENAMETOOLONG;
    return;
  }
  src->spool_fd = mkstemp (path);
  if (src->spool_fd < 0) {
    src->spool_errno = errno;
    return;
  }
  unlink (path);
}

static void
spool_write (bl_source *src, const unsigned char *p, size_t n)
{
  while (src->spool_fd >= 0 && n > 0) {
    const ssize_t w = write (src->spool_fd, p, n);
    if (w < 0 && errno == EINTR)
      continue;
    if (w <= 0) {
      src->spool_errno = w < 0 ? errno : EIO;
      close (src->spool_fd);
      src->spool_fd = -1;
      return;
    }
    p += w;
    n -= (size_t) w;
  }
}

/* Read up to CAP raw (possibly compressed) bytes.  At the end of the underlying bytes the
   change check runs once and raw_eof is set.  Returns the count; *STATUS as for
   bl_source_read. */
static size_t
raw_read (bl_source *src, unsigned char *buf, size_t cap, int *status, bl_err *err)
{
  size_t got = 0;
  *status = BL_OK;
  while (got < cap && src->peek_pos < src->npeek)
    buf[got++] = src->peek[src->peek_pos++];
  if (src->fd < 0) {
    size_t n = src->mem_len - src->mem_pos;
    if (n > cap - got)
      n = cap - got;
    memcpy (buf + got, src->mem + src->mem_pos, n);
    src->mem_pos += n;
    got += n;
    if (src->mem_pos == src->mem_len)
      src->raw_eof = 1;
    return got;
  }
  while (got < cap && !src->raw_eof) {
    const size_t want = cap - got < READ_MAX ? cap - got : READ_MAX;
    const ssize_t r = read (src->fd, buf + got, want);
    if (r < 0) {
      if (errno == EINTR)
        continue;
      *status = src_fail (src, BL_EIO, err, "read failed", strerror (errno));
      return 0;
    }
    if (r == 0) {
      src->raw_eof = 1;
      if ((*status = check_unchanged (src, err)) != BL_OK)
        return 0;
      break;
    }
    spool_write (src, buf + got, (size_t) r);
    got += (size_t) r;
  }
  return got;
}

/* Common tail of both constructors: look at the first two bytes and set up inflation. */
static bl_source *
src_start (bl_source *src, bl_err *err)
{
  int st;
  unsigned char head[2];
  size_t n = 0;
  if (src->fd < 0) {
    src->gzip = src->mem_len >= 2 && src->mem[0] == 0x1f && src->mem[1] == 0x8b;
  } else {
    while (n < 2) {
      const size_t got = raw_read (src, head + n, 2 - n, &st, err);
      if (st != BL_OK) {
        bl_source_free (src);
        return NULL;
      }
      if (got == 0)
        break;
      n += got;
    }
    memcpy (src->peek, head, n);
    src->npeek = n;
    src->peek_pos = 0;
    src->gzip = n == 2 && head[0] == 0x1f && head[1] == 0x8b;
  }
  if (!src->gzip)
    return src;
  src->zs.zalloc = z_alloc;
  src->zs.zfree = z_free;
  src->zs.opaque = Z_NULL;
  if (src->fd < 0) {
    /* Inflate straight from the caller's buffer; zlib's avail_in is a uInt, so very large
       buffers are fed in pieces by gz_read. */
    src->zs.next_in = src->mem;
    src->zs.avail_in = 0;
  } else {
    src->in = bl_malloc (IN_CAP);
    if (!src->in) {
      bl_fail (err, BL_ENOMEM, src->name, "out of memory opening the input");
      bl_source_free (src);
      return NULL;
    }
    src->zs.next_in = src->in;
    src->zs.avail_in = 0;
  }
  /* 16 + MAX_WBITS: a gzip wrapper (RFC 1952) around deflate data, the largest window. */
  st = inflateInit2 (&src->zs, 16 + MAX_WBITS);
  if (st != Z_OK) {
    if (st == Z_MEM_ERROR)
      bl_fail (err, BL_ENOMEM, src->name, "out of memory opening the input");
    else
      bl_fail (err, BL_EINTERNAL, src->name, "inflateInit2 failed (zlib %s)", zlibVersion ());
    bl_source_free (src);
    return NULL;
  }
  src->z_ready = 1;
  return src;
}

bl_source *
bl_source_open (const char *path, bl_err *err)
{
  struct stat st;
  const int is_stdin = strcmp (path, "-") == 0;
  bl_source *src = src_new (is_stdin ? "<stdin>" : path, err);
  if (!src)
    return NULL;
  if (is_stdin) {
    src->fd = STDIN_FILENO;
  } else {
    do
      src->fd = open (path, O_RDONLY);
    while (src->fd < 0 && errno == EINTR);
    if (src->fd < 0) {
      bl_fail (err, BL_EIO, src->name, "cannot open: %s", strerror (errno));
      bl_source_free (src);
      return NULL;
    }
    src->own_fd = 1;
  }
  if (fstat (src->fd, &st) != 0) {
    bl_fail (err, BL_EIO, src->name, "cannot stat: %s", strerror (errno));
    bl_source_free (src);
    return NULL;
  }
  if (S_ISDIR (st.st_mode)) {
    bl_fail (err, BL_EIO, src->name, "cannot read: is a directory");
    bl_source_free (src);
    return NULL;
  }
  src->regular = S_ISREG (st.st_mode);
  src->size0 = st.st_size;
  src->mtime0 = st.st_mtim;
  src->dev0 = st.st_dev;
  src->ino0 = st.st_ino;
  src->is_stdin = is_stdin;
  if (!src->regular)
    spool_open (src);
  else if (is_stdin && (src->off0 = lseek (src->fd, 0, SEEK_CUR)) < 0)
    src->off0 = -1;             /* cannot be read again */
  return src_start (src, err);
}

/* A source over the spool's copy, from its start. */
static bl_source *
reopen_spool (const bl_source *old, bl_err *err)
{
  struct stat st;
  bl_source *src;
  if (old->spool_fd < 0) {
    bl_fail (err, BL_EIO, old->name, "cannot read the input a second time (a pipe; its "
             "temporary copy failed: %s)", strerror (old->spool_errno ? old->spool_errno
                                                       : EIO));
    return NULL;
  }
  if (!(src = src_new (old->name, err)))
    return NULL;
  src->fd = dup (old->spool_fd);
  if (src->fd < 0 || lseek (src->fd, 0, SEEK_SET) != 0 || fstat (src->fd, &st) != 0) {
    bl_fail (err, BL_EIO, old->name, "cannot read the input's temporary copy: %s",
             strerror (errno));
    bl_source_free (src);
    return NULL;
  }
  src->own_fd = 1;
  src->regular = 1;
  src->size0 = st.st_size;
  src->mtime0 = st.st_mtim;
  return src_start (src, err);
}

bl_source *
bl_source_reopen (const bl_source *old, bl_err *err)
{
  struct stat st;
  bl_source *src;
  if (old->fd < 0)
    return bl_source_open_mem (old->mem, old->mem_len, old->name, err);
  if (!old->regular)
    return reopen_spool (old, err);
  if (!old->is_stdin)
    src = bl_source_open (old->name, err);
  else {
    if (old->off0 < 0 || lseek (old->fd, old->off0, SEEK_SET) != old->off0) {
      bl_fail (err, BL_EIO, old->name, "cannot read the input a second time (it cannot "
               "seek)");
      return NULL;
    }
    src = bl_source_open ("-", err);
  }
  if (!src)
    return NULL;
  if (fstat (src->fd, &st) != 0 || st.st_dev != old->dev0 || st.st_ino != old->ino0
      || st.st_size != old->size0 || st.st_mtim.tv_sec != old->mtime0.tv_sec
      || st.st_mtim.tv_nsec != old->mtime0.tv_nsec) {
    bl_fail (err, BL_EIO, old->name, "file changed while being read");
    bl_source_free (src);
    return NULL;
  }
  return src;
}

bl_source *
bl_source_open_mem (const void *buf, size_t len, const char *name, bl_err *err)
{
  bl_source *src = src_new (name ? name : "<memory>", err);
  if (!src)
    return NULL;
  src->mem = buf;
  src->mem_len = len;
  src->raw_eof = len == 0;
  return src_start (src, err);
}

/* A damaged gzip stream after GOT good bytes: those bytes are returned first and the failure
   is kept in SRC for the next call, so that errors come in the order of the inflated bytes
   (a parse error in an early line wins over damage further on) whatever the read sizes are:
   the same error for one thread or two, small steps or large. */
static size_t
stream_fail (bl_source *src, size_t got, int *status, bl_err *err, const char *msg,
             const char *detail)
{
  src_fail (src, BL_EDATA, got ? NULL : err, msg, detail);
  *status = got ? BL_OK : BL_EDATA;
  return got;
}

/* Inflate into OUT.  A member's end is followed either by the end of the input (done) or by
   another member; anything else (trailing garbage) fails in inflate's header check. */
static size_t
gz_read (bl_source *src, unsigned char *out, size_t cap, int *status, bl_err *err)
{
  z_stream *zs = &src->zs;
  const size_t want = cap < UINT_MAX ? cap : UINT_MAX;
  if (src->status != BL_OK) {   /* a failure kept back by the call before (see stream_fail) */
    *status = src->status;
    if (err)
      *err = src->saved;
    return 0;
  }
  *status = BL_OK;
  zs->next_out = out;
  zs->avail_out = (uInt) want;
  while (zs->avail_out > 0) {
    int ret;
    if (zs->avail_in == 0 && !src->raw_eof) {
      if (src->fd < 0) {
        size_t n = src->mem_len - src->mem_pos;
        if (n > UINT_MAX)
          n = UINT_MAX;
        zs->next_in = src->mem + src->mem_pos;
        zs->avail_in = (uInt) n;
        src->mem_pos += n;
        if (src->mem_pos == src->mem_len)
          src->raw_eof = 1;
      } else {
        const size_t got = raw_read (src, src->in, IN_CAP, status, err);
        if (*status != BL_OK)
          return 0;
        zs->next_in = src->in;
        zs->avail_in = (uInt) got;
      }
      continue;
    }
    if (src->member_end) {
      if (zs->avail_in == 0) {      /* raw_eof too: the last member ended cleanly */
        src->done = 1;
        break;
      }
      if (inflateReset (zs) != Z_OK) {
        *status = src_fail (src, BL_EINTERNAL, err, "inflateReset failed", NULL);
        return 0;
      }
      src->member_end = 0;
    }
    ret = inflate (zs, Z_NO_FLUSH);
    switch (ret) {
    case Z_OK:
      break;
    case Z_STREAM_END:
      src->member_end = 1;
      break;
    case Z_BUF_ERROR:               /* no progress possible: input exhausted mid-member */
      if (zs->avail_in == 0 && src->raw_eof) {
        return stream_fail (src, want - zs->avail_out, status, err, "truncated gzip stream",
                            NULL);
      }
      break;
    case Z_MEM_ERROR:
      *status = src_fail (src, BL_ENOMEM, err, "out of memory inflating gzip data", NULL);
      return 0;
    case Z_NEED_DICT:
      return stream_fail (src, want - zs->avail_out, status, err, "corrupt gzip stream",
                          "a preset dictionary is required");
    case Z_DATA_ERROR:
      return stream_fail (src, want - zs->avail_out, status, err, "corrupt gzip stream",
                          zs->msg ? zs->msg : "invalid data");
    default:
      *status = src_fail (src, BL_EINTERNAL, err, "inflate failed", zs->msg);
      return 0;
    }
  }
  return want - zs->avail_out;
}

/* The producer: inflate into free slots until the end, a failure, or a stop request.  Every
   field of SRC but ring belongs to this thread until it ends. */
static void *
producer (void *arg)
{
  bl_source *src = arg;
  ring *r = src->ring;
  for (;;) {
    size_t got;
    int st;
    const size_t slot = bl_slots_claim (&r->q);
    if (slot == SIZE_MAX)
      return NULL;            /* bl_source_free asked it to stop */
    got = gz_read (src, r->buf[slot], r->size, &st, NULL);   /* failure: sticky in src */
    if (st == BL_OK && got == 0)
      src->done = 1;
    if (st != BL_OK || got == 0) {
      bl_slots_finish (&r->q);
      return NULL;
    }
    r->len[slot] = got;
    bl_slots_publish (&r->q);
  }
}

/* bl_source_read once the producer runs: bytes from the head slot, or the producer's end. */
static size_t
ring_read (bl_source *src, void *buf, size_t cap, int *status, bl_err *err)
{
  ring *r = src->ring;
  size_t slot, n;
  *status = BL_OK;
  if (cap == 0)
    return 0;
  slot = bl_slots_next (&r->q);
  if (slot == SIZE_MAX) {       /* the producer has ended: its status is final */
    *status = src->status;
    if (*status != BL_OK && err)
      *err = src->saved;
    return 0;
  }
  n = r->len[slot] - r->off;
  if (n > cap)
    n = cap;
  memcpy (buf, r->buf[slot] + r->off, n);
  r->off += n;
  if (r->off == r->len[slot]) {
    r->off = 0;
    bl_slots_release (&r->q);
  }
  return n;
}

static void
ring_free (ring *r)
{
  if (!r)
    return;
  if (r->buf)
    for (size_t k = 0; k < r->nbuf; k++)
      bl_free (r->buf[k]);
  if (r->have_q)
    bl_slots_destroy (&r->q);
  bl_free (r->buf);
  bl_free (r->len);
  bl_free (r);
}

int
bl_source_prefetch (bl_source *src, size_t nbuf, size_t size, bl_err *err)
{
  ring *r;
  if (!src->gzip || src->ring || src->done || src->status != BL_OK || nbuf == 0 || size == 0)
    return BL_OK;
  r = bl_calloc (1, sizeof *r);
  if (!r)
    return bl_fail (err, BL_ENOMEM, src->name, "out of memory reading the input");
  r->nbuf = nbuf;
  r->size = size;
  r->buf = bl_calloc (nbuf, sizeof *r->buf);
  r->len = bl_calloc (nbuf, sizeof *r->len);
  if (!r->buf || !r->len) {
    ring_free (r);
    return bl_fail (err, BL_ENOMEM, src->name, "out of memory reading the input");
  }
  for (size_t k = 0; k < nbuf; k++)
    if (!(r->buf[k] = bl_malloc (size))) {
      ring_free (r);
      return bl_fail (err, BL_ENOMEM, src->name, "out of memory reading the input");
    }
  if (bl_slots_init (&r->q, nbuf) != 0) {
    ring_free (r);
    return BL_OK;               /* stays synchronous */
  }
  r->have_q = 1;
  src->ring = r;
  if (bl_thread_start (&r->tid, producer, src) != 0) {
    src->ring = NULL;
    ring_free (r);
  }
  return BL_OK;
}

size_t
bl_source_read (bl_source *src, void *buf, size_t cap, int *status, bl_err *err)
{
  size_t got;
  if (src->ring)
    return ring_read (src, buf, cap, status, err);
  if (src->status != BL_OK) {
    *status = src->status;
    if (err)
      *err = src->saved;
    return 0;
  }
  *status = BL_OK;
  if (cap == 0 || src->done)
    return 0;
  if (src->gzip)
    got = gz_read (src, buf, cap, status, err);
  else
    got = raw_read (src, buf, cap, status, err);
  if (*status != BL_OK)
    return 0;
  if (got == 0)
    src->done = 1;
  return got;
}

size_t
bl_source_size_hint (const bl_source *src)
{
  size_t raw = 0;
  if (src->fd < 0)
    raw = src->mem_len;
  else if (src->regular && src->size0 > 0)
    raw = (size_t) src->size0;
  if (!src->gzip || raw == 0)
    return raw;
  /* Deflate expands at most about 1032:1 (a run of one byte: 258 bytes per 2-bit code
     pair; the zlib authors' figure, from memory), so this bounds the inflated size of small
     inputs; a larger one only makes the buffers grow. */
  return raw > SIZE_MAX / 1032 - 64 ? 0 : 1032 * raw + 64;
}

const char *
bl_source_name (const bl_source *src)
{
  return src->name;
}

int
bl_source_is_gzip (const bl_source *src)
{
  return src->gzip;
}

void
bl_source_free (bl_source *src)
{
  if (!src)
    return;
  if (src->ring) {
    ring *r = src->ring;
    bl_slots_stop (&r->q);
    bl_thread_join (r->tid);
    ring_free (r);
  }
  if (src->z_ready)
    inflateEnd (&src->zs);
  if (src->own_fd && src->fd >= 0)
    close (src->fd);
  if (src->spool_fd >= 0)
    close (src->spool_fd);
  bl_free (src->in);
  bl_free (src->name);
  bl_free (src);
}
