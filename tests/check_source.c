/* check_source.c -- tests for source.c: plain and gzip bytes from files, stdin and memory. */
#include <check.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <zlib.h>
#include "alloc.h"
#include "error.h"
#include "source.h"
#include "testutil.h"

/* ------------------------------------------------------------------ helpers */

/* Read everything from SRC in pieces of CAP bytes; returns malloc'ed bytes, *LEN, *STATUS. */
static unsigned char *
read_all (bl_source *src, size_t cap, size_t *len, int *status, bl_err *err)
{
  size_t n = 0, room = 1024;
  unsigned char *buf = malloc (room);
  ck_assert_ptr_nonnull (buf);
  for (;;) {
    size_t got;
    if (room - n < cap) {
      room = 2 * room + cap;
      buf = realloc (buf, room);
      ck_assert_ptr_nonnull (buf);
    }
    got = bl_source_read (src, buf + n, cap, status, err);
    if (*status != BL_OK || got == 0)
      break;
    n += got;
  }
  *len = n;
  return buf;
}

/* Text of moderate entropy: pump-fleet log lines with pseudo-random numbers (xorshift64,
   Marsaglia 2003, J. Stat. Softw. 8(14)), so that the compressed size is large too. */
static char *
make_text (size_t len)
{
  char *t = malloc (len + 1);
  unsigned long long s = 0x2545f4914f6cdd1dULL;
  size_t n = 0;
  ck_assert_ptr_nonnull (t);
  while (n < len) {
    char line[64];
    int k;
    s ^= s << 13;
    s ^= s >> 7;
    s ^= s << 17;
    k = snprintf (line, sizeof line, "pump-%03u,%llu.%02u\n", (unsigned) (s % 997),
                  (s >> 20) % 100000, (unsigned) ((s >> 40) % 100));
    for (int i = 0; i < k && n < len; i++)
      t[n++] = line[i];
  }
  t[len] = '\0';
  return t;
}

/* ------------------------------------------------------------------ basics */

START_TEST (source_mem_plain)
{
  static const char text[] = "hours,stops\n2.385,7\n";
  bl_err err = { 0 };
  size_t len;
  int st;
  bl_source *src = bl_source_open_mem (text, strlen (text), "pumps.csv", &err);
  unsigned char *got;
  ck_assert_msg (src != NULL, "source_mem_plain: open failed: %s", err.msg);
  ck_assert_str_eq (bl_source_name (src), "pumps.csv");
  ck_assert_int_eq (bl_source_is_gzip (src), 0);
  got = read_all (src, 3, &len, &st, &err);        /* odd pieces: pass-through keeps order */
  ck_assert_int_eq (st, BL_OK);
  ck_assert_uint_eq (len, strlen (text));
  ck_assert_msg (memcmp (got, text, len) == 0, "source_mem_plain: bytes differ");
  ck_assert_uint_eq (bl_source_read (src, got, 10, &st, &err), 0);   /* stays at the end */
  ck_assert_int_eq (st, BL_OK);
  free (got);
  bl_source_free (src);
  bl_source_free (NULL);
}
END_TEST

START_TEST (source_mem_one_byte)
{
  /* One byte 0x1f is not the two-byte gzip magic: passed through. */
  bl_err err = { 0 };
  unsigned char b = 0x1f, out[4];
  int st;
  bl_source *src = bl_source_open_mem (&b, 1, NULL, &err);
  ck_assert_ptr_nonnull (src);
  ck_assert_str_eq (bl_source_name (src), "<memory>");
  ck_assert_int_eq (bl_source_is_gzip (src), 0);
  ck_assert_uint_eq (bl_source_read (src, out, sizeof out, &st, &err), 1);
  ck_assert_int_eq (out[0], 0x1f);
  ck_assert_uint_eq (bl_source_read (src, out, sizeof out, &st, &err), 0);
  ck_assert_int_eq (st, BL_OK);
  bl_source_free (src);
}
END_TEST

START_TEST (source_file_plain)
{
  char dir[512], path[600];
  bl_err err = { 0 };
  char *text = make_text (300000);
  unsigned char *got;
  size_t len;
  int st;
  bl_source *src;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/plain.csv", dir);
  test_write_file (path, text, 300000);
  src = bl_source_open (path, &err);
  ck_assert_msg (src != NULL, "source_file_plain: %s", err.msg);
  ck_assert_str_eq (bl_source_name (src), path);
  ck_assert_int_eq (bl_source_is_gzip (src), 0);
  got = read_all (src, 65521, &len, &st, &err);
  ck_assert_int_eq (st, BL_OK);
  ck_assert_uint_eq (len, 300000);
  ck_assert_msg (memcmp (got, text, len) == 0, "source_file_plain: bytes differ");
  free (got);
  free (text);
  bl_source_free (src);
  unlink (path);
  rmdir (dir);
}
END_TEST

START_TEST (source_file_empty)
{
  char dir[512], path[600];
  bl_err err = { 0 };
  unsigned char out[8];
  int st = -7;
  bl_source *src;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/empty.csv", dir);
  test_write_file (path, "", 0);
  src = bl_source_open (path, &err);
  ck_assert_ptr_nonnull (src);
  ck_assert_uint_eq (bl_source_read (src, out, sizeof out, &st, &err), 0);
  ck_assert_int_eq (st, BL_OK);
  bl_source_free (src);
  unlink (path);
  rmdir (dir);
}
END_TEST

START_TEST (source_stdin)
{
  /* "-" reads file descriptor 0; here a temporary gzip file is put there. */
  static const char text[] = "stops\n3\n";
  char dir[512], path[600];
  bl_err err = { 0 };
  size_t zlen, len;
  unsigned char *z = test_gzip_bytes (text, strlen (text), &zlen), *got;
  int st, fd, saved;
  bl_source *src;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/in.gz", dir);
  test_write_file (path, z, zlen);
  fd = open (path, O_RDONLY);
  ck_assert_int_ge (fd, 0);
  saved = dup (0);
  ck_assert_int_ge (dup2 (fd, 0), 0);
  src = bl_source_open ("-", &err);
  ck_assert_msg (src != NULL, "source_stdin: %s", err.msg);
  ck_assert_str_eq (bl_source_name (src), "<stdin>");
  ck_assert_int_eq (bl_source_is_gzip (src), 1);
  got = read_all (src, 5, &len, &st, &err);
  ck_assert_int_eq (st, BL_OK);
  ck_assert_uint_eq (len, strlen (text));
  ck_assert_msg (memcmp (got, text, len) == 0, "source_stdin: bytes differ");
  bl_source_free (src);         /* must not close descriptor 0 */
  ck_assert_int_ne (fcntl (0, F_GETFD), -1);
  dup2 (saved, 0);
  close (saved);
  close (fd);
  free (got);
  free (z);
  unlink (path);
  rmdir (dir);
}
END_TEST

START_TEST (source_gzip_file)
{
  /* 2 MB of text: the compressed file is larger than the 256 KiB input buffer, so inflate
     runs over several refills. */
  const size_t n = 2000000;
  char dir[512], path[600];
  bl_err err = { 0 };
  char *text = make_text (n);
  size_t zlen, len;
  unsigned char *z = test_gzip_bytes (text, n, &zlen), *got;
  int st;
  bl_source *src;
  ck_assert_msg (zlen > 256u * 1024u, "source_gzip_file: compressed only %zu bytes", zlen);
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/log.csv.gz", dir);
  test_write_file (path, z, zlen);
  src = bl_source_open (path, &err);
  ck_assert_msg (src != NULL, "source_gzip_file: %s", err.msg);
  ck_assert_int_eq (bl_source_is_gzip (src), 1);
  got = read_all (src, 100003, &len, &st, &err);
  ck_assert_msg (st == BL_OK, "source_gzip_file: status %d %s", st, err.msg);
  ck_assert_uint_eq (len, n);
  ck_assert_msg (memcmp (got, text, n) == 0, "source_gzip_file: bytes differ");
  free (got);
  free (z);
  free (text);
  bl_source_free (src);
  unlink (path);
  rmdir (dir);
}
END_TEST

START_TEST (source_gzip_concat)
{
  /* RFC 1952 section 2.2: a gzip file is a series of members; the data are their
     concatenation (as gzip -d gives).  Tested from memory and from a file. */
  static const char a[] = "hours,stops\n2.385,7\n", b[] = "11.07,2\n";
  char dir[512], path[600];
  bl_err err = { 0 };
  size_t la, lb, len;
  unsigned char *za = test_gzip_bytes (a, strlen (a), &la);
  unsigned char *zb = test_gzip_bytes (b, strlen (b), &lb);
  unsigned char *both = malloc (la + lb), *got;
  int st;
  bl_source *src;
  memcpy (both, za, la);
  memcpy (both + la, zb, lb);
  src = bl_source_open_mem (both, la + lb, "two.gz", &err);
  ck_assert_ptr_nonnull (src);
  got = read_all (src, 4, &len, &st, &err);
  ck_assert_msg (st == BL_OK, "source_gzip_concat mem: %s", err.msg);
  ck_assert_uint_eq (len, strlen (a) + strlen (b));
  ck_assert_msg (memcmp (got, a, strlen (a)) == 0 && memcmp (got + strlen (a), b, strlen (b))
                 == 0, "source_gzip_concat mem: bytes differ");
  free (got);
  bl_source_free (src);

  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/two.gz", dir);
  test_write_file (path, both, la + lb);
  src = bl_source_open (path, &err);
  ck_assert_ptr_nonnull (src);
  got = read_all (src, 1 << 16, &len, &st, &err);
  ck_assert_msg (st == BL_OK, "source_gzip_concat file: %s", err.msg);
  ck_assert_uint_eq (len, strlen (a) + strlen (b));
  free (got);
  bl_source_free (src);
  unlink (path);
  rmdir (dir);
  free (both);
  free (za);
  free (zb);
}
END_TEST

START_TEST (source_gzip_empty_member)
{
  /* A gzip member holding zero bytes inflates to nothing, without error. */
  bl_err err = { 0 };
  size_t zlen;
  unsigned char *z = test_gzip_bytes ("", 0, &zlen), out[8];
  int st;
  bl_source *src = bl_source_open_mem (z, zlen, "empty.gz", &err);
  ck_assert_ptr_nonnull (src);
  ck_assert_int_eq (bl_source_is_gzip (src), 1);
  ck_assert_uint_eq (bl_source_read (src, out, sizeof out, &st, &err), 0);
  ck_assert_int_eq (st, BL_OK);
  bl_source_free (src);
  free (z);
}
END_TEST

/* ------------------------------------------------------------------ errors */

START_TEST (source_missing_file)
{
  bl_err err = { 0 };
  ck_assert_ptr_null (bl_source_open ("/nonexistent/ballast/pumps.csv", &err));
  ck_assert_int_eq (err.code, BL_EIO);
  ck_assert_str_eq (err.where, "/nonexistent/ballast/pumps.csv");
  ck_assert_msg (strstr (err.msg, "cannot open") != NULL, "source_missing_file: '%s'", err.msg);
}
END_TEST

START_TEST (source_directory)
{
  char dir[512];
  bl_err err = { 0 };
  test_tmpdir (dir, sizeof dir);
  ck_assert_ptr_null (bl_source_open (dir, &err));
  ck_assert_int_eq (err.code, BL_EIO);
  ck_assert_str_eq (err.where, dir);
  ck_assert_msg (strstr (err.msg, "is a directory") != NULL, "source_directory: '%s'", err.msg);
  rmdir (dir);
}
END_TEST

/* Read Z (LEN bytes) from memory and expect BL_EDATA with a message containing FRAG; the
   failure must be sticky. */
static void
expect_gzip_error (const unsigned char *z, size_t len, const char *frag, const char *label)
{
  bl_err err = { 0 };
  size_t got_len;
  int st;
  unsigned char *got, out[4];
  bl_source *src = bl_source_open_mem (z, len, "bad.gz", &err);
  ck_assert_msg (src != NULL, "%s: open failed: %s", label, err.msg);
  got = read_all (src, 4096, &got_len, &st, &err);
  ck_assert_msg (st == BL_EDATA, "%s: status %d (%s)", label, st, err.msg);
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, "bad.gz");
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s'", label, err.msg);
  memset (&err, 0, sizeof err);
  ck_assert_uint_eq (bl_source_read (src, out, sizeof out, &st, &err), 0);
  ck_assert_msg (st == BL_EDATA && err.code == BL_EDATA, "%s: failure not sticky", label);
  free (got);
  bl_source_free (src);
}

START_TEST (source_gzip_truncated)
{
  /* Cut inside the deflate data, inside the 8-byte trailer (CRC32, ISIZE; RFC 1952 2.3.1),
     and right after the 10-byte header: each is an error, never a short success. */
  const size_t n = 50000;
  char *text = make_text (n);
  size_t zlen;
  unsigned char *z = test_gzip_bytes (text, n, &zlen);
  expect_gzip_error (z, zlen / 2, "truncated gzip stream", "truncated middle");
  expect_gzip_error (z, zlen - 3, "truncated gzip stream", "truncated trailer");
  expect_gzip_error (z, 10, "truncated gzip stream", "header only");
  expect_gzip_error (z, 2, "truncated gzip stream", "magic only");
  free (z);
  free (text);
}
END_TEST

START_TEST (source_gzip_truncated_file)
{
  const size_t n = 600000;
  char dir[512], path[600];
  char *text = make_text (n);
  bl_err err = { 0 };
  size_t zlen, len;
  unsigned char *z = test_gzip_bytes (text, n, &zlen), *got;
  int st;
  bl_source *src;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/cut.gz", dir);
  test_write_file (path, z, zlen - 100);
  src = bl_source_open (path, &err);
  ck_assert_ptr_nonnull (src);
  got = read_all (src, 1 << 20, &len, &st, &err);
  ck_assert_int_eq (st, BL_EDATA);
  ck_assert_str_eq (err.where, path);
  ck_assert_msg (strstr (err.msg, "truncated gzip stream") != NULL, "truncated file: '%s'",
                 err.msg);
  free (got);
  bl_source_free (src);
  unlink (path);
  rmdir (dir);
  free (z);
  free (text);
}
END_TEST

START_TEST (source_gzip_corrupt)
{
  const size_t n = 50000;
  char *text = make_text (n);
  size_t zlen;
  unsigned char *z = test_gzip_bytes (text, n, &zlen);
  unsigned char *c = malloc (zlen + 16);
  /* RFC 1952 2.3.1: byte 2 is the compression method, 8 = deflate. */
  memcpy (c, z, zlen);
  c[2] = 7;
  expect_gzip_error (c, zlen, "corrupt gzip stream", "method byte");
  /* The CRC32 of the trailer no longer matches the data (zlib: "incorrect data check"). */
  memcpy (c, z, zlen);
  c[zlen - 8] ^= 0x5a;
  expect_gzip_error (c, zlen, "incorrect data check", "crc");
  /* The length in the trailer (ISIZE) is wrong. */
  memcpy (c, z, zlen);
  c[zlen - 1] ^= 0x01;
  expect_gzip_error (c, zlen, "corrupt gzip stream", "isize");
  /* Damage inside the deflate data; the message depends on where inflate notices. */
  memcpy (c, z, zlen);
  for (size_t k = 0; k < 16; k++)
    c[zlen / 3 + k] ^= 0xa5;
  expect_gzip_error (c, zlen, "gzip stream", "data bytes");
  /* Trailing bytes that are not another member. */
  memcpy (c, z, zlen);
  memcpy (c + zlen, "not gzip at all!", 16);
  expect_gzip_error (c, zlen + 16, "corrupt gzip stream", "trailing garbage");
  free (c);
  free (z);
  free (text);
}
END_TEST

START_TEST (source_file_changed)
{
  /* A regular file appended to while it is read: the size checked at the end differs from
     the size at open, which is BL_EIO rather than a table of no version of the file. */
  char dir[512], path[600];
  char *text = make_text (100000);
  bl_err err = { 0 };
  unsigned char buf[1000], *rest;
  size_t len;
  int st;
  FILE *f;
  bl_source *src;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/grow.csv", dir);
  test_write_file (path, text, 100000);
  src = bl_source_open (path, &err);
  ck_assert_ptr_nonnull (src);
  ck_assert_uint_eq (bl_source_read (src, buf, sizeof buf, &st, &err), sizeof buf);
  f = fopen (path, "ab");
  ck_assert_ptr_nonnull (f);
  fputs ("pump-999,1.5\n", f);
  fclose (f);
  rest = read_all (src, 4096, &len, &st, &err);
  ck_assert_int_eq (st, BL_EIO);
  ck_assert_int_eq (err.code, BL_EIO);
  ck_assert_str_eq (err.where, path);
  ck_assert_msg (strstr (err.msg, "file changed while being read") != NULL,
                 "source_file_changed: '%s'", err.msg);
  free (rest);
  bl_source_free (src);
  unlink (path);
  rmdir (dir);
  free (text);
}
END_TEST

START_TEST (source_alloc_fail)
{
  /* SQLite-style fault injection: fail the N-th allocation for N = 1, 2, ... until opening
     and reading a gzip buffer succeeds; each failure must be BL_ENOMEM. */
  const size_t n = 20000;
  char *text = make_text (n);
  size_t zlen;
  unsigned char *z = test_gzip_bytes (text, n, &zlen);
  unsigned char *out = malloc (n + 1);
  unsigned long fail;
  bl_alloc_fail_at (0);
  {
    bl_err err = { 0 };
    bl_source *src = bl_source_open_mem (z, zlen, "m.gz", &err);
    bl_source_free (src);
    if (bl_alloc_count () == 0) {
      free (out);
      free (z);
      free (text);
      return;                   /* built without --enable-alloc-fail */
    }
  }
  for (fail = 1; fail < 1000; fail++) {
    bl_err err = { 0 };
    bl_source *src;
    size_t got = 0;
    int st = BL_OK;
    bl_alloc_fail_at (fail);
    src = bl_source_open_mem (z, zlen, "m.gz", &err);
    if (src) {
      size_t k;
      while ((k = bl_source_read (src, out + got, n + 1 - got, &st, &err)) > 0)
        got += k;
    } else
      st = err.code;
    bl_source_free (src);
    bl_alloc_fail_at (0);
    if (src && st == BL_OK) {
      ck_assert_uint_eq (got, n);
      break;
    }
    ck_assert_msg (st == BL_ENOMEM && err.code == BL_ENOMEM,
                   "source_alloc_fail N=%lu: status %d (%s)", fail, st, err.msg);
  }
  ck_assert_msg (fail > 1 && fail < 1000, "source_alloc_fail: loop ended at %lu", fail);
  free (out);
  free (z);
  free (text);
}
END_TEST


START_TEST (source_prefetch)
{
  /* With the producer thread the bytes are those of a synchronous read; a plain source is
     left as it is; freeing in mid-stream stops the producer. */
  const size_t n = 3000000;
  char *text = make_text (n);
  bl_err err = { 0 };
  size_t zlen, len;
  unsigned char *z = test_gzip_bytes (text, n, &zlen), *got, first[1000];
  int st;
  bl_source *src = bl_source_open_mem (z, zlen, "p.gz", &err);
  ck_assert_ptr_nonnull (src);
  ck_assert_uint_eq (bl_source_read (src, first, sizeof first, &st, &err), sizeof first);
  ck_assert_int_eq (bl_source_prefetch (src, 3, 65536, &err), BL_OK);
  ck_assert_int_eq (bl_source_prefetch (src, 3, 65536, &err), BL_OK);      /* twice: no-op */
  got = read_all (src, 100003, &len, &st, &err);
  ck_assert_msg (st == BL_OK, "source_prefetch: status %d %s", st, err.msg);
  ck_assert_uint_eq (len, n - sizeof first);
  ck_assert_msg (memcmp (first, text, sizeof first) == 0
                 && memcmp (got, text + sizeof first, len) == 0, "source_prefetch: bytes differ");
  ck_assert_uint_eq (bl_source_read (src, first, sizeof first, &st, &err), 0);
  ck_assert_int_eq (st, BL_OK);
  free (got);
  bl_source_free (src);
  src = bl_source_open_mem (z, zlen, "p.gz", &err);                      /* stop early */
  ck_assert_int_eq (bl_source_prefetch (src, 2, 4096, &err), BL_OK);
  ck_assert_uint_eq (bl_source_read (src, first, sizeof first, &st, &err), sizeof first);
  bl_source_free (src);
  src = bl_source_open_mem (text, n, "p.csv", &err);                     /* plain: nothing */
  ck_assert_int_eq (bl_source_prefetch (src, 2, 4096, &err), BL_OK);
  got = read_all (src, 65536, &len, &st, &err);
  ck_assert_uint_eq (len, n);
  free (got);
  bl_source_free (src);
  free (z);
  free (text);
}
END_TEST

START_TEST (source_prefetch_errors)
{
  /* Truncated and corrupt streams through the producer: the same status and message as a
     synchronous read, and sticky. */
  const size_t n = 400000;
  char *text = make_text (n);
  size_t zlen;
  unsigned char *z = test_gzip_bytes (text, n, &zlen);
  const size_t cut[] = { zlen - 3, zlen / 2 };
  for (int k = 0; k < 3; k++) {
    bl_err e1 = { 0 }, e2 = { 0 };
    size_t l1, l2;
    int s1, s2;
    unsigned char *g1, *g2, out[4];
    const size_t zl = k < 2 ? cut[k] : zlen;
    bl_source *a, *b;
    if (k == 2)
      z[zlen / 2] ^= 0x3c;
    a = bl_source_open_mem (z, zl, "e.gz", &e1);
    b = bl_source_open_mem (z, zl, "e.gz", &e2);
    ck_assert_int_eq (bl_source_prefetch (b, 2, 8192, &e2), BL_OK);
    g1 = read_all (a, 5000, &l1, &s1, &e1);
    g2 = read_all (b, 5000, &l2, &s2, &e2);
    ck_assert_msg (s1 == BL_EDATA && s2 == BL_EDATA, "source_prefetch_errors %d: %d %d", k, s1,
                   s2);
    ck_assert_str_eq (e1.where, e2.where);
    ck_assert_str_eq (e1.msg, e2.msg);
    memset (&e2, 0, sizeof e2);
    ck_assert_uint_eq (bl_source_read (b, out, sizeof out, &s2, &e2), 0);
    ck_assert_msg (s2 == BL_EDATA && strcmp (e1.msg, e2.msg) == 0,
                   "source_prefetch_errors %d: not sticky", k);
    free (g1);
    free (g2);
    bl_source_free (a);
    bl_source_free (b);
  }
  free (z);
  free (text);
}
END_TEST

static Suite *
source_suite (void)
{
  Suite *s = suite_create ("source");
  TCase *basics = tcase_create ("basics");
  TCase *errors = tcase_create ("errors");
  tcase_add_test (basics, source_mem_plain);
  tcase_add_test (basics, source_mem_one_byte);
  tcase_add_test (basics, source_file_plain);
  tcase_add_test (basics, source_file_empty);
  tcase_add_test (basics, source_stdin);
  tcase_add_test (basics, source_gzip_file);
  tcase_add_test (basics, source_gzip_concat);
  tcase_add_test (basics, source_gzip_empty_member);
  tcase_add_test (basics, source_prefetch);
  tcase_add_test (errors, source_missing_file);
  tcase_add_test (errors, source_directory);
  tcase_add_test (errors, source_gzip_truncated);
  tcase_add_test (errors, source_gzip_truncated_file);
  tcase_add_test (errors, source_gzip_corrupt);
  tcase_add_test (errors, source_file_changed);
  tcase_add_test (errors, source_alloc_fail);
  tcase_add_test (errors, source_prefetch_errors);
  suite_add_tcase (s, basics);
  suite_add_tcase (s, errors);
  return s;
}

int
main (void)
{
  return test_run_suite (source_suite (), 0);
}
