/* fuzz_csv.c -- libFuzzer harness for the CSV/TSV reader (table.h: bl_table_read_mem).

   Each input is read as a table several ways, and the results are compared, so that the
   harness finds wrong answers as well as memory errors:
   A. the defaults on one thread, name "fuzz.csv" (the reference reading);
   B. two threads with small parallel steps (64 or 256 bytes, by input length), which
      table.h promises give the same table, and the same error with the same where and
      message, as A for every input;
   C. the input compressed as gzip by this harness (two members when it is long enough, split
      at a point taken from the input), which must read exactly as A (the source inflates
      gzip transparently), on one thread and on two;
   D. ';' as delimiter with decimal commas, and the name "fuzz.tsv" (tab delimiter);
   E. when A succeeds, the same read with the first column forced categorical;
   F. when A succeeds, only its last column kept (bl_table_opts.keep), on one thread and two:
      the same rows, lines and values;
   G. when A succeeds with two rows or more, its first record moved to the end: the column
      types do not depend on where a cell stands (the majority rule of table.h), so the
      rotated input reads with the same types and levels and the values shifted by one row,
      on one thread and on two.
   Any difference is reported on stderr and abort()ed, so libFuzzer keeps the input.
   With FUZZ_CSV_SEQUENTIAL set in the environment the two-thread readings are skipped (to
   look for other bugs while one in the parallel path is open).
   Everything allocated is freed: the harness runs under LeakSanitizer. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <zlib.h>
#include <gsl/gsl_errno.h>
#include "table.h"

int LLVMFuzzerInitialize (int *argc, char ***argv);
int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

int
LLVMFuzzerInitialize (int *argc, char ***argv)
{
  (void) argc;
  (void) argv;
  gsl_set_error_handler_off ();       /* as the ballast program does */
  return 0;
}

static void
fail (const char *what, const char *detail)
{
  fprintf (stderr, "fuzz_csv: %s: %s\n", what, detail);
  abort ();
}

/* Same bits, treating every NAN as equal (NAN marks a missing cell). */
static int
same_num (double a, double b)
{
  if (isnan (a) || isnan (b))
    return isnan (a) && isnan (b);
  return memcmp (&a, &b, sizeof a) == 0;
}

/* Compare two readings of one input; WHAT names the variant for messages. */
static void
compare (const bl_table *a, const bl_err *ea, const bl_table *b, const bl_err *eb,
         const char *what)
{
  char d[3200];
  size_t i, j, k;
  if (!a || !b) {
    if (a || b) {
      snprintf (d, sizeof d, "one reading failed: A %s: %s | B %s: %s", a ? "ok" : ea->where,
                a ? "" : ea->msg, b ? "ok" : eb->where, b ? "" : eb->msg);
      fail (what, d);
    }
    if (ea->code != eb->code || strcmp (ea->where, eb->where) || strcmp (ea->msg, eb->msg)) {
      snprintf (d, sizeof d, "errors differ: A %d %s: %s | B %d %s: %s", ea->code, ea->where,
                ea->msg, eb->code, eb->where, eb->msg);
      fail (what, d);
    }
    return;
  }
  if (bl_table_nrows (a) != bl_table_nrows (b) || bl_table_ncols (a) != bl_table_ncols (b)) {
    snprintf (d, sizeof d, "shape %zux%zu vs %zux%zu", bl_table_nrows (a), bl_table_ncols (a),
              bl_table_nrows (b), bl_table_ncols (b));
    fail (what, d);
  }
  for (i = 0; i < bl_table_nrows (a); i++)
    if (bl_table_line (a, i) != bl_table_line (b, i)) {
      snprintf (d, sizeof d, "row %zu: line %zu vs %zu", i, bl_table_line (a, i),
                bl_table_line (b, i));
      fail (what, d);
    }
  for (j = 0; j < bl_table_ncols (a); j++) {
    if (strcmp (bl_table_colname (a, j), bl_table_colname (b, j)))
      fail (what, "column names differ");
    if (bl_table_is_numeric (a, j) != bl_table_is_numeric (b, j))
      fail (what, "column types differ");
    if (bl_table_is_numeric (a, j)) {
      const double *x = bl_table_num (a, j), *y = bl_table_num (b, j);
      for (i = 0; i < bl_table_nrows (a); i++)
        if (!same_num (x[i], y[i])) {
          snprintf (d, sizeof d, "column %zu row %zu: %.17g vs %.17g", j, i, x[i], y[i]);
          fail (what, d);
        }
    } else {
      const int32_t *x = bl_table_codes (a, j), *y = bl_table_codes (b, j);
      if (bl_table_nlevels (a, j) != bl_table_nlevels (b, j))
        fail (what, "level counts differ");
      for (k = 0; k < bl_table_nlevels (a, j); k++)
        if (strcmp (bl_table_level (a, j, k), bl_table_level (b, j, k)))
          fail (what, "levels differ");
      for (i = 0; i < bl_table_nrows (a); i++)
        if (x[i] != y[i]) {
          snprintf (d, sizeof d, "column %zu row %zu: code %d vs %d", j, i, (int) x[i],
                    (int) y[i]);
          fail (what, d);
        }
    }
  }
}

/* Invariants of one table that table.h states. */
static void
check_table (const bl_table *t)
{
  size_t i, j, k;
  for (j = 0; j < bl_table_ncols (t); j++) {
    const char *name = bl_table_colname (t, j);
    if (!name[0])
      fail ("invariant", "empty column name accepted");
    if (bl_table_find (t, name) != (long) j)
      fail ("invariant", "bl_table_find does not return the column's own index");
    if (bl_table_is_numeric (t, j)) {
      const double *x = bl_table_num (t, j);
      if (!x || bl_table_codes (t, j))
        fail ("invariant", "numeric column accessors");
      for (i = 0; i < bl_table_nrows (t); i++)
        if (isinf (x[i]))
          fail ("invariant", "an infinite value was accepted");
    } else {
      const int32_t *c = bl_table_codes (t, j);
      const size_t nl = bl_table_nlevels (t, j);
      if (!c || bl_table_num (t, j))
        fail ("invariant", "categorical column accessors");
      for (k = 1; k < nl; k++)
        if (strcmp (bl_table_level (t, j, k - 1), bl_table_level (t, j, k)) >= 0)
          fail ("invariant", "levels not sorted and distinct");
      for (i = 0; i < bl_table_nrows (t); i++)
        if (c[i] < -1 || (c[i] >= 0 && (size_t) c[i] >= nl))
          fail ("invariant", "level code out of range");
    }
  }
  for (i = 1; i < bl_table_nrows (t); i++)
    if (bl_table_line (t, i) <= bl_table_line (t, i - 1))
      fail ("invariant", "record lines not increasing");
  (void) bl_table_source (t);
}

/* Gzip of DATA in one member, or two when SPLIT is inside (0, size).  Caller frees. */
static unsigned char *
gzip_of (const uint8_t *data, size_t size, size_t split, size_t *outlen)
{
  const size_t bound = 2 * (size + 64) + 64;
  unsigned char *out = malloc (bound);
  size_t pos = 0, part;
  if (!out)
    return NULL;
  for (part = 0; part < 2; part++) {
    const size_t from = part == 0 ? 0 : split, to = part == 0 ? split : size;
    z_stream z;
    if (part == 1 && (split == 0 || split >= size))
      break;
    memset (&z, 0, sizeof z);
    if (deflateInit2 (&z, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) != Z_OK)
      abort ();
    z.next_in = (unsigned char *) (uintptr_t) (data + from);
    z.avail_in = (uInt) (part == 0 && (split == 0 || split >= size) ? size : to - from);
    z.next_out = out + pos;
    z.avail_out = (uInt) (bound - pos);
    if (deflate (&z, Z_FINISH) != Z_STREAM_END)
      abort ();
    pos = bound - z.avail_out;
    deflateEnd (&z);
  }
  *outlen = pos;
  return out;
}

static bl_table *
read_with (const void *buf, size_t len, const char *name, const bl_table_opts *o, bl_err *e)
{
  bl_err_clear (e);
  return bl_table_read_mem (buf, len, name, o, e);
}

/* Byte offset of the start of physical line LINE (1-based) of DATA: after its LINE - 1st
   line feed (the reader counts lines by line feeds, a CRLF being one). */
static size_t
line_start (const uint8_t *data, size_t size, size_t line)
{
  size_t pos = 0;
  for (size_t l = 1; l < line && pos < size; pos++)
    if (data[pos] == '\n')
      l++;
  return pos;
}

/* G: A's first record moved after its last; the same types, levels and shifted values. */
static void
check_rotated (const uint8_t *data, size_t size, const bl_table *a, int par)
{
  const size_t n = bl_table_nrows (a);
  const size_t r0 = line_start (data, size, bl_table_line (a, 0));
  const size_t r1 = line_start (data, size, bl_table_line (a, 1));
  size_t end = size, len = 0;
  uint8_t *rot;
  while (end > r1 && data[end - 1] == '\n') {   /* trailing empty lines are not records */
    end--;
    if (end > r1 && data[end - 1] == '\r')
      end--;
  }
  if (end == r1 || r1 <= r0 || data[r0] == '\n' || data[r0] == '\r')
    return;                     /* an empty first record would become a trailing empty line */
  if (!(rot = malloc (size + 2)))
    return;
  memcpy (rot, data, r0);
  len = r0;
  memcpy (rot + len, data + r1, end - r1);
  len += end - r1;
  rot[len++] = '\n';
  memcpy (rot + len, data + r0, r1 - r0);
  len += r1 - r0;
  if (rot[len - 1] != '\n')
    rot[len++] = '\n';
  for (unsigned th = 1; th <= (par ? 2u : 1u); th++) {
    bl_table_opts o;
    bl_err e;
    bl_table *b;
    bl_table_opts_init (&o);
    o.threads = th;
    o.chunk = 64;
    b = read_with (rot, len, "fuzz.csv", &o, &e);
    if (!b)
      fail ("G (first record last)", e.msg);
    if (bl_table_nrows (b) != n || bl_table_ncols (b) != bl_table_ncols (a))
      fail ("G (first record last)", "shape differs from A");
    for (size_t j = 0; j < bl_table_ncols (a); j++) {
      if (bl_table_is_numeric (a, j) != bl_table_is_numeric (b, j))
        fail ("G (first record last)", "a column's type depends on where its cells stand");
      for (size_t i = 0; i < n; i++) {
        const size_t k = (i + 1) % n;             /* row i of B is row k of A */
        if (bl_table_is_numeric (a, j)) {
          if (!same_num (bl_table_num (a, j)[k], bl_table_num (b, j)[i]))
            fail ("G (first record last)", "a value differs from A's");
        } else {
          const int32_t ca = bl_table_codes (a, j)[k], cb = bl_table_codes (b, j)[i];
          if ((ca < 0) != (cb < 0)
              || (ca >= 0 && strcmp (bl_table_level (a, j, (size_t) ca),
                                     bl_table_level (b, j, (size_t) cb)) != 0))
            fail ("G (first record last)", "a level differs from A's");
        }
      }
    }
    bl_table_free (b);
  }
  free (rot);
}

int
LLVMFuzzerTestOneInput (const uint8_t *data, size_t size)
{
  bl_table_opts o;
  bl_err ea, eb;
  bl_table *a, *b;
  unsigned char *gz;
  size_t gzlen;
  const int par = getenv ("FUZZ_CSV_SEQUENTIAL") == NULL;

  /* A: the reference reading */
  bl_table_opts_init (&o);
  o.threads = 1;
  a = read_with (data, size, "fuzz.csv", &o, &ea);
  if (a)
    check_table (a);
  else if (ea.code == BL_OK || ea.code == BL_EINTERNAL)
    fail ("A", "NULL with no error, or an internal error");

  /* B: two threads, small steps */
  if (par) {
    o.threads = 2;
    o.chunk = size % 2 ? 64 : 256;
    b = read_with (data, size, "fuzz.csv", &o, &eb);
    compare (a, &ea, b, &eb, "B (threads 2)");
    bl_table_free (b);
  }

  /* C: the same bytes as gzip, unless the input is gzip already (its own path is A) */
  if (!(size >= 2 && data[0] == 0x1f && data[1] == 0x8b)) {
    const size_t split = size >= 8 ? (size_t) data[size - 1] * size / 256 : 0;
    gz = gzip_of (data, size, split, &gzlen);
    if (gz) {
      o.threads = 1;
      b = read_with (gz, gzlen, "fuzz.csv", &o, &eb);
      compare (a, &ea, b, &eb, "C (gzip)");
      bl_table_free (b);
      if (par) {
        o.threads = 2;
        o.chunk = 64;
        b = read_with (gz, gzlen, "fuzz.csv", &o, &eb);
        compare (a, &ea, b, &eb, "C (gzip, threads 2)");
        bl_table_free (b);
      }
      free (gz);
    }
  }

  /* D: other delimiters; no reference, but the invariants hold */
  bl_table_opts_init (&o);
  o.threads = 1;
  o.delimiter = ';';
  o.decimal_comma = 1;
  b = read_with (data, size, "fuzz.csv", &o, &eb);
  if (b)
    check_table (b);
  bl_table_free (b);
  bl_table_opts_init (&o);
  o.threads = 1;
  b = read_with (data, size, "fuzz.tsv", &o, &eb);
  if (b)
    check_table (b);
  bl_table_free (b);

  /* E: the first column forced categorical */
  if (a && bl_table_ncols (a) > 0) {
    const char *names[1];
    names[0] = bl_table_colname (a, 0);
    bl_table_opts_init (&o);
    o.threads = 1;
    o.categorical = names;
    o.n_categorical = 1;
    o.max_levels = 8;
    b = read_with (data, size, "fuzz.csv", &o, &eb);
    if (b) {
      check_table (b);
      if (bl_table_is_numeric (b, 0))
        fail ("E", "a forced column was read as numbers");
      if (bl_table_nrows (b) != bl_table_nrows (a))
        fail ("E", "forcing a column changed the row count");
    }
    bl_table_free (b);
  }

  /* F: only the last column kept (bl_table_opts.keep), on one thread and on two: the same
     rows and the same values as in A (other columns are read past unchecked, so F may also
     succeed where A failed; that is not compared) */
  if (a && bl_table_ncols (a) > 0) {
    const size_t jk = bl_table_ncols (a) - 1;
    const char *names[1];
    names[0] = bl_table_colname (a, jk);
    for (unsigned th = 1; th <= (par ? 2u : 1u); th++) {
      bl_table_opts_init (&o);
      o.threads = th;
      o.chunk = 64;
      o.keep = names;
      o.n_keep = 1;
      b = read_with (data, size, "fuzz.csv", &o, &eb);
      if (!b)
        fail ("F (keep)", eb.msg);
      if (bl_table_nrows (b) != bl_table_nrows (a) || bl_table_find (b, names[0]) != (long) jk
          || (jk > 0 && bl_table_find (b, bl_table_colname (a, 0)) != -1)
          || bl_table_is_numeric (a, jk) != bl_table_is_numeric (b, jk))
        fail ("F (keep)", "rows, columns or types differ from A");
      for (size_t i = 0; i < bl_table_nrows (a); i++) {
        if (bl_table_line (a, i) != bl_table_line (b, i))
          fail ("F (keep)", "line numbers differ from A");
        if (bl_table_is_numeric (a, jk)) {
          const double x = bl_table_num (a, jk)[i], y = bl_table_num (b, jk)[i];
          if (memcmp (&x, &y, sizeof x) != 0)
            fail ("F (keep)", "a kept value differs from A");
        } else {
          const int32_t ca = bl_table_codes (a, jk)[i], cb = bl_table_codes (b, jk)[i];
          if ((ca < 0) != (cb < 0)
              || (ca >= 0 && strcmp (bl_table_level (a, jk, (size_t) ca),
                                     bl_table_level (b, jk, (size_t) cb)) != 0))
            fail ("F (keep)", "a kept level differs from A");
        }
      }
      bl_table_free (b);
    }
  }
  /* G: the first record last */
  if (a && bl_table_nrows (a) >= 2)
    check_rotated (data, size, a, par);
  bl_table_free (a);
  return 0;
}
